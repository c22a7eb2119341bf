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
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
UPDATE=$2
HERE=$(cd "$(dirname "$0")" && pwd)
status=0
for dir in "$HERE"/*/*/; do
    [ -f "$dir/args" ] || continue
    name=${dir%/}
    name=${name#"$HERE"/}
    tmp=$(mktemp -d)
    cp -R "$dir"/. "$tmp"/
    (
        cd "$tmp" || exit 99
        export SOURCE_DATE_EPOCH=1764547200 # 2025-12-01T00:00:00Z: stored times are stable
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
done
exit $status
