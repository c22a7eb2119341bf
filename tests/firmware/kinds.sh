#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The firmware check for the sensor kinds beside the NTC: one table of each kind on its front
# end (a silicon PTC in a divider with 2-wire leads, a platinum thermometer on a current
# source, a junction through an inverting amplifier, a junction pair, a Chebyshev series over
# volts, an IC sensor's reported temperature and its code), each on a 12-bit converter (the
# IC sensors: a 12-bit word), run over EVERY code 0 .. 4095 on an ATmega328P (simavr) and a
# Cortex-M0 (QEMU) by the existing tests/firmware/one.sh and compared bit for bit with the
# library's values (bandgap lut --format codes).  Invented sensors, except the platinum
# thermometer's IEC 60751 coefficients (../shared/refdata/REFERENCES.md section 3).
# one.sh builds the NTC divider's command line; for each kind a small wrapper (written into
# the work folder) stands in for bandgap: it checks that the line starts as one.sh writes it,
# puts the kind's model, front end and range in place of the NTC's, and keeps the rest
# (--max-error, --strategy, --resolution, the output options).
# Prints "ok firmware kind-NAME TARGET" / "not ok ...".  Usage: kinds.sh BANDGAP WORKDIR
BANDGAP=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
W=$2
HERE=$(cd "$(dirname "$0")" && pwd)
TARGETS="avr m0"
for t in avr-gcc simavr arm-none-eabi-gcc qemu-system-arm; do
    command -v $t > /dev/null 2>&1 || { echo "not ok firmware kinds: missing $t (make deps)"; exit 1; }
done
rm -rf "$W" && mkdir -p "$W" || exit 1
fail=0
build() { "$@" > "$W/harness.log" 2>&1 || { echo "not ok firmware kinds harness: $*"; cat "$W/harness.log"; fail=1; }; }
for vt in int float; do
    def="-DLOOKUP=t_lookup -DNCODES=4096UL"; [ $vt = float ] && def="$def -DVALUE_FLOAT"
    # shellcheck disable=SC2086
    build avr-gcc -mmcu=atmega328p -Os -std=gnu99 -Wall -Wextra -Werror $def \
        -c "$HERE/avr_main.c" -o "$W/avr_main_$vt.o"
    # shellcheck disable=SC2086
    build arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb -Os -std=c99 -Wall -Wextra -Werror $def \
        -c "$HERE/arm_main.c" -o "$W/arm_main_m0_$vt.o"
done
build arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb -Os -std=c99 -Wall -Wextra -Werror \
    -fno-tree-loop-distribute-patterns -c "$HERE/arm_start.c" -o "$W/arm_start_m0.o"
[ $fail -eq 0 ] || exit 1

# kind NAME STRATEGY RESOLUTION BOUND MODEL-AND-FRONT-END...
kind() {
    name=$1 st=$2 res=$3 bound=$4
    shift 4
    wrap=$W/bandgap-$name
    {
        echo '#!/bin/sh'
        echo 'if [ "$1 $2 $3 $4 $5 $6 $7 $8 $9 ${10} ${11}" != "lut --r25 10k --beta 3950K --fixed 10k --adc-bits 12 --range -40C:125C" ]; then'
        echo '    echo "kinds.sh: one.sh no longer starts its command line as expected: $*" >&2; exit 70'
        echo 'fi'
        echo 'shift 11'
        echo "exec \"$BANDGAP\" lut $* \"\$@\""
    } > "$wrap"
    chmod +x "$wrap"
    BANDGAP=$wrap W=$W TARGETS=$TARGETS sh "$HERE/one.sh" "kind-$name:$st:$res:$bound:"
}
{
    kind ptc-divider-leads indexed 0.01 0.1C --model ptc --coef 1000,7.8e-3,1.9e-5 --t0 25C \
        --fixed 2k --leads 1R --range -40C:125C
    kind pt1000-current-leads minimal q8 0.1C --model cvd \
        --coef 1000,3.9083e-3,-5.775e-7,-4.183e-12 --current 1mA --vref 2.048V --leads 2R \
        --range -50C:200C
    kind vbe-inverting minimal 0.01 0.2C --model vbe --coef 1.2,0.6,3.5 --t0 25C --vref 2.5V \
        --gain -1.5 --offset 2.2V --range -40C:125C
    kind dvbe-pair indexed q8 0.1C --model dvbe --coef 1.02,1e-4 --param p=8 --vref 3.3V \
        --gain 30 --offset 0.1V --range -40C:125C
    kind cheb-volts indexed 0.01 0.1C --model cheb:3 --coef 315,-85,1,0.3 --param x_lo=0.4 \
        --param x_hi=0.75 --vref 1V --range -20C:100C
    kind ic-reported uniform 0.01 0.05C --model ic --coef 0.3,0.002,1e-5 --t0 25C \
        --device-bits 12 --device-lsb 0.0625C --range -40C:125C
    kind ic-code-float uniform float 0.05C --model ic-code --coef 0.3,0.002,1e-5 --t0 25C \
        --param lsb_k=0.0625 --device-bits 12 --range -40C:125C
} > "$W/results.log" 2>&1
sort "$W/results.log"
n=$(grep -c '^ok firmware kind-' "$W/results.log")
# seven kinds on two cores
[ "$n" -eq 14 ] || { echo "not ok firmware kinds: $n of 14 tables agreed"; exit 1; }
! grep -q '^not ok' "$W/results.log"
