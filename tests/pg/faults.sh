#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Faults on the server backend, run inside tests/pg/server.sh: prints "ok NAME" / "not ok
# NAME", or "skip NAME: WHY" when a check cannot run yet.
#   restart-during-lot-fit   'fit --lot' of 4000 probes (an INVENTED lot, tests/pg/biglot.sh)
#                 while the server is restarted (pg_ctl restart -m fast), and while it is
#                 stopped (pg_ctl stop -m fast, started again after): the fit exits 69 with a
#                 message that says the server was lost, and the fit and chain tables are
#                 exactly as before (the server rolled the transaction back); a fit after
#                 the server is back stores every probe's fit.
# Usage: faults.sh BANDGAP
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
. "$HERE/biglot.sh"
N=4000
pgctl() { (cd "$(dirname "$BG_PG_DATA")" && $BG_PG_RUN "$BG_PG_BIN/pg_ctl" -D "$BG_PG_DATA" \
          -l "$(dirname "$BG_PG_DATA")/server.log" -w -t 60 "$@" > /dev/null 2>&1); }
tables() { $PSQL -d faultfit -c "SELECT * FROM fit ORDER BY id" -c \
           "SELECT * FROM chain ORDER BY seq" | sha256sum; }
$PSQL -U "$BG_PG_ADMIN" -d postgres -c \
    "CREATE DATABASE faultfit OWNER bandgap_owner TEMPLATE template0" > /dev/null
biglot postgresql:///faultfit faultfit $N 8 > /dev/null 2>&1 ||
    { echo "not ok pg/restart-during-lot-fit: the invented lot could not be made"; exit 0; }
ok=0
for mode in restart stop; do
    before=$(tables)
    # the fault comes while the fit writes: after its first fits are sent, before it commits
    # (the server's view of the session: it holds the writers' lock in an open transaction)
    "$BIN" --db postgresql:///faultfit fit --lot BIG --model sh3 > "$T/out" 2> "$T/err" &
    pid=$!
    i=0
    while [ $i -lt 400 ]; do
        s=$($PSQL -d faultfit -c "SELECT count(*) FROM pg_stat_activity WHERE datname = \
            'faultfit' AND state LIKE 'idle in transaction%' OR (datname = 'faultfit' AND \
            query LIKE 'INSERT INTO fit%')" 2>/dev/null)
        [ "${s:-0}" -gt 0 ] && break
        sleep 0.02
        i=$((i + 1))
    done
    sleep 0.2
    if [ "$mode" = restart ]; then pgctl -m fast restart; else pgctl -m fast stop; fi
    wait $pid
    rc=$?
    [ "$mode" = stop ] && pgctl start
    if [ "$rc" -ne 69 ]; then
        ok=1
        echo "# $mode: the fit exited $rc (expected 69): $(head -c 300 "$T/err")"
    fi
    grep -qi "server\|connection" "$T/err" ||
        { ok=1; echo "# $mode: the message does not say the server was lost: $(cat "$T/err")"; }
    [ "$(tables)" = "$before" ] || { ok=1; echo "# $mode: fits or chain records were left"; }
    [ "$(wc -l < "$T/out")" -eq 0 ] || { ok=1; echo "# $mode: results printed for a failed fit"; }
    echo "# $mode: exit $rc: $(head -c 200 "$T/err")"
done
"$BIN" --db postgresql:///faultfit fit --lot BIG --model sh3 > /dev/null 2>&1 ||
    { ok=1; echo "# the fit after the server came back failed"; }
[ "$($PSQL -d faultfit -c "SELECT count(*) FROM fit")" = $N ] ||
    { ok=1; echo "# the fit after the restart did not store $N fits"; }
if [ "$ok" -eq 0 ]; then echo "ok pg/restart-during-lot-fit"; else
    echo "not ok pg/restart-during-lot-fit: a lost server left part of a fit or exited wrongly"; fi
exit 0
