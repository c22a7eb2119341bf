#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# One table of the firmware check (tests/firmware/run.sh): emit it with bandgap lut, with the
# library's value for every ADC code (--format codes), then build it into the harness of each
# target, run it in the simulator over every code and compare bit for bit.
# Usage: one.sh CASE   where CASE is NAME:STRATEGY:RESOLUTION:BOUND:EXTRA-OPTIONS,
# with BANDGAP, W (the work folder, holding the harness objects) and TARGETS in the
# environment.  Prints "ok firmware NAME TARGET" or "not ok ..." with the differing codes.
IFS=: read -r name st res bound extra <<EOF2
$1
EOF2
HERE=$(cd "$(dirname "$0")" && pwd)
d=$W/$name
mkdir -p "$d"
lut() { # shellcheck disable=SC2086
    "$BANDGAP" lut --r25 10k --beta 3950K --fixed 10k --adc-bits 12 --range -40C:125C \
        --max-error "$bound" --strategy "$st" --resolution "$res" $extra "$@" > /dev/null
}
if ! lut --symbol t -o "$d/t.c" 2> "$d/lut.err" || ! lut --format codes -o "$d/t.codes" 2>> "$d/lut.err"
then
    echo "not ok firmware $name: bandgap lut failed"; sed 's/^/# /' "$d/lut.err"; exit 0
fi
vt=int; [ "$res" = float ] && vt=float
# a minimal table of the NTC at 0.01 degC in the chained form: its file walked and its error
# recomputed with numpy, independently of the library (chain_check.py)
case $name in
minimal-0.01-*) if grep -q 't_chain\[' "$d/t.c"; then
        cbits=12; case $extra in *"--adc-bits 14"*) cbits=14 ;; *"--adc-bits 16"*) cbits=16 ;; esac
        # the reference table (12 bits): its count against the least possible, exactly
        least=""; [ "$name" = minimal-0.01-for-avr ] && least="--least 0"
        # shellcheck disable=SC2086
        "${PYTHON:-/usr/bin/python3}" "$HERE/chain_check.py" "$name" "$d/t.c" "$d/t.codes" \
            "$cbits" "${bound%C}" $least
    fi ;;
esac
# a wider ADC (--adc-bits 14 or 16 in the options): its own AVR harness, every code
bits=12
case $extra in *"--adc-bits 14"*) bits=14 ;; *"--adc-bits 16"*) bits=16 ;; esac
main=avr_main_$vt; [ $bits != 12 ] && main=avr_main_int_b$bits
case $extra in
*"--target avr"*) targets=avr hooks="" ;;
*"--target cortex-m0"*) targets=m0 hooks="" ;;
*"--target cortex-m4"*) targets="m3 m4" hooks="" ;;
*) targets=$TARGETS hooks="-include $HERE/avr_hooks.h" ;;
esac
for tg in $targets; do
    o=$d/$tg
    case $tg in
    avr) cc="avr-gcc -mmcu=atmega328p"
         flags="-Os -std=gnu99 -Wall -Wextra -Werror $hooks"
         # a table emitted for the AVR carries its own hooks: strict C99 there
         [ -z "$hooks" ] && flags="-Os -std=c99 -Wall -Wextra -pedantic -Werror -Wconversion"
         # the chained form's C walk instead of its assembly
         case $name in *-portable-c) flags="$flags -DT_PORTABLE_C" ;; esac ;;
    m0) cc="arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb" ;;
    m3) cc="arm-none-eabi-gcc -mcpu=cortex-m3 -mthumb" ;;
    m4) cc="arm-none-eabi-gcc -mcpu=cortex-m4 -mthumb -mfloat-abi=hard -mfpu=fpv4-sp-d16" ;;
    esac
    [ "$tg" != avr ] && flags="-Os -std=c99 -Wall -Wextra -pedantic -Werror -Wconversion -ffp-contract=off"
    # shellcheck disable=SC2086
    if ! $cc $flags -c "$d/t.c" -o "$o.o" > "$o.log" 2>&1; then
        echo "not ok firmware $name $tg: the emitted file does not compile"; sed 's/^/# /' "$o.log"
        continue
    fi
    if [ "$tg" = avr ]; then
        $cc -Wl,--section-start=.mmcu=0x910000 "$W/$main.o" "$o.o" -o "$o.elf" >> "$o.log" 2>&1 &&
            timeout 60 simavr -m atmega328p -f 16000000 "$o.elf" > "$o.out" 2>&1
    else
        $cc -nostartfiles -nostdlib -T "$HERE/arm.ld" "$W/arm_start_$tg.o" "$W/arm_main_${tg}_$vt.o" \
            "$o.o" -Wl,--start-group -lc -lm -lgcc -Wl,--end-group -o "$o.elf" >> "$o.log" 2>&1 &&
            case $tg in m0) m=microbit ;; m3) m=mps2-an385 ;; m4) m=mps2-an386 ;; esac &&
            timeout 60 qemu-system-arm -M "$m" -display none -monitor none -serial none \
                -semihosting-config enable=on,target=native -kernel "$o.elf" > "$o.out" 2>&1
    fi
    rc=$?
    if [ $rc -ne 0 ]; then
        echo "not ok firmware $name $tg: the simulator run failed (status $rc)"
        tail -5 "$o.log" "$o.out" | sed 's/^/# /'
    elif "${PYTHON:-/usr/bin/python3}" "$HERE/compare.py" "$d/t.codes" "$o.out" "$name $tg" > "$o.cmp" 2>&1; then
        echo "ok firmware $name $tg"
        # a table emitted for the AVR: the cost the tool reports against this very run
        # (the cost model is the chained form's assembly's, not its C walk's)
        if [ "$tg" = avr ] && [ -z "$hooks" ] && case $name in *-portable-c) false ;; esac; then
            lut --format json -o "$d/t.json" 2>> "$d/lut.err"
            flash=$(avr-size -A "$o.elf" | awk '$1 == ".text" || $1 == ".data" { f += $2 } END { print f }')
            cyc=$("${PYTHON:-/usr/bin/python3}" "$HERE/cost.py" avr "$o.out" "$d/t.codes")
            "${PYTHON:-/usr/bin/python3}" "$HERE/model_check.py" "$name" "$d/t.json" \
                "$((flash - $(cat "$W/avr_stub_flash")))" "${cyc% *}"
        fi
    else
        echo "not ok firmware $name $tg: differs from the library"; sed 's/^/# /' "$o.cmp"
    fi
done
