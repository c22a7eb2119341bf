#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The anchor of the batched fit: a hand-vectorised NumPy version of the algebra bandgap uses for
a stored-uncertainty sh3 fit of many probes with the same number of points, arrays shaped
(points, probes) so that every sum over a probe's points runs across the probes in memory
order (the sums, minima, maxima and tests over the rows of (probes, points) arrays cost several
times more in NumPy), no Python loop over probes:
  linear stage: L = ln R, basis (1, L, L^3), row weight T^2/u (1/u(1/T)), normal-equation sums
    of the column-equilibrated design, explicit 3x3 inverse (cofactors) vectorised over probes,
    covariance (A^T A)^-1, fitted temperatures, chi2, covariance scale max(1, chi2/dof);
  full fit: the same start, then Gauss-Newton in T as src/lib/fit/fit.c does it: step from the
    weighted Jacobian (normal equations again), step halving while chi2 rises, the same
    stopping rule (step below xtol, not taken, or small steps that stopped shrinking), each
    probe stopping on its own (masks); covariance of the last Jacobian;
  both: externally studentized residuals with the leverages (as fit.c's studentize).
Both sides time the same job, from the readings in memory to the results in memory: the C
batch also checks its input and returns every statistic of a fit, so this does the same,
vectorised: the guard rails (finite readings, R > 0, u >= 0, T rising and R falling by more
than the gaps at every step, u stated on all readings or none), the residuals in mK, RMS,
largest residual, range, reduced chi2, AIC and BIC, and what decides a note (an outlier, chi2
beyond either limit, a slope that changes sign inside the range, a result not finite).
The input is what the C side gets: T, R and u(T) (ln R is part of the timed work).
Checks every probe against bandgap's results (bench_fit's files) to 1e-9 relative (the
studentized residuals and residuals as the temperatures they come from), and that a probe
has a note exactly where bandgap gave it one, and prints the timings.  Usage:
  bench_fit_np.py DATA.csv RES_FULL.txt RES_LINEAR.txt [REPS]
RES_*.txt: per probe A B C, the 9 covariance elements, chi2, 10 studentized residuals, RMS and
largest residual (mK), AIC, BIC, 10 residuals (mK), the number of notes."""
import sys
import time

import numpy as np
from scipy.stats import chi2 as chi2_dist

XTOL = 1e-12           # bg_fit_default_opts: xtol
MAX_ITER = 50          # max_iter
RESOLUTION_K = 1e-5    # resolution_k
STUDENT_LIMIT = 3.0    # student_limit
GAP_K = 0.05           # setpoint_gap_k and mono_gap_k
CHI2_TAIL = 0.01       # fit.c: a chi2 with p below this, or above 1 - this, gets a note
NPAR = 3


def dot(a, b):
    """Per probe, the sum over the points of a * b ((points, probes) arrays)."""
    return (a * b).sum(axis=0)


def solve3(a0, a1, a2, b):
    """Least squares on the three columns a0, a1, a2 (points, probes) and right side b by
    normal equations of the equilibrated columns.  Returns c (3, probes), the inverse
    (A^T A)^-1 as its six distinct elements, and the column norms."""
    d0 = np.sqrt(dot(a0, a0))
    d1 = np.sqrt(dot(a1, a1))
    d2 = np.sqrt(dot(a2, a2))
    p = dot(a0, a1) / (d0 * d1)
    q = dot(a0, a2) / (d0 * d2)
    r = dot(a1, a2) / (d1 * d2)
    g0 = dot(a0, b) / d0
    g1 = dot(a1, b) / d1
    g2 = dot(a2, b) / d2
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
    f = c0 + c1 * L + c2 * L3
    return 1.0 / np.where(f > 0.0, f, np.nan)


def chi2_of(tm, T, U):
    r = (tm - T) / U
    s = dot(r, r)
    return np.where(np.isfinite(s), s, np.inf)


def studentize(T, U, L, L3, tm, inv, chi2, dof):
    """Externally studentized residuals as fit.c's studentize (stated uncertainties)."""
    i00, i01, i02, i11, i12, i22 = inv
    w = tm * tm / U
    h = (i00 + 2.0 * i01 * L + 2.0 * i02 * L3 + i11 * L * L + 2.0 * i12 * L * L3
         + i22 * L3 * L3) * (w * w)
    r = (T - tm) / U
    fl = RESOLUTION_K / np.sqrt(12.0) / U
    s2 = np.maximum((chi2 - r * r / (1.0 - h)) / (dof - 1), fl * fl)
    s2 = np.maximum(s2, 1.0)
    return r / np.sqrt(s2 * (1.0 - h))


def guard_rails(T, R, U):
    """The batch's check of the usual shape, per probe (True: fitted as a batch)."""
    ok = (np.isfinite(T) & np.isfinite(R) & np.isfinite(U) & (R > 0.0) & (U >= 0.0)).all(axis=0)
    ok &= (T[0] > 0.0) & (np.diff(T, axis=0) > GAP_K).all(axis=0)
    ok &= (np.diff(R, axis=0) < 0.0).all(axis=0)
    has = U > 0.0
    return ok & (has.all(axis=0) | ~has.any(axis=0))


def fit(T, R, U, refine, limits, whole=True):
    """whole=False: only the algebra the issue names for this anchor (normal-equation sums,
    3x3 solve, Gauss-Newton, covariance, studentized residuals); whole=True: also what the
    batch does beside it (guard rails, residuals in mK, RMS, largest, range, AIC/BIC, notes)."""
    n = T.shape[0]
    dof = n - NPAR
    accepted = guard_rails(T, R, U) if whole else None
    L = np.log(R)
    L3 = L * L * L
    w = T * T / U
    c0, c1, c2, inv, _ = solve3(w, w * L, w * L3, w / T)
    tm = fitted_t(c0, c1, c2, L, L3)
    s = chi2_of(tm, T, U)
    if refine:
        active = np.isfinite(s)
        prev = np.full(T.shape[1], np.inf)
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
    red = chi2 / dof
    scale = np.maximum(1.0, red)
    cov = np.stack([inv[0], inv[1], inv[2], inv[1], inv[3], inv[4], inv[2], inv[4], inv[5]],
                   axis=1) * scale[:, None]
    stud = studentize(T, U, L, L3, tm, inv, chi2, dof)
    if not whole:
        return np.stack([c0, c1, c2], axis=1), cov, chi2, stud
    r = T - tm
    resid = 1e3 * r
    stats = np.stack([1e3 * np.sqrt(dot(r, r) / n), 1e3 * np.abs(r).max(axis=0),
                      chi2 + 2.0 * NPAR, chi2 + NPAR * np.log(n)], axis=1)
    t_range = T.min(axis=0), T.max(axis=0)
    coef = np.stack([c0, c1, c2], axis=1)
    lo, hi = L.min(axis=0), L.max(axis=0)  # the slope of 1/T in L at both ends of the range
    mono = (c1 + 3.0 * c2 * lo * lo > 0.0) & (c1 + 3.0 * c2 * hi * hi > 0.0)
    finite = np.isfinite(coef).all(axis=1) & np.isfinite(cov).all(axis=1)
    note = ((np.abs(stud) > STUDENT_LIMIT).any(axis=0) | (chi2 > limits[0]) | (chi2 < limits[1])
            | ~mono | ~finite)
    return coef, cov, chi2, stud, stats, resid, note, accepted, red, t_range


def timed(T, R, U, refine, reps, limits, whole=True):
    best, res = float("inf"), None
    for _ in range(reps):
        t0 = time.perf_counter()
        res = fit(T, R, U, refine, limits, whole)
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
    T = np.ascontiguousarray(data[:, 1].reshape(npr, -1).T)  # (points, probes)
    R = np.ascontiguousarray(data[:, 2].reshape(npr, -1).T)
    U = np.ascontiguousarray(data[:, 3].reshape(npr, -1).T)
    ok = True
    dof = T.shape[0] - NPAR  # the chi2 limits, as the C fitter keeps them (set-up, not timed)
    limits = (chi2_dist.isf(CHI2_TAIL, dof), chi2_dist.ppf(CHI2_TAIL, dof))
    for name, path, refine in (("full", sys.argv[2], True), ("linear", sys.argv[3], False)):
        ta, core = timed(T, R, U, refine, reps, limits, False)
        t, res = timed(T, R, U, refine, reps, limits)
        # the algebra-only anchor computes the same numbers as the whole job's
        ok = ok and all(np.array_equal(a, b, equal_nan=True) for a, b in zip(core, res[:4]))
        coef, cov, chi2, stud, stats, resid, note, accepted = res[:8]
        ref = np.loadtxt(path).reshape(npr, -1)
        # A studentized residual near 0 is a difference of nearly equal temperatures, known
        # only to the rounding of the fitted temperature: it is compared as the temperature it
        # comes from, |difference| u / T (its scale is u, s >= 1 with stated uncertainties);
        # so are the residuals, their RMS and the largest (mK).
        d_stud = float(np.max(np.abs(stud.T - ref[:, 13:23]) * (U / T).T))
        d_res = float(max(np.max(np.abs(resid.T - ref[:, 27:37]) * 1e-3 / T.T),
                          np.max(np.abs(stats[:, 0:2] - ref[:, 23:25]) * 1e-3 / T[-1:].T)))
        d = max(worst(coef, ref[:, 0:3]), worst(cov, ref[:, 3:12]),
                worst(chi2[:, None], ref[:, 12:13]), worst(stats[:, 2:4], ref[:, 25:27]),
                d_stud, d_res)
        same_notes = bool(np.array_equal(note, ref[:, 37] > 0))
        ok = ok and d <= 1e-9 and same_notes and bool(accepted.all())
        print("numpy hand-vectorised %-6s fit: %8.3f us/fit; largest relative difference to "
              "bandgap (coefficients, covariance, chi2, statistics, residuals) %.2e; notes "
              "where bandgap has them: %s (%d of %d probes)"
              % (name, 1e6 * t / npr, d, "yes" if same_notes else "NO", int(note.sum()), npr))
        print("numpy hand-vectorised %-6s fit, the algebra alone (sums, 3x3 solve%s, covariance, "
              "studentized residuals): %8.3f us/fit" % (name, ", Gauss-Newton" if refine else "",
                                                         1e6 * ta / npr))
        print("NP_%s_US %.6f" % ("FULL" if refine else "LIN", 1e6 * ta / npr))
        print("NP_%s_JOB_US %.6f" % ("FULL" if refine else "LIN", 1e6 * t / npr))
    print("numpy anchor agrees with bandgap to 1e-9: %s" % ("yes" if ok else "NO"))
    sys.exit(0 if ok else 1)


if __name__ == "__main__":
    main()
