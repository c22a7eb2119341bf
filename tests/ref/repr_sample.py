#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Writes tests/ref/repr_sample.txt: doubles (IEEE 754 bit patterns in hex) with Python's repr(),
# the shortest decimal that reads back (an independent reference for src/lib/core/shortest.c).
# python3 tests/ref/repr_sample.py > tests/ref/repr_sample.txt
import random
import struct

rng = random.Random(20181)
vals = []
for _ in range(8000):                       # any bit pattern
    vals.append(rng.getrandbits(64))
for _ in range(2000):                        # subnormals
    vals.append(rng.getrandbits(52) | (rng.getrandbits(1) << 63))
for e in range(-323, 309):                   # powers of ten and their neighbours
    b = struct.unpack('<Q', struct.pack('<d', float('1e%d' % e)))[0]
    vals += [b - 1, b, b + 1]
for k in range(-1074, 1024):                 # powers of two and their neighbours
    b = struct.unpack('<Q', struct.pack('<d', 2.0 ** k))[0]
    vals += [b - 1, b, b + 1]
for _ in range(3000):                        # integers and short decimals
    vals.append(struct.unpack('<Q', struct.pack('<d', float(rng.randrange(1, 2 ** 53))))[0])
    vals.append(struct.unpack('<Q', struct.pack('<d', float('%de%d' % (rng.randrange(1, 10 ** 6), rng.randrange(-30, 30)))))[0])
print('# bit pattern (hex) and Python repr() of the double; written by tests/ref/repr_sample.py')
for b in vals:
    v = struct.unpack('<d', struct.pack('<Q', b & (2 ** 64 - 1)))[0]
    if v == v and v not in (float('inf'), float('-inf')):
        print('%016x %r' % (b & (2 ** 64 - 1), v))
