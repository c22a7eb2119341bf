#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The store's own checks on the server, run inside tests/pg/server.sh (which makes the server,
# the owner role bandgap_owner and its database): prints "ok NAME" / "not ok NAME", and
# "skip NAME: WHY" for a check that cannot run yet (counted neither way, said plainly).
#   store-unit   tests/test_store.c against the server (BG_TEST_STORE_DB): every test that
#                goes through the library alone (the rest look at the SQLite file and skip)
#   copy         tests/copy.sh with the server: SQLite -> server -> SQLite, server -> server
#   faults       tests/pg/faults.sh: the server restarted during a lot fit
# Usage: store.sh BUILD   (the build folder: BUILD/bandgap and BUILD/tests/test_store)
B=$(cd "$1" && pwd)
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"

# A lot fit of 40 probes writes its fits in batches of 32 (BGI_FITQ) and then one by one
# (a batch's SQL text once overran its buffer here: a crash, or the sanitizers' report).
$PSQL -U "$BG_PG_ADMIN" -d postgres -c \
    "CREATE DATABASE batch OWNER bandgap_owner TEMPLATE template0" > /dev/null
D=postgresql:///batch
"$B/bandgap" --db $D init > /dev/null
"$B/bandgap" --db $D lot add L --part N --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% \
    > /dev/null
for i in $(seq 1 40); do
    "$B/bandgap" --db $D probe add "P$i" --lot L > /dev/null
    "$B/bandgap" --db $D import "$HERE/../cli/lib/bath.csv" --probe "P$i" \
        --at 2026-11-20T09:00:00Z > /dev/null
done
"$B/bandgap" --db $D fit --lot L --model sh3 > /dev/null 2> "$T/batch.err"
batch_rc=$?
# a crash: a signal, or the sanitizers' report (they exit 1)
if [ "$batch_rc" -eq 0 ] && ! grep -q "ERROR: AddressSanitizer" "$T/batch.err"; then
    echo "ok pg/fit-batch"
else
    echo "not ok pg/fit-batch: 'fit --lot' of 40 probes exited $batch_rc"
fi

BG_TEST_STORE_DB=postgresql:///bandgap "$B/tests/test_store" > "$T/unit.log" 2>&1
rc=$?
n_ok=$(grep -c '^\[       OK \]' "$T/unit.log")
n_skip=$(grep '^\[  SKIPPED \]' "$T/unit.log" | sort -u | wc -l)
if [ "$rc" -eq 0 ] && [ "$n_ok" -ge 14 ]; then
    echo "ok pg/store-unit ($n_ok on the server, $n_skip skipped: they look at the SQLite file itself)"
else
    grep -E '^\[ *(FAILED|ERROR|LINE) *\]' "$T/unit.log" | head -20
    echo "not ok pg/store-unit: exit $rc, $n_ok passed"
fi
(cd "$HERE/../.." && sh tests/copy.sh "$B/bandgap") | grep "server\|^#" |
    sed 's|^ok copy/|ok pg/copy-|; s|^not ok copy/|not ok pg/copy-|'
sh "$HERE/faults.sh" "$B/bandgap"
exit 0
