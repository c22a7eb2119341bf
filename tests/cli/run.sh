#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Golden CLI tests.  Each case is a folder tests/cli/<command>/<case>/ with
#   args          the arguments, one line, shell words (files named relative to the case)
#   setup         optional shell commands run first in the same folder, with $BANDGAP
#                 the program (e.g. to build a database); their output is discarded
#   stdin         optional standard input
#   expected.out  expected.err  expected.rc
# The case's files are copied to a fresh temporary folder, which is the working directory,
# so every path in the output is relative and the run writes nowhere else.
# Usage: run.sh BANDGAP [--update]   (--update rewrites the expected files: review the diff)
# With BG_GOLDEN_BACKEND=pg (inside tests/pg/server.sh: tests/pg/goldens.sh) the cases whose
# only database is 'cal.db', named only after --db, run against a fresh schema of the test
# server's database each (tests/pg/bandgap-pg puts it in place of 'cal.db'; its name in the output is
# put back), with the same expected output; tests/pg/golden-skip.txt lists the few that
# differ on purpose, each with the reason.  The others (a file's bytes, sqlite3, the demo's
# file) are SQLite's own and are not run there.
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
REAL=$BIN
UPDATE=$2
HERE=$(cd "$(dirname "$0")" && pwd)
BACKEND=${BG_GOLDEN_BACKEND:-sqlite}
status=0
ncase=0
# 0 when case folder $1 can run on the server (see above)
pg_case() {
    all=$(cat "$1/args" "$1/setup" 2>/dev/null)
    [ "$(printf '%s\n' "$all" | grep -o '[A-Za-z0-9_./-]*\.db\b' | sort -u)" = cal.db ] || return 1
    [ "$(printf '%s\n' "$all" | grep -o 'cal\.db' | wc -l)" = \
      "$(printf '%s\n' "$all" | grep -o -- '--db cal\.db\( \|$\)' | wc -l)" ] || return 1
    ! grep -qx "${1#"$HERE"/}" "$HERE/../pg/golden-skip.txt" 2>/dev/null
}
for dir in "$HERE"/*/*/; do
    [ -f "$dir/args" ] || continue
    name=${dir%/}
    name=${name#"$HERE"/}
    if [ "$BACKEND" = pg ]; then
        pg_case "${dir%/}" || continue
        ncase=$((ncase + 1))
        # a schema of its own in the test server's database (quicker than a database)
        BG_GOLDEN_URL="postgresql:///$PGDATABASE?options=-csearch_path%3Dgolden$ncase"
        "$BG_PG_BIN/psql" -X -q -c "CREATE SCHEMA golden$ncase" > /dev/null || status=1
        export BG_GOLDEN_URL BANDGAP_REAL="$REAL"
        BIN=$HERE/../pg/bandgap-pg
    fi
    tmp=$(mktemp -d)
    cp -R "$dir"/. "$tmp"/
    (
        cd "$tmp" || exit 99
        export SOURCE_DATE_EPOCH=1764547200 # 2025-12-01T00:00:00Z: stored times are stable
        # libpq's environment names a default server: not for the file cases
        [ "$BACKEND" = pg ] || unset PGHOST PGDATABASE PGSERVICE
        if [ -f setup ]; then
            # a failing setup (or a check in it) fails the case: its log becomes the output
            if ! CLI_DIR="$HERE" BANDGAP="$BIN" sh -e setup > setup.log 2>&1; then
                { echo "setup failed:"; cat setup.log; } > actual.out
                : > actual.err
                echo 99 > actual.rc
                exit 0
            fi
        fi
        rm -f setup.log
        stdin=/dev/null
        [ -f stdin ] && stdin=stdin
        eval "set -- $(cat args)"
        LC_ALL=C BANDGAP_DB= "$BIN" "$@" < "$stdin" > actual.out 2> actual.err
        echo $? > actual.rc
        if [ "$BACKEND" = pg ]; then # the server's database, named as the case names it
            for f in actual.out actual.err; do
                sed "s#$BG_GOLDEN_URL#cal.db#g" "$f" > "$f.n" && mv "$f.n" "$f"
            done
        fi
    )
    if [ "$UPDATE" = "--update" ]; then
        cp "$tmp/actual.out" "$dir/expected.out"
        cp "$tmp/actual.err" "$dir/expected.err"
        cp "$tmp/actual.rc" "$dir/expected.rc"
        echo "updated $name"
    elif cmp -s "$tmp/actual.out" "$dir/expected.out" &&
         cmp -s "$tmp/actual.err" "$dir/expected.err" &&
         cmp -s "$tmp/actual.rc" "$dir/expected.rc"; then
        echo "ok $name"
    else
        echo "not ok $name"
        for f in out err rc; do
            cmp -s "$tmp/actual.$f" "$dir/expected.$f" ||
                diff -u "$dir/expected.$f" "$tmp/actual.$f" | head -20
        done
        status=1
    fi
    rm -rf "$tmp"
    if [ "$BACKEND" = pg ]; then
        "$BG_PG_BIN/psql" -X -q -c "SET client_min_messages = warning; DROP SCHEMA \
            golden$ncase CASCADE" > /dev/null || status=1
    fi
done
exit $status
