#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The chained form of a minimal table, checked from its emitted file alone, with numpy.

Usage: chain_check.py NAME TABLE.c TABLE.codes BITS BOUND_K
TABLE.c: `bandgap lut ... --strategy minimal --target T --symbol t` in the chained form;
TABLE.codes: the same table's `--format codes` (the library's value at every code).
Reads the file's start value, range and byte table, walks it for every code of the range
with Python integers (the walk the file's comment describes: per segment a length byte and
the slope's high (two's complement) and low byte, the value as whole counts and a fraction
byte), and checks (1) the walk equals the library's value at every code and (2) the error
against the temperature computed here with numpy (the beta equation, common practice, for
the invented 10k NTC, B 3950 K, on the 10k low-side divider: R = 10k x / (1 - x),
x = code / 2^BITS) is within BOUND_K at every code, the values being 0.01 degC counts.
Prints an "ok" / "not ok" line.
"""
import re
import sys

import numpy as np


def main():
    name, cfile, codes, bits, bound = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4]), \
        float(sys.argv[5])
    src = open(cfile, encoding="ascii").read()
    num = lambda key: int(re.search(r"#define T_%s (-?\d+)[uL]?" % key, src).group(1))
    lo, hi, y0, f0 = num("CODE_LO"), num("CODE_HI"), num("START_VALUE"), num("START_FRAC")
    body = re.search(r"t_chain\[(\d+)\] T_ATTR = \{(.*?)\};", src, re.S)
    data = [int(v) for v in body.group(2).replace("\n", " ").split(",")]
    if len(data) != int(body.group(1)) or len(data) % 3:
        print(f"not ok firmware {name} numpy: the byte table does not parse")
        return
    segs = [(data[i], data[i + 1] - 256 * (data[i + 1] > 127), data[i + 2])
            for i in range(0, len(data), 3)]
    lib = {}
    with open(codes, encoding="ascii") as f:
        for ln in f:
            p = ln.strip().split(",")
            if p[0].isdigit() and p[2] == "in":
                lib[int(p[0])] = int(p[1])
    walk = []
    for code in range(lo, hi + 1):
        d, y, frac = code - lo, y0, f0
        for length, mh, ml in segs:
            x = min(d, length)
            q = frac + ml * x
            y += mh * x + (q >> 8)
            if d <= length:
                break
            frac, d = q & 255, d - length
        else:
            print(f"not ok firmware {name} numpy: the walk runs past the table at code {code}")
            return
        walk.append(y)
    codes_ = np.arange(lo, hi + 1, dtype=float)
    x = codes_ / 2.0 ** bits
    t_k = 1.0 / (1.0 / 298.15 + np.log(x / (1.0 - x)) / 3950.0)
    err = np.array(walk, dtype=float) / 100.0 + 273.15 - t_k
    bad = [c for c, v in zip(range(lo, hi + 1), walk) if lib.get(c) != v]
    worst = float(np.max(np.abs(err)))
    if bad or sorted(lib) != list(range(lo, hi + 1)) or worst > bound + 1e-9:
        print(f"not ok firmware {name} numpy: {len(bad)} codes differ from the library "
              f"(first {bad[:3]}), largest error {worst:.6f} K against {bound} K")
        return
    print(f"ok firmware {name} numpy: {len(segs)} segments walked from the file equal the "
          f"library at all {hi - lo + 1} codes; largest error {worst:.6f} K <= {bound} K")


if __name__ == "__main__":
    main()
