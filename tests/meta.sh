#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Meta checks: every command in 'bandgap --help' (printed from the command table) has a doc
# page and answers --help; --version; a full disk is reported; the man page lints clean;
# every source file carries its SPDX line.
BIN=$1
status=0
bad() { echo "meta: $*"; status=1; }

cmds=$("$BIN" --help | sed -n '/^Commands:/,/^$/p' | awk 'NR > 1 && NF { print $1 }')
[ -n "$cmds" ] || bad "no commands listed by --help"
for c in $cmds; do
    [ -f "docs/commands/$c.md" ] || bad "command '$c' has no page docs/commands/$c.md"
    grep -q "^\.SS $c\$" docs/bandgap.1 || bad "command '$c' is missing from docs/bandgap.1"
    out=$("$BIN" "$c" --help) || bad "'bandgap $c --help' failed"
    case "$out" in "Usage: bandgap $c"*) ;; *) bad "'bandgap $c --help' prints no usage" ;; esac
done

v=$("$BIN" --version | head -n 1)
case "$v" in "bandgap "[0-9]*.[0-9]*.[0-9]*) ;; *) bad "--version first line is '$v'" ;; esac

if [ -w /dev/full ]; then
    "$BIN" eval --model sh3 --coef 1.4e-3,2.37e-4,9.9e-8 --ohms 3000R > /dev/full 2>/dev/null
    rc=$?
    [ "$rc" -eq 74 ] || bad "output to /dev/full exited $rc, expected 74 (EX_IOERR)"
fi

if command -v mandoc >/dev/null 2>&1; then
    mandoc -Tlint -Wwarning docs/bandgap.1 || bad "docs/bandgap.1 has mandoc warnings"
fi

for f in $(find src include tests -name '*.c' -o -name '*.h' -o -name '*.sh' -o -name '*.py' \
           -o -name '*.awk') Makefile; do
    grep -q 'SPDX-License-Identifier: GPL-3.0-or-later' "$f" || bad "$f has no SPDX line"
done
[ "$status" -eq 0 ] && echo "meta: ok"
exit $status
