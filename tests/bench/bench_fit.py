#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Baselines for bench_fit: scipy.optimize.curve_fit (the same weighted problem in T) and
numpy.linalg.lstsq per probe (the same weighted linear problem in 1/T), on bench_fit's data.
Checks that the coefficients agree to 1e-6 relative and prints the timings.
Usage: bench_fit.py DATA.csv COEF_FULL.txt COEF_LINEAR.txt"""
import sys
import time

import numpy as np
from scipy.optimize import curve_fit

data = np.loadtxt(sys.argv[1], delimiter=",")
full = np.loadtxt(sys.argv[2])[:, :3]  # bench_fit writes coefficients first
lin = np.loadtxt(sys.argv[3])[:, :3]
probes = data[:, 0].astype(int)
npr = probes.max() + 1
T = data[:, 1].reshape(npr, -1)
L = np.log(data[:, 2]).reshape(npr, -1)
U = data[:, 3].reshape(npr, -1)


def model(L, a, b, c):
    return 1.0 / (a + b * L + c * L ** 3)


p0 = [1.1e-3, 2.3e-4, 9e-8]  # one generic start for every probe (a 10 kOhm class part)
cf = np.empty((npr, 3))
ls = np.empty((npr, 3))
t_cf = t_ls = float("inf")
for rep in range(3):  # best of three, as the C side takes the best of five
    t0 = time.perf_counter()
    for p in range(npr):
        cf[p], _ = curve_fit(model, L[p], T[p], p0=p0, sigma=U[p], absolute_sigma=True)
    t_cf = min(t_cf, (time.perf_counter() - t0) / npr)
    t0 = time.perf_counter()
    for p in range(npr):
        X = np.vstack([np.ones(L.shape[1]), L[p], L[p] ** 3]).T
        sw = T[p] ** 2 / U[p]
        ls[p], *_ = np.linalg.lstsq(X * sw[:, None], sw / T[p], rcond=None)
    t_ls = min(t_ls, (time.perf_counter() - t0) / npr)

d_full = np.max(np.abs(cf / full - 1))
d_lin = np.max(np.abs(ls / lin - 1))
print("scipy curve_fit per probe:                              %10.0f fits/s  (%.2f us/fit)"
      % (1 / t_cf, 1e6 * t_cf))
print("numpy lstsq per probe:                                  %10.0f fits/s  (%.2f us/fit)"
      % (1 / t_ls, 1e6 * t_ls))
print("max relative coefficient difference: full vs curve_fit %.2e, linear vs lstsq %.2e"
      % (d_full, d_lin))
print("PY_CF_US %.6f\nPY_LS_US %.6f" % (1e6 * t_cf, 1e6 * t_ls))
ok = d_full < 1e-6 and d_lin < 1e-6
print("coefficients agree to 1e-6: %s" % ("yes" if ok else "NO"))
sys.exit(0 if ok else 1)
