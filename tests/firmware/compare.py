#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Compare what a table's lookup returned on a target with the library's own values.

Usage: compare.py CODES OUTPUT LABEL [--cycles]
CODES: `bandgap lut --format codes` (code,value,status for every ADC code, computed on the host
by the library); OUTPUT: the target's lines (simavr prefixes them with "O:"), one per code,
the returned value's 32 bits in hex (and, on the AVR, the call's cycles in hex).  Exit 0 when
every code agrees bit for bit; otherwise each differing code is named (the first 10 of them)
with LABEL (strategy, format, target).  --cycles prints the mean and largest cycles per call
over the codes inside the range and over all codes.
"""
import struct
import sys


def host_bits(text):
    """The 32 bits the emitted function returns for the value printed by --format codes."""
    if any(ch in text for ch in ".eEn") or text in ("-0",):
        return struct.unpack("<I", struct.pack("<f", float(text)))[0]
    return int(text) & 0xFFFFFFFF


def main():
    codes_path, out_path, label = sys.argv[1:4]
    cycles = "--cycles" in sys.argv[4:]
    want, status = [], []
    with open(codes_path, encoding="ascii") as f:
        rows = [ln for ln in f if ln[0].isdigit()]
    flt = "float" in open(codes_path, encoding="ascii").readline()
    for ln in rows:
        code, value, st = ln.strip().split(",")
        if int(code) != len(want):
            sys.exit(f"{codes_path}: codes out of order at {code}")
        want.append(struct.unpack("<I", struct.pack("<f", float(value)))[0] if flt
                    else host_bits(value))
        status.append(st)
    got, cyc = [], []
    with open(out_path, encoding="ascii", errors="replace") as f:
        for ln in f:
            ln = ln.strip()
            if ln.startswith("O:"):
                ln = ln[2:]
            parts = ln.split()
            if len(parts) in (1, 2) and len(parts[0]) == 8 and all(
                    c in "0123456789abcdef" for c in parts[0]):
                got.append(int(parts[0], 16))
                if len(parts) == 2:
                    cyc.append(int(parts[1], 16))
    bad = [c for c in range(min(len(want), len(got))) if want[c] != got[c]]
    if len(got) != len(want):
        print(f"{label}: the target returned {len(got)} values for {len(want)} codes")
        return 1
    for c in bad[:10]:
        print(f"{label}: code {c}: target {got[c]:08x}, library {want[c]:08x}")
    if bad:
        print(f"{label}: {len(bad)} of {len(want)} codes differ")
    if cycles and cyc:
        inr = [cyc[c] for c in range(len(cyc)) if status[c] == "in"]
        print(f"cycles {label}: in-range mean {sum(inr) / len(inr):.1f} max {max(inr)}"
              f" min {min(inr)}; all codes mean {sum(cyc) / len(cyc):.1f}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
