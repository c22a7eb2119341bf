#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Run the whole test suite against the build in $BUILD: unit tests (cmocka), CLI golden
# tests, the HTML reports in Chromium, the numpy cross-check, the firmware tables on AVR and
# Cortex-M simulators (tests/firmware), the meta checks and the
# shape of the tree (tests/layout.py).  Ends with "N passed, N failed".
BUILD=${BUILD:-build}
PYTHON=${PYTHON:-/usr/bin/python3}
pass=0
fail=0
failed=""

count() { # $1 = 0 for pass, $2 = name
    if [ "$1" -eq 0 ]; then pass=$((pass + 1)); else fail=$((fail + 1)); failed="$failed $2"; fi
}

for t in "$BUILD"/tests/test_*; do
    [ -x "$t" ] || continue
    out=$("$t" 2>&1)
    rc=$?
    printf '%s\n' "$out" | grep -E '^\[ *(FAILED|ERROR|LINE) *\]|^\[==========\] [0-9]+ test' \
        | sed "s|^|$(basename "$t"): |"
    n_ok=$(printf '%s\n' "$out" | grep -c '^\[       OK \]')
    n_bad=$(printf '%s\n' "$out" | grep -c '^\[  FAILED  \] [a-z_]*$')
    pass=$((pass + n_ok))
    fail=$((fail + n_bad))
    if [ "$rc" -ne 0 ] && [ "$n_bad" -eq 0 ]; then fail=$((fail + 1)); fi
    [ "$rc" -ne 0 ] && failed="$failed $(basename "$t")"
done

# a suite printing "ok NAME" / "not ok NAME" lines: $1 = name, $2 = its log, $3 = its status
tally() {
    cat "$2"
    n_ok=$(grep -c '^ok ' "$2")
    n_bad=$(grep -c '^not ok ' "$2")
    pass=$((pass + n_ok))
    fail=$((fail + n_bad))
    [ "$3" -ne 0 ] && [ "$n_bad" -eq 0 ] && count 1 "$1-runner"
    [ "$n_bad" -gt 0 ] && failed="$failed $1"
}

sh tests/cli/run.sh "$BUILD/bandgap" > "$BUILD/cli-tests.log" 2>&1
tally cli "$BUILD/cli-tests.log" $?

# the PostgreSQL backend: a throwaway server started and stopped around its checks (the
# golden cases on the server, the same record on both backends, roles, faults, load)
# The three heavy integration suites run once each in `make test`: the server backend and
# the calibration sequences (C talking to libpq and to sockets) under the sanitizer build,
# the firmware tables (C running on simulators, out of the sanitizers' reach) and the golden
# cases on the server (outputs compared, a few minutes) in the plain one, so that the two
# suites, which make test runs side by side, take about as long.  RUN_ALL=1 runs all in either.
heavy() { [ "${RUN_ALL:-0}" = 1 ] || [ "${SAN:-0}" = "$1" ]; }
pg_part=rest
[ "${RUN_ALL:-0}" = 1 ] && pg_part=all
if heavy 0 && [ "$pg_part" = rest ]; then
    BG_PG_PART=goldens sh tests/pg/server.sh sh tests/pg/check.sh "$BUILD/bandgap" \
        > "$BUILD/pg-goldens.log" 2>&1
    tally pg-goldens "$BUILD/pg-goldens.log" $?
fi
if heavy 1; then
    BG_PG_PART=$pg_part sh tests/pg/server.sh sh tests/pg/check.sh "$BUILD/bandgap" \
        > "$BUILD/pg.log" 2>&1
    tally pg "$BUILD/pg.log" $?
    sh tests/pg/server.sh sh tests/pg/store.sh "$BUILD" > "$BUILD/pg-store.log" 2>&1
    tally pg-store "$BUILD/pg-store.log" $?
fi

sh tests/faults.sh "$BUILD/bandgap"
count $? faults
sh tests/copy.sh "$BUILD/bandgap" > "$BUILD/copy.log" 2>&1
tally copy "$BUILD/copy.log" $?
sh tests/records.sh "$BUILD/bandgap"
count $? records
sh tests/exits.sh "$BUILD/bandgap"
count $? exits
sh tests/meta.sh "$BUILD/bandgap"
count $? meta
sh tests/reports.sh "$BUILD/bandgap" "$PYTHON" > "$BUILD/reports.log" 2>&1
tally reports "$BUILD/reports.log" $?
hw=$(mktemp -d)
"$PYTHON" tests/hostile_check.py "$BUILD/bandgap" "$hw" > "$BUILD/hostile.log" 2>&1
tally hostile "$BUILD/hostile.log" $?
"$PYTHON" tests/chain_check.py "$BUILD/bandgap" "$hw" > "$BUILD/chain.log" 2>&1
tally chain "$BUILD/chain.log" $?
"$PYTHON" tests/its90_check.py "$BUILD/bandgap" "$hw" > "$BUILD/its90.log" 2>&1
tally its90 "$BUILD/its90.log" $?
rm -rf "$hw"
# the emitted tables on an ATmega328P (simavr) and Cortex-M0/M3/M4 (QEMU), every code
# (once, in the plain suite: the emitted C runs on the simulators, where the host's sanitizers
# do not reach; the sanitizer suite checks the library that writes it)
if heavy 0; then
    sh tests/firmware/run.sh "$BUILD/bandgap" "$BUILD/firmware" > "$BUILD/firmware.log" 2>&1
    tally firmware "$BUILD/firmware.log" $?
fi
if heavy 1; then
    sh tests/sequence.sh "$BUILD/bandgap" "$PYTHON" > "$BUILD/sequence.log" 2>&1
    tally sequence "$BUILD/sequence.log" $?
fi
"$PYTHON" tests/layout.py "$BUILD" > "$BUILD/layout.log" 2>&1
tally layout "$BUILD/layout.log" $?
"$PYTHON" tests/xcheck_numpy.py "$BUILD/bandgap"
count $? xcheck_numpy
"$PYTHON" tests/xcheck_kinds.py "$BUILD/bandgap"
count $? xcheck_kinds
"$PYTHON" tests/xcheck_lut_kinds.py "$BUILD/bandgap"
count $? xcheck_lut_kinds
"$PYTHON" tests/xcheck_lots.py "$BUILD/bandgap"
count $? xcheck_lots
"$PYTHON" tests/bench/timing_check.py > "$BUILD/timing-check.log" 2>&1
tally timing "$BUILD/timing-check.log" $?

echo "tests: $pass passed, $fail failed"
echo "$pass $fail" > "$BUILD/summary"
[ -n "$failed" ] && echo "failing:$failed"
[ "$fail" -eq 0 ]
