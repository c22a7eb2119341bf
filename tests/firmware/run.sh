#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# The firmware check: every strategy (uniform, minimal, indexed) at every integer and Q
# resolution (0.1, 0.01, 0.001, q1 .. q16) and float, for a 12-bit 10k NTC divider table
# (invented scenario: 10k B 3950 K, -40 .. 125 degC), run over EVERY ADC code 0 .. 4095 on
#   avr: an ATmega328P under simavr (avr-gcc, avr-libc; tables in flash through PROGMEM),
#   m0:  a Cortex-M0 under QEMU (the micro:bit machine),
#   m3:  a Cortex-M3 under QEMU (mps2-an385),
#   m4:  a Cortex-M4 with its single-precision FPU under QEMU (mps2-an386),
# and compared bit for bit with the library's own values (bandgap lut --format codes).
# The AVR also runs 14- and 16-bit tables of every strategy (every code 0 .. 2^bits - 1),
# the indexed table's aligned form (--optimize time) and the minimal table's chained form
# (the default for a target, by flash) with its assembly and its C walk.
# Float runs on every core (the M4's FPU, libgcc's soft float on M0 and M3, avr-libc's on
# the AVR).  Prints "ok firmware NAME TARGET" / "not ok ..." per table and target.
# Usage: run.sh BANDGAP WORKDIR    (FW_JOBS parallel tables, default 2)
BANDGAP=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
W=$2
HERE=$(cd "$(dirname "$0")" && pwd)
TARGETS="avr m0 m3 m4"
missing=""
for t in avr-gcc simavr arm-none-eabi-gcc qemu-system-arm; do
    command -v $t > /dev/null 2>&1 || missing="$missing $t"
done
if [ -n "$missing" ]; then
    echo "not ok firmware toolchains: missing$missing (make deps installs them)"
    exit 1
fi
rm -rf "$W" && mkdir -p "$W" || exit 1
# the harness objects, once per target and value type
fail=0
build() { "$@" > "$W/harness.log" 2>&1 || { echo "not ok firmware harness: $*"; cat "$W/harness.log"; fail=1; }; }
for vt in int float; do
    def="-DLOOKUP=t_lookup -DNCODES=4096UL"; [ $vt = float ] && def="$def -DVALUE_FLOAT"
    # shellcheck disable=SC2086
    build avr-gcc -mmcu=atmega328p -Os -std=gnu99 -Wall -Wextra -Werror $def \
        -c "$HERE/avr_main.c" -o "$W/avr_main_$vt.o"
    for tg in m0 m3 m4; do
        case $tg in
        m0) cpu="-mcpu=cortex-m0 -mthumb" ;;
        m3) cpu="-mcpu=cortex-m3 -mthumb" ;;
        m4) cpu="-mcpu=cortex-m4 -mthumb -mfloat-abi=hard -mfpu=fpv4-sp-d16" ;;
        esac
        # shellcheck disable=SC2086
        build arm-none-eabi-gcc $cpu -Os -std=c99 -Wall -Wextra -Werror $def \
            -c "$HERE/arm_main.c" -o "$W/arm_main_${tg}_$vt.o"
        # shellcheck disable=SC2086
        [ $vt = int ] && build arm-none-eabi-gcc $cpu -Os -std=c99 -Wall -Wextra -Werror \
            -fno-tree-loop-distribute-patterns -c "$HERE/arm_start.c" -o "$W/arm_start_$tg.o"
    done
done
# the AVR harness for the wider ADCs (14 and 16 bits: every one of their codes)
for bits in 14 16; do
    build avr-gcc -mmcu=atmega328p -Os -std=gnu99 -Wall -Wextra -Werror -DLOOKUP=t_lookup \
        -DNCODES=$((1 << bits))UL -c "$HERE/avr_main.c" -o "$W/avr_main_int_b$bits.o"
done
# the AVR image with a do-nothing lookup: a table's flash is the difference
build avr-gcc -mmcu=atmega328p -Os -c "$HERE/stub.c" -o "$W/avr_stub.o"
build avr-gcc -mmcu=atmega328p -Wl,--section-start=.mmcu=0x910000 "$W/avr_main_int.o" \
    "$W/avr_stub.o" -o "$W/avr_stub.elf"
avr-size -A "$W/avr_stub.elf" | awk '$1 == ".text" || $1 == ".data" { f += $2 } END { print f }' \
    > "$W/avr_stub_flash"
[ $fail -eq 0 ] || exit 1
# The timer the AVR cycle counts rest on: 1000 cycles of __builtin_avr_delay_cycles must read
# as exactly 1000 more than two back-to-back reads (the first line of every AVR run).
# The cases: NAME:STRATEGY:RESOLUTION:BOUND:EXTRA (the bound at least one LSB of the format);
# a table emitted --target T runs on T's core only (cortex-m4 on the M3 and the M4).
: > "$W/cases"
for st in uniform minimal indexed; do
    for res in 0.1 0.01 0.001 q1 q2 q3 q4 q5 q6 q7 q8 q9 q10 q11 q12 q13 q14 q15 q16 float; do
        case $res in q1) b=0.5C ;; q2) b=0.25C ;; q3) b=0.125C ;; q4) b=0.0625C ;; *) b=0.05C ;; esac
        echo "$st-$res:$st:$res:$b:" >> "$W/cases"
    done
    # the other side of the divider, in kelvin: a rising curve
    echo "$st-high-kelvin-q8:$st:q8:0.05C:--sensor-side=high --kelvin" >> "$W/cases"
    # emitted for a target (--target): its own arithmetic, on its own core
    for res in 0.1 0.01 0.001 q4 q8 q12 q16; do
        case $res in q4) b=0.0625C ;; *) b=0.05C ;; esac
        for tg in avr cortex-m0 cortex-m4; do
            echo "$st-$res-for-$tg:$st:$res:$b:--target $tg" >> "$W/cases"
        done
    done
    echo "$st-float-for-cortex-m4:$st:float:0.05C:--target cortex-m4" >> "$W/cases"
    echo "$st-float-for-avr:$st:float:0.05C:--target avr" >> "$W/cases"
    echo "$st-high-kelvin-q8-for-avr:$st:q8:0.05C:--sensor-side=high --kelvin --target avr" >> "$W/cases"
    # wider ADCs on the AVR: 14 and 16 bits, every code (65536 calls: a few seconds each)
    for bits in 14 16; do
        echo "$st-0.01-for-avr-$bits-bit:$st:0.01:0.05C:--target avr --adc-bits $bits" >> "$W/cases"
    done
done
# the indexed table's aligned form for the AVR (--optimize time): every value format whose
# values fit 16 bits takes it (q12 and 0.001 do not: the compact form then), and the wider ADCs
for res in 0.1 0.01 q4 q8 q12 0.001; do
    case $res in q4) b=0.0625C ;; *) b=0.05C ;; esac
    echo "indexed-$res-for-avr-time:indexed:$res:$b:--target avr --optimize time" >> "$W/cases"
done
echo "indexed-high-kelvin-q4-for-avr-time:indexed:q4:0.0625C:--sensor-side=high --kelvin --target avr --optimize time" >> "$W/cases"
for bits in 14 16; do
    echo "indexed-0.01-for-avr-time-$bits-bit:indexed:0.01:0.05C:--target avr --optimize time --adc-bits $bits" >> "$W/cases"
done
# the minimal table: for a target core by flash (the default) its chained form where the values
# fit 16 bits (the cases above: 0.1, 0.01, q4 and q8, and the wider ADCs on the AVR), by time
# its compact form; and on the AVR the chained form's C walk (NAME ending -portable-c: built
# with T_PORTABLE_C, as for a core without the hardware multiplier) beside its assembly
for res in 0.1 0.01 q8; do
    echo "minimal-$res-for-avr-time:minimal:$res:0.05C:--target avr --optimize time" >> "$W/cases"
done
echo "minimal-0.01-for-cortex-m0-time:minimal:0.01:0.05C:--target cortex-m0 --optimize time" >> "$W/cases"
echo "minimal-0.01-for-cortex-m4-time:minimal:0.01:0.05C:--target cortex-m4 --optimize time" >> "$W/cases"
for res in 0.01 q4; do
    case $res in q4) b=0.0625C ;; *) b=0.05C ;; esac
    echo "minimal-$res-for-avr-portable-c:minimal:$res:$b:--target avr" >> "$W/cases"
done
export BANDGAP W TARGETS
xargs -d '\n' -P "${FW_JOBS:-2}" -n 1 sh "$HERE/one.sh" < "$W/cases" > "$W/results.log" 2>&1
sh "$HERE/kinds.sh" "$BANDGAP" "$W/kinds" >> "$W/results.log" 2>&1 # every sensor kind
# the timer check, from one AVR run
avr_out=$(ls "$W"/*/avr.out 2>/dev/null | head -1)
set -- $(sed -n 's/^O:t \([0-9a-f]*\) \([0-9a-f]*\)$/\1 \2/p' "$avr_out" 2>/dev/null)
if [ $# -eq 2 ] && [ $((0x$2 - 0x$1)) -eq 1000 ]; then
    echo "ok firmware avr-timer: 1000 cycles of delay read as 1000 by Timer1"
else
    echo "not ok firmware avr-timer: Timer1 did not read 1000 cycles as 1000 ($avr_out)"
    grep '^O:t ' "$avr_out" 2>/dev/null
fi
sort "$W/results.log"
! grep -q '^not ok' "$W/results.log"
