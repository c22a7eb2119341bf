#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# make bench: bandgap against anchors run side by side on the same machine, on invented data.
# First the fitter against scipy and numpy; then the commands users run, as processes
# (fit --lot, drift --lot, report --lot, export --lot --json, fit FILE, lut --strategy
# minimal, import) and the library paths, each paired with its anchor in interleaved rounds
# (tests/bench/timing.py) at three sizes or more, with the log-log slope of the growth.
# Not a test: make check and make test never run it, and no figure here is asserted.
# Usage: run.sh BUILD PYTHON CC CFLAGS LIBS
# Sizes: BENCH_SCALE=full (default; 21 minutes on 2 shared and busy cores today, much of it the
# paths that are still quadratic, each stopped after BENCH_TIMEOUT seconds) or small (about
# 2 minutes, for trying the bench itself).  Each list can be set alone: BENCH_PROBES,
# BENCH_BITS, BENCH_FITN, BENCH_IMPORT_N, BENCH_RSS_N; BENCH_ROUNDS (>= 5), BENCH_TIMEOUT;
# NPROBES for the fit block.
BUILD=$1 PYTHON=$2 CC=$3 CFLAGS=$4 LIBS=$5
set -e
out=$BUILD/bench
mkdir -p "$out"
case ${BENCH_SCALE:-full} in
full) probes="1000 10000 100000" bits="12 16 20 24" fitn="10000 100000 1000000"
      import_n=1000000 rss_n="1000000 10000000" ;;
small) probes="100 300 1000" bits="12 16 20" fitn="3000 10000 30000"
       import_n=100000 rss_n="100000 300000" NPROBES=${NPROBES:-1000} ;;
*) echo "bench: BENCH_SCALE is full or small, not '$BENCH_SCALE'" >&2; exit 64 ;;
esac
for tool in sqlite3 /usr/bin/time; do
    command -v "$tool" > /dev/null 2>&1 ||
        { echo "bench: $tool is missing (make deps installs it)" >&2; exit 69; }
done
# ---- fits: per probe and batched, against scipy, numpy lstsq and a hand-vectorised NumPy ----
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_fit.c -o "$out/bench_fit" "$BUILD/libbandgap.a" $LIBS
NPROBES=${NPROBES:-5000}
FITROUNDS=${FITROUNDS:-5}
echo "fitting $NPROBES invented probes x 10 readings (sh3, stated uncertainties)"
# Interleaved rounds: bandgap (best of 5 passes) and the hand-vectorised NumPy of the same
# algebra (best of 5), bandgap first in odd rounds and NumPy first in even ones (the NumPy
# side checks the results bandgap wrote, so the first round runs bandgap first), one ratio
# per round; then median and range of the ratios.  Each side times only its fits, from the
# readings in memory to the results in memory (no file, no start-up).
for i in $(seq "$FITROUNDS"); do
    if [ $((i % 2)) -eq 0 ]; then
        "$PYTHON" tests/bench/bench_fit_np.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" 5 > "$out/np.txt"
    fi
    "$out/bench_fit" "$NPROBES" "$out/data.csv" "$out/full.txt" "$out/linear.txt" 5 > "$out/c.txt"
    if [ $((i % 2)) -eq 1 ]; then
        "$PYTHON" tests/bench/bench_fit_np.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" 5 > "$out/np.txt"
    fi
    awk '/^C_FULL_US/ {cf=$2} /^C_LIN_US/ {cl=$2} /^NP_FULL_US/ {nf=$2} /^NP_LIN_US/ {nl=$2}
         /^NP_FULL_JOB_US/ {jf=$2} /^NP_LIN_JOB_US/ {jl=$2}
         END { print nf / cf, nl / cl, cf, cl, nf, nl, jf / cf, jl / cl }' "$out/c.txt" "$out/np.txt"
done > "$out/fitrounds.txt"
grep -v _US "$out/c.txt"
grep -v _US "$out/np.txt"
ratio_stats() { # column: median, min, max
    awk -v c="$1" '{ print $c }' "$out/fitrounds.txt" | sort -g | awk '{ v[NR] = $1 } END {
        m = NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2; printf "%.3g %.3g %.3g\n", m, v[1], v[NR] }'
}
set -- $(ratio_stats 1) $(ratio_stats 2) $(ratio_stats 3) $(ratio_stats 4) $(ratio_stats 5) $(ratio_stats 6) $(ratio_stats 7) $(ratio_stats 8)
verdict() { awk -v r="$1" -v t="$2" 'BEGIN { print (r >= t ? "PASS" : "MISS") }'; }
printf 'ratio: full fit, batch, %sx faster than the hand-vectorised NumPy of the same algebra (median of %s rounds, range %s .. %s; target >= 1.5: %s); bandgap %s us/fit, numpy %s us/fit (medians)\n' "$1" "$FITROUNDS" "$2" "$3" "$(verdict "$1" 1.5)" "$7" "${13}"
printf 'ratio: linear fit, batch, %sx faster than the same NumPy linear stage (median of %s rounds, range %s .. %s; target >= 2: %s); bandgap %s us/fit, numpy %s us/fit (medians)\n' "$4" "$FITROUNDS" "$5" "$6" "$(verdict "$4" 2)" "${10}" "${16}"
printf 'for comparison (no target): against NumPy doing the whole job the batch does (guard rails, residuals, statistics, notes): full %sx (range %s .. %s), linear %sx (range %s .. %s)\n' "${19}" "${20}" "${21}" "${22}" "${23}" "${24}"
"$PYTHON" tests/bench/bench_fit.py "$out/data.csv" "$out/full.txt" "$out/linear.txt" | tee "$out/py.txt" | grep -v _US
awk '/^C_FULL1_US/ {cf=$2} /^C_LIN1_US/ {cl=$2} /^PY_CF_US/ {pf=$2} /^PY_LS_US/ {pl=$2}
     END { printf "ratio: full fit (per probe) %.0fx faster than curve_fit (target >= 100x)\n", pf / cf;
           printf "ratio: linear fit (per probe) %.0fx faster than numpy lstsq (target >= 10x)\n", pl / cl }' \
    "$out/c.txt" "$out/py.txt"


# ---- the database and the commands users run --------------------------------------------
# Every figure below is a process (the command as a user runs it, or a bench program for a
# library path) against its anchor, in BENCH_ROUNDS interleaved rounds (tests/bench/timing.py):
# the median and the range of the ratio, the target where the issue sets one (at the largest
# size) and PASS or MISS.  A command still running after BENCH_TIMEOUT seconds is stopped and
# the larger sizes of its path are not run; its slope is then a lower bound.
probes=${BENCH_PROBES:-$probes} bits=${BENCH_BITS:-$bits} fitn=${BENCH_FITN:-$fitn}
import_n=${BENCH_IMPORT_N:-$import_n} rss_n=${BENCH_RSS_N:-$rss_n}
rounds=${BENCH_ROUNDS:-5} timeout=${BENCH_TIMEOUT:-150}
bg=$BUILD/bandgap
growth=$out/growth.tsv
: > "$growth"
pair() { "$PYTHON" tests/bench/timing.py pair --rounds "$rounds" --timeout "$timeout" \
             --record "$growth" "$@"; }
rss() { "$PYTHON" tests/bench/timing.py rss --timeout "$((timeout * 4))" "$@"; }
slope() { "$PYTHON" tests/bench/timing.py slope --record "$growth" "$@"; }
last() { for x in "$@"; do :; done; echo "$x"; }
# run_path KEY LABEL PAIR-ARGS...: the pair, unless KEY was stopped at a smaller size
run_path() {
    if awk -F '\t' -v k="$1" '$1 == k && $6 == "stopped" { s = 1 } END { exit !s }' "$growth"
    then echo "$2: not run (stopped at a smaller size)"
    else k=$1 l=$2; shift 2; pair --key "$k" --label "$l" "$@"; fi
}
# (tests/bench/lots.sh: the lot commands, fit --lot, drift, report and export --lot --json,
# at BENCH_PROBES probes; also run alone by make bench-lots)
sh tests/bench/lots.sh "$BUILD" "$PYTHON" "$CC" "$CFLAGS" "$LIBS"

# ---- fit FILE: one probe with many readings --------------------------------------------
# gen N FILE: N invented readings of one probe (1/T = A + B L + C L^3 with invented
# coefficients, L = ln R from ln 100k down to ln 1k; a deterministic +-1 mK ripple)
gen() {
    awk -v n="$1" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k"
        for (i = 0; i < n; i++) { r = 100000 * exp(-4.6 * i / n); l = log(r)
            t = 1 / (1.1384e-3 + 2.3245e-4 * l + 9.4871e-8 * l * l * l)
            printf "%.6f,%.6f,0.002\n", t + 0.001 * ((i * 7919) % 1000 / 500 - 1), r } }' > "$2"
}
echo "fit FILE (auto model, the comparison of models included) at $fitn readings; the anchor" \
     "parses the same file: mawk splitting every line at the commas and converting its three" \
     "numbers"
# shellcheck disable=SC2086
bigf=$(last $fitn)
for n in $fitn; do
    gen "$n" "$out/fit.csv"
    t5=""; [ "$n" = "$bigf" ] && t5="--target le:5"
    # shellcheck disable=SC2086
    pair --key fitfile --size "$n" --label "fit FILE, $n readings / parsing the file (awk)" $t5 \
        "$bg fit $out/fit.csv" "awk -F, 'NR > 2 { s += \$1 + \$2 + \$3 } END { print s }' $out/fit.csv"
done
slope --key fitfile --label "fit FILE" --unit readings
rm -f "$out/fit.csv"

# ---- firmware tables: build time, entries against the exact minimum, instructions ----
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_lut.c -o "$out/bench_lut" "$BUILD/libbandgap.a" $LIBS
"$out/bench_lut" 0.05 | tee "$out/lut.txt" | awk '{
    printf "minimal table, %s-bit divider, -40..125 degC within 0.05 K: built in %.3f s (target < %s s; the uniform table beside it %.3f s, ratio %.0f); %s segments, exact minimum by a separate dynamic program %s (target: equal); values on the curve need %s breakpoints, the uniform table %s\n",
        substr($1, 5), $3, substr($1, 5) == 12 ? 1 : 5, $5, $3 / $5, $7, $9, $11, $13 }'
echo "lut --strategy minimal (10k NTC, B 3950 K, 10k divider, -40..125 degC within 0.05 K) at" \
     "$bits bits; the anchor is the uniform table of the same bound (its error also measured at" \
     "every code)"
for b in $bits; do
    lut="$bg lut --r25 10k --beta 3950K --fixed 10k --sensor-side low --adc-bits $b --range -40C:125C --max-error 0.05C"
    t24=""; [ "$b" = 24 ] && t24="--max-s 10 --max-rss-mb 256"
    # shellcheck disable=SC2086
    pair --key lut --size "$((1 << b))" --rss $t24 \
        --label "lut --strategy minimal, $b bits / uniform" \
        "$lut --strategy minimal -o $out/lut_min.c" "$lut --strategy uniform -o $out/lut_uni.c"
done
slope --key lut --label "lut --strategy minimal" --unit codes
rm -f "$out/lut_min.c" "$out/lut_uni.c"

# ---- import: bandgap import against the sqlite3 shell's .import ------------------------
# (helper bench's own section; tests/bench/import.sh, when it exists, is meant to replace it)
# imp_prep N: the readings file; a database with lot L and probe K; the anchor's database,
# the same with one run, and the same readings as rows of bandgap's reading table (id, run,
# line, raw and corrected temperature, resistance, uncertainties, time, note), imported by
# the shell into that very table: the same columns, types, constraints (foreign keys on),
# indexes, triggers and page size.
imp_prep() {
    gen "$1" "$out/imp.csv"
    rm -f "$out/imp0.db" "$out/anc0.db"
    $bg --db "$out/imp0.db" init > /dev/null
    $bg --db "$out/imp0.db" lot add L --part P --r25 10k --beta 3950K --tol-r25 1% \
        --tol-beta 1% > /dev/null
    $bg --db "$out/imp0.db" probe add K --lot L > /dev/null
    cp "$out/imp0.db" "$out/anc0.db"
    printf '# INVENTED\ntemp_k,ohms,u_temp_k\n300,5000,0.002\n' > "$out/one.csv"
    $bg --db "$out/anc0.db" import "$out/one.csv" --probe K > /dev/null
    awk -F, 'NR > 2 { printf "%d,1,%d,%s,%s,%s,%s,0,,\n", NR + 10, NR, $1, $1, $2, $3 }' \
        "$out/imp.csv" > "$out/anc.csv"
}
imp="$bg --db $out/imp.db import $out/imp.csv --probe K"
anc="sqlite3 $out/anc.db 'PRAGMA foreign_keys = ON' '.import --csv $out/anc.csv reading'"
fresh="cp $out/imp0.db $out/imp.db; cp $out/anc0.db $out/anc.db"
imp_prep "$import_n"
pair --rss --target le:1 --max-rss-mb 32 --setup "$fresh" \
    --label "import, $import_n readings / sqlite3 .import into the reading table" "$imp" "$anc"
# the anchor the bench used before, for comparison (no target): the file itself into a bare
# table of three untyped columns with no constraints
printf 'CREATE TABLE t(temp_k, ohms, u_temp_k);\n' > "$out/bare.sql"
pair --setup "$fresh; rm -f $out/bare.db; sqlite3 $out/bare.db < $out/bare.sql" \
    --label "import, $import_n readings / sqlite3 .import into a bare 3-column table" \
    "$imp" "sqlite3 $out/bare.db '.import --csv --skip 2 $out/imp.csv t'"
for n in $rss_n; do
    imp_prep "$n"
    rss --max-rss-mb 32 --setup "$fresh" --label "import, $n readings: peak RSS" "$imp" "$anc"
done
rm -f "$out"/imp*.db "$out"/anc*.db "$out"/bare.* "$out/imp.csv" "$out/anc.csv" "$out/one.csv"

# ---- firmware tables: instructions per conversion (callgrind; counts, not times) ----
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

# ---- firmware tables on the targets: cycles, instructions, flash (tests/firmware/cost.sh) ----
if command -v avr-gcc > /dev/null 2>&1 && command -v qemu-system-arm > /dev/null 2>&1; then
    echo "firmware tables on an ATmega328P (simavr) and Cortex-M0/M3/M4 (QEMU): counts, not times"
    PYTHON=$PYTHON sh tests/firmware/cost.sh "$bg" "$out/firmware"
else
    echo "firmware tables on the targets: not run (make deps installs the cross toolchains)"
fi

