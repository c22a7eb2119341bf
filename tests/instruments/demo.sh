#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The bench part of `make demo`: a short calibration sequence run by `bandgap sequence`
# against the simulated bench (bench_sim.py, INVENTED bath, reference and probes, on
# 127.0.0.1 with an accelerated clock and a fixed seed), into demo-out/bench.db; then the
# lot is fitted, a table is made for one probe and its calibration report is issued.
# Usage: demo.sh BANDGAP OUTDIR [PYTHON]
BIN=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
OUT=$2
PY=${3:-/usr/bin/python3}
HERE=$(cd "$(dirname "$0")" && pwd)
mkdir -p "$OUT" || exit 73
cd "$OUT" || exit 73
DB=bench.db
rm -f "$DB" bench.port bench-sim.log
"$PY" "$HERE/bench_sim.py" --port-file bench.port --port2 0 --lifetime 120 --speed 300 \
    --tau 10 --seed 2611 > bench-sim.log 2>&1 &
SIM=$!
trap 'kill $SIM 2>/dev/null' EXIT
i=0
while [ ! -s bench.port ] && [ $i -lt 200 ]; do sleep 0.05; i=$((i + 1)); done
[ -s bench.port ] || { echo "demo: the simulated bench did not start" >&2; exit 69; }
read -r P M < bench.port
cat > bench-sequence.ini <<EOF
; INVENTED: a short sequence on the glasshouse cooperative's second bench (demo data)
[sequence]
setpoints = 0 C, 20 C, 40 C, 60 C
readings = 3
medium = silicone oil (invented)
measuring_current = 10 uA
[stability]
window = 0.6 s
sample_interval = 0.05 s
max_drift = 600 mK/min
max_scatter = 3 mK
time_limit = 20 s
on_timeout = stop
[medium]
min = -20 C
max = 120 C
safe_setpoint = 20 C
[reference]
ident = BENCH-REF-1
unit = C
[probe GH-0901]
channel = 101
[probe GH-0902]
channel = 102
[probe GH-0903]
channel = 103
[instrument bath]
transport = tcp
host = 127.0.0.1
port = $P
unit = C
timeout = 2 s
[instrument reference]
transport = tcp
host = 127.0.0.1
port = $P
timeout = 2 s
[instrument meter]
transport = tcp
host = 127.0.0.1
port = $M
timeout = 2 s
[instrument scanner]
transport = tcp
host = 127.0.0.1
port = $M
timeout = 2 s
EOF
set -e
"$BIN" --db $DB init > /dev/null
"$BIN" --db $DB lot add GH-LOT-2709 --part SOIL-NTC-10K --r25 10k --beta 3950K --pair 25/85 \
    --tol-r25 1% --tol-beta 0.5% --note "invented demo lot, second bench" > /dev/null
for p in GH-0901 GH-0902 GH-0903; do "$BIN" --db $DB probe add $p --lot GH-LOT-2709 > /dev/null; done
"$BIN" --db $DB ref add BENCH-REF-1 --cert "INV-CERT-2709 (invented)" --due 2099-01-01 \
    --linear 0K,0,20C > /dev/null
echo "== the second bench: a calibration sequence against the simulated instruments (invented)"
"$BIN" --db $DB sequence run bench-sequence.ini
echo "== its lot, fitted"
"$BIN" --db $DB fit --lot GH-LOT-2709 --model sh3
# The bath settles within a few mK of each setpoint, on either side, so the calibrated range
# is about 0 .. 60 degC but not always wider: the table keeps inside it (1 .. 59 degC), as
# lut requires without --allow-extrapolation.
echo "== a table for GH-0901 on a 12-bit ADC, 1 .. 59 degC (inside the calibrated range)"
"$BIN" --db $DB lut --probe GH-0901 --fixed 10k --adc-bits 12 --range 1C:59C --max-error 0.05C \
    -o bench_ntc.c > /dev/null
echo "wrote $OUT/bench_ntc.c"
run=$("$BIN" --db $DB list runs --probe GH-0901 --json | "$PY" -c \
    'import json,sys; print(json.load(sys.stdin)[-1]["run"])')
"$BIN" --db $DB report --run "$run" --lab "Glasshouse cooperative lab (invented)" \
    --customer "Bench 2 (invented)" -o bench-report.html > /dev/null
echo "wrote $OUT/bench-report.html (the calibration of GH-0901 from the sequence)"
