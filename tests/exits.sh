#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Exit statuses that tell the truth (issue 13): a full disk is 74 with a message saying so, for
# every command that writes (import, fit --lot, exclude, report, init), and an import blames no
# line of its CSV file for it; a read-only database file, or a read-only directory where SQLite
# must create its journal, is 73 naming which; a database locked by another process past the
# busy timeout is 75 saying so; a constraint of the record is 65 naming it.  In every case the
# database file is byte for byte unchanged.  The full disk is a small tmpfs and the read-only
# places are read-only mounts (root passes permission bits; a read-only mount binds it too);
# without root the full disk is skipped and the read-only cases use chmod.  Everything mounted
# is unmounted on exit.
# Usage: exits.sh BANDGAP
BIN=$1
HERE=$(cd "$(dirname "$0")" && pwd)
T=$(mktemp -d)
MOUNTS=""   # innermost first
LOCKER=""
cleanup() {
    [ -n "$LOCKER" ] && kill "$LOCKER" 2>/dev/null
    for m in $MOUNTS; do umount "$m" 2>/dev/null || umount -l "$m" 2>/dev/null; done
    chmod -R u+w "$T" 2>/dev/null
    rm -rf "$T"
}
trap cleanup EXIT
trap 'exit 1' INT TERM HUP
status=0
bad() { echo "exits: $*"; status=1; }
sum() { sha256sum < "$1"; }
ROOT=0
[ "$(id -u)" = 0 ] && ROOT=1

export SOURCE_DATE_EPOCH=1764547200
S="$T/seed.db"
B() { "$BIN" --db "$S" "$@"; }
B init > /dev/null
B lot add L --part P --r25 10k --beta 3950K --tol-r25 1% --tol-beta 1% > /dev/null
B probe add P-1 --lot L > /dev/null
B probe add P-2 --lot L > /dev/null
B import "$HERE/cli/lib/bath.csv" --probe P-1 --at 2026-11-20T09:00:00Z > /dev/null
B import "$HERE/cli/lib/bath.csv" --probe P-2 --at 2026-11-20T10:00:00Z > /dev/null
B fit --probe P-1 --model sh3 > /dev/null 2>&1 || bad "setup: fit failed"
# an invented readings file big enough to need many new pages (falling resistance)
awk 'BEGIN { print "# INVENTED exit-test readings"; print "temp_k,ohms,u_temp_k";
    for (i = 0; i < 20000; i++) printf "%.6f,%.6f,0.002\n", 250 + 100 * i / 20000, 100000 * exp(-4 * i / 20000) }' \
    > "$T/big.csv"

# expect CASE RC PATTERN DB ARGS...: run bandgap on DB, check the status, that stderr matches
# PATTERN (grep -E) and names no CSV line, and that DB is unchanged
expect() {
    what=$1 want=$2 pat=$3 db=$4
    shift 4
    before=$(sum "$db")
    "$BIN" --db "$db" "$@" > /dev/null 2> "$T/err"
    rc=$?
    [ "$rc" -eq "$want" ] || bad "$what: exited $rc, expected $want: $(cat "$T/err")"
    grep -Eq "$pat" "$T/err" || bad "$what: message does not say '$pat': $(cat "$T/err")"
    grep -Eq '\.csv:[0-9]' "$T/err" && bad "$what: a CSV line is blamed: $(cat "$T/err")"
    [ "$(sum "$db")" = "$before" ] || bad "$what: the database changed"
    echo "exits: $what: $rc: $(cat "$T/err")"
}
# the writes every case tries
writes() { # LABEL RC PATTERN DB
    expect "$1: import" "$2" "$3" "$4" import "$HERE/cli/lib/bath.csv" --probe P-1 --new-run
    expect "$1: fit --lot" "$2" "$3" "$4" fit --lot L --model sh3
    expect "$1: exclude" "$2" "$3" "$4" exclude 3 --why "invented reason" --by "A. Tester"
    expect "$1: report" "$2" "$3" "$4" report --run 1 -o "$T/r.html"
}

# 1. A full disk: 74, "the disk holding ... is full".
F="$T/full"
mkdir "$F"
if [ "$ROOT" = 1 ] && mount -t tmpfs -o size=512k tmpfs "$F" 2>/dev/null; then
    MOUNTS="$F $MOUNTS"
    cp "$S" "$F/f.db"
    dd if=/dev/zero of="$F/spare" bs=1k count=48 2>/dev/null
    dd if=/dev/zero of="$F/fill" bs=1k 2>/dev/null
    writes "full disk" 74 "the disk holding '$F/f.db' is full" "$F/f.db"
    # room for the journal and the run, not for 20000 readings: the readings fail, no line
    rm "$F/spare"
    expect "full disk: import of 20000 readings" 74 "is full" "$F/f.db" import "$T/big.csv" \
        --probe P-2
    rm -f "$F/r.html"
    [ "$(sum "$F/f.db")" = "$(sum "$S")" ] || bad "full disk: the database changed"
    expect "full disk: init" 74 "cannot create database '$F/new.db': .*is full" "$F/f.db" \
        --db "$F/new.db" init
    # the message names the database asked for, not the temporary file init writes first
    grep -q "new\.db\.tmp\." "$T/err" && bad "full disk: init names its temporary file: $(cat "$T/err")"
    grep -q "the disk holding '$F/new.db' is full" "$T/err" ||
        bad "full disk: init does not name the database's disk: $(cat "$T/err")"
    [ -e "$F/new.db" ] && bad "full disk: init left '$F/new.db'"
    ls "$F" | grep -q tmp && bad "full disk: init left a temporary file: $(ls "$F")"
else
    echo "exits: full disk: skipped: cannot mount a tmpfs (needs root)"
fi

# 2. A read-only database file: 73, naming the file.
R="$T/rofile.db"
cp "$S" "$R"
if [ "$ROOT" = 1 ]; then
    mount --bind "$R" "$R" && MOUNTS="$R $MOUNTS" && mount -o remount,bind,ro "$R" ||
        bad "cannot make '$R' a read-only bind mount"
else
    chmod 444 "$R"
fi
writes "read-only file" 73 "the database file '$R' is not writable" "$R"

# 3. A read-only directory (the file itself writable): 73, naming the directory and the
# journal.  As root: a read-only tmpfs, with a writable file bound onto a name in it.
D="$T/rodir"
mkdir "$D"
cp "$S" "$T/w.db"
if [ "$ROOT" = 1 ]; then
    if mount -t tmpfs -o size=64k tmpfs "$D"; then
        MOUNTS="$D $MOUNTS"
        : > "$D/d.db"
        mount -o remount,ro "$D" || bad "cannot remount '$D' read-only"
        mount --bind "$T/w.db" "$D/d.db" && MOUNTS="$D/d.db $MOUNTS" ||
            bad "cannot bind a writable file into '$D'"
    else
        bad "cannot mount a tmpfs on '$D'"
    fi
else
    cp "$T/w.db" "$D/d.db"
    chmod 555 "$D"
fi
writes "read-only directory" 73 \
    "the directory '$D' is not writable .*so SQLite cannot create its journal there" "$D/d.db"
expect "read-only directory: init" 73 \
    "cannot create database '$D/new.db': the directory '$D' is not writable" "$T/w.db" \
    --db "$D/new.db" init
[ -e "$D/new.db" ] && bad "read-only directory: init created '$D/new.db'"

# 4. Another process holds the database locked past the busy timeout: 75.  A write lock
# (BEGIN IMMEDIATE: readers go on, writers wait), then an exclusive one (even opening waits).
K="$T/k.db"
cp "$S" "$K"
for mode in IMMEDIATE EXCLUSIVE; do
    rm -f "$T/locked"
    /usr/bin/python3 -c '
import sqlite3, sys, time
c = sqlite3.connect(sys.argv[1], isolation_level=None)
c.execute("BEGIN " + sys.argv[2])
open(sys.argv[3], "w").close()
time.sleep(30)' "$K" "$mode" "$T/locked" &
    LOCKER=$!
    i=0
    while [ ! -e "$T/locked" ] && [ $i -lt 100 ]; do sleep 0.1; i=$((i + 1)); done
    [ -e "$T/locked" ] || bad "the $mode lock was not taken"
    expect "locked ($mode): exclude" 75 \
        "the database '$K' is locked by another process \(waited 0.5 s\); try again" "$K" \
        --busy-timeout 0.5 exclude 3 --why "invented reason" --by "A. Tester"
    expect "locked ($mode): import" 75 "locked by another process \(waited 0.2 s\)" "$K" \
        --busy-timeout 0.2 import "$HERE/cli/lib/bath.csv" --probe P-1 --new-run
    kill "$LOCKER"
    wait "$LOCKER" 2>/dev/null
    LOCKER=""
done
expect "busy timeout out of range" 64 "option '--busy-timeout': '-1' is not a number" "$K" \
    --busy-timeout -1 list runs

# 5. A constraint of the record refuses a write (here a trigger added to a copy, as a CHECK or
# an append-only trigger would): 65, naming it, not 70.
C="$T/c.db"
cp "$S" "$C"
sqlite3 "$C" "CREATE TRIGGER invented_refusal BEFORE INSERT ON exclusion BEGIN
    SELECT RAISE(ABORT, 'invented rule: no exclusions here'); END;" || bad "cannot add the trigger"
expect "constraint" 65 "cannot record the exclusion: .*invented rule: no exclusions here" "$C" \
    exclude 3 --why "invented reason" --by "A. Tester"

# 6. A damaged database file: 74 (EX_IOERR) naming the file, whatever the command, and the file
# left as it was.  The bytes are not the database that was written (a failing disk, a truncated
# copy, another program writing into it): a storage failure like an i/o error, not input the
# user can correct (65), and not a fault of the program (70).  The root pages of the tables
# the commands read (lot, probe, run, fit) overwritten with an invented pattern make SQLite
# report SQLITE_CORRUPT; a header overwritten, SQLITE_NOTADB.
D="$T/damaged.db"
cp "$S" "$D"
PS=$(sqlite3 "$S" "PRAGMA page_size")
for pg in $(sqlite3 "$S" "SELECT rootpage FROM sqlite_schema WHERE type = 'table' AND
                          name IN ('lot', 'probe', 'run', 'fit')"); do
    head -c "$PS" /dev/zero | tr '\0' 'X' | dd of="$D" bs="$PS" seek=$((pg - 1)) conv=notrunc 2>/dev/null
done
for args in "lot list" "list runs" "drift --lot L" "probe move P-1 --lot L --why invented"; do
    # shellcheck disable=SC2086 # the words of the command
    expect "damaged file: $args" 74 "the database file '.*damaged\.db' is damaged \(database disk image is malformed\)" "$D" $args
done
expect "damaged file: import" 74 "'.*damaged\.db' is damaged" "$D" import "$HERE/cli/lib/bath.csv" \
    --probe P-1 --new-run
H="$T/header.db"
cp "$S" "$H"
printf 'INVENTED DAMAGE!' | dd of="$H" bs=1 seek=0 conv=notrunc 2>/dev/null
expect "damaged header" 74 "'.*header\.db' is not a database file, or its header is damaged" "$H" \
    lot list

exit $status
