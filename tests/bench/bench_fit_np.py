#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The anchor of the batched fit: a hand-vectorised NumPy version of the algebra bandgap uses for
a stored-uncertainty sh3 fit of many probes with the same number of points, arrays shaped
(probes, points), no Python loop over probes:
  linear stage: L = ln R, basis (1, L, L^3), row weight T^2/u (1/u(1/T)), normal-equation sums
    of the column-equilibrated design, explicit 3x3 inverse (cofactors) vectorised over probes,
    covariance (A^T A)^-1, fitted temperatures, chi2, covariance scale max(1, chi2/dof);
  full fit: the same start, then Gauss-Newton in T as src/lib/fit/fit.c does it: step from the
    weighted Jacobian (normal equations again), step halving while chi2 rises, the same
    stopping rule (step below xtol, not taken, or small steps that stopped shrinking), each
    probe stopping on its own (masks); covariance of the last Jacobian;
  both: externally studentized residuals with the leverages (as fit.c's studentize).
The input is what the C side gets: T, R and u(T) (ln R is part of the timed work).
Checks every probe against bandgap's results (bench_fit's files) to 1e-9 relative (the
studentized residuals as the temperatures they come from) and prints
the timings.  Usage:
  bench_fit_np.py DATA.csv RES_FULL.txt RES_LINEAR.txt [REPS]
RES_*.txt: per probe A B C, the 9 covariance elements, chi2, 10 studentized residuals."""
import sys
import time

import numpy as np

XTOL = 1e-12           # bg_fit_default_opts: xtol
MAX_ITER = 50          # max_iter
RESOLUTION_K = 1e-5    # resolution_k
NPAR = 3


def solve3(a0, a1, a2, b):
    """Least squares on the three columns a0, a1, a2 (probes, points) and right side b by
    normal equations of the equilibrated columns.  Returns c (3, probes), the inverse
    (A^T A)^-1 as its six distinct elements, and the column norms."""
    d0 = np.sqrt(np.einsum("ij,ij->i", a0, a0))
    d1 = np.sqrt(np.einsum("ij,ij->i", a1, a1))
    d2 = np.sqrt(np.einsum("ij,ij->i", a2, a2))
    p = np.einsum("ij,ij->i", a0, a1) / (d0 * d1)
    q = np.einsum("ij,ij->i", a0, a2) / (d0 * d2)
    r = np.einsum("ij,ij->i", a1, a2) / (d1 * d2)
    g0 = np.einsum("ij,ij->i", a0, b) / d0
    g1 = np.einsum("ij,ij->i", a1, b) / d1
    g2 = np.einsum("ij,ij->i", a2, b) / d2
    # inverse of [[1 p q] [p 1 r] [q r 1]] by cofactors
    k00 = 1.0 - r * r
    k11 = 1.0 - q * q
    k22 = 1.0 - p * p
    k01 = q * r - p
    k02 = p * r - q
    k12 = p * q - r
    det = k00 + p * k01 + q * k02
    i00, i11, i22 = k00 / det, k11 / det, k22 / det
    i01, i02, i12 = k01 / det, k02 / det, k12 / det
    c0 = (i00 * g0 + i01 * g1 + i02 * g2) / d0
    c1 = (i01 * g0 + i11 * g1 + i12 * g2) / d1
    c2 = (i02 * g0 + i12 * g1 + i22 * g2) / d2
    inv = (i00 / (d0 * d0), i01 / (d0 * d1), i02 / (d0 * d2),
           i11 / (d1 * d1), i12 / (d1 * d2), i22 / (d2 * d2))
    return c0, c1, c2, inv, (d0, d1, d2)


def fitted_t(c0, c1, c2, L, L3):
    f = c0[:, None] + c1[:, None] * L + c2[:, None] * L3
    return 1.0 / np.where(f > 0.0, f, np.nan)


def chi2_of(tm, T, U):
    r = (tm - T) / U
    s = np.einsum("ij,ij->i", r, r)
    return np.where(np.isfinite(s), s, np.inf)


def studentize(T, U, L, L3, tm, inv, chi2, dof):
    """Externally studentized residuals as fit.c's studentize (stated uncertainties)."""
    i00, i01, i02, i11, i12, i22 = (v[:, None] for v in inv)
    w = tm * tm / U
    h = (i00 + 2.0 * i01 * L + 2.0 * i02 * L3 + i11 * L * L + 2.0 * i12 * L * L3
         + i22 * L3 * L3) * (w * w)
    r = (T - tm) / U
    fl = RESOLUTION_K / np.sqrt(12.0) / U
    s2 = np.maximum((chi2[:, None] - r * r / (1.0 - h)) / (dof - 1), fl * fl)
    s2 = np.maximum(s2, 1.0)
    return r / np.sqrt(s2 * (1.0 - h))


def fit(T, R, U, refine):
    n = T.shape[1]
    dof = n - NPAR
    L = np.log(R)
    L3 = L * L * L
    w = T * T / U
    c0, c1, c2, inv, _ = solve3(w, w * L, w * L3, w / T)
    tm = fitted_t(c0, c1, c2, L, L3)
    s = chi2_of(tm, T, U)
    if refine:
        active = np.isfinite(s)
        prev = np.full(T.shape[0], np.inf)
        for _ in range(MAX_ITER):
            if not active.any():
                break
            j = -tm * tm / U
            s0, s1, s2_, inv_it, (d0, d1, d2) = solve3(j, j * L, j * L3, -(tm - T) / U)
            inv = tuple(np.where(active, a, b) for a, b in zip(inv_it, inv))
            cmax = np.maximum(np.maximum(np.abs(c0) * d0, np.abs(c1) * d1), np.abs(c2) * d2)
            dmax = np.maximum(np.maximum(np.abs(s0) * d0, np.abs(s1) * d1), np.abs(s2_) * d2)
            small = dmax <= 1e-6 * cmax
            lam = np.ones_like(cmax)
            searching = active.copy()
            st = np.full_like(cmax, np.inf)
            t0, t1, t2 = c0.copy(), c1.copy(), c2.copy()
            for _half in range(40):  # step halving, only for the probes still searching
                t0 = np.where(searching, c0 + lam * s0, t0)
                t1 = np.where(searching, c1 + lam * s1, t1)
                t2 = np.where(searching, c2 + lam * s2_, t2)
                st = np.where(searching, chi2_of(fitted_t(t0, t1, t2, L, L3), T, U), st)
                ok = (st <= s) | (small & np.isfinite(st))
                searching &= ~ok
                if not searching.any():
                    break
                lam = np.where(searching, 0.5 * lam, lam)
            taken = active & ((st <= s) | (small & np.isfinite(st)))
            c0, c1, c2 = np.where(taken, t0, c0), np.where(taken, t1, c1), np.where(taken, t2, c2)
            s = np.where(taken, st, s)
            stalled = small & (dmax > 0.5 * prev)
            prev = np.where(active, dmax, prev)
            active &= ~(~taken | (lam * dmax <= XTOL * cmax) | stalled)
            tm = fitted_t(c0, c1, c2, L, L3)
    chi2 = chi2_of(tm, T, U)
    scale = np.maximum(1.0, chi2 / dof)
    cov = np.stack([inv[0], inv[1], inv[2], inv[1], inv[3], inv[4], inv[2], inv[4], inv[5]],
                   axis=1) * scale[:, None]
    stud = studentize(T, U, L, L3, tm, inv, chi2, dof)
    return np.stack([c0, c1, c2], axis=1), cov, chi2, stud


def timed(T, R, U, refine, reps):
    best, res = float("inf"), None
    for _ in range(reps):
        t0 = time.perf_counter()
        res = fit(T, R, U, refine)
        best = min(best, time.perf_counter() - t0)
    return best, res


def worst(got, ref):
    """Largest relative difference, elements compared to the largest of their row, so that a
    covariance element near 0 is judged against the row's scale."""
    got, ref = got.reshape(len(got), -1), ref.reshape(len(ref), -1)
    scale = np.maximum(np.abs(ref).max(axis=1, keepdims=True), 1e-300)
    return float(np.max(np.abs(got - ref) / np.maximum(np.abs(ref), 1e-3 * scale)))


def main():
    data = np.loadtxt(sys.argv[1], delimiter=",")
    reps = int(sys.argv[4]) if len(sys.argv) > 4 else 5
    npr = int(data[:, 0].max()) + 1
    T = np.ascontiguousarray(data[:, 1].reshape(npr, -1))
    R = np.ascontiguousarray(data[:, 2].reshape(npr, -1))
    U = np.ascontiguousarray(data[:, 3].reshape(npr, -1))
    ok = True
    for name, path, refine in (("full", sys.argv[2], True), ("linear", sys.argv[3], False)):
        t, (coef, cov, chi2, stud) = timed(T, R, U, refine, reps)
        ref = np.loadtxt(path).reshape(npr, -1)
        # A studentized residual near 0 is a difference of nearly equal temperatures, known
        # only to the rounding of the fitted temperature: it is compared as the temperature it
        # comes from, |difference| u / T (its scale is u, s >= 1 with stated uncertainties).
        d_stud = float(np.max(np.abs(stud - ref[:, 13:]) * U / T))
        d = max(worst(coef, ref[:, 0:3]), worst(cov, ref[:, 3:12]),
                worst(chi2[:, None], ref[:, 12:13]), d_stud)
        ok = ok and d <= 1e-9
        print("numpy hand-vectorised %-6s fit: %8.3f us/fit; largest relative difference to "
              "bandgap (coefficients, covariance, chi2, studentized) %.2e" % (name, 1e6 * t / npr, d))
        print("NP_%s_US %.6f" % ("FULL" if refine else "LIN", 1e6 * t / npr))
    print("numpy anchor agrees with bandgap to 1e-9: %s" % ("yes" if ok else "NO"))
    sys.exit(0 if ok else 1)


if __name__ == "__main__":
    main()
