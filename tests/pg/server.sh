#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# A throwaway PostgreSQL server for the tests: initdb into a fresh temporary folder, listening
# only on a Unix socket in that folder (listen_addresses = '': no TCP), run by an unprivileged
# user when started as root (nobody, through setpriv, owning the folder), stopped and removed
# on exit whatever happens (trap on EXIT, INT, TERM, HUP).
#
# Usage: sh tests/pg/server.sh COMMAND [ARG...]
#   runs COMMAND with the server up and these set:
#     PGHOST        the socket folder (libpq connects there; no TCP)
#     PGPORT        the port number in the socket's name
#     PGUSER        bandgap_owner: owns the database 'bandgap' (the role that migrates)
#     PGDATABASE    bandgap
#     BG_PG_ADMIN   the server's superuser (makes databases and roles for the tests)
#     BG_PG_BIN     the server binaries (pg_ctl, psql, ...)
#     BG_PG_DATA    the data folder (a test may restart the server with pg_ctl)
#     BG_PG_RUN     the prefix that runs a server command as the server's user ("" when not root)
#   and exits with COMMAND's status.  A missing server is a failure (exit 69): the Makefile's
#   deps target installs Debian's 'postgresql'.
set -u
BIN=
for d in /usr/lib/postgresql/*/bin; do
    [ -x "$d/initdb" ] && BIN=$d
done
if [ -z "$BIN" ]; then
    echo "not ok pg-server: no PostgreSQL server binaries (install Debian's 'postgresql'; make deps does)" >&2
    exit 69
fi
[ $# -ge 1 ] || { echo "usage: server.sh COMMAND [ARG...]" >&2; exit 64; }

DIR=$(mktemp -d /tmp/bg-pg.XXXXXX) || exit 73
RUN=""
if [ "$(id -u)" = 0 ]; then
    chown nobody:nogroup "$DIR" 2>/dev/null || chown nobody "$DIR" || exit 73
    RUN="setpriv --reuid=nobody --regid=nogroup --clear-groups --"
    command -v setpriv > /dev/null 2>&1 || RUN="runuser -u nobody --"
fi
PORT=$(( 20000 + $$ % 20000 ))
cleanup() {
    if [ -f "$DIR/data/postmaster.pid" ]; then
        $RUN "$BIN/pg_ctl" -D "$DIR/data" -m immediate -w stop > /dev/null 2>&1
    fi
    rm -rf "$DIR"
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM
trap 'exit 129' HUP

# initdb: the C locale (byte order of text, as SQLite's), UTF-8, trust on the socket only
# (the folder is private to the server's user and the test)
if ! (cd "$DIR" && $RUN "$BIN/initdb" -D "$DIR/data" -U pgadmin -E UTF8 --locale=C \
        --auth-local=trust --auth-host=reject > "$DIR/initdb.log" 2>&1); then
    echo "not ok pg-server: initdb failed:" >&2
    cat "$DIR/initdb.log" >&2
    exit 70
fi
cat >> "$DIR/data/postgresql.conf" <<CONF
listen_addresses = ''
unix_socket_directories = '$DIR'
unix_socket_permissions = 0777
port = $PORT
fsync = off
max_connections = 60
max_locks_per_transaction = 128
log_min_messages = warning
CONF
if ! (cd "$DIR" && $RUN "$BIN/pg_ctl" -D "$DIR/data" -l "$DIR/server.log" -w -t 60 start \
        > /dev/null 2>&1); then
    echo "not ok pg-server: the server did not start:" >&2
    cat "$DIR/server.log" >&2
    exit 70
fi
chmod 755 "$DIR" 2>/dev/null
export PGHOST="$DIR" PGPORT="$PORT" BG_PG_BIN="$BIN" BG_PG_DATA="$DIR/data" BG_PG_RUN="$RUN"
export BG_PG_ADMIN=pgadmin
# the owner role (migrates, owns the schema) and its database; benches get their own roles
"$BIN/psql" -X -q -v ON_ERROR_STOP=1 -U pgadmin -d postgres > /dev/null <<SQL || exit 70
CREATE ROLE bandgap_owner LOGIN;
CREATE DATABASE bandgap OWNER bandgap_owner TEMPLATE template0 ENCODING 'UTF8' LC_COLLATE 'C' LC_CTYPE 'C';
REVOKE ALL ON DATABASE bandgap FROM PUBLIC;
SQL
export PGUSER=bandgap_owner PGDATABASE=bandgap
"$@"
