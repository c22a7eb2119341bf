#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The lot-sensor schema (db/pg/013-lot-sensor.sql) and the probes' index by lot and serial
# (db/pg/014-probe-lot-serial.sql) on the server, from a version-12 database with rows: a
# version-14 database made by the program (NTC lots, a lot version, a probe) is taken back to
# version 12 by hand, then opened: every lot, lot version, probe and chain row
# is as it was, verify says the same, the old lots are NTC lots; a junction lot is then added,
# an NTC option on it refused (64), and the server refuses rows whose kind and values do not
# match.  Run inside tests/pg/server.sh (tests/pg/check.sh does).  Usage: upgrade13.sh BANDGAP
B=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
T=$(mktemp -d)
chmod 777 "$T"
st=0
bad() { echo "not ok: $*"; st=1; }
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
$PSQL -U "$BG_PG_ADMIN" -d postgres -c "CREATE DATABASE up12 OWNER bandgap_owner TEMPLATE template0" > /dev/null
U=postgresql:///up12
Bu() { (cd "$T" && "$B" --db "$U" "$@"); }
Bu init > /dev/null || bad init
Bu lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null || bad "lot add"
Bu lot add L2 --part P --r25 4k7 --beta 3900K --tol-r25 2% --tol-beta 1% --note "invented" > /dev/null || bad "lot add 2"
Bu probe add P-1 --lot L > /dev/null || bad "probe add"
Bu lot set L --tol-r25 0.5% --why "invented" --by "A. Tester" > /dev/null 2>&1 || bad "lot set"
Bu verify > "$T/v-before" 2>&1 || bad "verify before"
$PSQL -d up12 -c "
DROP INDEX probe_lot_serial;
CREATE INDEX probe_lot ON probe(lot_id);
DROP TRIGGER lot_version_sensor_shape ON lot_version;
DROP FUNCTION bandgap_lot_version_shape();
ALTER TABLE lot_version DROP CONSTRAINT lot_version_shape, ALTER COLUMN tol_r25 SET NOT NULL,
    ALTER COLUMN tol_beta SET NOT NULL;
ALTER TABLE lot DROP CONSTRAINT lot_sensor_shape, DROP COLUMN sensor,
    ALTER COLUMN r25_ohm SET NOT NULL, ALTER COLUMN beta_k SET NOT NULL,
    ALTER COLUMN pair_t1_k SET NOT NULL, ALTER COLUMN pair_t2_k SET NOT NULL,
    ALTER COLUMN tol_r25 SET NOT NULL, ALTER COLUMN tol_beta SET NOT NULL;
ALTER TABLE bandgap_schema DISABLE TRIGGER bandgap_schema_keep;
DELETE FROM bandgap_schema WHERE version IN (13, 14);
ALTER TABLE bandgap_schema ENABLE TRIGGER bandgap_schema_keep;" || bad "back to 12"
rows() {
    $PSQL -d up12 -c "SELECT id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25, tol_beta, note, created_at FROM lot ORDER BY id"
    $PSQL -d up12 -c "SELECT * FROM lot_version ORDER BY id"
    $PSQL -d up12 -c "SELECT * FROM probe ORDER BY id"
    $PSQL -d up12 -c "SELECT * FROM chain ORDER BY seq"
}
rows > "$T/before"
[ "$($PSQL -d up12 -c 'SELECT max(version) FROM bandgap_schema')" = 12 ] || bad "not at 12"
Bu lot list > /dev/null 2> "$T/err" || bad "upgrade: $(cat "$T/err")"
[ "$($PSQL -d up12 -c 'SELECT max(version) FROM bandgap_schema')" = 14 ] || bad "not upgraded"
[ "$($PSQL -d up12 -c "SELECT string_agg(indexname, ' ' ORDER BY indexname) FROM pg_indexes
                        WHERE tablename = 'probe' AND indexname LIKE 'probe_lot%'")" = probe_lot_serial ] ||
    bad "schema 14: the probes are not indexed by lot and serial in place of probe_lot"
rows > "$T/after"
cmp -s "$T/before" "$T/after" || bad "rows changed: $(diff "$T/before" "$T/after")"
Bu verify > "$T/v-after" 2>&1 || bad "verify after"
cmp -s "$T/v-before" "$T/v-after" || bad "verify differs"
[ "$($PSQL -d up12 -c 'SELECT count(*) FROM lot WHERE sensor IS NOT NULL')" = 0 ] || bad "sensor set"
Bu part set J --sensor junction --v-ref 600mV --dvdt -2mV/K --tol-v 5mV --tol-dvdt 0.1mV/K > /dev/null || bad "part set"
Bu lot add LJ --part J > "$T/out" 2>&1 || bad "junction lot: $(cat "$T/out")"
grep -q "added junction lot LJ" "$T/out" || bad "the kind is not said: $(cat "$T/out")"
Bu lot add LX --part J --r25 10k > /dev/null 2>&1; [ $? = 64 ] || bad "r25 on junction lot not 64"
Bu lot set LJ --note "invented" --why w --by b > /dev/null 2>&1 || bad "note version"
Bu lot show LJ --json > "$T/show" || bad "show"
grep -q "\"sensor\":\"junction\"" "$T/show" || bad "show: $(cat "$T/show")"
Bu verify > /dev/null 2>&1 || bad "verify at the end"
out=$($PSQL -d up12 -c "INSERT INTO lot_version (id, lot_id, valid_from, tol_r25, tol_beta, why, by_whom, created_at) SELECT 99, id, '2030-01-01T00:00:00Z', 0.01, 0.01, 'w', 'b', 't' FROM lot WHERE code = 'LJ'" 2>&1)
case $out in *"do not match"*) ;; *) bad "server trigger: $out" ;; esac
out=$($PSQL -d up12 -c "INSERT INTO lot (id, code, part, r25_ohm, created_at, sensor) VALUES (99, 'X', 'J', 10000, 't', 'junction')" 2>&1)
case $out in *lot_sensor_shape*) ;; *) bad "server shape: $out" ;; esac
rm -rf "$T"
[ $st = 0 ] && echo "ok pg upgrade 12 -> 14"
exit $st
