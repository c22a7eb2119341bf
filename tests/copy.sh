#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# bandgap copy: a whole database into an empty one.  Prints "ok NAME" / "not ok NAME".
#   SQLite to SQLite (always): every table's rows byte for byte (sqlite3's quote mode), the
#   same 'export --json', lists and 'verify' head; the table list copy.c knows equals the
#   schema's; a target that holds data (73), a missing source (66), usage errors (64), a
#   source that does not verify (65): the target keeps no row.
#   With a server (PGHOST set by tests/pg/server.sh): SQLite -> server -> SQLite and server ->
#   server, compared the same way; a non-empty server target (73, unchanged); a source holding
#   probe moves, runs of other quantities and sequences copied up whole.
# All data invented.  Usage: copy.sh BANDGAP
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
export SOURCE_DATE_EPOCH=1764547200
cd "$T" || exit 70
result() { # NAME STATUS(0 ok) WHY
    if [ "$2" -eq 0 ]; then echo "ok copy/$1"; else echo "not ok copy/$1: $3"; fi
}
# every table's rows, each value quoted as SQLite holds it (type and bytes), in id order
dump() {
    for t in $(sqlite3 "$1" "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY 1"); do
        echo "== $t"
        sqlite3 -cmd ".mode quote" "$1" "SELECT * FROM \"$t\" ORDER BY 1"
    done
}
# what a user sees of a database (ids, times, numbers, texts, the chain head)
LOT="L'1; DROP TABLE lot;--"
P1="P\"1\\\\x' OR '1'='1"
P2="\$1 %s ä€😀"
views() {
    for what in "export --lot $LOT --json" "export --lot L-2 --json" "list runs" "list fits" \
                "probe list" "lot list" "ref list" "verify" "ref show SPRT-9 --json" \
                "lot show L-2 --json" "part show NTC'10K --json"; do
        # shellcheck disable=SC2086
        "$BIN" --db "$1" $what 2>&1
        echo "rc=$?"
    done
}
# a record of every kind the server stores today: hostile names, versions, an ITS-90
# reference, exclusions, fits, an issued report, a part specification (all invented)
session() {
    cp "$HERE/cli/lib/bath.csv" bath.csv
    printf 'ref_ohms,ohms\n29.7419,12000\n40.9254,4000\n31.2,10500\n' > its.csv
    "$BIN" --db "$1" init > /dev/null &&
    "$BIN" --db "$1" lot add "$LOT" --part "NTC'10K" --r25 10k --beta 3950K --pair 25/85 \
        --tol-r25 1% --tol-beta 1% --note "note with 'quotes' and \"double\"" > /dev/null &&
    "$BIN" --db "$1" lot add L-2 --part "NTC'10K" --r25 10k --beta 3950K --tol-r25 1% \
        --tol-beta 1% > /dev/null &&
    "$BIN" --db "$1" lot set L-2 --tol-r25 2% --why "widened (invented)" --by "Q'A" \
        > /dev/null &&
    "$BIN" --db "$1" part set "NTC'10K" --r25 10k --beta 3950K --tol 0.5K --over 0/70 \
        > /dev/null &&
    "$BIN" --db "$1" probe add "$P1" --lot "$LOT" > /dev/null &&
    "$BIN" --db "$1" probe add "$P2" --lot "$LOT" > /dev/null &&
    "$BIN" --db "$1" probe add P-3 --lot L-2 --note "third" > /dev/null &&
    "$BIN" --db "$1" ref add "R'); --" --cert "C'1" --due 2027-06-30 \
        --linear -0.1712K,0.00218,20C > /dev/null &&
    "$BIN" --db "$1" ref add SPRT-9 --cert "INV-9 (invented)" \
        --its90 TPW-Zn,25.5012R,-3.08e-5,3.85e-6 > /dev/null &&
    "$BIN" --db "$1" ref set SPRT-9 --cert "INV-10 (invented)" --by t --why recal \
        --from 2026-11-25T00:00:00Z --its90 TPW-Ag,25.4R,1e-5,2e-6,3e-7,4e-8,3.3759 \
        > /dev/null &&
    "$BIN" --db "$1" import bath.csv --probe "$P1" --ref "R'); --" --operator "O'Brien" \
        --medium "oil\"; SELECT 1" --at 2026-11-20T09:00:00Z > /dev/null &&
    "$BIN" --db "$1" import bath.csv --probe "$P2" --at 2026-11-21T09:00:00Z > /dev/null &&
    "$BIN" --db "$1" import its.csv --probe P-3 --ref SPRT-9 --at 2026-11-26T09:00:00Z \
        > /dev/null &&
    "$BIN" --db "$1" fit --lot "$LOT" --model sh3 > /dev/null &&
    "$BIN" --db "$1" exclude 3 --why "it's 'bad'" --by "Q'A" > /dev/null &&
    "$BIN" --db "$1" fit --probe "$P1" --model sh3 > /dev/null &&
    "$BIN" --db "$1" fit --probe P-3 --model beta > /dev/null 2>&1 &&
    "$BIN" --db "$1" report --lot "$LOT" --lab "Lab 'A'" -o r.html > /dev/null
}
# what the server does not store yet: a probe move and a run of voltages
extend() {
    "$BIN" --db "$1" probe add P-4 --lot L-2 > /dev/null &&
    "$BIN" --db "$1" probe move P-4 --lot "$LOT" --why "re-binned (invented)" --by t \
        > /dev/null &&
    "$BIN" --db "$1" probe add D-01 --lot L-2 > /dev/null &&
    "$BIN" --db "$1" import "$HERE/cli/lib/junction.csv" --probe D-01 \
        --at 2026-11-27T09:00:00Z > /dev/null &&
    "$BIN" --db "$1" fit --probe D-01 --model vbe > /dev/null &&
    seqrows "$1"
}
# a calibration sequence's rows (not chained), written as 'sequence run' writes them; the
# values INVENTED (tests/sequence.sh runs real sequences against a simulated bench)
seqrows() {
    sqlite3 "$1" <<'SQL'
INSERT INTO sequence VALUES (1, 'inv''ented.ini', printf('%064d', 7), '; INVENTED
[sequence]
setpoints = 0 C, 40 C', 'INVENTED,BATH,0,1;INVENTED,METER,0,1', 'drift 600 mK/min', 1,
    '2026-11-22T08:00:00Z');
INSERT INTO sequence_settle VALUES (1, 1, 0, 273.15, 1, 0.0001, 0.0005, 273.1512, 0.6, 12.5,
    13, '2026-11-22T08:10:00Z');
INSERT INTO sequence_settle VALUES (2, 1, 1, 313.15, 0, NULL, NULL, NULL, 0.6, 600, 2,
    '2026-11-22T08:30:00Z');
INSERT INTO sequence_reading VALUES (1, 1, 0, 0, 1, '101', 273.15, 32651.25, 0.0012,
    '2026-11-22T08:10:01Z', '+3.265125E+04', '+1.2E-03');
INSERT INTO sequence_reading VALUES (2, 1, 0, 0, 2, '101', 273.15, 32651.5, 0.0013,
    '2026-11-22T08:10:02Z', '+3.26515E+04', '+1.3E-03');
INSERT INTO sequence_end VALUES (1, '2026-11-22T09:00:00Z', 1, 2);
SQL
}
same_as() { # NAME SOURCE TARGET: the views of both ends are equal
    views "$2" > "$T/a.views"
    views "$3" > "$T/b.views"
    cmp -s "$T/a.views" "$T/b.views" || { echo "# $1: the views differ:";
        diff "$T/a.views" "$T/b.views" | head -8; return 1; }
}
same_rows() { # SOURCE.db TARGET.db: every table's rows byte for byte
    dump "$1" > "$T/a.dump"
    dump "$2" > "$T/b.dump"
    cmp -s "$T/a.dump" "$T/b.dump" || { echo "# rows differ between $1 and $2:";
        diff "$T/a.dump" "$T/b.dump" | head -8; return 1; }
}

# ---- SQLite to SQLite ----
ok=0
session full.db || { ok=1; echo "# the session failed"; }
cp full.db ext.db
extend ext.db || { ok=1; echo "# the extension failed"; }
src_sum=$(cat full.db ext.db | sha256sum)
"$BIN" copy --from full.db --to c1.db > c1.out 2> c1.err || { ok=1; cat c1.err; }
grep -q "the same on both" c1.out || ok=1
same_rows full.db c1.db || ok=1
same_as sqlite-full full.db c1.db || ok=1
"$BIN" copy --from ext.db --to sqlite:c2.db --json > c2.json 2> c2.err || { ok=1; cat c2.err; }
same_rows ext.db c2.db || ok=1
same_as sqlite-ext ext.db c2.db || ok=1
[ "$(cat full.db ext.db | sha256sum)" = "$src_sum" ] || { ok=1; echo "# a source file changed"; }
result sqlite-to-sqlite "$ok" "the copy is not the source"

# the tables the copy knows are the schema's tables, and each count is the source's
ok=0
/usr/bin/python3 - c2.json <<'PY' > tables.txt || ok=1
import json, sys
d = json.load(open(sys.argv[1]))
for t, n in sorted(d["tables"].items()):
    print(t, n)
assert d["rows"] == sum(d["tables"].values())
assert len(d["head"]) == 64
PY
for t in $(sqlite3 ext.db "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY 1"); do
    n=$(sqlite3 ext.db "SELECT count(*) FROM \"$t\"")
    grep -qx "$t $n" tables.txt || { ok=1; echo "# table $t ($n rows) not copied as such"; }
done
[ "$(wc -l < tables.txt)" = "$(sqlite3 ext.db "SELECT count(*) FROM sqlite_master WHERE
    type = 'table'")" ] || { ok=1; echo "# copy.c lists tables the schema does not have"; }
[ "$(sqlite3 ext.db "SELECT count(*) FROM probe_version")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM run WHERE quantity = 'voltage'")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM reference_version")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM lot_version")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM artifact")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM exclusion")" = 1 ] &&
[ "$(sqlite3 ext.db "SELECT count(*) FROM sequence_end")" = 1 ] ||
    { ok=1; echo "# the test record lacks a kind of row"; }
result every-table "$ok" "the copied tables are not the schema's"

# ---- refusals: nothing written ----
ok=0
before=$(dump c1.db | sha256sum)
"$BIN" copy --from ext.db --to c1.db > /dev/null 2> err; rc=$?
[ "$rc" = 73 ] && grep -q "already holds data" err || { ok=1; echo "# non-empty: rc $rc"; cat err; }
[ "$(dump c1.db | sha256sum)" = "$before" ] || { ok=1; echo "# the non-empty target changed"; }
"$BIN" copy --from missing.db --to new.db > /dev/null 2> err; rc=$?
[ "$rc" = 66 ] && [ ! -e new.db ] || { ok=1; echo "# missing source: rc $rc"; }
for args in "--from full.db" "--to x.db" "--from full.db --to full.db" \
            "--from full.db --to x.db --merge" "--from full.db --to x.db extra"; do
    # shellcheck disable=SC2086
    "$BIN" copy $args > /dev/null 2> err; rc=$?
    [ "$rc" = 64 ] && [ ! -e x.db ] || { ok=1; echo "# 'copy $args': rc $rc"; }
done
# a source changed outside bandgap (a row without its record) does not verify: refused
cp full.db bad.db
sqlite3 bad.db "INSERT INTO probe(id, serial, lot_id, created_at) VALUES (99, 'X', 1, 'x')"
"$BIN" copy --from bad.db --to t-bad.db > /dev/null 2> err; rc=$?
[ "$rc" = 65 ] && grep -q "does not verify" err || { ok=1; echo "# tampered: rc $rc"; cat err; }
[ "$(sqlite3 t-bad.db "SELECT (SELECT count(*) FROM lot) + (SELECT count(*) FROM chain)")" \
    = 0 ] || { ok=1; echo "# the refused copy left rows"; }
chmod 555 "$T" 2>/dev/null
if [ "$(id -u)" != 0 ]; then
    "$BIN" copy --from full.db --to ro.db > /dev/null 2> err; rc=$?
    [ "$rc" = 73 ] || { ok=1; echo "# unwritable target: rc $rc"; }
fi
chmod 755 "$T"
result refusals "$ok" "a refused copy wrote something or exited wrongly"

# ---- with a server ----
[ -n "${PGHOST:-}" ] && [ -n "${BG_PG_BIN:-}" ] || exit 0
PSQL="$BG_PG_BIN/psql -X -q -At -v ON_ERROR_STOP=1"
newdb() { $PSQL -U "$BG_PG_ADMIN" -d postgres -c \
    "CREATE DATABASE $1 OWNER bandgap_owner TEMPLATE template0" > /dev/null; }
pgdigest() {
    for t in lot probe reference run reading exclusion fit artifact part_spec chain \
             reference_version lot_version probe_version sequence sequence_settle \
             sequence_reading sequence_end; do
        $PSQL -d "$1" -c "SELECT * FROM $t ORDER BY 1" 2>/dev/null || echo "no $t"
    done | sha256sum
}
ok=0
newdb cp1
newdb cp2
"$BIN" copy --from full.db --to postgresql:///cp1 > up.out 2> up.err || { ok=1; cat up.err; }
same_as up full.db postgresql:///cp1 || ok=1
"$BIN" copy --from postgresql:///cp1 --to down.db > down.out 2> down.err ||
    { ok=1; cat down.err; }
same_rows full.db down.db || ok=1
"$BIN" copy --from postgresql:///cp1 --to postgresql:///cp2 > pp.out 2> pp.err ||
    { ok=1; cat pp.err; }
same_as server-to-server postgresql:///cp1 postgresql:///cp2 || ok=1
[ "$(tail -1 up.out)" = "$(tail -1 down.out)" ] && [ "$(tail -1 up.out)" = "$(tail -1 pp.out)" ] ||
    { ok=1; echo "# the chain heads printed differ"; }
result server-both-ways "$ok" "a copy through the server is not the source"

ok=0
before=$(pgdigest cp2)
"$BIN" copy --from full.db --to postgresql:///cp2 > /dev/null 2> err; rc=$?
[ "$rc" = 73 ] || { ok=1; echo "# non-empty server target: rc $rc"; cat err; }
[ "$(pgdigest cp2)" = "$before" ] || { ok=1; echo "# the non-empty server target changed"; }
# what the server once refused (probe moves, runs of other quantities) it now stores: a
# source holding them copies up whole, and both ends print the same.
newdb cp3
"$BIN" --db postgresql:///cp3 init > /dev/null
"$BIN" copy --from ext.db --to postgresql:///cp3 > /dev/null 2> err; rc=$?
[ "$rc" = 0 ] || { ok=1; echo "# the extended record was not copied to the server: rc $rc"; cat err; }
same_as server-ext ext.db postgresql:///cp3 || ok=1
result server-extended "$ok" "the extended record did not copy to the server whole"
exit 0
