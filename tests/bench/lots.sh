#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# make bench (and make bench-lots alone): the lot commands users run, on invented lots of
# BENCH_PROBES probes, each against its anchor (the sqlite3 shell's scan of the same rows) in
# interleaved rounds (tests/bench/timing.py), with the log-log slope of the growth over the
# sizes; then the library paths at the largest size.  Not a test.
# Usage: lots.sh BUILD PYTHON CC CFLAGS LIBS
# Settings: BENCH_SCALE (full: 1k, 10k, 100k probes; small: 100, 300, 1000), BENCH_PROBES,
# BENCH_ROUNDS (>= 5), BENCH_TIMEOUT (seconds per run, default 150); BENCH_DB_DIR: keep the
# lots built there (lot-N.db, hist-N.db, from bench_db setup and setup3) and use them again
# when present, instead of building them afresh in BUILD/bench and removing them after (the
# 100,000-probe pair takes some 3 minutes to build).
BUILD=$1 PYTHON=$2 CC=$3 CFLAGS=$4 LIBS=$5
set -e
out=$BUILD/bench
mkdir -p "$out"
case ${BENCH_SCALE:-full} in
full) probes="1000 10000 100000" ;;
small) probes="100 300 1000" ;;
*) echo "bench: BENCH_SCALE is full or small, not '$BENCH_SCALE'" >&2; exit 64 ;;
esac
command -v sqlite3 > /dev/null 2>&1 || { echo "bench: sqlite3 is missing (make deps installs it)" >&2; exit 69; }
probes=${BENCH_PROBES:-$probes}
rounds=${BENCH_ROUNDS:-5} timeout=${BENCH_TIMEOUT:-150}
bg=$BUILD/bandgap
growth=$out/growth-lots.tsv
: > "$growth"
pair() { "$PYTHON" tests/bench/timing.py pair --rounds "$rounds" --timeout "$timeout" \
             --record "$growth" "$@"; }
slope() { "$PYTHON" tests/bench/timing.py slope --record "$growth" "$@"; }
last() { for x in "$@"; do :; done; echo "$x"; }
# run_path KEY LABEL PAIR-ARGS...: the pair, unless KEY was stopped at a smaller size
run_path() {
    if awk -F '\t' -v k="$1" '$1 == k && $6 == "stopped" { s = 1 } END { exit !s }' "$growth"
    then echo "$2: not run (stopped at a smaller size)"
    else k=$1 l=$2; shift 2; pair --key "$k" --label "$l" "$@"; fi
}
# build_lots N: lot.db (setup: N probes x 10 readings) and hist.db (setup3: N probes x 3
# fitted calibrations) in $out, built (and timed) or taken from BENCH_DB_DIR
build_lots() {
    rm -f "$out/lot.db" "$out/hist.db"
    for kind in lot hist; do
        if [ "$kind" = lot ]; then mode="setup"; extra=10; else mode="setup3"; extra=""; fi
        kept=${BENCH_DB_DIR:+$BENCH_DB_DIR/$kind-$1.db}
        if [ -n "$kept" ] && [ -f "$kept" ]; then
            ln -s "$kept" "$out/$kind.db"
            continue
        fi
        t0=$(date +%s.%N)
        # shellcheck disable=SC2086
        "$out/bench_db" $mode "$out/$kind.db" "$1" $extra > /dev/null
        echo "bench_db $mode, $1 probes: built in $(awk -v a="$t0" -v b="$(date +%s.%N)" 'BEGIN { printf "%.1f", b - a }') s (load $(cut -d' ' -f1-3 /proc/loadavg))"
        if [ -n "$kept" ]; then mkdir -p "$BENCH_DB_DIR"; cp "$out/$kind.db" "$kept"; fi
    done
}
# shellcheck disable=SC2086
$CC $CFLAGS tests/bench/bench_db.c -o "$out/bench_db" "$BUILD/libbandgap.a" $LIBS

# The anchors: plain scans of the same rows with the sqlite3 shell, printed to /dev/null.
cat > "$out/fits.sql" <<'SQL'
SELECT p.serial, r.started_at, f.* FROM lot l JOIN probe p ON p.lot_id = l.id
  JOIN run r ON r.probe_id = p.id JOIN fit f ON f.run_id = r.id WHERE l.code = 'BENCH';
SQL
cat > "$out/readings.sql" <<'SQL'
SELECT p.serial, g.id, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm FROM lot l
  JOIN probe p ON p.lot_id = l.id JOIN run r ON r.probe_id = p.id
  JOIN reading g ON g.run_id = r.id WHERE l.code = 'BENCH';
SQL
cat > "$out/export.sql" <<'SQL'
SELECT p.serial, r.*, g.*, x.reason, x.by_whom, x.at FROM lot l
  JOIN probe p ON p.lot_id = l.id JOIN run r ON r.probe_id = p.id
  JOIN reading g ON g.run_id = r.id LEFT JOIN exclusion x ON x.reading_id = g.id
  WHERE l.code = 'BENCH';
SQL
cat "$out/fits.sql" >> "$out/export.sql"
fits="sqlite3 -readonly $out/hist.db < $out/fits.sql"

echo "lots of invented probes, at $probes probes: bench_db 'setup' (N probes x 10 readings, one run" \
     "each, unfitted) and 'setup3' (N probes x 3 calibrations, every run fitted); the anchors are" \
     "the sqlite3 shell's scan of the same rows (readings or fits of the lot) to /dev/null"
# shellcheck disable=SC2086
big=$(last $probes)
for n in $probes; do
    build_lots "$n"
    t3=""; [ "$n" = "$big" ] && t3="--target le:3"
    # shellcheck disable=SC2086
    {
    run_path fitlot "fit --lot BENCH --model sh3, $n probes x 10 readings / sqlite3 scan of the readings" \
        $t3 --size "$n" --setup "cp $out/lot.db $out/x.db" \
        "$bg --db $out/x.db fit --lot BENCH --model sh3" "sqlite3 $out/x.db < $out/readings.sql"
    run_path drift "drift --lot BENCH, $n probes x 3 fits / sqlite3 scan of the fits" \
        $t3 --size "$n" --ok-rc 0,1 "$bg --db $out/hist.db drift --lot BENCH" "$fits"
    run_path report "report --lot BENCH -o FILE, $n probes x 3 fits / sqlite3 scan of the fits" \
        $t3 --size "$n" --setup "cp $out/hist.db $out/x.db; rm -f $out/lot.html" \
        "$bg --db $out/x.db report --lot BENCH -o $out/lot.html" "sqlite3 $out/x.db < $out/fits.sql"
    run_path export "export --lot BENCH --json, $n probes x 3 runs / sqlite3 scan of the runs, readings and fits" \
        $t3 --size "$n" "$bg --db $out/hist.db export --lot BENCH --json" \
        "sqlite3 -readonly $out/hist.db < $out/export.sql"
    }
done
slope --key fitlot --label "fit --lot" --unit probes
slope --key drift --label "drift --lot" --unit probes
slope --key report --label "report --lot" --unit probes
slope --key export --label "export --lot --json" --unit probes
# The library paths the bench timed before the commands, at the largest size (bench_db).
pair --label "library: the lot's readings read back (bench_db read), $big probes / sqlite3 scan of the readings" \
    "$out/bench_db read $out/lot.db" "sqlite3 -readonly $out/lot.db < $out/readings.sql"
pair --label "library: every probe fitted and stored in one transaction (bench_db fit), $big probes / read back" \
    --target le:2 --setup "cp $out/lot.db $out/x.db" \
    "$out/bench_db fit $out/x.db" "$out/bench_db read $out/x.db"
pair --label "library: drift against previous and first with the lot statistics (bench_db drift), $big probes / sqlite3 scan of the fits" \
    --target le:3 "$out/bench_db drift $out/hist.db $big" "$fits"
rm -f "$out/lot.db" "$out/hist.db" "$out/x.db" "$out/lot.html"

