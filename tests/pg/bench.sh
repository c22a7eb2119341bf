#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Benchmark (not a test): an import of N invented readings into the PostgreSQL backend against
# the server's own COPY of the same rows into a copy of bandgap's reading table (its key,
# checks and indexes), and a lot export
# against a plain SELECT of the same readings; interleaved rounds, median and range of the
# ratio.  Run inside tests/pg/server.sh:  make bench-pg  (BENCH_PG_ROWS, BENCH_PG_ROUNDS).
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
N=${BENCH_PG_ROWS:-200000}
ROUNDS=${BENCH_PG_ROUNDS:-5}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
awk -v n="$N" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n,
        100000 * exp(-4 * i / n) }' > "$T/r.csv"
# the same rows as bandgap's reading table holds them (id, run, line, raw, t_k, ohms, u, u)
tail -n +3 "$T/r.csv" | awk -F, '{ printf "%d,1,%d,%s,%s,%s,%s,0,,\n", NR, NR + 2, $1, $1, $2, $3 }' \
    > "$T/rows.csv"
now() { date +%s.%N; }
: > "$T/ratios"
: > "$T/scan"
r=0
while [ $r -lt "$ROUNDS" ]; do
    s="b$r"
    $PSQL -c "CREATE SCHEMA $s; CREATE SCHEMA c$r"
    U="postgresql:///$PGDATABASE?options=-csearch_path%3D$s"
    "$BIN" --db "$U" init > /dev/null
    # the anchor's table: bandgap's reading table with its keys, checks and indexes
    $PSQL -c "CREATE TABLE c$r.copied (LIKE $s.reading INCLUDING ALL)"
    "$BIN" --db "$U" lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
    "$BIN" --db "$U" probe add K --lot L > /dev/null
    if [ $((r % 2)) -eq 0 ]; then order="import copy"; else order="copy import"; fi
    for what in $order; do
        t0=$(now)
        if [ "$what" = import ]; then
            "$BIN" --db "$U" import "$T/r.csv" --probe K > /dev/null || exit 1
            ti=$(echo "$(now) - $t0" | bc)
        else
            $PSQL -c "\\copy c$r.copied FROM '$T/rows.csv' WITH (FORMAT csv)" || exit 1
            tc=$(echo "$(now) - $t0" | bc)
        fi
    done
    t0=$(now)
    "$BIN" --db "$U" export --lot L --json > /dev/null || exit 1
    te=$(echo "$(now) - $t0" | bc)
    t0=$(now)
    $PSQL -c "SELECT * FROM $s.reading ORDER BY id" > /dev/null || exit 1
    ts=$(echo "$(now) - $t0" | bc)
    echo "$ti $tc" | awk '{ printf "%.3f %.3f %.2f\n", $1, $2, $1 / $2 }' >> "$T/ratios"
    echo "$te $ts" | awk '{ printf "%.3f %.3f %.2f\n", $1, $2, $1 / $2 }' >> "$T/scan"
    $PSQL -c "SET client_min_messages = warning; DROP SCHEMA $s CASCADE; DROP SCHEMA c$r CASCADE"
    r=$((r + 1))
done
summary() { # $1 file, $2 what
    sort -t' ' -k3 -n "$1" | awk -v what="$2" '{ a[NR] = $0; split($0, f, " "); r[NR] = f[3] }
        END { m = a[int((NR + 1) / 2)]; split(m, f, " ");
              printf "%s: median ratio %.2f (range %.2f .. %.2f, %d rounds; median round %.3f s vs %.3f s)\n",
                     what, f[3], r[1], r[NR], NR, f[1], f[2] }'
}
summary "$T/ratios" "import of $N readings / server COPY of the same rows"
summary "$T/scan" "export --lot --json of $N readings / SELECT of the same rows"
