#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# make bench, firmware part: what a table costs on the targets of tests/firmware/run.sh, beside
# Steinhart-Hart with the C library's logf (sh_logf.c) on the same target.  Counts, not times:
#   avr: cycles per call on an ATmega328P under simavr, read from Timer1 (prescaler 1) around
#        the call, less two back-to-back reads (run.sh checks the timer reads 1000 cycles of
#        delay as exactly 1000); mean and largest over the codes inside the range;
#   m0, m3, m4: instructions per call under QEMU, one instruction per block (-singlestep) with
#        every executed block logged (-d exec,nochain): those outside main between two marks;
#   flash and RAM: the harness image with the table less the same image with a lookup that
#        does nothing (stub.c), from the cross toolchain's size -A (.text, .data, .rodata;
#        .data and .bss for RAM), so the table's data, its code and the helpers it pulls in;
#        the lookup's own stack frame from -fstack-usage.
# Table: 10k NTC, B 3950 K, 10k low-side divider, 12 bits, -40 .. 125 degC, within 0.05 K
# (invented scenario).  Compiler flags: -Os.
# Usage: cost.sh BANDGAP WORKDIR [TARGET-OPTION...]  (e.g. --target avr, once that exists)
BANDGAP=$(cd "$(dirname "$1")" && pwd)/$(basename "$1")
mkdir -p "$2" && W=$(cd "$2" && pwd) || exit 73
HERE=$(cd "$(dirname "$0")" && pwd)
shift 2
EXTRA="$*"
PY=${PYTHON:-/usr/bin/python3}
set -e
rm -f "$W"/*
cc_of() {
    case $1 in
    avr) echo "avr-gcc -mmcu=atmega328p" ;;
    m0) echo "arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb" ;;
    m3) echo "arm-none-eabi-gcc -mcpu=cortex-m3 -mthumb" ;;
    m4) echo "arm-none-eabi-gcc -mcpu=cortex-m4 -mthumb -mfloat-abi=hard -mfpu=fpv4-sp-d16" ;;
    esac
}
machine() { case $1 in m0) echo microbit ;; m3) echo mps2-an385 ;; m4) echo mps2-an386 ;; esac; }
# link TARGET VT OBJ ELF: the harness around OBJ
link() {
    cc=$(cc_of "$1")
    def="-DLOOKUP=t_lookup -DNCODES=4096UL"; [ "$2" = float ] && def="$def -DVALUE_FLOAT"
    if [ "$1" = avr ]; then
        [ -f "$W/avr_main_$2.o" ] || $cc -Os -std=gnu99 $def -c "$HERE/avr_main.c" -o "$W/avr_main_$2.o"
        $cc -Wl,--section-start=.mmcu=0x910000 "$W/avr_main_$2.o" "$3" -o "$4"
    else
        [ -f "$W/start_$1.o" ] || $cc -Os -fno-tree-loop-distribute-patterns -c "$HERE/arm_start.c" -o "$W/start_$1.o"
        [ -f "$W/main_$1_$2.o" ] || $cc -Os -std=c99 -DMARKS $def -c "$HERE/arm_main.c" -o "$W/main_$1_$2.o"
        $cc -nostartfiles -nostdlib -T "$HERE/arm.ld" "$W/start_$1.o" "$W/main_$1_$2.o" "$3" \
            -Wl,--start-group -lc -lm -lgcc -Wl,--end-group -o "$4"
    fi
}
# sizes ELF: "flash ram"
sizes() {
    size=avr-size; case $1 in *avr*) ;; *) size=arm-none-eabi-size ;; esac
    $size -A "$1" | awk '$1 == ".text" || $1 == ".rodata" || $1 == ".data" { f += $2 }
                         $1 == ".data" || $1 == ".bss" { r += $2 } END { print f + 0, r + 0 }'
}
# run TARGET ELF CODES: "mean max" cycles (avr) or instructions (Cortex-M) per call
run() {
    if [ "$1" = avr ]; then
        timeout 120 simavr -m atmega328p -f 16000000 "$2" > "$2.out" 2>&1
        "$PY" "$HERE/cost.py" avr "$2.out" "$3"
    else
        timeout 300 qemu-system-arm -M "$(machine "$1")" -display none -monitor none -serial none \
            -semihosting-config enable=on,target=native -singlestep -d exec,nochain \
            -D /dev/stdout -kernel "$2" 2> /dev/null | "$PY" "$HERE/cost.py" trace "$3"
    fi
}
lut() { "$BANDGAP" lut --r25 10k --beta 3950K --fixed 10k --adc-bits 12 --range -40C:125C \
            --max-error 0.05C "$@" > /dev/null 2>&1; }
lut --strategy indexed --format codes -o "$W/ref.codes"
printf '%-6s %-28s %8s %8s %7s %7s %10s %8s\n' target "table (emitted for)" table_B flash_B \
    ram_B stack_B per_call max
for tg in avr m0 m3 m4; do
    cc=$(cc_of $tg)
    for vt in int float; do
        $cc -Os -c "$HERE/stub.c" $([ $vt = float ] && echo -DVALUE_FLOAT) -o "$W/stub_${tg}_$vt.o"
        link $tg $vt "$W/stub_${tg}_$vt.o" "$W/stub_${tg}_$vt.elf"
    done
    unit=instructions; [ $tg = avr ] && unit=cycles
    case $tg in avr) tt=avr ;; m0) tt=cortex-m0 ;; *) tt=cortex-m4 ;; esac
    for c in uniform:0.01:host minimal:0.01:host indexed:0.01:host indexed:q8:host \
             uniform:float:host indexed:float:host \
             uniform:0.01:$tt minimal:0.01:$tt indexed:0.01:$tt indexed:q8:$tt \
             uniform:0.001:$tt minimal:0.001:$tt indexed:0.001:$tt \
             uniform:float:$tt minimal:float:$tt indexed:float:$tt \
             minimal:0.01:$tt-time \
             $([ $tg = avr ] && echo indexed:0.01:avr-time indexed:0.1:avr-time indexed:q4:avr-time minimal:0.01:avr-c) \
             sh:logf:- stub:int:-; do
        st=${c%%:*} rest=${c#*:} res=${rest%%:*} emit=${rest#*:}
        # EMIT-time: emitted for EMIT with --optimize time (on the AVR: the aligned form; a
        # minimal table: its compact form, by flash the chained one); avr-c: the chained
        # form's C walk instead of its assembly (T_PORTABLE_C)
        opt=""; cdef=""; tag=""
        case $emit in
        *-time) emit=${emit%-time} opt="--optimize time" tag=-time ;;
        *-c) emit=${emit%-c} cdef=-DT_PORTABLE_C tag=-c ;;
        esac
        vt=int; [ "$res" = float ] && vt=float
        [ $tg = avr ] && [ $vt = float ] && [ "$emit" = host ] && continue
        [ "$emit" = "$tt" ] && [ $vt = float ] && [ $tg = m3 ] && continue
        n=$W/$tg-$st-$res-$emit$tag
        case $st in
        sh) cp "$HERE/sh_logf.c" "$n.c"; tb=0 ;;
        stub) cp "$HERE/stub.c" "$n.c"; tb=0 ;;
        *) # shellcheck disable=SC2086
           lut --strategy "$st" --resolution "$res" --target "$emit" $opt --symbol t $EXTRA \
               --format json -o "$n.json"
           tb=$(sed -n 's/.*"bytes": *\([0-9]*\).*/\1/p' "$n.json" | head -1)
           # shellcheck disable=SC2086
           lut --strategy "$st" --resolution "$res" --target "$emit" $opt --symbol t $EXTRA -o "$n.c"
           # the reference: the library's values of this very table
           # shellcheck disable=SC2086
           lut --strategy "$st" --resolution "$res" --target "$emit" $opt $EXTRA --format codes \
               -o "$n.codes" ;;
        esac
        flags="-Os -std=c99 -ffp-contract=off -fstack-usage $cdef"
        [ $tg = avr ] && flags="-Os -std=gnu99 -fstack-usage $cdef"
        [ $tg = avr ] && [ "$emit" = host ] && flags="$flags -include $HERE/avr_hooks.h"
        (cd "$W" && $cc $flags -c "$n.c" -o "$n.o")
        link $tg $vt "$n.o" "$n.elf"
        set -- $(sizes "$n.elf") $(sizes "$W/stub_${tg}_$vt.elf")
        stack=$(awk -F '\t' '$1 ~ /t_lookup$/ { print $2 }' "$n.su")
        per=$(run $tg "$n.elf" "$W/ref.codes")
        label="$st $res"; [ "$emit" != - ] && label="$label $emit"; [ -n "$opt" ] && label="$label time"
        [ -n "$cdef" ] && label="$label C walk"
        printf '%-6s %-28s %8s %8s %7s %7s %10s %8s\n' $tg "$label" "$tb" "$(($1 - $3))" \
            "$(($2 - $4))" "$stack" "${per% *}" "${per#* }"
        echo "$tg|$st|$res|$emit$tag|$tb|$(($1 - $3))|$(($2 - $4))|$stack|${per% *}|${per#* }" >> "$W/cost.txt"
        # on the AVR the same run gave every value: check them against the library's
        if [ $tg = avr ] && [ -f "$n.codes" ] &&
           ! "$PY" "$HERE/compare.py" "$n.codes" "$n.elf.out" "$tg $label" > "$n.cmp"; then
            echo "MISMATCH: $(head -3 "$n.cmp")"
        fi
    done
    if [ $tg = avr ] || [ $tg = m0 ]; then # the same indexed table at -O2
        n=$W/$tg-indexed-0.01-$tt
        flags="-O2 -std=c99"; [ $tg = avr ] && flags="-O2 -std=gnu99"
        $cc $flags -c "$n.c" -o "$n-O2.o" && link $tg int "$n-O2.o" "$n-O2.elf"
        per=$(run $tg "$n-O2.elf" "$W/ref.codes")
        set -- $(sizes "$n-O2.elf") $(sizes "$W/stub_${tg}_int.elf")
        printf '%-6s %-28s %8s %8s %7s %7s %10s %8s\n' $tg "indexed 0.01 $tt, -O2" - \
            "$(($1 - $3))" "$(($2 - $4))" - "${per% *}" "${per#* }"
        echo "$tg|indexed-O2|0.01|$tt|-|$(($1 - $3))|$(($2 - $4))|-|${per% *}|${per#* }" >> "$W/cost.txt"
    fi
    echo "($tg: per_call in $unit per conversion, mean over the codes inside the range; max: the largest)"
done
# the issue's targets, from the rows above
echo "toolchains: $(avr-gcc --version | head -1), avr-libc $(dpkg-query -W -f '${Version}' avr-libc 2>/dev/null)," \
     "simavr $(dpkg-query -W -f '${Version}' simavr 2>/dev/null); $(arm-none-eabi-gcc --version | head -1)," \
     "newlib $(dpkg-query -W -f '${Version}' libnewlib-arm-none-eabi 2>/dev/null); $(qemu-system-arm --version | head -1)"
awk -F '|' '
    { k = $1 "|" $2 "|" $3 "|" $4; mean[k] = $9; flash[k] = $6 }
    END {
        sh = mean["avr|sh|logf|-"]
        for (e = 0; e < 3; e++) {
            em = e == 2 ? "avr-time" : e ? "avr" : "host"
            i = mean["avr|indexed|0.01|" em]; u = mean["avr|uniform|0.01|" em]
            printf "ratio: ATmega328P, 12-bit table within 0.05 K emitted for %s: indexed %s cycles per conversion (target <= 120: %s), %.3f of Steinhart-Hart with logf at %s cycles (target <= 0.25: %s)",
                e == 2 ? "avr --optimize time (the aligned form)" : em, i, i <= 120 ? "PASS" : "MISS", i / sh, sh, i / sh <= 0.25 ? "PASS" : "MISS"
            if (e < 2) printf "; uniform %s cycles (%s)", u, u <= 120 ? "PASS" : "MISS"
            printf "\n"
        }
        for (e = 0; e < 2; e++) {
            em = e ? "cortex-m0" : "host"
            i = mean["m0|indexed|0.01|" em]; u = mean["m0|uniform|0.01|" em]
            printf "ratio: Cortex-M0, emitted for %s: indexed %s instructions per conversion (target <= 40: %s), uniform %s; Steinhart-Hart with logf %s\n",
                em, i, i <= 40 ? "PASS" : "MISS", u, mean["m0|sh|logf|-"]
            if (e) printf "ratio: the same indexed table compiled -O2: %s instructions on the Cortex-M0 (target <= 40: %s), %s cycles on the ATmega328P (target <= 120: %s)\n",
                mean["m0|indexed-O2|0.01|cortex-m0"], mean["m0|indexed-O2|0.01|cortex-m0"] <= 40 ? "PASS" : "MISS",
                mean["avr|indexed-O2|0.01|avr"], mean["avr|indexed-O2|0.01|avr"] <= 120 ? "PASS" : "MISS"
        }
        best = ""; for (k in flash) if (k ~ /^avr\|(uniform|minimal|indexed)\|/ && (best == "" || flash[k] < flash[best])) best = k
        split(best, p, "|")
        printf "ratio: smallest 12-bit table within 0.05 K on the ATmega328P: %s %s emitted for %s, %d bytes of flash with its lookup code and helpers (target <= 256: %s)\n",
            p[2], p[3], p[4], flash[best], flash[best] <= 256 ? "PASS" : "MISS"
    }' "$W/cost.txt"
