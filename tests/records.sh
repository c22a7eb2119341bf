#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The record defends itself (issue 13): every output file appears whole or not at all (a write
# that fails, through a file size limit or a full device, and a report killed at random
# moments leave the old file or none, and no temporary file except one named *.tmp.*); an init
# that fails leaves no file; the finite-number schema keeps every row, id, index and trigger of
# an older file and refuses infinities in every REAL column, naming the check.
# Usage: records.sh BANDGAP
BIN=$1
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
status=0
bad() { echo "records: $*"; status=1; }
B() { "$BIN" --db "$T/r.db" "$@"; }
# run the program with writes limited to 1-2 KiB (ulimit -f counts 512- or 1024-byte blocks),
# SIGXFSZ ignored so that the write fails with EFBIG instead of killing it
limited() { ( trap '' XFSZ; ulimit -f 2; exec "$BIN" "$@" ); }

export SOURCE_DATE_EPOCH=1764547200
B init > /dev/null
B lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
B probe add P-1 --lot L > /dev/null
B import "$HERE/cli/lib/bath.csv" --probe P-1 --at 2026-11-20T09:00:00Z > /dev/null
B fit --probe P-1 --model sh3 > /dev/null 2>&1
B report --run 1 -o "$T/first.html" > /dev/null 2>&1 || bad "setup: report failed"

# 1. a write that fails leaves the old content: report --get, lut -o, lut --report, export -o
printf 'OLD\n' > "$T/out"
for what in report lut lut-report export; do
    case $what in
    report) limited --db "$T/r.db" report --get 1 -o "$T/out" ;;
    lut) limited --db "$T/r.db" lut --probe P-1 --range 0C:50C --step 1 --fixed 10k -o "$T/out" ;;
    lut-report) limited --db "$T/r.db" lut --probe P-1 --range 0C:50C --step 16 --fixed 10k \
                    --report "$T/out" ;;
    export) limited --db "$T/r.db" export --probe P-1 --json -o "$T/out" ;;
    esac > /dev/null 2> "$T/err"
    rc=$?
    [ "$rc" -eq 74 ] || bad "$what: a failed write exited $rc, expected 74: $(cat "$T/err")"
    [ "$(cat "$T/out")" = OLD ] || bad "$what: a failed write changed the old file"
    [ "$(ls "$T" | grep -c '\.tmp\.')" = 0 ] || bad "$what: a temporary file was left: $(ls "$T")"
done
# a new file that cannot be written is not made at all
limited --db "$T/r.db" report --get 1 -o "$T/new.html" > /dev/null 2>&1
[ ! -e "$T/new.html" ] || bad "a failed report left new.html ($(wc -c < "$T/new.html") bytes)"
# a device is written directly, and its error is reported
if [ -w /dev/full ]; then
    B lut --probe P-1 --range 0C:50C --step 16 --fixed 10k -o /dev/full > /dev/null 2>&1
    rc=$?
    [ "$rc" -eq 74 ] || bad "lut -o /dev/full exited $rc, expected 74"
fi
echo "records: failed writes left the old files and no temporary file"

# 2. report --get killed at random moments: the old file or the whole report, never a part
B report --get 1 -o "$T/whole.html" > /dev/null
printf 'OLD\n' > "$T/k.html"
for i in 1 2 3 4 5 6 7 8 9 10 11 12; do
    "$BIN" --db "$T/r.db" report --get 1 -o "$T/k.html" > /dev/null 2>&1 &
    pid=$!
    sleep "$(awk -v s="$i" 'BEGIN { srand(s * 7919); printf "%.3f", rand() * 0.03 }')"
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
    if [ "$(cat "$T/k.html")" != OLD ] && ! cmp -s "$T/k.html" "$T/whole.html"; then
        bad "kill $i: k.html is neither the old file nor the whole report"
    fi
    for f in "$T"/*; do
        case $f in *.tmp.*) rm -f "$f" ;; esac # a killed write may leave one, named so
    done
done
[ -s "$T/k.html" ] || bad "after the kills k.html is empty"
echo "records: killed reports left the old file or the whole one"

# 3. init: a new database that cannot be initialised is removed; an existing one is kept
limited --db "$T/full.db" init > /dev/null 2>&1 && bad "init under a 2 KiB limit succeeded"
[ ! -e "$T/full.db" ] || bad "a failed init left full.db"
[ "$(ls "$T" | grep -c 'full\.db')" = 0 ] || bad "a failed init left: $(ls "$T" | grep full)"
cp "$T/r.db" "$T/keep.db"
before=$(sha256sum < "$T/keep.db")
limited --db "$T/keep.db" init > /dev/null 2>&1
[ "$(sha256sum < "$T/keep.db")" = "$before" ] || bad "init changed an existing database"
echo "records: a failed init left no file"

# 4. the finite-number schema, from a version-5 file with one row in every table
V5="$T/v5.db"
for f in "$HERE"/../db/00[1-5]-*.sql; do cat "$f"; done | sqlite3 "$V5" > /dev/null
sqlite3 "$V5" "PRAGMA application_id = 1111974256; PRAGMA user_version = 5;
INSERT INTO lot VALUES (1, 'L', 'P', 10000, 3950, 298.15, 358.15, 0.01, 0.01, NULL, 't');
INSERT INTO probe VALUES (7, 'S', 1, NULL, 't');
INSERT INTO reference VALUES (3, 'R', 'C', NULL, 'linear', -0.17, 0.002, 293.15, NULL, NULL,
                              NULL, NULL, NULL, 't');
INSERT INTO run (id, probe_id, reference_id, started_at, source, t_raw_unit, first_reading,
                 nreadings, imported_at, measuring_current_a)
    VALUES (5, 7, 3, 't', 'f.csv', 'C', 11, 1, 't', 1e-5);
INSERT INTO reading VALUES (11, 5, 2, 25.0, 298.15, 10000.5, 0.002, 0, NULL, NULL);
INSERT INTO exclusion VALUES (11, 'why', 'who', 't');
INSERT INTO fit VALUES (9, 5, 'beta', 298.15, 2, 10000, 3950, NULL, NULL, NULL, NULL, NULL, 1, 0,
                        1, 0.5, NULL, 1.5, 2.5, 298.15, 298.15, '[11]', '0', 't');
INSERT INTO artifact VALUES (4, 'report', 9, '{}', x'3c703e', 0.01, NULL, '0', 't');
INSERT INTO part_spec (id, part, tol_k, tol_lo_k, tol_hi_k, created_at)
    VALUES (2, 'P', 0.2, 273.15, 343.15, 't');"
dump() { # every row of every table, and the schema of indexes, triggers, views and probe
    for t in lot probe reference run reading exclusion fit artifact part_spec; do
        # (leaving out the columns 008-versions.sql, 009-its90-reference.sql and
        # 011-run-quantity.sql add, NULL in an upgraded row)
        cols=$(sqlite3 "$1" "SELECT group_concat(name, ', ') FROM pragma_table_info('$t')
                             WHERE name <> 'reference_version_id' AND name NOT LIKE 'its90_%'
                               AND name NOT IN ('quantity', 'quantity_unit', 'sensor',
                                                'nom_t_k', 'nom_x', 'tol_x', 'nom_s', 'tol_s',
                                                'iec_class')")
        sqlite3 "$1" "SELECT '$t', $cols FROM $t ORDER BY rowid"
    done
    sqlite3 "$1" "SELECT type, name, tbl_name, sql FROM sqlite_schema
                  WHERE (type IN ('index', 'trigger', 'view') OR name IN ('probe', 'exclusion'))
                    AND tbl_name <> 'chain' AND name NOT IN ('lot_keep', 'lot_stay',
                    'reading_resistance_positive', 'part_spec_sensor_shape',
                    'probe_keep', 'probe_stay', 'reference_keep', 'reference_stay',
                    'probe_lot', 'probe_lot_serial')
                    AND tbl_name NOT IN ('reference_version', 'lot_version', 'probe_version')
                    AND tbl_name NOT LIKE 'sequence%'
                  ORDER BY type, name" # (leaving out what 007-record-chain.sql,
                                       # 008-versions.sql, 010-sequence.sql,
                                       # 011-run-quantity.sql and 014-probe-lot-serial.sql
                                       # add or change)
}
dump "$V5" > "$T/before.txt"
cp "$V5" "$T/inf.db"
"$BIN" --db "$V5" lot list > /dev/null 2>&1 || bad "the upgrade from version 5 failed"
dump "$V5" > "$T/after.txt"
cmp -s "$T/before.txt" "$T/after.txt" ||
    bad "the upgrade changed rows, ids, indexes or triggers: $(diff "$T/before.txt" "$T/after.txt")"
"$BIN" --db "$V5" verify > /dev/null 2>&1 || bad "the upgraded version 5 database does not verify"
[ "$(sqlite3 "$V5" 'PRAGMA integrity_check')" = ok ] || bad "integrity_check after the upgrade"
[ -z "$(sqlite3 "$V5" 'PRAGMA foreign_key_check')" ] || bad "foreign_key_check after the upgrade"
# every REAL column refuses +Inf (9e999 in SQL) and -Inf, naming its check
for tc in lot:r25_ohm lot:beta_k lot:pair_t1_k lot:pair_t2_k reference:lin_c0_k \
          reference:lin_c1 reference:lin_t0_k run:measuring_current_a reading:t_raw reading:t_k \
          reading:r_ohm reading:u_t_k reading:u_r_ohm fit:t0_k fit:c0 fit:c1 fit:chi2 \
          fit:rms_mk fit:max_abs_mk fit:t_min_k fit:t_max_k artifact:max_error_k \
          part_spec:tol_k part_spec:limit_k part_spec:rate_k; do
    t=${tc%%:*} c=${tc#*:}
    # a copy of the stored row with a new id and the value infinite: only that check can fail
    cols=$(sqlite3 "$V5" "SELECT group_concat(name, ', ') FROM pragma_table_info('$t')
                          WHERE name NOT IN ('id', '$c')")
    out=$(sqlite3 "$V5" "INSERT INTO $t (id, $c, $cols) SELECT 1000, 9e999, $cols FROM $t
                         LIMIT 1" 2>&1)
    case $out in
    *"CHECK constraint failed: ${c}_finite"*) ;;
    *) bad "$t.$c = +Inf: $out" ;;
    esac
done
# an older file with an infinite value is not upgraded and stays as it was
sqlite3 "$T/inf.db" "UPDATE lot SET r25_ohm = 9e999"
before=$(sha256sum < "$T/inf.db")
"$BIN" --db "$T/inf.db" lot list > /dev/null 2> "$T/err" && bad "an Inf row was upgraded"
grep -q "r25_ohm_finite" "$T/err" || bad "the failed upgrade does not name the check: $(cat "$T/err")"
[ "$(sha256sum < "$T/inf.db")" = "$before" ] || bad "a failed upgrade changed the file"
echo "records: the finite-number schema keeps the record and refuses infinities"

# 5. Who made a change, with $USER unset: the login name of the effective user id (and the
# output says so), else "uid N"; never a made-up name.  exclude, lot set, ref set, probe move.
W="$T/who.db"
cp "$T/r.db" "$W"
"$BIN" --db "$W" lot add L2 --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
"$BIN" --db "$W" ref add R-1 --cert "C-1" --linear 0K,0,20C > /dev/null
me=$(id -un) uid=$(id -u)
who_check() { # WHAT TABLE: the command just run with $USER unset
    grep -q "recorded by '$me', the login name of user id $uid (\$USER is not set)" "$T/err" ||
        bad "$1: the output does not say which name was used: $(cat "$T/err")"
    got=$(sqlite3 "$W" "SELECT by_whom FROM $2 ORDER BY rowid DESC LIMIT 1")
    [ "$got" = "$me" ] || bad "$1: stored '$got' as who, expected '$me'"
}
env -u USER "$BIN" --db "$W" exclude 3 --why "invented reason" > /dev/null 2> "$T/err"
who_check exclude exclusion
env -u USER "$BIN" --db "$W" lot set L --tol-r25 2% --why "invented reason" > /dev/null 2> "$T/err"
who_check "lot set" lot_version
env -u USER "$BIN" --db "$W" ref set R-1 --cert C-2 --no-correction --why "invented reason" \
    > /dev/null 2> "$T/err"
who_check "ref set" reference_version
env -u USER "$BIN" --db "$W" probe move P-1 --lot L2 --why "invented reason" > /dev/null 2> "$T/err"
who_check "probe move" probe_version
# with $USER set, or --by, nothing is said and that name is stored
USER=invented-user "$BIN" --db "$W" exclude 4 --why "invented reason" > /dev/null 2> "$T/err"
[ -s "$T/err" ] && bad "exclude with \$USER said: $(cat "$T/err")"
[ "$(sqlite3 "$W" "SELECT by_whom FROM exclusion WHERE reading_id = 4")" = invented-user ] ||
    bad "exclude did not store \$USER"
# a user id without a login name: "uid N" (needs root to take another user id)
if [ "$(id -u)" = 0 ] && command -v setpriv > /dev/null && ! getent passwd 54321 > /dev/null; then
    chmod 777 "$T" && chmod 666 "$W"
    env -u USER setpriv --reuid=54321 --regid=54321 --clear-groups "$BIN" --db "$W" exclude 5 \
        --why "invented reason" > /dev/null 2> "$T/err" || bad "exclude as uid 54321: $(cat "$T/err")"
    [ "$(sqlite3 "$W" "SELECT by_whom FROM exclusion WHERE reading_id = 5")" = "uid 54321" ] ||
        bad "a user id without a name was not stored as 'uid 54321'"
    grep -q "recorded by 'uid 54321', the user id: \$USER is not set and user id 54321 has no login name" "$T/err" ||
        bad "exclude as uid 54321 does not say so: $(cat "$T/err")"
    chmod 755 "$T"
else
    echo "records: uid without a login name: skipped (needs root and setpriv)"
fi
echo "records: who made a change is the login name when \$USER is unset, and said"

# 6. probe move: every refusal leaves the database byte for byte as it was (the dump and the
# file), with its exit status; a move that would change the runs an issued lot report counted
# is refused; a move valid from after them is not.
M="$T/move.db"
Bm() { "$BIN" --db "$M" "$@"; }
Bm init > /dev/null
Bm lot add A --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
Bm lot add B --part P --r25 10k --beta 3950K --tol-r25 2% --tol-beta 2% > /dev/null
Bm lot add O --part Q --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
Bm probe add P-1 --lot A > /dev/null
Bm probe add P-2 --lot A > /dev/null
Bm import "$HERE/cli/lib/bath.csv" --probe P-1 --at 2026-11-20T09:00:00Z > /dev/null
Bm import "$HERE/cli/lib/bath.csv" --probe P-2 --at 2026-11-20T09:00:00Z > /dev/null
Bm fit --lot A --model sh3 > /dev/null
Bm report --lot A -o "$T/lot-a.html" > /dev/null 2>&1 || bad "probe move: setup: lot report failed"
refused() { # RC PATTERN ARGS...
    want=$1 pat=$2
    shift 2
    d0=$(sqlite3 "$M" .dump | sha256sum) f0=$(sha256sum < "$M")
    Bm probe move "$@" > /dev/null 2> "$T/err"
    rc=$?
    [ "$rc" -eq "$want" ] || bad "probe move $*: exited $rc, expected $want: $(cat "$T/err")"
    grep -Eq "$pat" "$T/err" || bad "probe move $*: message does not say '$pat': $(cat "$T/err")"
    [ "$(sqlite3 "$M" .dump | sha256sum)" = "$d0" ] && [ "$(sha256sum < "$M")" = "$f0" ] ||
        bad "probe move $*: the database changed"
}
refused 65 "unknown lot 'Z'" P-1 --lot Z --why "invented reason"
refused 65 "unknown probe 'P-9'" P-9 --lot B --why "invented reason"
refused 65 "already in lot 'A'" P-1 --lot A --why "invented reason"
refused 65 "only between lots of its part" P-1 --lot O --why "invented reason"
refused 64 "move needs --why" P-1 --lot B
refused 64 "move needs --why" P-1 --lot B --why ""
refused 64 "move needs --lot" P-1 --why "invented reason"
refused 64 "not an ISO 8601" P-1 --lot B --why "invented reason" --from yesterday
refused 65 "later than now" P-1 --lot B --why "invented reason" --from 2030-01-01
refused 65 "before the record was created" P-1 --lot B --why "invented reason" --from 2020-01-01
refused 65 "invalid|control" P-1 --lot B --why "$(printf 'invented\033]0;title\007')"
# the run of 2026-11-20 counted in lot A's issued report: moving it away is refused (now is
# 2025-12-01, before that run)
refused 65 "lot 'A' has an issued lot report \\(report [0-9]+\\)" P-1 --lot B --why "invented reason"
# P-2 moved from after its run: allowed; the report's runs stay with lot A
SOURCE_DATE_EPOCH=1795651200 Bm probe move P-2 --lot B --why "invented reason" \
    --from 2026-11-25T00:00:00Z > "$T/out" 2>&1 || bad "probe move after the run: $(cat "$T/out")"
grep -q "moved probe P-2 from lot A to lot B, valid from 2026-11-25T00:00:00Z" "$T/out" ||
    bad "probe move after the run said: $(cat "$T/out")"
[ "$(Bm drift --lot A --json | python3 -c "import json,sys; print(len(json.load(sys.stdin)['probes']))")" = 2 ] ||
    bad "lot A no longer counts P-2's run of 2026-11-20"
Bm verify > /dev/null || bad "probe move: the record does not verify"
echo "records: probe move refusals leave the database as it was"
# 7. the run-quantity schema (version 11), from a version-10 file with rows in every table and
# its record chain: a version-11 file made by this program (resistance runs only) is taken
# back to version 10 by hand (the two run columns dropped, 'reading' made again with its
# r_ohm > 0 check, the new trigger dropped), then opened: every row, id, chain hash, index and
# trigger is as it was, and it verifies.
U="$T/v9.db"
Bu() { "$BIN" --db "$U" "$@"; }
# the SQL that takes a version-14 file back to version 13 (what 014-probe-lot-serial.sql
# changes: the probes' index by lot alone in place of the one by lot and serial)
back_to_13() {
    echo "DROP INDEX probe_lot_serial;"
    sed -n '/^CREATE INDEX probe_lot /p' "$HERE/../db/001-initial.sql"
}
# the SQL that takes a version-13 file of NTC lots only back to version 12 (what
# 013-lot-sensor.sql changes: 'lot' and 'lot_version' made again as 006-finite.sql and
# 008-versions.sql made them, without the sensor column, with their index and triggers)
back_to_12() {
    back_to_13
    echo "PRAGMA legacy_alter_table = ON;"
    echo "ALTER TABLE lot RENAME TO lot_new; ALTER TABLE lot_version RENAME TO lot_version_new;"
    sed -n '/^CREATE TABLE lot (/,/^) STRICT;/p' "$HERE/../db/006-finite.sql"
    sed -n '/^CREATE TABLE lot_version (/,/^) STRICT;/p' "$HERE/../db/008-versions.sql"
    echo "INSERT INTO lot SELECT id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25,
              tol_beta, note, created_at FROM lot_new ORDER BY id;
          INSERT INTO lot_version SELECT * FROM lot_version_new ORDER BY id;
          DROP TABLE lot_version_new; DROP TABLE lot_new;" # (legacy_alter_table stays on)
    sed -n '/^CREATE INDEX lot_version_of/p' "$HERE/../db/008-versions.sql"
    sed -n '/^CREATE TRIGGER lot_keep/,/END;/p;/^CREATE TRIGGER lot_stay/,/END;/p' \
        "$HERE/../db/007-record-chain.sql"
    sed -n '/^CREATE TRIGGER lot_version_keep/,/END;/p;/^CREATE TRIGGER lot_version_stay/,/END;/p' \
        "$HERE/../db/008-versions.sql"
}
# the SQL that takes a version-12 file back to version 11 (what 012-part-sensor.sql adds)
back_to_11() {
    back_to_12
    echo "DROP TRIGGER part_spec_sensor_shape;"
    for c in iec_class tol_s nom_s tol_x nom_x nom_t_k sensor; do
        echo "ALTER TABLE part_spec DROP COLUMN $c;"
    done
}
Bu init > /dev/null
Bu lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
Bu lot add L2 --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
Bu probe add P-1 --lot L > /dev/null
Bu probe add P-2 --lot L > /dev/null
Bu ref add R-1 --cert "C-1" --due 2027-06-30 --linear -0.1712K,0.00218,20C > /dev/null
Bu import "$HERE/cli/lib/bath.csv" --probe P-1 --ref R-1 --at 2026-11-20T09:00:00Z > /dev/null
Bu import "$HERE/cli/lib/bath.csv" --probe P-2 --at 2026-11-20T10:00:00Z --measuring-current 10uA \
    > /dev/null
Bu exclude 3 --why "invented reason" --by "A. Tester" > /dev/null
Bu fit --lot L --model sh3 > /dev/null
Bu report --run 1 -o "$T/v9.html" > /dev/null 2>&1
Bu part set P --model sh3 --coef 1.02228e-3,2.53165e-4,2e-10 --tol 0.3K --over -20/60 \
    > /dev/null
SOURCE_DATE_EPOCH=1795651200 Bu lot set L --tol-r25 0.5% --why "invented" --by "A. Tester" \
    --from 2026-12-01T00:00:00Z > /dev/null
SOURCE_DATE_EPOCH=1795651200 Bu ref set R-1 --cert "C-2" --due 2027-12-31 \
    --linear 0.05K,0.001,20C --why "invented" --by "A. Tester" --from 2026-12-01T00:00:00Z \
    > /dev/null
SOURCE_DATE_EPOCH=1795651200 Bu probe move P-2 --lot L2 --why "invented" \
    --from 2026-11-25T00:00:00Z > /dev/null 2>&1
Bu verify > "$T/verify9-before.txt" 2>&1 || bad "v9 setup: the file does not verify"
for t in lot lot_version probe probe_version reference reference_version run reading exclusion \
         fit artifact part_spec chain; do
    [ "$(sqlite3 "$U" "SELECT count(*) FROM $t")" -gt 0 ] || bad "v9 setup: table $t is empty"
done
sqlite3 "$U" "PRAGMA foreign_keys = OFF; PRAGMA legacy_alter_table = ON;
$(back_to_11)
ALTER TABLE run DROP COLUMN quantity_unit; ALTER TABLE run DROP COLUMN quantity;
DROP TRIGGER reading_resistance_positive;
ALTER TABLE reading RENAME TO reading_new;
$(sed -n '/^CREATE TABLE reading (/,/^) STRICT;/p' "$HERE/../db/006-finite.sql")
INSERT INTO reading SELECT * FROM reading_new ORDER BY id; DROP TABLE reading_new;
CREATE TRIGGER reading_keep BEFORE UPDATE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never edited'); END;
CREATE TRIGGER reading_stay BEFORE DELETE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never deleted'); END;
PRAGMA user_version = 10;" || bad "v9 setup: the file could not be taken back to version 10"
sqlite3 "$U" "SELECT sql FROM sqlite_schema WHERE name = 'reading'" | grep -q "r_ohm > 0" ||
    bad "v9 setup: reading has no r_ohm > 0 check"
dump9() {
    for t in lot lot_version probe probe_version reference reference_version run reading \
             exclusion fit artifact part_spec chain; do
        cols=$(sqlite3 "$1" "SELECT group_concat(name, ', ') FROM pragma_table_info('$t')
                             WHERE name NOT IN ('quantity', 'quantity_unit', 'sensor',
                                                'nom_t_k', 'nom_x', 'tol_x', 'nom_s', 'tol_s',
                                                'iec_class')")
        sqlite3 "$1" "SELECT '$t', $cols FROM $t ORDER BY rowid"
    done
    sqlite3 "$1" "SELECT type, name, tbl_name, sql FROM sqlite_schema
                  WHERE type IN ('index', 'trigger', 'view')
                    AND name NOT IN ('reading_resistance_positive', 'part_spec_sensor_shape',
                                     'lot_version_sensor_shape', 'probe_lot', 'probe_lot_serial')
                  ORDER BY type, name"
}
dump9 "$U" > "$T/before9.txt"
Bu lot list > /dev/null 2> "$T/err" || bad "the upgrade from version 9 failed: $(cat "$T/err")"
[ "$(sqlite3 "$U" 'PRAGMA user_version')" = 14 ] || bad "the version-9 file was not upgraded"
dump9 "$U" > "$T/after9.txt"
cmp -s "$T/before9.txt" "$T/after9.txt" ||
    bad "the upgrade from 9 changed rows, ids, hashes, indexes or triggers: $(diff "$T/before9.txt" "$T/after9.txt")"
[ "$(sqlite3 "$U" 'SELECT count(*) FROM run WHERE quantity IS NOT NULL OR quantity_unit IS NOT NULL')" = 0 ] ||
    bad "an upgraded run has a quantity (NULL: a resistance)"
Bu verify > "$T/verify9-after.txt" 2>&1 || bad "the upgraded version-9 file does not verify: $(cat "$T/verify9-after.txt")"
cmp -s "$T/verify9-before.txt" "$T/verify9-after.txt" ||
    bad "verify says otherwise after the upgrade: $(diff "$T/verify9-before.txt" "$T/verify9-after.txt")"
[ "$(sqlite3 "$U" 'PRAGMA integrity_check')" = ok ] || bad "integrity_check after the upgrade from 9"
[ -z "$(sqlite3 "$U" 'PRAGMA foreign_key_check')" ] || bad "foreign_key_check after the upgrade from 9"
Bu fit --probe P-1 --model sh3 --dry-run > /dev/null 2>&1 || bad "a fit after the upgrade from 9 failed"
# the record still refuses a resistance <= 0, and takes a reported temperature < 0
out=$(sqlite3 "$U" "INSERT INTO reading (run_id, line, t_raw, t_k, r_ohm, u_t_k, u_r_ohm)
                    VALUES (1, 99, 25, 298.15, -1, 0, 0)" 2>&1)
case $out in *"a resistance must be > 0 ohm"*) ;; *) bad "a negative resistance: $out" ;; esac
echo "records: the run-quantity schema keeps a version-9 record, its hashes and checks"

# 7b. the part-sensor schema (version 12), from a version-11 file with rows in every table,
# part specifications among them, and its record chain: the same file taken back to version
# 11 by hand (the seven part_spec columns and the trigger dropped) is opened again: every row,
# id, chain hash, index and trigger is as it was, it verifies, the old specifications read as
# NTC ones, and a junction part can be specified after the upgrade.
cp "$U" "$T/v11.db"
U11="$T/v11.db"
B11() { "$BIN" --db "$U11" "$@"; }
B11 part set P --tol 0.2K --over 0/50 --note "invented second row" > /dev/null ||
    bad "v11 setup: a second part specification"
B11 verify > "$T/verify11-before.txt" 2>&1 || bad "v11 setup: the file does not verify"
sqlite3 "$U11" "PRAGMA foreign_keys = OFF; $(back_to_11) PRAGMA user_version = 11;" ||
    bad "v11 setup: the file could not be taken back to version 11"
[ "$(sqlite3 "$U11" "SELECT count(*) FROM pragma_table_info('part_spec') WHERE name = 'sensor'")" = 0 ] ||
    bad "v11 setup: part_spec still has the sensor column"
dump9 "$U11" > "$T/before11.txt"
B11 lot list > /dev/null 2> "$T/err" || bad "the upgrade from version 11 failed: $(cat "$T/err")"
[ "$(sqlite3 "$U11" 'PRAGMA user_version')" = 14 ] || bad "the version-11 file was not upgraded"
dump9 "$U11" > "$T/after11.txt"
cmp -s "$T/before11.txt" "$T/after11.txt" ||
    bad "the upgrade from 11 changed rows, ids, hashes, indexes or triggers: $(diff "$T/before11.txt" "$T/after11.txt")"
[ "$(sqlite3 "$U11" 'SELECT count(*) FROM part_spec WHERE sensor IS NOT NULL OR nom_x IS NOT NULL OR iec_class IS NOT NULL')" = 0 ] ||
    bad "an upgraded part specification has a sensor kind (NULL: an NTC)"
B11 verify > "$T/verify11-after.txt" 2>&1 || bad "the upgraded version-11 file does not verify: $(cat "$T/verify11-after.txt")"
cmp -s "$T/verify11-before.txt" "$T/verify11-after.txt" ||
    bad "verify says otherwise after the upgrade from 11: $(diff "$T/verify11-before.txt" "$T/verify11-after.txt")"
[ "$(B11 part show P --json | python3 -c "import json,sys; print(' '.join(s['sensor'] for s in json.load(sys.stdin)))")" = "ntc ntc" ] ||
    bad "the upgraded part specifications do not read as NTC ones"
B11 part set J --sensor junction --v-ref 600mV --dvdt -2mV/K --tol-v 5mV --tol-dvdt 0.1mV/K \
    > /dev/null 2> "$T/err" || bad "a junction part after the upgrade from 11: $(cat "$T/err")"
B11 verify > /dev/null 2>&1 || bad "the upgraded version-11 file with a junction part does not verify"
# the record refuses a row whose kind and values do not match, whoever writes it
out=$(sqlite3 "$U11" "INSERT INTO part_spec (part, sensor, nom_t_k, nom_x, created_at)
                      VALUES ('X', 'junction', 298.15, 0.6, 't')" 2>&1)
case $out in *"sensor kind and its nominal values do not match"*) ;; *) bad "a junction row without its slope: $out" ;; esac
[ "$(sqlite3 "$U11" 'PRAGMA integrity_check')" = ok ] || bad "integrity_check after the upgrade from 11"
echo "records: the part-sensor schema keeps a version-11 record, its hashes and checks"

# 7c. the lot-sensor schema (version 13), from a version-12 file with rows in every table,
# lot versions among them, and its record chain: the same file taken back to version 12 by
# hand ('lot' and 'lot_version' made again without the sensor column and with their NOT NULL
# values) is opened again: every row, id, chain hash, index and trigger is as it was, it
# verifies, and the old lots read as NTC lots.  Then a junction lot is added, and the lot
# refusals (the wrong kind's option, a kind the part does not have, a tolerance of a junction
# lot) leave the file byte for byte as it was.
cp "$U11" "$T/v12.db"
U12="$T/v12.db"
B12() { "$BIN" --db "$U12" "$@"; }
B12 verify > "$T/verify12-before.txt" 2>&1 || bad "v12 setup: the file does not verify"
[ "$(sqlite3 "$U12" "SELECT count(*) FROM lot_version")" -gt 0 ] || bad "v12 setup: no lot versions"
sqlite3 "$U12" "PRAGMA foreign_keys = OFF; $(back_to_12) PRAGMA user_version = 12;" ||
    bad "v12 setup: the file could not be taken back to version 12"
[ "$(sqlite3 "$U12" "SELECT count(*) FROM pragma_table_info('lot') WHERE name = 'sensor'")" = 0 ] ||
    bad "v12 setup: lot still has the sensor column"
[ "$(sqlite3 "$U12" "SELECT \"notnull\" FROM pragma_table_info('lot') WHERE name = 'r25_ohm'")" = 1 ] ||
    bad "v12 setup: lot.r25_ohm is not NOT NULL as in version 12"
dump9 "$U12" > "$T/before12.txt"
sqlite3 "$U12" "SELECT sql FROM sqlite_schema WHERE name = 'lot'" > "$T/lot12.sql"
B12 lot list > /dev/null 2> "$T/err" || bad "the upgrade from version 12 failed: $(cat "$T/err")"
[ "$(sqlite3 "$U12" 'PRAGMA user_version')" = 14 ] || bad "the version-12 file was not upgraded"
dump9 "$U12" > "$T/after12.txt"
cmp -s "$T/before12.txt" "$T/after12.txt" ||
    bad "the upgrade from 12 changed rows, ids, hashes, indexes or triggers: $(diff "$T/before12.txt" "$T/after12.txt")"
sqlite3 "$U12" "SELECT sql FROM sqlite_schema WHERE name = 'lot'" | cmp -s - "$T/lot12.sql" &&
    bad "the upgrade from 12 did not make the lot table again"
[ "$(sqlite3 "$U12" 'SELECT count(*) FROM lot WHERE sensor IS NOT NULL')" = 0 ] ||
    bad "an upgraded lot has a sensor kind (NULL: an NTC lot)"
B12 verify > "$T/verify12-after.txt" 2>&1 || bad "the upgraded version-12 file does not verify: $(cat "$T/verify12-after.txt")"
cmp -s "$T/verify12-before.txt" "$T/verify12-after.txt" ||
    bad "verify says otherwise after the upgrade from 12: $(diff "$T/verify12-before.txt" "$T/verify12-after.txt")"
[ "$(sqlite3 "$U12" 'PRAGMA integrity_check')" = ok ] || bad "integrity_check after the upgrade from 12"
[ -z "$(sqlite3 "$U12" 'PRAGMA foreign_key_check')" ] || bad "foreign_key_check after the upgrade from 12"
[ "$(B12 lot list --json | python3 -c "import json,sys; print(' '.join(l['sensor'] for l in json.load(sys.stdin)))")" = "ntc ntc" ] ||
    bad "the upgraded lots do not read as NTC lots"
B12 drift --lot L > /dev/null 2> "$T/err"; [ $? -le 1 ] || bad "drift --lot after the upgrade from 12: $(cat "$T/err")"
# refusals, each leaving the file as it was (J is the junction part of section 7b)
sum12=$(sha256sum < "$U12")
refused() { # expected status, then the arguments
    want=$1; shift
    B12 "$@" > /dev/null 2> "$T/err"; got=$?
    [ "$got" = "$want" ] || bad "'$*' exited $got, not $want: $(cat "$T/err")"
    [ "$(sha256sum < "$U12")" = "$sum12" ] || bad "'$*' changed the file"
}
refused 64 lot add LJ --part J --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1%
refused 64 lot add LJ --part J --pair 0/50
refused 64 lot add LJ --part J --sensor junction --tol-r25 1%
refused 65 lot add LJ --part J --sensor ptc
refused 65 lot add LJ --part J --sensor ntc --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1%
refused 64 lot add LN --part NEW-NTC
refused 64 lot add LJ --part J --sensor diode
refused 64 lot set L --sensor junction --why "invented"
B12 lot add LJ --part J --note "invented" > "$T/out" 2>&1 || bad "a junction lot after the upgrade from 12: $(cat "$T/out")"
grep -q "added junction lot LJ" "$T/out" || bad "the junction lot's kind is not said: $(cat "$T/out")"
[ "$(sqlite3 "$U12" "SELECT sensor, r25_ohm IS NULL, tol_beta IS NULL FROM lot WHERE code = 'LJ'")" = "junction|1|1" ] ||
    bad "the junction lot is not stored as a junction lot without R25 and B"
sum12=$(sha256sum < "$U12")
refused 64 lot set LJ --tol-r25 0.5% --why "invented"
refused 65 lot set LJ --note "invented" --why "invented" --by "A. Tester"
B12 lot set LJ --note "invented: rack 3" --why "invented" --by "A. Tester" > /dev/null 2>&1 ||
    bad "a note version of a junction lot"
[ "$(sqlite3 "$U12" "SELECT tol_r25 IS NULL AND tol_beta IS NULL FROM lot_version ORDER BY id DESC LIMIT 1")" = 1 ] ||
    bad "the junction lot's version holds tolerances"
B12 verify > /dev/null 2>&1 || bad "the version-13 file with a junction lot does not verify"
# schema 14: the lot's probes by serial (db/014-probe-lot-serial.sql), for every upgraded file
for f in "$V5" "$U" "$U11" "$U12"; do
    [ "$(sqlite3 "$f" "SELECT group_concat(name, ' ') FROM (SELECT name FROM sqlite_schema
                         WHERE type = 'index' AND name LIKE 'probe_lot%' ORDER BY name)")" = probe_lot_serial ] ||
        bad "$f: the upgrade did not index the probes by lot and serial in place of probe_lot"
done
# the record refuses rows whose kind and values do not match, whoever writes them
out=$(sqlite3 "$U12" "INSERT INTO lot (code, part, r25_ohm, created_at, sensor)
                      VALUES ('X', 'J', 10000, 't', 'junction')" 2>&1)
case $out in *lot_sensor_shape*) ;; *) bad "a junction lot with an R25: $out" ;; esac
out=$(sqlite3 "$U12" "INSERT INTO lot (code, part, created_at) VALUES ('X', 'N', 't')" 2>&1)
case $out in *lot_sensor_shape*) ;; *) bad "an NTC lot without R25: $out" ;; esac
out=$(sqlite3 "$U12" "INSERT INTO lot_version (lot_id, valid_from, tol_r25, tol_beta, why, by_whom, created_at)
                      SELECT id, '2030-01-01T00:00:00Z', 0.01, 0.01, 'w', 'b', 't' FROM lot WHERE code = 'LJ'" 2>&1)
case $out in *"tolerances and its lot's sensor kind do not match"*) ;; *) bad "a junction lot's version with tolerances: $out" ;; esac
out=$(sqlite3 "$U12" "INSERT INTO lot_version (lot_id, valid_from, note, why, by_whom, created_at)
                      SELECT id, '2030-01-01T00:00:00Z', 'n', 'w', 'b', 't' FROM lot WHERE code = 'L'" 2>&1)
case $out in *"tolerances and its lot's sensor kind do not match"*) ;; *) bad "an NTC lot's version without tolerances: $out" ;; esac
echo "records: the lot-sensor schema keeps a version-12 record, its hashes and checks; lots of other kinds"

# 8. readings of other quantities: import, fits of the wrong kind and bad files refused with
# the database byte for byte as it was
K="$T/kinds.db"
Bk() { "$BIN" --db "$K" "$@"; }
Bk init > /dev/null
Bk lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
Bk probe add P-1 --lot L > /dev/null
Bk probe add D-1 --lot L > /dev/null
Bk import "$HERE/cli/lib/bath.csv" --probe P-1 --at 2026-11-20T09:00:00Z > /dev/null
Bk import "$HERE/cli/lib/junction.csv" --probe D-1 --at 2026-11-21T09:00:00Z > /dev/null ||
    bad "kinds: a volts file was not imported"
k_refused() { # RC PATTERN ARGS...
    want=$1 pat=$2
    shift 2
    d0=$(sqlite3 "$K" .dump | sha256sum) f0=$(sha256sum < "$K")
    Bk "$@" > /dev/null 2> "$T/err"
    rc=$?
    [ "$rc" -eq "$want" ] || bad "kinds: $*: exited $rc, expected $want: $(cat "$T/err")"
    grep -Eq "$pat" "$T/err" || bad "kinds: $*: message does not say '$pat': $(cat "$T/err")"
    [ "$(sqlite3 "$K" .dump | sha256sum)" = "$d0" ] && [ "$(sha256sum < "$K")" = "$f0" ] ||
        bad "kinds: $*: the database changed"
}
printf 'temp_k,ohms,volts\n273.15,32000,0.65\n298.15,10000,0.60\n' > "$T/mixed.csv"
printf 'temp_k,volts,excite_a\n273.15,0.65,1e-5\n298.15,0.60,1e-5\n323.15,0.55,2e-5\n' > "$T/exc.csv"
printf 'temp_k,volts\n273.15,0.65\n298.15,abc\n' > "$T/badv.csv"
k_refused 65 "model 'sh3' reads ohm .* readings are V" fit --probe D-1 --model sh3
k_refused 65 "model 'vbe' reads V .* readings are ohm" fit --probe P-1 --model vbe
k_refused 65 "run [0-9]+ holds readings in V" fit --lot L --model sh3
k_refused 65 "mixed.csv" import "$T/mixed.csv" --probe D-1
k_refused 65 "exc.csv:4: field 'excite_a'" import "$T/exc.csv" --probe D-1
k_refused 65 "badv.csv:3" import "$T/badv.csv" --probe D-1
k_refused 65 "field 'excite_a'" import "$HERE/cli/lib/junction.csv" --probe D-1 \
    --measuring-current 20uA --new-run
Bk verify > /dev/null || bad "kinds: the record does not verify"
echo "records: other quantities are stored, and refusals leave the database as it was"
exit $status
