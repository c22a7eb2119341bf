#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The cost `bandgap lut --target avr` reports against the cost measured in the same run.

Usage: model_check.py NAME TABLE.json FLASH CYCLES
TABLE.json: the table's `--format json` (its "target" object: flash_bytes, code_bytes,
per_conversion); FLASH: the table's flash measured here (the harness image less the image
with a do-nothing lookup); CYCLES: the mean cycles per call over the codes inside the range,
measured here.  The reported flash must be within 10 % and the cycles within 25 % of the
measurement (the figures come from one reference table; see src/lib/lut/lut_target.c).
Prints an "ok" / "not ok" line.
"""
import json
import sys

name, path, flash, cycles = sys.argv[1], sys.argv[2], int(sys.argv[3]), float(sys.argv[4])
tg = json.load(open(path, encoding="utf-8"))["target"]
fb, pc = tg.get("flash_bytes"), tg.get("per_conversion")
if fb is None or pc is None:
    print(f"not ok firmware {name} avr-cost: the tool reported no cost for the AVR")
    sys.exit(0)
ok = abs(fb - flash) <= 0.10 * flash and abs(pc - cycles) <= 0.25 * cycles
print(f"{'ok' if ok else 'not ok'} firmware {name} avr-cost: reported {fb} bytes and "
      f"{pc:.0f} cycles, measured {flash} bytes and {cycles:.1f} cycles")
