#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The PostgreSQL backend's own checks, run inside tests/pg/server.sh (which makes the server,
# the owner role bandgap_owner and its database): prints "ok NAME" / "not ok NAME".
#   goldens       the CLI golden cases on the server (tests/pg/goldens.sh); BG_PG_PART=goldens
#                 runs only these, BG_PG_PART=rest all but these
#   same-record   one session of commands, hostile text in every name, on SQLite and on the
#                 server: export --json, list and verify give the same bytes (ids, times,
#                 numbers, the record chain's head), the text read back literally
#   migrations    two clients initialising one database at once apply each migration once;
#                 a schema newer than the program is refused (exit 65); a database with
#                 tables of its own is not taken over
#   upgrade-13    the lot-sensor schema from a version-12 database with rows (upgrade13.sh)
#   all-or-nothing  a bad line (checked before writing) and a failure inside the write
#                 transaction (the server refuses the readings' insert) leave every table
#                 as it was; 8 imports killed with SIGKILL at random moments leave whole runs
#   append-only   the benches' role (SELECT and INSERT only) imports and fits, but cannot
#                 UPDATE, DELETE or TRUNCATE history; the owner is stopped by the triggers; a
#                 read-only role gets a clear error (exit 73) and nothing is written
#   writers       4 writers and 2 readers at once for a bounded time: every command exits 0,
#                 no row is lost (runs = imports reported), the chain verifies
#   its90         an ITS-90 reference and its version, and readings corrected through it,
#                 read back the same on both backends
#   moves         probes moved between lots (valid from a time written with an offset, equal
#                 to a run's start, and half a second after one): probe and lot lists, lot
#                 runs and fits, drift of a lot, a part and a probe, export, a lot fit, lot
#                 reports and verify give the same bytes and exit codes on both backends
#   run-quantities  runs of volts, reported temperatures and codes (and a resistance run)
#                 imported, fitted (each probe; the mixed lot refused alike) and read back: export, show,
#                 list, verify (the chain's head) and a run report the same bytes on both
#   sequences     tests/sequence.sh with BG_SEQ_BACKEND=pg: a whole sequence over SCPI into the
#                 server, SIGKILL and --resume, an unsettled setpoint, resume and bad files
#                 refused with the data unchanged (about 40 s)
#   unavailable   a stopped server: a clear message and exit 69
# Usage: check.sh BANDGAP
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
export SOURCE_DATE_EPOCH=1764547200
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
ADMIN() { $PSQL -U "$BG_PG_ADMIN" -d postgres -c "$1"; }
newdb() { ADMIN "CREATE DATABASE $1 OWNER bandgap_owner TEMPLATE template0" > /dev/null; }
result() { # $1 name, $2 status (0 ok), $3 why
    if [ "$2" -eq 0 ]; then echo "ok pg/$1"; else echo "not ok pg/$1: $3"; fi
}
# every table's rows in a fixed order, as one digest (the server's data, "unchanged" checks)
digest() {
    for t in lot probe reference run reading exclusion fit artifact part_spec chain \
             reference_version lot_version probe_version bandgap_schema; do
        $PSQL -d "$1" -c "SELECT * FROM $t ORDER BY 1" 2>/dev/null || echo "no $t"
    done | sha256sum
}

# ---- goldens ----
# BG_PG_PART=goldens runs this part alone, BG_PG_PART=rest all the others (make test runs the
# goldens with the plain build and the rest under the sanitizers, side by side); unset: all.
PART=${BG_PG_PART:-all}
if [ "$PART" != rest ]; then
    sh "$HERE/goldens.sh" "$BIN" > "$T/goldens.log" 2>&1
    gs=$?
    grep -v '^ok ' "$T/goldens.log" | head -40
    n_ok=$(grep -c '^ok ' "$T/goldens.log")
    [ "$n_ok" -ge 120 ] || gs=1
    result goldens "$gs" "$(grep -c '^not ok' "$T/goldens.log") cases differ, $n_ok pass"
fi
[ "$PART" = goldens ] && exit 0

# ---- same record on both backends, hostile text ----
# names with quotes, SQL and shell metacharacters, backslashes, percent signs, non-ASCII
LOT="L'1; DROP TABLE lot;--"
P1="P\"1\\\\x' OR '1'='1"
P2="\$1 %s %n E'\\x00' /* */ -- ä€😀"
REF="R'); DELETE FROM reading; --"
cp "$HERE/../cli/lib/bath.csv" "$T/bath.csv"
session() { # $1 database, $2 a name for its report
    "$BIN" --db "$1" init > /dev/null &&
    "$BIN" --db "$1" lot add "$LOT" --part "NTC'10K" --r25 10k --beta 3950K --pair 25/85 \
        --tol-r25 1% --tol-beta 1% --note "note with 'quotes' and \"double\" and \\\\" > /dev/null &&
    "$BIN" --db "$1" probe add "$P1" --lot "$LOT" > /dev/null &&
    "$BIN" --db "$1" probe add "$P2" --lot "$LOT" > /dev/null &&
    "$BIN" --db "$1" ref add "$REF" --cert "C'1" --due 2027-06-30 \
        --linear -0.1712K,0.00218,20C > /dev/null &&
    "$BIN" --db "$1" import "$T/bath.csv" --probe "$P1" --ref "$REF" --operator "O'Brien; --" \
        --medium "oil\"; SELECT 1" --at 2026-11-20T09:00:00Z > /dev/null &&
    "$BIN" --db "$1" import "$T/bath.csv" --probe "$P2" --at 2026-11-21T09:00:00Z > /dev/null &&
    "$BIN" --db "$1" fit --lot "$LOT" --model sh3 > /dev/null &&
    "$BIN" --db "$1" fit --probe "$P1" --model beta > /dev/null &&
    "$BIN" --db "$1" exclude 3 --why "it's 'bad'" --by "Q'A" > /dev/null &&
    "$BIN" --db "$1" fit --probe "$P1" --model sh3 > /dev/null &&
    "$BIN" --db "$1" report --lot "$LOT" --lab "Lab 'A'" -o "$T/r-$2.html" > /dev/null
}
newdb same
ok=0
(cd "$T" && session "sqlite:$T/same.db" sq) || { ok=1; echo "# the SQLite session failed"; }
(cd "$T" && session "postgresql:///same" pg) || { ok=1; echo "# the server session failed"; }
for what in "export --lot $LOT --json" "list runs" "list fits" "probe list" "verify" \
            "drift --lot $LOT --json"; do
    # shellcheck disable=SC2086
    a=$(cd "$T" && "$BIN" --db "sqlite:$T/same.db" $what 2>&1; echo "rc=$?")
    b=$(cd "$T" && "$BIN" --db "postgresql:///same" $what 2>&1; echo "rc=$?")
    [ "$a" = "$b" ] || { ok=1; echo "# '$what' differs:"; printf '%s\n' "$a" | head -5;
                         printf '%s\n' "$b" | head -5; }
done
# the hostile names read back literally, byte for byte
"$BIN" --db postgresql:///same export --lot "$LOT" --json > "$T/same.json"
/usr/bin/python3 - "$T/same.json" "$LOT" "$P1" "$P2" <<'PY' || ok=1
import json, sys
d = json.load(open(sys.argv[1]))
serials = sorted(p["serial"] for p in d["probes"])
want = sorted(sys.argv[3:5])
assert serials == want, (serials, want)
assert all(p["lot"] == sys.argv[2] for p in d["probes"])
PY
cmp -s "$T/r-sq.html" "$T/r-pg.html" || { ok=1; echo "# the lot reports differ";
    diff "$T/r-sq.html" "$T/r-pg.html" | head -10; }
result same-record "$ok" "SQLite and the server disagree"

# ---- migrations ----
newdb mig
ok=0
"$BIN" --db postgresql:///mig init > "$T/i1" 2>&1 & p1=$!
"$BIN" --db postgresql:///mig init > "$T/i2" 2>&1 & p2=$!
wait $p1 || { ok=1; cat "$T/i1"; }
wait $p2 || { ok=1; cat "$T/i2"; }
nmig=$(ls "$HERE"/../../db/pg/[0-9][0-9][0-9]-*.sql | wc -l)
[ "$($PSQL -d mig -c 'SELECT count(*), min(version), max(version) FROM bandgap_schema')" = \
  "$nmig|1|$nmig" ] ||
    { ok=1; echo "# migrations not applied exactly once"; }
grep -q "created" "$T/i1" "$T/i2" || ok=1
$PSQL -d mig -c "INSERT INTO bandgap_schema VALUES (99, '099-future.sql', 'now')"
"$BIN" --db postgresql:///mig lot list > /dev/null 2> "$T/err"
rc=$?
[ "$rc" -eq 65 ] && grep -q "schema version 99, newer than this program knows ($nmig)" "$T/err" ||
    { ok=1; echo "# newer schema: rc $rc: $(cat "$T/err")"; }
newdb alien
$PSQL -d alien -c "CREATE TABLE invoices (id int)"
"$BIN" --db postgresql:///alien init > /dev/null 2> "$T/err"
rc=$?
[ "$rc" -eq 65 ] && grep -q "is not a bandgap database (1 tables of its own)" "$T/err" ||
    { ok=1; echo "# foreign database: rc $rc: $(cat "$T/err")"; }
"$BIN" --db postgresql:///nosuchdb lot list > /dev/null 2> "$T/err"
rc=$?
[ "$rc" -eq 69 ] || { ok=1; echo "# missing database: rc $rc: $(cat "$T/err")"; }
# without --db and $BANDGAP_DB, libpq's environment (PGDATABASE here) names the server
( cd "$T" && unset BANDGAP_DB && PGDATABASE=mig "$BIN" lot list > /dev/null 2> "$T/err" )
grep -q "schema version 99" "$T/err" || { ok=1; echo "# PGDATABASE: $(cat "$T/err")"; }
[ ! -e "$T/bandgap.db" ] || { ok=1; echo "# PGDATABASE set, yet a file was made"; }
result migrations "$ok" "migrations or refusals wrong"

# ---- all or nothing ----
newdb aon
ok=0
U=postgresql:///aon
"$BIN" --db $U init > /dev/null
"$BIN" --db $U lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
for p in K C1 C2 C3; do "$BIN" --db $U probe add $p --lot L > /dev/null; done
awk 'BEGIN { print "# INVENTED fault-test readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < 20000; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / 20000,
        100000 * exp(-4 * i / 20000) }' > "$T/big.csv"
cp "$T/big.csv" "$T/bad.csv"
echo "300,abc,0.002" >> "$T/bad.csv"
before=$(digest aon)
"$BIN" --db $U import "$T/bad.csv" --probe K 2> "$T/err"
rc=$?
[ "$rc" -eq 65 ] && grep -q "bad.csv:20003: field 'ohms': not a number: 'abc'" "$T/err" ||
    { ok=1; echo "# bad line: rc $rc $(cat "$T/err")"; }
[ "$(digest aon)" = "$before" ] || { ok=1; echo "# a bad line changed the data"; }
# a role that may add runs but not readings: the failure comes inside the transaction, after
# the run's row was written, and the server rolls all of it back
ADMIN "CREATE ROLE halfway LOGIN" > /dev/null
$PSQL -d aon -c "GRANT SELECT ON ALL TABLES IN SCHEMA public TO halfway;
                 GRANT INSERT ON run, chain TO halfway"
"$BIN" --db "postgresql:///aon?user=halfway" import "$T/big.csv" --probe K 2> "$T/err"
rc=$?
[ "$rc" -eq 73 ] && grep -q "role 'halfway' may not" "$T/err" ||
    { ok=1; echo "# half-written import: rc $rc $(cat "$T/err")"; }
[ "$(digest aon)" = "$before" ] || { ok=1; echo "# a failed transaction changed the data"; }
# killed importers: whole runs or none
i=0
while [ $i -lt 8 ]; do
    "$BIN" --db $U import "$T/big.csv" --probe C1 --new-run > /dev/null 2>&1 &
    pid=$!
    sleep "0.$(( (i * 37 + 11) % 90 + 5 ))"
    kill -9 $pid 2> /dev/null
    wait $pid 2> /dev/null
    i=$((i + 1))
done
sleep 1 # the server notices the closed connections and rolls their transactions back
partial=$($PSQL -d aon -c "SELECT count(*) FROM run r WHERE r.nreadings <> (SELECT count(*)
    FROM reading g WHERE g.run_id = r.id)")
orphans=$($PSQL -d aon -c "SELECT count(*) FROM reading g WHERE NOT EXISTS (SELECT 1 FROM run r
    WHERE r.id = g.run_id)")
[ "$partial" = 0 ] && [ "$orphans" = 0 ] || { ok=1; echo "# partial runs: $partial $orphans"; }
"$BIN" --db $U verify > "$T/v" 2>&1 || { ok=1; cat "$T/v"; }
result all-or-nothing "$ok" "a failed or killed import left a trace"

# ---- append-only and roles ----
newdb roles
ok=0
U=postgresql:///roles
"$BIN" --db $U init > /dev/null
ADMIN "CREATE ROLE bench1 LOGIN; CREATE ROLE reader LOGIN" > /dev/null
$PSQL -d roles -c "GRANT SELECT, INSERT ON ALL TABLES IN SCHEMA public TO bench1;
                   GRANT SELECT ON ALL TABLES IN SCHEMA public TO reader"
BU="postgresql:///roles?user=bench1"
"$BIN" --db "$BU" lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% \
    > /dev/null || ok=1
"$BIN" --db "$BU" probe add K --lot L > /dev/null || ok=1
"$BIN" --db "$BU" import "$T/bath.csv" --probe K > /dev/null || ok=1
"$BIN" --db "$BU" fit --lot L --model sh3 > /dev/null || ok=1
[ $ok -eq 0 ] || echo "# the benches' role could not work"
for sql in "UPDATE reading SET t_k = t_k + 1" "DELETE FROM fit" "TRUNCATE chain CASCADE" \
           "UPDATE lot SET note = 'x'" "DELETE FROM bandgap_schema"; do
    if $PSQL -d roles -U bench1 -c "$sql" > /dev/null 2> "$T/err"; then
        ok=1; echo "# bench1 could: $sql"
    fi
    grep -q "permission denied" "$T/err" || { ok=1; echo "# bench1 $sql: $(cat "$T/err")"; }
    if $PSQL -d roles -c "$sql" > /dev/null 2> "$T/err"; then
        ok=1; echo "# the owner could: $sql"
    fi
    grep -q "never\|bandgap_schema" "$T/err" || [ "$sql" = "DELETE FROM bandgap_schema" ] ||
        { ok=1; echo "# owner $sql: $(cat "$T/err")"; }
done
before=$(digest roles)
"$BIN" --db "postgresql:///roles?user=reader" probe add K2 --lot L > /dev/null 2> "$T/err"
rc=$?
[ "$rc" -eq 73 ] && grep -q "the role 'reader' may not do this" "$T/err" ||
    { ok=1; echo "# read-only role: rc $rc $(cat "$T/err")"; }
"$BIN" --db "postgresql:///roles?user=reader" probe list > /dev/null || ok=1
[ "$(digest roles)" = "$before" ] || { ok=1; echo "# a refused write changed the data"; }
"$BIN" --db $U verify > /dev/null || ok=1
result append-only "$ok" "the roles or the triggers let history change"

# ---- 4 writers and 2 readers ----
newdb busy
ok=0
U=postgresql:///busy
"$BIN" --db $U init > /dev/null
"$BIN" --db $U lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
for w in 1 2 3 4; do "$BIN" --db $U probe add W$w --lot L > /dev/null; done
"$BIN" --db $U import "$T/bath.csv" --probe W1 > /dev/null 2>&1
"$BIN" --db $U fit --lot L --model sh3 > /dev/null 2>&1
END=$(( $(date +%s) + ${PG_BUSY_SECONDS:-8} ))
writer() { # $1 = probe; each import a file of its own (an invented offset per round)
    n=0
    while [ "$(date +%s)" -lt "$END" ]; do
        awk -v k="$n" -v w="$1" 'BEGIN { print "temp_k,ohms,u_temp_k";
            for (i = 0; i < 40; i++) printf "%.6f,%.6f,0.002\n", 260 + 2 * i + k / 1000,
                50000 * exp(-0.03 * i) + length(w) }' > "$T/w-$1-$n.csv"
        if "$BIN" --db $U import "$T/w-$1-$n.csv" --probe "$1" > /dev/null 2>> "$T/w-$1.err"
        then n=$((n + 1)); else echo "FAIL" >> "$T/w-$1.err"; fi
        if [ $((n % 3)) -eq 0 ]; then
            "$BIN" --db $U fit --probe "$1" --model sh3 > /dev/null 2>> "$T/w-$1.err" ||
                echo "FAIL fit" >> "$T/w-$1.err"
        fi
    done
    echo "$n" > "$T/w-$1.n"
}
reader() {
    while [ "$(date +%s)" -lt "$END" ]; do
        "$BIN" --db $U export --lot L --json > /dev/null 2>> "$T/r-$1.err" || echo FAIL >> "$T/r-$1.err"
        # a lot whose probes' latest runs are not fitted yet has no verdict (exit 65)
        "$BIN" --db $U drift --lot L > /dev/null 2> "$T/r-$1.d"
        rc=$?
        cat "$T/r-$1.d" >> "$T/r-$1.err"
        [ $rc -le 1 ] || { [ $rc -eq 65 ] && grep -q "has no fitted probes" "$T/r-$1.d"; } ||
            echo "FAIL drift $rc" >> "$T/r-$1.err"
    done
}
for w in W1 W2 W3 W4; do writer $w & done
reader 1 & reader 2 &
wait
total=0
for w in W1 W2 W3 W4; do total=$((total + $(cat "$T/w-$w.n"))); done
runs=$($PSQL -d busy -c "SELECT count(*) FROM run")
readings=$($PSQL -d busy -c "SELECT count(*) FROM reading")
if cat "$T"/w-*.err "$T"/r-*.err 2> /dev/null | grep -q FAIL; then
    ok=1; echo "# errors under load:"; cat "$T"/w-*.err "$T"/r-*.err | grep -v warning | head -5
fi
[ "$runs" = $((total + 1)) ] && [ "$readings" = $((total * 40 + 11)) ] ||
    { ok=1; echo "# lost rows: $total imports reported, $runs runs, $readings readings"; }
[ "$total" -ge 8 ] || { ok=1; echo "# only $total imports in the time"; }
"$BIN" --db $U verify > "$T/v" 2>&1 || { ok=1; cat "$T/v"; }
echo "# writers: $total imports ($readings readings) by 4 writers beside 2 readers"
result writers "$ok" "rows lost or errors under load"

# ---- an ITS-90 reference ----
newdb refs
ok=0
U=postgresql:///refs
for db in "$U" "$T/refs.db"; do
    "$BIN" --db "$db" init > /dev/null
    "$BIN" --db "$db" lot add L-A --part NTC-10K --r25 10k --beta 3950K --tol-r25 1% \
        --tol-beta 1% > /dev/null
    "$BIN" --db "$db" lot add L-B --part NTC-10K --r25 10k --beta 3950K --tol-r25 1% \
        --tol-beta 1% > /dev/null
    "$BIN" --db "$db" probe add P-1 --lot L-A > /dev/null
    "$BIN" --db "$db" ref add SPRT-9 --cert "INV-9 (invented)" \
        --its90 TPW-Zn,25.5012R,-3.08e-5,3.85e-6 > /dev/null || ok=1
    "$BIN" --db "$db" ref set SPRT-9 --cert "INV-10 (invented)" --by t --why recal \
        --from 2099-01-01T00:00:00Z --its90 TPW-Ag,25.4R,1e-5,2e-6,3e-7,4e-8,3.3759 \
        > /dev/null 2>&1
    printf 'ref_ohms,ohms\n29.7419,12000\n40.9254,4000\n' > "$T/its.csv"
    "$BIN" --db "$db" import "$T/its.csv" --probe P-1 --ref SPRT-9 --at 2026-11-20T09:00:00Z \
        > /dev/null || ok=1
done
for q in "ref show SPRT-9 --json" "show run 1 --json"; do
    # shellcheck disable=SC2086
    a=$("$BIN" --db "$U" $q 2>&1 | sed 's/"[a-z_]*_at":"[^"]*"//g; s/"valid_from":"[^"]*"//g')
    # shellcheck disable=SC2086
    b=$("$BIN" --db "$T/refs.db" $q 2>&1 | sed 's/"[a-z_]*_at":"[^"]*"//g; s/"valid_from":"[^"]*"//g')
    [ "$a" = "$b" ] || { ok=1; echo "# $q differs:"; echo "$a"; echo "$b"; }
done
result its90 "$ok" "an ITS-90 reference differs between backends"

# ---- probe moves: every lot-wide read follows them alike on both backends ----
newdb moves
ok=0
U=postgresql:///moves
for db in "$U" "sqlite:$T/moves.db"; do
    (cd "$T" &&
    "$BIN" --db "$db" init > /dev/null &&
    for l in L-A L-B; do "$BIN" --db "$db" lot add $l --part NTC-10K --r25 10k --beta 3950K \
        --pair 25/85 --tol-r25 1% --tol-beta 1% > /dev/null || exit 1; done &&
    for p in P-1 P-2 P-3; do "$BIN" --db "$db" probe add $p --lot L-A > /dev/null || exit 1
        "$BIN" --db "$db" import bath.csv --probe $p --at 2025-12-10T09:00:00Z > /dev/null ||
        exit 1; done &&
    "$BIN" --db "$db" fit --lot L-A --model sh3 > /dev/null &&
    # the moves are recorded a month after the probes were added (the clock: 2026-01-01)
    export SOURCE_DATE_EPOCH=1767225600 &&
    # valid from the run's start itself, written with an offset: the run counts toward L-B
    "$BIN" --db "$db" probe move P-1 --lot L-B --why "sorted (invented)" --by t \
        --from 2025-12-10T10:00:00+01:00 > /dev/null &&
    # valid from half a second after the run's start: the run still counts toward L-A
    "$BIN" --db "$db" probe move P-2 --lot L-B --why "sorted (invented)" --by t \
        --from 2025-12-10T09:00:00,5Z > /dev/null &&
    "$BIN" --db "$db" import bath.csv --probe P-2 --at 2025-12-11T09:00:00Z --new-run \
        > /dev/null &&
    "$BIN" --db "$db" fit --probe P-2 --model sh3 > /dev/null
    ) || { ok=1; echo "# the move session on $db failed"; }
done
export SOURCE_DATE_EPOCH=1767225600
for q in "probe list" "probe show P-1 --json" "probe show P-2" "lot list" "list runs --lot L-A" \
         "list runs --lot L-B" "list fits --lot L-B" "drift --lot L-A --json" \
         "drift --lot L-B --json" "drift --part NTC-10K" "drift --probe P-2" \
         "export --lot L-B --json" "export --lot L-A --csv" "fit --lot L-B --model sh3" \
         "verify"; do
    # shellcheck disable=SC2086
    a=$(cd "$T" && "$BIN" --db "$U" $q 2>&1; echo "rc=$?")
    # shellcheck disable=SC2086
    b=$(cd "$T" && "$BIN" --db "sqlite:$T/moves.db" $q 2>&1; echo "rc=$?")
    [ "$a" = "$b" ] || { ok=1; echo "# '$q' differs:"; printf '%s\n' "$a" | head -5;
                         printf '%s\n' "$b" | head -5; }
done
for l in L-A L-B; do
    (cd "$T" && "$BIN" --db "$U" report --lot $l -o "m-pg-$l.html" > /dev/null &&
     "$BIN" --db "sqlite:$T/moves.db" report --lot $l -o "m-sq-$l.html" > /dev/null &&
     cmp -s "m-pg-$l.html" "m-sq-$l.html") || { ok=1; echo "# the reports of lot $l differ"; }
done
# the rows themselves: P-1's run toward L-B, P-2's first run toward L-A (a check that the
# comparison above compares something: the lots' runs differ)
[ "$(cd "$T" && "$BIN" --db "$U" list runs --lot L-B | grep -c 'P-[12]')" = 2 ] ||
    { ok=1; echo "# lot L-B's runs are not P-1's and P-2's second"; }
result moves "$ok" "a probe move is read differently by the two backends"
export SOURCE_DATE_EPOCH=1764547200

# ---- runs of every quantity: the same rows, fits and chain on both backends ----
newdb kinds
ok=0
U=postgresql:///kinds
# INVENTED IC sensor output codes (0.0625 K per LSB; zero and negative codes are readings)
printf 'temp_c,code\n-20,-318\n0,2\n25,402\n50,803\n85,1362\n' > "$T/code.csv"
for db in "$U" "sqlite:$T/kinds.db"; do
    (cd "$T" &&
    "$BIN" --db "$db" init > /dev/null &&
    "$BIN" --db "$db" lot add L-K --part MIX --r25 10k --beta 3950K --tol-r25 1% \
        --tol-beta 1% > /dev/null &&
    for p in D-1 IC-R IC-C N-1; do "$BIN" --db "$db" probe add $p --lot L-K > /dev/null; done &&
    "$BIN" --db "$db" import "$HERE/../cli/lib/junction.csv" --probe D-1 \
        --at 2026-11-21T09:00:00Z > /dev/null &&
    "$BIN" --db "$db" import "$HERE/../cli/lib/ic-reported.csv" --probe IC-R \
        --at 2026-11-21T10:00:00Z > /dev/null &&
    "$BIN" --db "$db" import code.csv --probe IC-C --at 2026-11-21T11:00:00Z > /dev/null &&
    "$BIN" --db "$db" import "$HERE/../cli/lib/bath.csv" --probe N-1 \
        --at 2026-11-21T12:00:00Z > /dev/null &&
    "$BIN" --db "$db" fit --probe D-1 --model vbe > /dev/null &&
    "$BIN" --db "$db" fit --probe IC-R > /dev/null &&
    "$BIN" --db "$db" fit --probe IC-C --model ic-code --param lsb_k=0.0625 > /dev/null &&
    "$BIN" --db "$db" fit --probe N-1 --model sh3 > /dev/null
    ) || { ok=1; echo "# the session on $db failed"; }
done
for q in "export --lot L-K --json" "show run 1 --json" "show run 2 --json" "show run 3 --json" \
         "export --probe D-1 --csv" "list runs" "list fits" "verify" "fit --lot L-K"; do
    # shellcheck disable=SC2086
    a=$(cd "$T" && "$BIN" --db "$U" $q 2>&1; echo "rc=$?")
    # shellcheck disable=SC2086
    b=$(cd "$T" && "$BIN" --db "sqlite:$T/kinds.db" $q 2>&1; echo "rc=$?")
    [ "$a" = "$b" ] || { ok=1; echo "# '$q' differs:"; printf '%s\n' "$a" | head -5;
                         printf '%s\n' "$b" | head -5; }
done
(cd "$T" && "$BIN" --db "$U" report --run 1 -o rk-pg.html > /dev/null &&
    "$BIN" --db "sqlite:$T/kinds.db" report --run 1 -o rk-sq.html > /dev/null &&
    cmp -s rk-pg.html rk-sq.html) || { ok=1; echo "# the voltage run's reports differ"; }
[ "$($PSQL -d kinds -c "SELECT string_agg(coalesce(quantity, '-') || '/' ||
    coalesce(quantity_unit, '-'), ' ' ORDER BY id) FROM run")" = \
  "voltage/V reported_temperature/degC code/LSB -/-" ] ||
    { ok=1; echo "# the server's run.quantity columns are not as written"; }
result run-quantities "$ok" "runs of volts, reported temperatures or codes differ between backends"

# ---- the lot-sensor schema (13) from a version-12 database with rows ----
sh "$HERE/upgrade13.sh" "$BIN" > "$T/up13.log" 2>&1
ok=$?
grep '^not ok' "$T/up13.log" | head -5
result upgrade-13 "$ok" "the upgrade from schema 12 on the server"

# ---- calibration sequences into the server (tests/sequence.sh's record parts) ----
BG_SEQ_BACKEND=pg sh "$HERE/../sequence.sh" "$BIN" > "$T/seq.log" 2>&1
ok=$?
grep '^not ok' "$T/seq.log" | head -10
n_seq=$(grep -c '^ok ' "$T/seq.log")
grep -q '^not ok' "$T/seq.log" && ok=1
[ "$n_seq" -ge 30 ] || ok=1
result sequences "$ok" "$(grep -c '^not ok' "$T/seq.log") sequence checks failed, $n_seq passed"

# ---- the server away ----
ok=0
$BG_PG_RUN "$BG_PG_BIN/pg_ctl" -D "$BG_PG_DATA" -m fast -w stop > /dev/null 2>&1
"$BIN" --db postgresql:///busy lot list > /dev/null 2> "$T/err"
rc=$?
[ "$rc" -eq 69 ] && grep -q "cannot connect to the database server" "$T/err" ||
    { ok=1; echo "# server stopped: rc $rc $(cat "$T/err")"; }
(cd "$BG_PG_DATA/.." && $BG_PG_RUN "$BG_PG_BIN/pg_ctl" -D "$BG_PG_DATA" -l "$BG_PG_DATA/../server.log" \
    -w start > /dev/null 2>&1) || { ok=1; echo "# the server did not start again"; }
"$BIN" --db postgresql:///busy verify > /dev/null 2>&1 || ok=1
result unavailable "$ok" "a stopped server was not reported clearly"
