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
With --least N it also computes, with scipy's linear programming (HiGHS), the fewest
segments ANY table of straight segments of at most 256 codes each can have for these bands
(chained or not, real start and slope: a relaxation of the integer arithmetic, so a lower
bound; taking the longest feasible segment first is optimal because feasibility is
hereditary), and checks that the file has no fewer (a sanity check of both) and no more
than N above it.
Prints an "ok" / "not ok" line.
"""
import re
import sys

import numpy as np
from scipy.optimize import linprog


def feasible(lo, hi):
    """Whether one real line a + m d lies in [lo_d, hi_d + 1] for d = 0 .. len - 1."""
    d = np.arange(len(lo), dtype=float)
    one = np.column_stack([np.ones_like(d), d])
    r = linprog([0, 0], A_ub=np.vstack([one, -one]), b_ub=np.concatenate([hi + 1.0, -lo]),
                bounds=[(None, None), (None, None)], method="highs")
    return r.status == 0


def least_segments(lo, hi, cap=256):
    """The fewest segments of at most 'cap' codes (greedy longest, bisection)."""
    s, n, nc = 0, 0, len(lo)
    while s < nc:
        a, b = s, min(nc - 1, s + cap - 1)
        if not feasible(lo[s:b + 1], hi[s:b + 1]):
            while b - a > 1:
                m = (a + b) // 2
                a, b = (m, b) if feasible(lo[s:m + 1], hi[s:m + 1]) else (a, m)
            b = a
        n, s = n + 1, b + 1
    return n


def main():
    least = None
    if "--least" in sys.argv:
        k = sys.argv.index("--least")
        least = int(sys.argv[k + 1])
        del sys.argv[k:k + 2]
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
    if least is not None:
        v = 100.0 * (t_k - 273.15)
        n = least_segments(np.ceil(v - 100.0 * bound), np.floor(v + 100.0 * bound))
        ok = n <= len(segs) <= n + least
        print(f"{'ok' if ok else 'not ok'} firmware {name} least: {len(segs)} segments; no "
              f"table of segments of at most 256 codes has fewer than {n} (scipy linprog)")


if __name__ == "__main__":
    main()
