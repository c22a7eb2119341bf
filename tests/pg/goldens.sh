#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The CLI golden cases against the PostgreSQL backend (run inside tests/pg/server.sh):
# names are prefixed 'pg/'.  Usage: goldens.sh BANDGAP
HERE=$(cd "$(dirname "$0")" && pwd)
BG_GOLDEN_BACKEND=pg sh "$HERE/../cli/run.sh" "$1" | sed 's#^\(not ok\|ok\) #\1 pg/#'
