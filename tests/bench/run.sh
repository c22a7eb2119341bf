#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# make bench: bandgap's fitter against scipy and numpy, side by side on the same data.
# Usage: run.sh BUILD PYTHON CC CFLAGS LIBS
BUILD=$1 PYTHON=$2 CC=$3 CFLAGS=$4 LIBS=$5
set -e
out=$BUILD/bench
mkdir -p "$out"
# ---- fits: per probe and batched, against scipy, numpy lstsq and a hand-vectorised NumPy ----
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_fit.c -o "$out/bench_fit" "$BUILD/libbandgap.a" $LIBS
NPROBES=${NPROBES:-5000}
FITROUNDS=${FITROUNDS:-5}
echo "fitting $NPROBES invented probes x 10 readings (sh3, stated uncertainties)"
# Interleaved rounds: bandgap (best of 3 passes), then the hand-vectorised NumPy of the same
# algebra (best of 3), one ratio per round; then median and range of the ratios.
for i in $(seq "$FITROUNDS"); do
    "$out/bench_fit" "$NPROBES" "$out/data.csv" "$out/full.txt" "$out/linear.txt" 3 > "$out/c.txt"
    "$PYTHON" tests/bench/bench_fit_np.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" 3 > "$out/np.txt"
    awk '/^C_FULL_US/ {cf=$2} /^C_LIN_US/ {cl=$2} /^NP_FULL_US/ {nf=$2} /^NP_LIN_US/ {nl=$2}
         END { print nf / cf, nl / cl, cf, cl, nf, nl }' "$out/c.txt" "$out/np.txt"
done > "$out/fitrounds.txt"
grep -v _US "$out/c.txt"
grep -v _US "$out/np.txt"
ratio_stats() { # column: median, min, max
    awk -v c="$1" '{ print $c }' "$out/fitrounds.txt" | sort -g | awk '{ v[NR] = $1 } END {
        m = NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2; printf "%.3g %.3g %.3g\n", m, v[1], v[NR] }'
}
set -- $(ratio_stats 1) $(ratio_stats 2) $(ratio_stats 3) $(ratio_stats 4) $(ratio_stats 5) $(ratio_stats 6)
printf 'ratio: full fit, batch, %sx faster than the hand-vectorised NumPy (median of %s rounds, range %s .. %s; target >= 1.5); bandgap %s us/fit, numpy %s us/fit (medians)\n' "$1" "$FITROUNDS" "$2" "$3" "$7" "${13}"
printf 'ratio: linear fit, batch, %sx faster than the same NumPy linear stage (median of %s rounds, range %s .. %s; target >= 2); bandgap %s us/fit, numpy %s us/fit (medians)\n' "$4" "$FITROUNDS" "$5" "$6" "${10}" "${16}"
"$PYTHON" tests/bench/bench_fit.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" | tee "$out/py.txt" | grep -v _US
awk '/^C_FULL1_US/ {cf=$2} /^C_LIN1_US/ {cl=$2} /^PY_CF_US/ {pf=$2} /^PY_LS_US/ {pl=$2}
     END { printf "ratio: full fit (per probe) %.0fx faster than curve_fit (target >= 100x)\n", pf / cf;
           printf "ratio: linear fit (per probe) %.0fx faster than numpy lstsq (target >= 10x)\n", pl / cl }' \
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
# Best of three of each, run alternately on fresh files (the machine's speed drifts).
best() { sort -n | head -n 1; }
for i in 1 2 3; do
    rm -f "$out/imp.db" "$out/bare.db"
    B="$BUILD/bandgap --db $out/imp.db"
    $B init > /dev/null && $B lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
    $B probe add K --lot L > /dev/null
    printf 'CREATE TABLE t(temp_k, ohms, u_temp_k);\n' | sqlite3 "$out/bare.db"
    t0=$(now); $B import "$out/big.csv" --probe K > /dev/null; t1=$(now)
    sqlite3 "$out/bare.db" ".import --csv --skip 2 $out/big.csv t"; t2=$(now)
    awk -v a="$t0" -v b="$t1" -v c="$t2" 'BEGIN { print b - a, c - b }'
done > "$out/import.txt"
bi=$(awk '{print $1}' "$out/import.txt" | best); si=$(awk '{print $2}' "$out/import.txt" | best)
awk -v b="$bi" -v s="$si" -v n="$NREAD" 'BEGIN {
    printf "import %d readings with full validation: bandgap %.2f s, sqlite3 .import into a bare table %.2f s (best of 3 each): ratio %.2f (target <= 1)\n", n, b, s, b / s }'

rm -f "$out/lot.db"
"$out/bench_db" setup "$out/lot.db" "$NLOT" 10
# Five rounds, each running every measurement once in turn (the machine's speed drifts over
# seconds, so side by side means interleaved); the best of each; every fit on a fresh copy.
REPS=${REPS:-5}
for i in $(seq "$REPS"); do
    "$out/bench_db" scan "$out/lot.db" | awk '/^SCAN_S/ {print "scan", $2}'
    "$out/bench_db" read "$out/lot.db" | awk '/^READ_S/ {print "read", $2}'
    cp "$out/lot.db" "$out/lotx.db"
    "$out/bench_db" fit "$out/lotx.db" | awk '/^FIT_S/ {print "lib", $2}'
    cp "$out/lot.db" "$out/lotx.db"; t0=$(now)
    "$BUILD/bandgap" --db "$out/lotx.db" fit --lot BENCH --model sh3 > /dev/null; t1=$(now)
    awk -v a="$t0" -v b="$t1" 'BEGIN { print "cli", b - a }'
done > "$out/lot.txt"
pick() { awk -v k="$1" '$1 == k { print $2 }' "$2" | best; }
scan=$(pick scan "$out/lot.txt"); read=$(pick read "$out/lot.txt")
lib=$(pick lib "$out/lot.txt"); cli=$(pick cli "$out/lot.txt")
awk -v s="$scan" -v r="$read" -v l="$lib" -v c="$cli" -v n="$NLOT" 'BEGIN {
    printf "lot of %d probes x 10 readings: reading it back %.2f s (plain SQL scan of the rows %.2f s)\n", n, r, s
    printf "  fitting and storing every probe (library, one transaction): %.2f s: ratio %.2f to reading back (target <= 2), %.1f to the plain scan\n", l, l / r, l / s
    printf "  bandgap fit --lot, also printing a line per probe: %.2f s: ratio %.2f\n", c, c / r }'

# ---- QA: drift and lot statistics over 10,000 probes x 3 calibrations ----
NDRIFT=${NDRIFT:-10000}
rm -f "$out/drift.db"
"$out/bench_db" setup3 "$out/drift.db" "$NDRIFT"
for i in $(seq "$REPS"); do
    "$out/bench_db" scanfits "$out/drift.db" | awk '/^SCANFITS_S/ {print "scanf", $2}
                                                  /^SCANROWS_S/ {print "scanr", $2}'
    "$out/bench_db" drift "$out/drift.db" "$NDRIFT" | awk '/^DRIFT_S/ {print "drift", $2}'
    t0=$(now); "$BUILD/bandgap" --db "$out/drift.db" drift --lot BENCH > /dev/null || true; t1=$(now)
    awk -v a="$t0" -v b="$t1" 'BEGIN { print "cli", b - a }'
done > "$out/drift.txt"
scanf=$(pick scanf "$out/drift.txt"); scanr=$(pick scanr "$out/drift.txt")
drift=$(pick drift "$out/drift.txt"); cli=$(pick cli "$out/drift.txt")
awk -v s="$scanf" -v w="$scanr" -v d="$drift" -v c="$cli" -v n="$NDRIFT" 'BEGIN {
    printf "drift of %d probes x 3 calibrations (against previous and first) with the lot statistics: %.3f s; plain SQL scan of the same fit rows, two columns read %.3f s: ratio %.2f (target <= 3); every column read %.3f s: ratio %.2f\n", n, d, s, d / s, w, d / w
    printf "  bandgap drift --lot (the lot statistics of the newest fits, printed): %.3f s\n", c }'

# ---- firmware tables: build time, entries against the exact minimum, instructions ----
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_lut.c -o "$out/bench_lut" "$BUILD/libbandgap.a" $LIBS
"$out/bench_lut" 0.05 | tee "$out/lut.txt" | awk '{
    printf "minimal table, %s-bit divider, -40..125 degC within 0.05 K: built in %.3f s (target < %s s; the uniform table beside it %.3f s, ratio %.0f); %s segments, exact minimum by a separate dynamic program %s (target: equal); values on the curve need %s breakpoints, the uniform table %s\n",
        substr($1, 5), $3, substr($1, 5) == 12 ? 1 : 5, $5, $3 / $5, $7, $9, $11, $13 }'
if command -v valgrind >/dev/null 2>&1; then
    ir() { valgrind --tool=callgrind --callgrind-out-file=/dev/null "$1" 2>&1 | awk '/refs:/ { gsub(",", "", $NF); print $NF }'; }
    printf '#include <stdint.h>\nint32_t ntc_lookup(uint32_t code);\nvolatile int32_t sink;\nint main(void) { for (int r = 0; r < 10; r++) for (uint32_t c = 0; c < 4096; c++) sink = ntc_lookup(c); return 0; }\n' > "$out/lut_main.c"
    printf '#include <stdint.h>\nvolatile int32_t sink;\nint main(void) { for (int r = 0; r < 10; r++) for (uint32_t c = 0; c < 4096; c++) sink = (int32_t)c; return 0; }\n' > "$out/lut_base.c"
    # the baseline: the divider solved for R and Steinhart-Hart with logf, per conversion
    # (coefficients of a 10k NTC, from memory; only the instruction count matters here)
    printf '#include <math.h>\n#include <stdint.h>\nint32_t ntc_lookup(uint32_t code);\nint32_t ntc_lookup(uint32_t code) { float r, l, t; if (code < 1u || code > 4094u) return INT32_MIN; r = 10000.0f * (float)code / (float)(4096u - code); l = logf(r); t = 1.0f / (1.129148e-3f + 2.34125e-4f * l + 8.76741e-8f * l * l * l); return (int32_t)lrintf(100.0f * (t - 273.15f)); }\n' > "$out/sh_logf.c"
    $CC -O2 "$out/lut_base.c" -o "$out/lut_base"
    base=$(ir "$out/lut_base")
    for st in uniform minimal indexed logf; do
        case $st in
        uniform) "$BUILD/bandgap" lut --r25 10k --beta 3950K --fixed 10k --adc-bits 12 \
                     --range -40C:125C --step 16 --symbol ntc -o "$out/ntc_$st.c" > /dev/null ;;
        logf) cp "$out/sh_logf.c" "$out/ntc_$st.c" ;;
        *) "$BUILD/bandgap" lut --r25 10k --beta 3950K --fixed 10k --adc-bits 12 \
               --range -40C:125C --max-error 0.05C --strategy $st --symbol ntc \
               -o "$out/ntc_$st.c" > /dev/null ;;
        esac
        $CC -O2 "$out/ntc_$st.c" "$out/lut_main.c" -o "$out/lut_$st" -lm
        echo "$st $(ir "$out/lut_$st")"
    done | awk -v b="$base" '{ n[$1] = ($2 - b) / 40960 } END {
        printf "instructions per conversion over all 4096 codes (host, -O2, an empty loop subtracted): uniform %.1f, minimal %.1f, indexed %.1f (target <= 40), Steinhart-Hart with logf %.1f; indexed/logf ratio %.2f\n",
            n["uniform"], n["minimal"], n["indexed"], n["logf"], n["indexed"] / n["logf"] }'
fi
