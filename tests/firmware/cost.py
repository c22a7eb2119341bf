#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The cost of one conversion on a target, for tests/firmware/cost.sh (make bench).

cost.py avr OUTPUT CODES: the AVR harness's lines (value and Timer1 cycles per call, code 0 ..
  4095); prints the mean and the largest cycles per call over the codes that CODES (a
  `bandgap lut --format codes` file) marks as inside the range.
cost.py trace CODES < QEMU-LOG: a `qemu-system-arm -singlestep -d exec,nochain` log of the
  harness built with -DMARKS (one guest instruction per logged block); between the first
  fw_mark_begin and fw_mark_end, every instruction outside main is the lookup or a helper it
  calls, and each return to main ends the call of the next code; prints the mean and the
  largest instructions per call over the codes inside the range.
"""
import sys


def in_range(codes_path):
    with open(codes_path, encoding="ascii") as f:
        return [ln.strip().endswith(",in") for ln in f if ln[0].isdigit()]


def report(per_code, inside):
    vals = [per_code[c] for c in range(len(per_code)) if inside[c]]
    if len(per_code) != len(inside) or not vals:
        sys.exit(f"cost.py: {len(per_code)} calls measured for {len(inside)} codes")
    print(f"{sum(vals) / len(vals):.1f} {max(vals)}")


def main():
    if sys.argv[1] == "avr":
        inside = in_range(sys.argv[3])
        cyc = []
        with open(sys.argv[2], encoding="ascii", errors="replace") as f:
            for ln in f:
                p = ln.strip().removeprefix("O:").split()
                if len(p) == 2 and len(p[0]) == 8:
                    cyc.append(int(p[1], 16))
        report(cyc, inside)
        return
    inside = in_range(sys.argv[2])
    per_code, state, n, prev_main = [], 0, 0, True
    for ln in sys.stdin:
        if not ln.startswith("Trace"):
            continue
        sym = ln.rsplit("]", 1)[1].strip()
        if state == 0:
            state = 1 if sym == "fw_mark_begin" else 0
            continue
        if sym == "fw_mark_end":
            break
        if sym in ("main", "fw_mark_begin"):
            if not prev_main:
                per_code.append(n)
                n = 0
            prev_main = True
        else:
            n += 1
            prev_main = False
    report(per_code, inside)


if __name__ == "__main__":
    main()
