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
