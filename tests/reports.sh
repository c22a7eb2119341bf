#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The HTML reports: the demo writes a calibration, a lot and a table report; a table report
# and its JSON are made here with the same table; tests/reports_check.py loads them in
# Chromium and compares their numbers with the program's JSON.  Also: an issued report is
# stored byte for byte, a second report of the same run is refused, a reissue names the one
# it replaces, and a reissue of a report that is not the newest is refused.
# Usage: reports.sh BANDGAP [PYTHON]
BANDGAP=$1
PYTHON=${2:-/usr/bin/python3}
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
export SOURCE_DATE_EPOCH=1764576000
fail=0
"$BANDGAP" demo --dir "$dir/demo" > "$dir/demo.txt" 2>&1 || { echo "not ok demo"; exit 1; }
db="$dir/demo/demo.db"
for f in calibration-report lot-report table-report; do
    if [ -s "$dir/demo/$f.html" ] && grep -q "$dir/demo/$f.html" "$dir/demo.txt"; then
        echo "ok demo writes and names $f.html"
    else echo "not ok demo writes and names $f.html"; fail=1; fi
done
"$BANDGAP" --db "$db" lut --probe GH-0417 --fixed 10k --adc-bits 12 --range -15C:55C \
    --max-error 0.05C --fixed-tol 0.1% --supply 3.3V --dissipation 1.5mW/K \
    --report "$dir/table.html" --format json -o "$dir/table.json" > /dev/null || fail=1
if cmp -s "$dir/table.html" "$dir/demo/table-report.html"; then echo "ok table report reproducible"
else echo "not ok table report reproducible"; fail=1; fi
mkdir -p "$dir/shots"
"$PYTHON" tests/reports_check.py "$BANDGAP" "$db" "$dir/demo/calibration-report.html" \
    "$dir/demo/lot-report.html" "$dir/table.html" "$dir/table.json" "$dir/shots" || fail=1

# issued once, stored, reissued with a chain
B="$BANDGAP --db $db"
id=$($B report --list --json | "$PYTHON" -c 'import json,sys; print([r["id"] for r in json.load(sys.stdin) if r["kind"] == "run"][0])')
$B report --get "$id" -o "$dir/again.html" && cmp -s "$dir/again.html" "$dir/demo/calibration-report.html" \
    && echo "ok stored report written again byte for byte" || { echo "not ok stored report"; fail=1; }
# the lot report, written while its lot is read and handed back by the issue itself (not read
# back): the stored bytes are the bytes the demo wrote
lid=$($B report --list --json | "$PYTHON" -c 'import json,sys; print([r["id"] for r in json.load(sys.stdin) if r["kind"] == "lot"][0])')
$B report --get "$lid" -o "$dir/again-lot.html" && cmp -s "$dir/again-lot.html" "$dir/demo/lot-report.html" \
    && echo "ok stored lot report written again byte for byte" || { echo "not ok stored lot report"; fail=1; }
run=$($B report --list --json | "$PYTHON" -c 'import json,sys; print([r["spec"]["run"] for r in json.load(sys.stdin) if r["kind"] == "run"][0])')
sum1=$(cksum < "$db")
if $B report --run "$run" -o "$dir/second.html" 2>/dev/null; then
    echo "not ok a second report of a run is refused"; fail=1
elif [ "$(cksum < "$db")" = "$sum1" ] && [ ! -e "$dir/second.html" ]; then
    echo "ok a second report of a run is refused, database unchanged"
else echo "not ok refused report left traces"; fail=1; fi
if $B report --run "$run" --reissue "$id" --why "x" -o "$dir/no/such/dir/r.html" 2>/dev/null; then
    echo "not ok a report that cannot be written is refused"; fail=1
elif [ "$(cksum < "$db")" = "$sum1" ]; then
    echo "ok a report that cannot be written is refused (exit 73), database unchanged"
else echo "not ok a refused report changed the database"; fail=1; fi
$B report --run "$run" --reissue "$id" --why "customer address corrected" -o "$dir/re.html" > /dev/null
new=$($B report --list --json | "$PYTHON" -c 'import json,sys; print(max(r["id"] for r in json.load(sys.stdin)))')
if grep -q "id=\"replaces\" data-v=\"$id\"" "$dir/re.html" && grep -q "customer address corrected" "$dir/re.html" &&
   $B report --list --json | "$PYTHON" -c "import json,sys; r={x['id']: x for x in json.load(sys.stdin)}; sys.exit(0 if r[$id]['replaced_by'] == $new and r[$new]['replaces'] == $id else 1)"; then
    echo "ok a reissue names the report it replaces"
else echo "not ok reissue chain"; fail=1; fi
if $B report --run "$run" --reissue "$id" --why "again" -o "$dir/re2.html" 2>/dev/null; then
    echo "not ok reissuing a replaced report is refused"; fail=1
else echo "ok reissuing a replaced report is refused"; fi
if sqlite3 "$db" "UPDATE artifact SET content = 'x' WHERE id = $id" 2>/dev/null; then
    echo "not ok stored reports cannot be edited"; fail=1
else echo "ok stored reports cannot be edited"; fi
exit $fail
