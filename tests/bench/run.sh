#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# make bench: bandgap's fitter against scipy and numpy, side by side on the same data.
# Usage: run.sh BUILD PYTHON CC CFLAGS LIBS
BUILD=$1 PYTHON=$2 CC=$3 CFLAGS=$4 LIBS=$5
set -e
out=$BUILD/bench
mkdir -p "$out"
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_fit.c -o "$out/bench_fit" "$BUILD/libbandgap.a" $LIBS
NPROBES=${NPROBES:-5000}
echo "fitting $NPROBES invented probes x 10 readings (sh3, stated uncertainties)"
"$out/bench_fit" "$NPROBES" "$out/data.csv" "$out/full.txt" "$out/linear.txt" | tee "$out/c.txt" | grep -v _US
"$PYTHON" tests/bench/bench_fit.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" | tee "$out/py.txt" | grep -v _US
awk '/^C_FULL_US/ {cf=$2} /^C_LIN_US/ {cl=$2} /^PY_CF_US/ {pf=$2} /^PY_LS_US/ {pl=$2}
     END { printf "ratio: full fit %.0fx faster than curve_fit (target >= 100x)\n", pf / cf;
           printf "ratio: linear fit %.0fx faster than numpy lstsq (target >= 10x)\n", pl / cl }' \
    "$out/c.txt" "$out/py.txt"

# ---- the database: import of 1,000,000 readings, and fitting a stored lot ----
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_db.c -o "$out/bench_db" "$BUILD/libbandgap.a" $LIBS
NREAD=${NREAD:-1000000}
NLOT=${NLOT:-100000}
now() { date +%s.%N; }
awk -v n="$NREAD" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n, 100000 * exp(-4 * i / n) }' \
    > "$out/big.csv"
rm -f "$out/imp.db" "$out/bare.db"
B="$BUILD/bandgap --db $out/imp.db"
$B init > /dev/null && $B lot add L --part P --r25 10k --beta 3950 --tol-r25 1% --tol-beta 1% > /dev/null
$B probe add K --lot L > /dev/null
printf 'CREATE TABLE t(temp_k, ohms, u_temp_k);\n' | sqlite3 "$out/bare.db"
t0=$(now); $B import "$out/big.csv" --probe K > /dev/null; t1=$(now)
sqlite3 "$out/bare.db" ".import --csv --skip 2 $out/big.csv t"; t2=$(now)
awk -v a="$t0" -v b="$t1" -v c="$t2" -v n="$NREAD" 'BEGIN {
    printf "import %d readings with full validation: bandgap %.2f s, sqlite3 .import into a bare table %.2f s: ratio %.2f (target <= 1)\n", n, b - a, c - b, (b - a) / (c - b) }'

rm -f "$out/lot.db"
"$out/bench_db" setup "$out/lot.db" "$NLOT" 10
"$out/bench_db" scan "$out/lot.db" > "$out/scan.txt"
"$out/bench_db" read "$out/lot.db" > "$out/read.txt"
t0=$(now); "$BUILD/bandgap" --db "$out/lot.db" fit --lot BENCH --model sh3 > /dev/null; t1=$(now)
awk -v a="$t0" -v b="$t1" -v n="$NLOT" '/^SCAN_S/ {s=$2} /^READ_S/ {r=$2} END {
    printf "fit --lot of %d probes x 10 readings: %.2f s; reading the lot back %.2f s (ratio %.2f, target <= 2); plain SQL scan of the rows %.2f s (ratio %.1f)\n", n, b - a, r, (b - a) / r, s, (b - a) / s }' \
    "$out/scan.txt" "$out/read.txt"
