#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Benchmark (not a test): `bandgap fit FILE` (auto model, the comparison included, output to
# /dev/null) on N invented readings against the time to parse the same file into memory
# (bg_csv_read_file, tests/bench/bench_parse.c).  Paired rounds, the order alternating;
# prints per size the median and range of fit / parse, and the log-log slope of the fit's
# time over the sizes.
# Usage: fit_file.sh BUILD SIZE...   (ROUNDS=5, CC, OUT=BUILD/bench/fit_file)
BUILD=$1
shift
ROUNDS=${ROUNDS:-5}
OUT=${OUT:-$BUILD/bench/fit_file}
CC=${CC:-cc}
mkdir -p "$OUT"
set -e
# shellcheck disable=SC2046
$CC -std=c11 -D_POSIX_C_SOURCE=200809L -O2 -Iinclude tests/bench/bench_parse.c \
    -o "$OUT/bench_parse" "$BUILD/libbandgap.a" $(pkg-config --libs gsl sqlite3) -lm
now() { date +%s%N; }
stats() {
    sort -g | awk '{ v[NR] = $1 } END {
        m = NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2
        printf "median %.3f, range %.3f..%.3f", m, v[1], v[NR] }'
}
: > "$OUT/growth"
for n in "$@"; do
    f=$OUT/r$n.csv
    # INVENTED readings: a falling resistance over 250..350 K, stated u(T) 2 mK
    awk -v n="$n" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k";
        for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n, 100000 * exp(-4 * i / n) }' > "$f"
    : > "$OUT/times$n"
    for r in $(seq "$ROUNDS"); do
        if [ $((r % 2)) -eq 1 ]; then order="fit parse"; else order="parse fit"; fi
        for who in $order; do
            case $who in
            fit) t0=$(now); "$BUILD/bandgap" fit "$f" > /dev/null 2>&1 || { echo "fit_file.sh: fit of $n readings failed"; exit 1; }
                 tf=$(( $(now) - t0 )) ;;
            parse) tp=$("$OUT/bench_parse" "$f" | awk '{ printf "%d", $2 * 1e9 }') ;;
            esac
        done
        echo "$tf $tp" >> "$OUT/times$n"
    done
    echo "fit FILE, $n readings, $ROUNDS paired rounds: fit $(awk '{ print $1 / 1e9 }' "$OUT/times$n" | stats) s; parse $(awk '{ print $2 / 1e9 }' "$OUT/times$n" | stats) s"
    echo "  ratio fit / parse: $(awk '{ print $1 / $2 }' "$OUT/times$n" | stats) (target <= 5 at 1M)"
    echo "$n $(awk '{ print $1 / 1e9 }' "$OUT/times$n" | sort -g | awk '{ v[NR] = $1 } END { print NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2 }')" >> "$OUT/growth"
    rm -f "$f"
done
if [ "$(wc -l < "$OUT/growth")" -ge 2 ]; then
    awk '{ x = log($1); y = log($2); sx += x; sy += y; sxx += x * x; sxy += x * y; k++ }
         END { printf "fit FILE growth: log-log slope over %d sizes %.3f (target <= 1.1)\n",
               k, (k * sxy - sx * sy) / (k * sxx - sx * sx) }' "$OUT/growth"
fi
rm -f "$OUT/growth"
