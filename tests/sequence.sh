#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# bandgap sequence against the simulated bench (tests/instruments/bench_sim.py, INVENTED
# probes and bath) over real SCPI on TCP sockets on 127.0.0.1: a whole sequence recorded,
# fitted and checked against the simulator's invented curves; SIGKILL at two moments and
# --resume (nothing lost beyond the reading in flight, nothing duplicated, the record
# verifies); SIGINT; a setpoint that never settles (skip and stop); an instrument that drops,
# reports an SCPI error or answers garbage (the bath then at its safe setpoint); resume
# refused when the file or an instrument changed; a setpoint beyond the medium's limit
# refused before any instrument is touched, the database unchanged after every refusal.
# Each simulator lives at most 60 s; the whole file takes about half a minute.
# With BG_SEQ_BACKEND=pg (inside tests/pg/server.sh, as tests/pg/check.sh runs it) each
# database is a fresh database on the test server, and the parts that concern the record run
# (1 the whole sequence, 2 SIGKILL and --resume, 4 the unsettled setpoint and the unfinished
# sequence, 5's resume refused with the database unchanged, 6 the refusals); SIGINT, the
# instruments' faults and the transports are the engine's code whichever the backend, and
# run on SQLite only (about 40 s on the server).
# Prints "ok NAME" / "not ok NAME".  Usage: sequence.sh BANDGAP [PYTHON]
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
PY=${2:-/usr/bin/python3}
HERE=$(cd "$(dirname "$0")" && pwd)
SIM="$HERE/instruments/bench_sim.py"
T=$(mktemp -d)
cleanup() {
    for f in "$T"/*.pid; do [ -f "$f" ] && kill "$(cat "$f")" 2>/dev/null; done
    rm -rf "$T"
}
[ -n "$KEEP" ] && echo "sequence: working in $T" && cleanup() { :; }
trap cleanup EXIT
export SOURCE_DATE_EPOCH=1764547200 # 2025-12-01T00:00:00Z
cd "$T" || exit 1
ok() { echo "ok sequence: $1"; }
bad() { echo "not ok sequence: $1"; }
check() { # NAME CONDITION...: ok when the condition (a command) succeeds
    name=$1
    shift
    if "$@"; then ok "$name"; else bad "$name"; fi
}

# sim NAME ARGS...: start a simulated bench answering on two ports (the bath and reference
# on the first, the meter and scanner on the second: "P M" in $T/NAME.port), its commands in
# NAME.log; faults count the meter's port only
sim() {
    name=$1
    shift
    rm -f "$name.port" "$name.log"
    "$PY" "$SIM" --port-file "$name.port" --log "$name.log" --lifetime 60 --speed 300 \
        --tau 10 --port2 0 --fault-port 2 "$@" > "$name.out" 2>&1 &
    echo $! > "$name.pid"
    i=0
    while [ ! -s "$name.port" ] && [ $i -lt 200 ]; do sleep 0.05; i=$((i + 1)); done
    cat "$name.port"
}
unsim() {
    [ -f "$1.pid" ] || return 0
    kill "$(cat "$1.pid")" 2>/dev/null
    wait "$(cat "$1.pid")" 2>/dev/null
    rm -f "$1.pid"
}

BACKEND=${BG_SEQ_BACKEND:-sqlite}
PSQL="${BG_PG_BIN:-}/psql -X -q -At -v ON_ERROR_STOP=1"
# D NAME.db: the database NAME.db names on this backend (a server database seq_NAME)
D() { if [ "$BACKEND" = pg ]; then echo "postgresql:///seq_${1%.db}"; else echo "$1"; fi; }
sqlite_only() { [ "$BACKEND" = sqlite ]; }
# dbsum DB: a digest of the whole database (every table's rows on the server)
dbsum() {
    if sqlite_only; then sha256sum < "$1"; return; fi
    for t in $($PSQL -d "seq_${1%.db}" -c "SELECT tablename FROM pg_tables WHERE schemaname =
               current_schema() ORDER BY 1"); do
        $PSQL -d "seq_${1%.db}" -c "SELECT * FROM $t ORDER BY 1"
    done | sha256sum
}
newdb() { # DB: an invented lot of three probes and a reference without correction
    if sqlite_only; then
        rm -f "$1"
    else
        $PSQL -U "$BG_PG_ADMIN" -d postgres -c "DROP DATABASE IF EXISTS seq_${1%.db}" \
            2> /dev/null &&
        $PSQL -U "$BG_PG_ADMIN" -d postgres -c "CREATE DATABASE seq_${1%.db} OWNER
            bandgap_owner TEMPLATE template0" || return 1
    fi
    "$BIN" --db "$(D "$1")" init > /dev/null &&
    "$BIN" --db "$(D "$1")" lot add L-SEQ --part NTC-SIM --r25 10k --beta 3950K --pair 25/85 \
        --tol-r25 1% --tol-beta 1% > /dev/null &&
    for p in S-1 S-2 S-3; do "$BIN" --db "$(D "$1")" probe add $p --lot L-SEQ > /dev/null; done &&
    "$BIN" --db "$(D "$1")" ref add REF-0 --cert "CERT 0" --due 2099-01-01 --linear 0K,0,20C \
        > /dev/null
}

# seqfile OUT BATHPORT METERPORT [on_timeout] [time_limit] [setpoints]
seqfile() {
    cat > "$1" <<EOF
; INVENTED sequence for the tests
[sequence]
setpoints = ${6:-0 C, 20 C, 40 C, 60 C, 80 C}
readings = 3
medium = silicone oil (invented)
measuring_current = 10 uA
[stability]
window = 0.6 s
sample_interval = 0.05 s
max_drift = 600 mK/min
max_scatter = 3 mK
time_limit = ${5:-10 s}
on_timeout = ${4:-skip}
[medium]
min = -20 C
max = 120 C
safe_setpoint = 20 C
[reference]
ident = REF-0
unit = C
[probe S-1]
channel = 101
[probe S-2]
channel = 102
[probe S-3]
channel = 103
[instrument bath]
transport = tcp
host = 127.0.0.1
port = $2
unit = C
timeout = 2 s
[instrument reference]
transport = tcp
host = 127.0.0.1
port = $2
timeout = 2 s
[instrument meter]
transport = tcp
host = 127.0.0.1
port = $3
timeout = 2 s
[instrument scanner]
transport = tcp
host = 127.0.0.1
port = $3
timeout = 2 s
EOF
}
q() { # DB SQL (SQLite's group_concat(nreadings) read as the server's string_agg, a truth
      # value as 0 or 1)
    if sqlite_only; then sqlite3 -cmd ".timeout 10000" "$1" "$2"; return; fi
    $PSQL -d "seq_${1%.db}" -c "$(printf '%s' "$2" |
        sed 's/group_concat(nreadings)/string_agg(nreadings::text, $$,$$ ORDER BY id)/;
             s/(\([a-z_]*\) IS NOT NULL)/(\1 IS NOT NULL)::int/g')"
}
last_bath() { grep '^SOUR:TEMP' "$1" | tail -1; }

# ---- 1. a whole sequence: 3 probes at 5 setpoints, fitted, against the invented curves ----
newdb full.db
ports=$(sim bath)
P=${ports% *} M=${ports#* }
seqfile full.ini "$P" "$M"
"$BIN" --db "$(D full.db)" sequence run full.ini > full.out 2> full.err
rc=$?
check "a whole sequence finishes (exit $rc)" [ "$rc" = 0 ]
check "45 readings recorded with time, channel, setpoint and raw replies" [ "$(q full.db \
    "SELECT count(*) FROM sequence_reading WHERE time <> '' AND channel IN ('101','102','103')
     AND meter_reply <> '' AND ref_reply <> ''")" = 45 ]
check "five settling records, each accepted within the criterion" [ "$(q full.db \
    "SELECT count(*) FROM sequence_settle WHERE settled = 1 AND abs(slope_k_s) <= 0.01
     AND scatter_k <= 0.003 AND samples >= 3")" = 5 ]
check "the *IDN? replies are recorded" [ "$(q full.db "SELECT count(*) FROM sequence WHERE
    idn LIKE '%bandgap-sim%'")" = 1 ]
check "three runs of 15 readings" [ "$(q full.db "SELECT group_concat(nreadings) FROM run")" \
    = "15,15,15" ]
check "the bath ends at the safe setpoint" [ "$(last_bath bath.log)" = "SOUR:TEMP 20" ]
check "SYST:ERR? follows every command" [ "$(grep -vc '^SYST:ERR?' bath.log)" = \
    "$(grep -c '^SYST:ERR?' bath.log)" ]
"$BIN" --db "$(D full.db)" fit --lot L-SEQ --model sh3 > fit.out 2> fit.err
check "fit --lot works on the recorded runs" [ $? = 0 ]
"$BIN" --db "$(D full.db)" show run 2 > show.out 2>&1
check "show works on a recorded run" grep -q "sequence 1" show.out
"$BIN" --db "$(D full.db)" verify > verify.out 2>&1
check "the record verifies after a sequence" [ $? = 0 ]
# The fitted curves against the simulator's invented curves: T(R) within the bench's stated
# errors (reference noise 1 mK, channel gradient up to 1 mK, self-heating up to 1.7 mK at
# 10 uA and 2 mW/K over this range; the invented curves in bench_sim.py).
"$BIN" --db "$(D full.db)" export --lot L-SEQ --json > export.json
"$PY" - "$SIM" export.json > curves.out 2>&1 <<'EOF'
import json, math, sys, importlib.util
spec = importlib.util.spec_from_file_location("bench_sim", sys.argv[1])
sim = importlib.util.module_from_spec(spec)
spec.loader.exec_module(sim)
d = json.load(open(sys.argv[2]))
worst = 0.0
for p, ch in zip(d["probes"], ("101", "102", "103")):
    a, b, c = p["fits"][-1]["coefficients"]
    for t_c in (0.0, 10.0, 30.0, 50.0, 70.0, 80.0):
        r = sim.sh_resistance(sim.PROBES[ch], t_c + 273.15)
        x = math.log(r)
        t_fit = 1.0 / (a + b * x + c * x ** 3) - 273.15
        worst = max(worst, abs(t_fit - t_c))
print("worst %.3f mK" % (worst * 1e3))
sys.exit(0 if worst < 0.004 else 1)
EOF
check "fitted curves within 4 mK of the invented ones ($(cat curves.out))" [ $? = 0 ]

# ---- 2. SIGKILL at two moments, then --resume ----
newdb kill.db
seqfile kill.ini "$P" "$M"
for at in 7 26; do
    "$BIN" --db "$(D kill.db)" sequence run kill.ini $([ $at = 26 ] && echo --resume) \
        > /dev/null 2>&1 &
    pid=$!
    i=0
    while [ "$(q kill.db "SELECT count(*) FROM sequence_reading" 2>/dev/null)" -lt $at ] &&
          [ $i -lt 400 ]; do sleep 0.02; i=$((i + 1)); done
    kill -9 $pid 2>/dev/null
    wait $pid 2>/dev/null
    n=$(q kill.db "SELECT count(*) FROM sequence_reading")
    check "SIGKILL after $at readings keeps them ($n kept)" [ "$n" -ge $at ]
    check "nothing finished after a SIGKILL" [ "$(q kill.db "SELECT count(*) FROM run")" = 0 ]
done
"$BIN" --db "$(D kill.db)" sequence run kill.ini --resume > kill.out 2> kill.err
check "--resume finishes the killed sequence (exit $?)" grep -q "sequence 1 finished (resumed)" kill.out
check "after the kills: 45 readings, none twice" [ "$(q kill.db "SELECT count(*),
    count(DISTINCT setpoint || '/' || probe || '/' || k) FROM sequence_reading")" = "45|45" ]
check "after the kills: three runs of 15 readings" [ "$(q kill.db \
    "SELECT group_concat(nreadings) FROM run")" = "15,15,15" ]
sqlite_only && check "after the kills: integrity_check ok" [ "$(q kill.db "PRAGMA integrity_check")" = ok ]
"$BIN" --db "$(D kill.db)" verify > /dev/null 2>&1
check "after the kills: the record verifies" [ $? = 0 ]

# (the signal handling is the engine's, whichever the backend: on SQLite only)
if sqlite_only; then
# ---- 3. SIGINT: the bath to its safe setpoint, resumable ----
newdb int.db
seqfile int.ini "$P" "$M"
"$BIN" --db "$(D int.db)" sequence run int.ini > int.out 2> int.err &
pid=$!
i=0
while [ "$(q int.db "SELECT count(*) FROM sequence_reading" 2>/dev/null)" -lt 10 ] &&
      [ $i -lt 400 ]; do sleep 0.02; i=$((i + 1)); done
kill -INT $pid
wait $pid
rc=$?
check "SIGINT stops with exit 75 (got $rc)" [ "$rc" = 75 ]
check "SIGINT: the message says stopped and the bath safe" grep -q \
    "stopped at your request.*the bath was set to its safe setpoint 20.00" int.err
check "SIGINT: the bath's last setpoint is the safe one" [ "$(last_bath bath.log)" = \
    "SOUR:TEMP 20" ]
"$BIN" --db "$(D int.db)" sequence run int.ini --resume > /dev/null 2>&1
check "SIGINT: --resume finishes" [ "$(q int.db "SELECT count(*) FROM sequence_end")" = 1 ]
fi
unsim bath

# ---- 4. a setpoint that never settles: skipped, or the sequence stops ----
newdb skip.db
ports=$(sim bath --unsettled-setpoint 40)
P=${ports% *} M=${ports#* }
seqfile skip.ini "$P" "$M" skip "3 s" "0 C, 40 C, 60 C"
"$BIN" --db "$(D skip.db)" sequence run skip.ini > skip.out 2> skip.err
check "an unsettled setpoint is skipped (exit $?)" grep -q "1 setpoint skipped" skip.out
check "the unsettled setpoint is recorded as such, with its drift and scatter" [ "$(q skip.db \
    "SELECT setpoint || ':' || settled || ':' || (scatter_k IS NOT NULL) FROM sequence_settle
     WHERE settled = 0")" = "1:0:1" ]
check "runs without the skipped setpoint: 6 readings each" [ "$(q skip.db \
    "SELECT group_concat(nreadings) FROM run")" = "6,6,6" ]
newdb stop.db
seqfile stop.ini "$P" "$M" stop "3 s" "0 C, 40 C, 60 C"
"$BIN" --db "$(D stop.db)" sequence run stop.ini > stop.out 2> stop.err
rc=$?
check "on_timeout = stop: exit 75 (got $rc)" [ "$rc" = 75 ]
check "on_timeout = stop: the bath at its safe setpoint" [ "$(last_bath bath.log)" = \
    "SOUR:TEMP 20" ]
check "on_timeout = stop: no run made, readings of setpoint 1 kept" [ "$(q stop.db \
    "SELECT (SELECT count(*) FROM run) || ':' || count(*) FROM sequence_reading")" = "0:9" ]
"$BIN" --db "$(D stop.db)" sequence run stop.ini > /dev/null 2> again.err
check "a new run of a file with an unfinished sequence says so" grep -q \
    "sequence 1 of this file is unfinished; this starts a new one" again.err
unsim bath
ports=$(sim bath)
P=${ports% *} M=${ports#* }
seqfile stop2.ini "$P" "$M" stop "3 s" "0 C, 40 C, 60 C"
"$BIN" --db "$(D stop.db)" sequence run stop2.ini --resume > /dev/null 2> resume-changed.err
rc=$?
check "resume refused when the file changed (exit $rc)" grep -q \
    "not the one sequence 2 was started with" resume-changed.err
unsim bath

# ---- 5. instruments that fail: drop, SCPI error, garbage; the bath safe each time ----
if sqlite_only; then
for fault in "drop-after 20" "error-after 20" "garbage-after 22"; do
    newdb fault.db
    ports=$(sim bath --${fault% *} ${fault#* })
    P=${ports% *} M=${ports#* }
    seqfile fault.ini "$P" "$M" skip "10 s" "0 C, 20 C"
    "$BIN" --db "$(D fault.db)" sequence run fault.ini > fault.out 2> fault.err
    rc=$?
    check "${fault% *}: exit 69 (got $rc)" [ "$rc" = 69 ]
    check "${fault% *}: a clear message and the bath at its safe setpoint" grep -q \
        "instrument '\(meter\|scanner\)' (127.0.0.1:$M).*the bath was set to its safe setpoint" \
        fault.err
    case $fault in
    drop*) why="connection closed\|connection lost\|cannot send" ;;
    error*) why="reported error -222,\"Data out of range\" after 'MEAS:FRES?'" ;;
    *) why="reply '#!?garbage' is not a number, to 'MEAS:FRES?'" ;;
    esac
    check "${fault% *}: the message says what happened" grep -q "$why" fault.err
    check "${fault% *}: the bath's last command is the safe setpoint" [ "$(last_bath \
        bath.log)" = "SOUR:TEMP 20" ]
    check "${fault% *}: the readings before it are kept, resumable" grep -q \
        "continue it with 'bandgap sequence run fault.ini --resume'" fault.err
    unsim bath
done
# the dropped meter comes back on the same port: --resume finishes
newdb drop.db
ports=$(sim bath --drop-after 16)
P=${ports% *} M=${ports#* }
seqfile drop.ini "$P" "$M" skip "10 s" "0 C, 20 C"
"$BIN" --db "$(D drop.db)" sequence run drop.ini > /dev/null 2>&1
unsim bath
sim bath --port "$P" --port2 "$M" > /dev/null
"$BIN" --db "$(D drop.db)" sequence run drop.ini --resume > /dev/null 2>&1
check "a dropped instrument back on its port: --resume finishes" [ "$(q drop.db \
    "SELECT count(*) FROM sequence_end")" = 1 ]
unsim bath
fi
# another instrument answering: resume refused
newdb idn.db
ports=$(sim bath --drop-after 16)
P=${ports% *} M=${ports#* }
seqfile idn.ini "$P" "$M" skip "10 s" "0 C, 20 C"
"$BIN" --db "$(D idn.db)" sequence run idn.ini > /dev/null 2>&1
unsim bath
sim bath --port "$P" --port2 "$M" --idn "bandgap-sim,another-bench,0002,1.0" > /dev/null
before=$(dbsum idn.db)
"$BIN" --db "$(D idn.db)" sequence run idn.ini --resume > /dev/null 2> idn.err
rc=$?
check "resume refused when an instrument's *IDN? changed (exit $rc)" grep -q \
    "instruments are not those sequence 1 was started with" idn.err
check "the database unchanged by the refused resume" [ "$(dbsum idn.db)" = "$before" ]
unsim bath

# ---- 6. refused before anything starts ----
newdb lim.db
ports=$(sim bath)
P=${ports% *} M=${ports#* }
seqfile lim.ini "$P" "$M" skip "10 s" "0 C, 20 C, 130 C"
: > bath.log
before=$(dbsum lim.db)
"$BIN" --db "$(D lim.db)" sequence run lim.ini > /dev/null 2> lim.err
rc=$?
check "a setpoint beyond the medium's limit: exit 65 (got $rc)" [ "$rc" = 65 ]
check "the refusal names the file and line" grep -q "lim.ini:3: setpoint 3 (130.00 °C)" lim.err
check "no instrument touched before the refusal" [ ! -s bath.log ]
check "the database unchanged by the refusal" [ "$(dbsum lim.db)" = "$before" ]
sed 's/^readings = 3/readings = 3 apples/' lim.ini > bad.ini
"$BIN" --db "$(D lim.db)" sequence run bad.ini > /dev/null 2> bad.err
check "a bad value: exit 65 naming bad.ini:4 ($?)" grep -q "bad.ini:4: 'readings'" bad.err
check "the database unchanged by the bad file" [ "$(dbsum lim.db)" = "$before" ]
unsim bath

sqlite_only || exit 0
# ---- 7. the serial transport (termios) on the simulator's pseudo-terminal ----
newdb pty.db
rm -f pty.name
ports=$(sim bath --pty-file pty.name)
P=${ports% *}
i=0
while [ ! -s pty.name ] && [ $i -lt 200 ]; do sleep 0.05; i=$((i + 1)); done
seqfile pty.ini "$P" "$P" skip "10 s" "0 C, 20 C"
"$PY" - pty.ini "$(cat pty.name)" <<'EOF2'
import sys
path, dev = sys.argv[1], sys.argv[2]
s = open(path).read()
for role in ("meter", "scanner"):
    head = "[instrument %s]\n" % role
    a = s.index(head) + len(head)
    b = s.index("timeout", a)
    s = s[:a] + "transport = serial\ndevice = %s\nbaud = 115200\n" % dev + s[b:]
open(path, "w").write(s)
EOF2
"$BIN" --db "$(D pty.db)" sequence run pty.ini > pty.out 2> pty.err
check "meter and scanner on a serial line (a pseudo-terminal): finished (exit $?)" \
    [ "$(q pty.db "SELECT group_concat(nreadings) FROM run")" = "6,6,6" ]
# the USBTMC transport reads and writes its device file blocking; a pseudo-terminal stands in
newdb tmc.db
sed 's/^transport = serial/transport = usbtmc/; /^baud = /d' pty.ini > tmc.ini
"$BIN" --db "$(D tmc.db)" sequence run tmc.ini > tmc.out 2> tmc.err
check "meter and scanner as a USBTMC device file (a pseudo-terminal): finished (exit $?)" \
    [ "$(q tmc.db "SELECT group_concat(nreadings) FROM run")" = "6,6,6" ]
unsim bath
exit 0
