#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Benchmark (not a test): `bandgap import` of N invented readings against the sqlite3 shell's
# `.import` of the same readings into the same table: a database made by `bandgap init`, so
# the `reading` table has bandgap's columns, types, STRICT, CHECK constraints, foreign key
# (on) and triggers, synchronous = FULL and the rollback journal.  The shell's CSV has every
# column of the table (id, run_id, line, t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, note) with
# the values bandgap stores; its run row is made first.  Beside it, for reference, the shell's
# `.import` of the readings file itself into a bare table of three untyped columns.
# Rounds are paired: each runs all three on fresh copies of the databases, in an order that
# alternates between rounds.  Prints, per size, the median and range of the ratios and the
# largest resident memory of bandgap (GNU time's %M), and the log-log slope of bandgap's time
# over the sizes.
# Usage: import.sh BANDGAP SIZE...   (ROUNDS=5, OUT=build/bench/import)
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
shift
ROUNDS=${ROUNDS:-5}
OUT=${OUT:-build/bench/import}
mkdir -p "$OUT"
set -e
command -v sqlite3 > /dev/null || { echo "import.sh: needs the sqlite3 shell"; exit 1; }
TIMEV=/usr/bin/time
[ -x "$TIMEV" ] || TIMEV=

now() { date +%s%N; }
# run NAME CMD...: the command's wall time in ns on stdout; its max RSS (kB) into $OUT/NAME.rss
run() {
    name=$1
    shift
    t0=$(now)
    if [ -n "$TIMEV" ]; then
        "$TIMEV" -f %M -o "$OUT/$name.rss" "$@" > /dev/null
    else
        "$@" > /dev/null
        echo 0 > "$OUT/$name.rss"
    fi
    t1=$(now)
    echo $((t1 - t0))
}
stats() { # the median and range of the numbers on stdin
    sort -g | awk '{ v[NR] = $1 } END {
        m = NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2
        printf "median %.3f, range %.3f..%.3f", m, v[1], v[NR] }'
}

for n in "$@"; do
    f=$OUT/r$n.csv
    # INVENTED readings: a falling resistance over 250..350 K
    awk -v n="$n" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k";
        for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n, 100000 * exp(-4 * i / n) }' > "$f"
    awk -F, 'NR > 2 { printf "%d,1,%d,%s,%s,%s,%s,0,,\n", NR - 2, NR, $1, $1, $2, $3 }' "$f" > "$OUT/a$n.csv"
    rm -f "$OUT/base.db" "$OUT/anchor.db"
    B="$BIN --db $OUT/base.db"
    $B init > /dev/null
    $B lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
    $B probe add K --lot L > /dev/null
    cp "$OUT/base.db" "$OUT/anchor.db"
    sqlite3 "$OUT/anchor.db" "PRAGMA foreign_keys = ON" "INSERT INTO run(probe_id, started_at, source, t_raw_unit, first_reading, nreadings, imported_at) VALUES (1, '2025-12-01T00:00:00Z', 'r.csv', 'K', 1, $n, '2025-12-01T00:00:00Z')"
    : > "$OUT/times$n"
    for r in $(seq "$ROUNDS"); do
        cp "$OUT/base.db" "$OUT/bg.db"
        cp "$OUT/anchor.db" "$OUT/sh.db"
        rm -f "$OUT/bare.db"
        sqlite3 "$OUT/bare.db" "CREATE TABLE t(temp_k, ohms, u_temp_k)"
        sync
        if [ $((r % 2)) -eq 1 ]; then order="bg sh bare"; else order="bare sh bg"; fi
        for who in $order; do
            case $who in
            bg) tb=$(run bg "$BIN" --db "$OUT/bg.db" import "$f" --probe K) ;;
            sh) ts=$(run sh sqlite3 "$OUT/sh.db" "PRAGMA foreign_keys = ON" \
                     "PRAGMA synchronous = FULL" ".import --csv $OUT/a$n.csv reading") ;;
            bare) tr=$(run bare sqlite3 "$OUT/bare.db" ".import --csv --skip 2 $f t") ;;
            esac
        done
        got=$(sqlite3 "$OUT/bg.db" "SELECT count(*) FROM reading"):$(sqlite3 "$OUT/sh.db" "SELECT count(*) FROM reading")
        [ "$got" = "$n:$n" ] || { echo "import.sh: rows stored $got, expected $n:$n"; exit 1; }
        echo "$tb $ts $tr $(cat "$OUT/bg.rss") $(cat "$OUT/sh.rss")" >> "$OUT/times$n"
    done
    ratio=$(awk '{ print $1 / $2 }' "$OUT/times$n" | stats)
    bare=$(awk '{ print $1 / $3 }' "$OUT/times$n" | stats)
    tbg=$(awk '{ print $1 / 1e9 }' "$OUT/times$n" | stats)
    tsh=$(awk '{ print $2 / 1e9 }' "$OUT/times$n" | stats)
    rss=$(awk 'BEGIN { m = 0 } $4 > m { m = $4 } END { printf "%.1f", m / 1024 }' "$OUT/times$n")
    rsh=$(awk 'BEGIN { m = 0 } $5 > m { m = $5 } END { printf "%.1f", m / 1024 }' "$OUT/times$n")
    echo "import $n readings, $ROUNDS paired rounds: bandgap $tbg s; sqlite3 .import into bandgap's reading table $tsh s"
    echo "  ratio bandgap / sqlite3 .import, same table: $ratio (target <= 1)"
    echo "  ratio bandgap / sqlite3 .import into a bare 3-column table (reference): $bare"
    echo "  max RSS: bandgap $rss MB (target <= 32), sqlite3 shell $rsh MB"
    median=$(awk '{ print $1 / 1e9 }' "$OUT/times$n" | sort -g | awk '{ v[NR] = $1 } END { print NR % 2 ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2 }')
    echo "$n $median" >> "$OUT/growth"
    rm -f "$f" "$OUT/a$n.csv" "$OUT/bg.db" "$OUT/sh.db" "$OUT/bare.db"
done
if [ -f "$OUT/growth" ] && [ "$(wc -l < "$OUT/growth")" -ge 2 ]; then
    # least-squares slope of log(time) on log(size)
    awk '{ x = log($1); y = log($2); sx += x; sy += y; sxx += x * x; sxy += x * y; k++ }
         END { printf "import growth: log-log slope of bandgap time over %d sizes %.3f (target <= 1.1)\n",
               k, (k * sxy - sx * sy) / (k * sxx - sx * sx) }' "$OUT/growth"
fi
rm -f "$OUT/growth"
