#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Faults: a failed import leaves the database byte for byte unchanged; an import killed with
# SIGKILL at random moments leaves all of a run or none of it, and integrity_check says ok;
# two importers and a reader at once lose no rows and see no busy error; an import holds a
# bounded amount of memory whatever the file's size.
# Usage: faults.sh BANDGAP
BIN=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
status=0
bad() { echo "faults: $*"; status=1; }
B() { "$BIN" --db "$T/f.db" "$@"; }
Q() { sqlite3 -cmd '.timeout 30000' "$T/f.db" "$1"; }

B init > /dev/null
B lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
B probe add K --lot L > /dev/null
B probe add C1 --lot L > /dev/null
B probe add C2 --lot L > /dev/null

# An invented big readings file: NROWS readings of a falling resistance.
NROWS=${FAULT_ROWS:-100000}
awk -v n="$NROWS" 'BEGIN { print "# INVENTED fault-test readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n, 100000 * exp(-4 * i / n) }' \
    > "$T/big.csv"

# 1. A bad last row: exit 65, the file unchanged.
cp "$T/big.csv" "$T/bad.csv"
echo "300,abc,0.002" >> "$T/bad.csv"
before=$(sha256sum < "$T/f.db")
B import "$T/bad.csv" --probe K 2> "$T/err"
rc=$?
[ "$rc" -eq 65 ] || bad "bad import exited $rc, expected 65"
grep -q "bad.csv:$((NROWS + 3)): field 'ohms': not a number: 'abc'" "$T/err" ||
    bad "bad import message: $(cat "$T/err")"
[ "$(sha256sum < "$T/f.db")" = "$before" ] || bad "a failed import changed the database"
echo "faults: failed import left the database unchanged"

# 2. SIGKILL at random moments.
t0=$(date +%s%N)
B import "$T/big.csv" --probe K > /dev/null || bad "timing import failed"
t1=$(date +%s%N)
full_ms=$(( (t1 - t0) / 1000000 ))
[ "$full_ms" -gt 0 ] || full_ms=1
kills=0
# the same file every time: --new-run, or the repeated import would be refused before it writes
for i in $(seq 1 20); do
    delay_ms=$(awk -v s="$i" -v m="$full_ms" 'BEGIN { srand(s * 7919); printf "%d", rand() * m * 1.1 }')
    "$BIN" --db "$T/f.db" import "$T/big.csv" --probe K --new-run > /dev/null 2>&1 &
    pid=$! # the program itself, not a subshell, so that the kill reaches it
    sleep "$(awk -v d="$delay_ms" 'BEGIN { printf "%.3f", d / 1000 }')"
    kill -9 "$pid" 2>/dev/null && kills=$((kills + 1))
    wait "$pid" 2>/dev/null
    ok=$(Q 'PRAGMA integrity_check')
    [ "$ok" = ok ] || bad "integrity_check after kill $i: $ok"
    partial=$(Q "SELECT count(*) FROM run r WHERE r.nreadings <> $NROWS OR (SELECT count(*) FROM reading g WHERE g.id BETWEEN r.first_reading AND r.first_reading + r.nreadings - 1 AND g.run_id = r.id) <> $NROWS")
    [ "$partial" = 0 ] || bad "after kill $i: $partial runs without all their readings"
done
runs=$(Q "SELECT count(*) FROM run")
rows=$(Q "SELECT count(*) FROM reading")
[ "$rows" -eq $((runs * NROWS)) ] || bad "$rows readings for $runs runs of $NROWS"
stray=$(Q "SELECT count(*) FROM reading g JOIN run r ON r.id = g.run_id WHERE g.id NOT BETWEEN r.first_reading AND r.first_reading + r.nreadings - 1")
[ "$stray" = 0 ] || bad "$stray readings outside their run's range of ids"
echo "faults: 20 imports killed at random moments ($kills while running, full import ${full_ms} ms): integrity ok, $runs whole runs, no partial run"

# 3. Two importers and a reader at once (the same file again and again: --new-run, and its
# warning is expected).
awk 'NR <= 3002' "$T/big.csv" > "$T/small.csv"
before_runs=$(Q "SELECT count(*) FROM run")
( for i in 1 2 3 4 5; do B import "$T/small.csv" --probe C1 --new-run > /dev/null 2> "$T/w1.err" || echo fail
      grep -v 'a new run on purpose, recorded as such' "$T/w1.err"; done ) > "$T/w1" 2>&1 &
p1=$!
( for i in 1 2 3 4 5; do B import "$T/small.csv" --probe C2 --new-run > /dev/null 2> "$T/w2.err" || echo fail
      grep -v 'a new run on purpose, recorded as such' "$T/w2.err"; done ) > "$T/w2" 2>&1 &
p2=$!
( for i in $(seq 1 30); do B list runs > /dev/null || echo fail; done ) > "$T/r" 2>&1 &
p3=$!
wait $p1 $p2 $p3
for f in w1 w2 r; do
    [ -s "$T/$f" ] && bad "concurrent $f reported: $(head -c 300 "$T/$f")"
done
n1=$(Q "SELECT count(*) FROM reading g JOIN run r ON g.run_id = r.id JOIN probe p ON r.probe_id = p.id WHERE p.serial = 'C1'")
n2=$(Q "SELECT count(*) FROM reading g JOIN run r ON g.run_id = r.id JOIN probe p ON r.probe_id = p.id WHERE p.serial = 'C2'")
[ "$n1" -eq 15000 ] && [ "$n2" -eq 15000 ] || bad "concurrent imports stored $n1 and $n2 readings, expected 15000 each"
[ "$(Q 'PRAGMA integrity_check')" = ok ] || bad "integrity after concurrency"
[ -e "$T/f.db-wal" ] && bad "a WAL file appeared: the database must stay one file"
echo "faults: two importers (5 x 3000 readings each) and a reader: no busy error, no lost row"
# 4. Bounded memory: 2,000,000 readings (60 MB of text, 190 MB as parsed readings) import
# under a 24 MB limit of address space, as 20,000 do; from standard input too (copied to a
# temporary file for the second pass; 500,000 of them, to keep the time down).  Not under the address sanitizer, which reserves
# terabytes of address space for its shadow memory.
if ldd "$BIN" 2>/dev/null | grep -q libasan; then
    echo "faults: bounded memory not checked under the address sanitizer"
else
    MROWS=${FAULT_MEM_ROWS:-2000000}
    awk -v n="$MROWS" 'BEGIN { print "# INVENTED memory-test readings"; print "temp_k,ohms,u_temp_k";
        for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n, 100000 * exp(-4 * i / n) }' \
        > "$T/huge.csv"
    B probe add M1 --lot L > /dev/null
    B probe add M2 --lot L > /dev/null
    B probe add M3 --lot L > /dev/null
    head -n 20002 "$T/huge.csv" > "$T/mid.csv"
    ( ulimit -v 24576; B import "$T/mid.csv" --probe M1 > /dev/null ) || bad "20000 readings did not import in 24 MB"
    ( ulimit -v 24576; B import "$T/huge.csv" --probe M2 > /dev/null ) || bad "$MROWS readings did not import in 24 MB"
    head -n 500002 "$T/huge.csv" > "$T/part.csv"
    ( ulimit -v 24576; B import - --probe M3 < "$T/part.csv" > /dev/null ) || bad "500000 readings from standard input did not import in 24 MB"
    got=$(Q "SELECT group_concat(n) FROM (SELECT r.nreadings AS n FROM run r JOIN probe p ON r.probe_id = p.id WHERE p.serial IN ('M1', 'M2', 'M3') ORDER BY p.serial)")
    [ "$got" = "20000,$MROWS,500000" ] || bad "bounded-memory imports stored $got readings"
    echo "faults: $MROWS readings imported under a 24 MB address-space limit (file and standard input)"
fi
exit $status
