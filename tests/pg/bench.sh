#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Benchmark (not a test) of the PostgreSQL backend, run inside tests/pg/server.sh by make bench
# and make bench-pg.  Interleaved rounds (the order of the timed steps alternates), median and
# range of each ratio; the anchors run on the same server in the same round:
#   import   'import' of BENCH_PG_ROWS (1,000,000) INVENTED readings into one run, against the
#            server's own COPY of the same rows into a copy of bandgap's reading table (its
#            key, checks and indexes);
#   export   'export --lot --json' of those readings against a plain SELECT of them;
#   lot fit  'fit --lot' of BENCH_PG_PROBES probes of 8 readings each (an INVENTED lot,
#            tests/pg/biglot.sh) against a plain SELECT scan of the same readings; by default
#            10,000 and 30,000 (the growth); 100,000 takes about 200 s a fit and 350 s for
#            the four clients on 2 shared cores, over 25 min for 3 rounds: BENCH_PG_PROBES=100000;
#   4 clients  the same probes as 4 lots of a quarter each, fitted by 4 clients at once
#            ('fit --lot Q1' .. 'Q4' started together; the time until the last ends), against
#            the one-client lot fit of the same round.
# Each round fits fresh copies of the lot (CREATE DATABASE ... TEMPLATE), so every fit writes
# every probe's fit.  The four clients wait for the writers' lock up to 600 s (--busy-timeout:
# each lot fit is one transaction, and at the default 30 s a client queued behind three lots of
# 25,000 gives up with exit 75).  BENCH_PG_ROUNDS rounds (3); BENCH_PG_PARTS "import fit".
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
HERE=$(cd "$(dirname "$0")" && pwd)
N=${BENCH_PG_ROWS:-1000000}
NPS=${BENCH_PG_PROBES:-10000 30000}
ROUNDS=${BENCH_PG_ROUNDS:-3}
PARTS=${BENCH_PG_PARTS:-import fit}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
ADMIN() { $PSQL -U "$BG_PG_ADMIN" -d postgres -c "$1" > /dev/null; }
. "$HERE/biglot.sh"
now() { date +%s.%N; }
since() { echo "$(now) - $1" | bc; }
summary() { # FILE WHAT: lines "t_measured t_anchor ratio"
    sort -t' ' -k3 -n "$1" | awk -v what="$2" '{ a[NR] = $0; split($0, f, " "); r[NR] = f[3] }
        END { if (NR == 0) { printf "%s: no rounds\n", what; exit }
              m = a[int((NR + 1) / 2)]; split(m, f, " ");
              printf "%s: median ratio %.2f (range %.2f .. %.2f, %d rounds; median round %.3f s vs %.3f s)\n",
                     what, f[3], r[1], r[NR], NR, f[1], f[2] }'
}
ratio() { echo "$1 $2" | awk '{ printf "%.3f %.3f %.3f\n", $1, $2, $1 / $2 }'; }

# ---- import and export ----
import_part() {
awk -v n="$N" 'BEGIN { print "# INVENTED benchmark readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < n; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / n,
        100000 * exp(-4 * i / n) }' > "$T/r.csv"
# the same rows as bandgap's reading table holds them (id, run, line, raw, t_k, ohms, u, u)
tail -n +3 "$T/r.csv" | awk -F, '{ printf "%d,1,%d,%s,%s,%s,%s,0,,\n", NR, NR + 2, $1, $1, $2, $3 }' \
    > "$T/rows.csv"
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
            ti=$(since "$t0")
        else
            $PSQL -c "\\copy c$r.copied FROM '$T/rows.csv' WITH (FORMAT csv)" || exit 1
            tc=$(since "$t0")
        fi
    done
    t0=$(now)
    "$BIN" --db "$U" export --lot L --json > /dev/null || exit 1
    te=$(since "$t0")
    t0=$(now)
    $PSQL -c "SELECT * FROM $s.reading ORDER BY id" > /dev/null || exit 1
    ts=$(since "$t0")
    ratio "$ti" "$tc" >> "$T/ratios"
    ratio "$te" "$ts" >> "$T/scan"
    $PSQL -c "SET client_min_messages = warning; DROP SCHEMA $s CASCADE; DROP SCHEMA c$r CASCADE"
    r=$((r + 1))
done
summary "$T/ratios" "import of $N readings / server COPY of the same rows"
summary "$T/scan" "export --lot --json of $N readings / SELECT of the same rows"
}

# ---- lot fit: one client, and four at once ----
fit_part() {
for NP in $NPS; do
t0=$(now)
ADMIN "CREATE DATABASE lot1 OWNER bandgap_owner TEMPLATE template0"
ADMIN "CREATE DATABASE lot4 OWNER bandgap_owner TEMPLATE template0"
biglot postgresql:///lot1 lot1 "$NP" 8 1 > /dev/null 2>&1 || { echo "lot fit: setup failed"; exit 1; }
biglot postgresql:///lot4 lot4 "$NP" 8 4 > /dev/null 2>&1 || { echo "lot fit: setup failed"; exit 1; }
echo "lot fit: $NP invented probes x 8 readings made by SQL in $(since "$t0" | cut -c1-6) s"
: > "$T/fit1"
: > "$T/fit4"
r=0
while [ $r -lt "$ROUNDS" ]; do
    ADMIN "CREATE DATABASE f1_$r OWNER bandgap_owner TEMPLATE lot1"
    ADMIN "CREATE DATABASE f4_$r OWNER bandgap_owner TEMPLATE lot4"
    if [ $((r % 2)) -eq 0 ]; then order="one scan four"; else order="four scan one"; fi
    for what in $order; do
        t0=$(now)
        case $what in
        one)
            "$BIN" --db "postgresql:///f1_$r" fit --lot BIG --model sh3 > /dev/null 2> "$T/err"
            frc=$?
            t1=$(since "$t0") ;;
        scan)
            $PSQL -d "f1_$r" -c "SELECT * FROM reading" > /dev/null || exit 1
            tsc=$(since "$t0") ;;
        four)
            pids=""
            for q in 1 2 3 4; do
                "$BIN" --db "postgresql:///f4_$r" --busy-timeout 600 fit --lot Q$q \
                    --model sh3 > /dev/null 2> "$T/err$q" &
                pids="$pids $!"
            done
            f4rc=0
            for p in $pids; do wait "$p" || f4rc=$?; done
            t4=$(since "$t0") ;;
        esac
    done
    echo "lot fit round $r: one client $t1 s (exit $frc), 4 clients $t4 s (exit $f4rc)," \
         "SELECT $tsc s"
    if [ "$frc" -eq 0 ] && [ "$($PSQL -d "f1_$r" -c "SELECT count(*) FROM fit")" = "$NP" ]; then
        ratio "$t1" "$tsc" >> "$T/fit1"
    else
        echo "lot fit: the one-client fit failed or stored fewer fits: $(head -c 300 "$T/err")"
    fi
    if [ "$f4rc" -eq 0 ] && [ "$($PSQL -d "f4_$r" -c "SELECT count(*) FROM fit")" = "$NP" ]; then
        [ "$frc" -eq 0 ] && ratio "$t4" "$t1" >> "$T/fit4"
    else
        echo "lot fit: a client of four failed or fits are missing:" \
             "$(cat "$T/err1" "$T/err2" "$T/err3" "$T/err4" | head -c 300)"
    fi
    ADMIN "DROP DATABASE f1_$r"
    ADMIN "DROP DATABASE f4_$r"
    r=$((r + 1))
done
summary "$T/fit1" "fit --lot of $NP probes / SELECT scan of their $((NP * 8)) readings"
summary "$T/fit4" "4 clients fitting 4 lots of $((NP / 4)) at once / one client fitting the $NP"
ADMIN "DROP DATABASE lot1"
ADMIN "DROP DATABASE lot4"
done
}

for part in $PARTS; do
    ${part}_part
done
