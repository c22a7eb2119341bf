#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Independent cross-check of 'bandgap fit --json' and 'bandgap eval --json' with numpy and
scipy (Debian python3-numpy, python3-scipy): the same published method (docs/methods.md)
implemented again from its equations, with numpy.linalg.lstsq for every linear solve and
scipy.stats for the distributions.  Data are invented and generated here with a fixed seed.
Prints one line per check; exits 1 on any mismatch."""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats

BIN = sys.argv[1]
failures = 0


def check(name, got, want, rel, abs_=0.0):
    global failures
    got = np.asarray(got, dtype=float)
    want = np.asarray(want, dtype=float)
    ok = got.shape == want.shape and np.all(np.abs(got - want) <= rel * np.abs(want) + abs_)
    if not ok:
        failures += 1
        print("xcheck FAIL %s: got %s want %s" % (name, got, want))


POWERS = {"sh3": [0, 1, 3], "sh4": [0, 1, 2, 3], "beta": [0, 1], "poly:2": [0, 1, 2],
          "poly:4": [0, 1, 2, 3, 4], "poly:5": [0, 1, 2, 3, 4, 5]}


def basis(L, pw):
    return np.vstack([L ** k for k in pw]).T


def fit(T, R, uT, uR, pw, refine=True):
    """Weighted fit of 1/T = sum c_k L^k, then Gauss-Newton in T; returns c, unscaled cov,
    the weights' u, fitted T."""
    L = np.log(R)
    X = basis(L, pw)
    weighted = np.any(uT > 0) or np.any(uR > 0)
    u = np.where(uT > 0, uT, 1.0) if weighted else np.ones_like(T)

    def lin(u):
        sw = T ** 2 / u
        c, *_ = np.linalg.lstsq(X * sw[:, None], sw / T, rcond=None)
        return c
    c = lin(u)
    if weighted and np.any(uR > 0):
        dfdl = sum(ck * k * L ** (k - 1) for ck, k in zip(c, pw) if k > 0)
        tm = 1.0 / (X @ c)
        slope = -tm ** 2 * dfdl / R
        u = np.sqrt(uT ** 2 + (slope * uR) ** 2)
        c = lin(u)
    for _ in range(100 if refine else 0):
        tm = 1.0 / (X @ c)
        J = -(tm ** 2 / u)[:, None] * X
        norms = np.linalg.norm(J, axis=0)  # equilibrate the columns before solving
        step, *_ = np.linalg.lstsq(J / norms, -(tm - T) / u, rcond=None)
        step = step / norms
        c = c + step
        if np.max(np.abs(step) / (np.abs(c) + 1e-300)) < 1e-14:
            break
    tm = 1.0 / (X @ c)
    J = -(tm ** 2 / u)[:, None] * X
    cov0 = np.linalg.inv(J.T @ J)
    return c, cov0, u, tm, J, weighted


def solve_L(c, pw, T):
    L = 9.0
    for _ in range(200):
        f = sum(ck * L ** k for ck, k in zip(c, pw)) - 1.0 / T
        d = sum(ck * k * L ** (k - 1) for ck, k in zip(c, pw) if k > 0)
        L -= f / d
    return L


def run(args):
    out = subprocess.run([BIN] + args, capture_output=True, text=True, check=False)
    if out.returncode != 0:
        print(out.stderr)
        raise SystemExit("xcheck: bandgap %s failed with %d" % (args, out.returncode))
    return json.loads(out.stdout)


def check_fit(tmp, name, model, T, R, uT, uR, t0=298.15):
    path = os.path.join(tmp, name + ".csv")
    with open(path, "w") as f:
        f.write("# INVENTED cross-check data\ntemp_k,ohms,u_temp_k,u_ohms\n"
                if np.any(uT > 0) else "# INVENTED cross-check data\ntemp_k,ohms\n")
        for i in range(len(T)):
            if np.any(uT > 0):
                f.write("%.17g,%.17g,%.17g,%.17g\n" % (T[i], R[i], uT[i], uR[i]))
            else:
                f.write("%.17g,%.17g\n" % (T[i], R[i]))
    js = run(["fit", path, "--model", model, "--json", "--at", "30C"])
    pw = POWERS[model]
    c, cov0, u, tm, J, weighted = fit(T, R, uT, uR, pw)
    n, p = len(T), len(pw)
    dof = n - p
    resid = T - tm
    chi2 = float(np.sum((resid / u) ** 2))
    scale = max(1.0, chi2 / dof) if weighted else chi2 / dof
    covc = cov0 * scale
    if model == "beta":
        beta = 1.0 / c[1]
        lnr0 = (1.0 / t0 - c[0]) * beta
        coef = np.array([math.exp(lnr0), beta])
        G = np.array([[-coef[0] * beta, -coef[0] * lnr0 * beta], [0.0, -beta ** 2]])
        cov = G @ covc @ G.T
    else:
        coef, cov = c, covc
    check(name + " coefficients", js["coefficients"], coef, 1e-8)
    check(name + " covariance", js["covariance"], cov, 1e-6)
    check(name + " u_coefficients", js["u_coefficients"], np.sqrt(np.diag(cov)), 1e-6)
    check(name + " residuals_mk", js["residuals_mk"], 1e3 * resid, 1e-5, 1e-7)
    check(name + " u_k", js["u_k"], u, 1e-9)
    check(name + " chi2", js["chi2"], chi2, 1e-6)
    check(name + " dof", js["dof"], dof, 0)
    check(name + " rms_mk", js["rms_mk"], 1e3 * math.sqrt(np.mean(resid ** 2)), 1e-6)
    check(name + " max_abs_mk", js["max_abs_mk"], 1e3 * np.max(np.abs(resid)), 1e-6)
    if weighted:
        check(name + " p_value", js["p_value"], stats.chi2.sf(chi2, dof), 1e-6, 1e-300)
        m2ll = chi2
    else:
        m2ll = n * math.log(np.sum(resid ** 2) / n)
    check(name + " aic", js["aic"], m2ll + 2 * p, 1e-6, 1e-6)
    check(name + " bic", js["bic"], m2ll + p * math.log(n), 1e-6, 1e-6)
    kt = stats.t.ppf(0.5 + 0.9545 / 2, dof)
    check(name + " k_student", js["k_student"], kt, 1e-8)
    # externally studentized residuals (Belsley, Kuh & Welsch 1980)
    H = J @ np.linalg.inv(J.T @ J) @ J.T
    h = np.diag(H)
    rw = resid / u
    s2 = (chi2 - rw ** 2 / (1 - h)) / (dof - 1)
    if weighted:
        s2 = np.maximum(s2, 1.0)  # scale never below the stated uncertainties
    check(name + " studentized", js["studentized"], rw / np.sqrt(s2 * (1 - h)), 1e-5, 1e-9)
    # curve uncertainty u(T) = T^2 sqrt(g' V g) at the reported temperatures
    for row in js["uncertainty"] + js["at"]:
        Tq = row["t_k"]
        Lq = solve_L(c, pw, Tq)
        g = np.array([Lq ** k for k in pw])
        uq = Tq ** 2 * math.sqrt(g @ covc @ g)
        check(name + " u(T=%.2f)" % Tq, row["u_k"], uq, 1e-6)
    at = js["at"][0]
    check(name + " R(30C)", at["ohms"], math.exp(solve_L(c, pw, 303.15)), 1e-10)
    b1, b2 = js["b_pair"]["t1_k"], js["b_pair"]["t2_k"]
    bp = (solve_L(c, pw, b1) - solve_L(c, pw, b2)) / (1 / b1 - 1 / b2)
    check(name + " B pair", js["b_pair"]["b_k"], bp, 1e-9)
    # leave-one-out RMS of every compared model.  bandgap gives the one-step (leverage) form
    # r_i / (1 - h_i) at the refined fit (Cook & Weisberg 1982, ch. 2, from memory), h from
    # the weighted Jacobian: recomputed here from numpy's fit of all points (1e-5), and
    # compared with refitting point by point, which it approximates to first order (1 %).
    for mrow in js["comparison"]["models"]:
        if not mrow["fitted"]:
            continue
        mp = POWERS[mrow["model"]]
        _, _, _, tm_m, J_m, _ = fit(T, R, uT, uR, mp)
        h_m = np.sum(np.linalg.qr(J_m)[0] ** 2, axis=1)  # stable: row norms of Q
        one = (T - tm_m) / (1 - h_m)
        # bandgap forms h from (J'J)^-1, which loses digits with the square of the condition
        # of the equilibrated Jacobian (Golub & Van Loan, 4th ed., 5.3.7, from memory)
        kappa = np.linalg.cond(J_m / np.linalg.norm(J_m, axis=0))
        check(name + " LOO one-step " + mrow["model"], mrow["loo_rms_mk"],
              1e3 * math.sqrt(np.sum(one ** 2) / n), max(1e-5, 2.2e-16 * kappa ** 2))
        ss = 0.0
        for i in range(n):
            keep = np.arange(n) != i
            ci, *_ = fit(T[keep], R[keep], uT[keep], uR[keep], mp)
            ti = 1.0 / sum(ck * math.log(R[i]) ** k for ck, k in zip(ci, mp))
            ss += (T[i] - ti) ** 2
        check(name + " LOO refitted " + mrow["model"], mrow["loo_rms_mk"],
              1e3 * math.sqrt(ss / n), 1e-2)
    print("xcheck ok %s (%d points)" % (name, n))


def check_eval():
    A, B, C = 1.40e-3, 2.37e-4, 9.90e-8  # published (Wikipedia "Thermistor")
    js = run(["eval", "--model", "sh3", "--coef", "1.40e-3,2.37e-4,9.90e-8", "--ohms", "3000R",
              "--ohms", "12k", "--temp", "-10C", "--json"])
    for res in js["results"]:
        R = res["ohms"]
        L = math.log(R)
        T = 1.0 / (A + B * L + C * L ** 3)
        check("eval t_k", res["t_k"], T, 1e-12)
        check("eval dT/dR", res["dtdr_k_per_ohm"], -T * T * (B + 3 * C * L * L) / R, 1e-10)
        check("eval alpha", res["alpha_per_k"], -1.0 / (T * T * (B + 3 * C * L * L)), 1e-10)
        check("eval beta", res["beta_local_k"], 1.0 / (B + 3 * C * L * L), 1e-10)
    print("xcheck ok eval")


def run_rc(args, ok=(0,)):
    out = subprocess.run([BIN] + args, capture_output=True, text=True, check=False)
    if out.returncode not in ok:
        print(out.stderr)
        raise SystemExit("xcheck: bandgap %s failed with %d" % (args, out.returncode))
    return json.loads(out.stdout)


def sh3_L(c, T):
    return solve_L(c, [0, 1, 3], T)


def check_drift(tmp):
    """drift --probe/--lot/--part JSON against numpy/scipy on the demo database's fits."""
    d = os.path.join(tmp, "demo")
    subprocess.run([BIN, "demo", "--dir", d], capture_output=True, check=True)
    db = ["--db", os.path.join(d, "demo.db")]
    T1, T2, R0, B0 = 298.15, 358.15, 10000.0, 3950.0  # the demo lots' nominal values
    # --lot
    js = run_rc(db + ["drift", "--lot", "GH-LOT-2705", "--json"], ok=(0, 1))
    at = np.array(js["at_k"])
    r25, b = [], []
    for p in js["probes"]:
        f = run(db + ["show", "fit", str(p["fit"]), "--json"])
        c = f["coefficients"]
        r25.append(100 * (math.exp(sh3_L(c, T1)) - R0) / R0)
        b.append((sh3_L(c, T1) - sh3_L(c, T2)) / (1 / T1 - 1 / T2))
        # against the part's nominal curve (the demo stores an sh3 one): 1/T = A + B L + C L^3
        nc = js["nominal"]["coef"]
        dev = [1e3 * (1 / (nc[0] + nc[1] * sh3_L(c, T) + nc[2] * sh3_L(c, T) ** 3) - T) for T in at]
        check("drift lot deviation " + p["probe"], p["deviation_mk"], dev, 1e-7, 1e-9)
    r25, b = np.array(r25), np.array(b)
    check("drift lot r25", [p["r25_dev_pct"] for p in js["probes"]], r25, 1e-9, 1e-12)
    check("drift lot b", [p["b_k"] for p in js["probes"]], b, 1e-12)
    for key, x, tol_lo, tol_hi in (("r25_dev_pct", r25, -1.0, 1.0),
                                   ("b_k", b, B0 * 0.995, B0 * 1.005)):
        st = js[key]
        check("drift lot %s mean" % key, st["mean"], x.mean(), 1e-12, 1e-14)
        check("drift lot %s sd" % key, st["sd"], x.std(ddof=1), 1e-10)
        check("drift lot %s min/max" % key, [st["min"], st["max"]], [x.min(), x.max()], 1e-9)
        cpk = min(tol_hi - x.mean(), x.mean() - tol_lo) / (3 * x.std(ddof=1))
        check("drift lot %s cpk" % key, st["cpk"], cpk, 1e-9)
    n = len(r25)
    t = stats.t.isf(0.05 / (2 * n), n - 2)
    check("drift grubbs crit", js["grubbs"]["g_crit"], (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t)), 1e-8)
    check("drift grubbs r25", js["grubbs"]["g_r25"], np.max(np.abs(r25 - r25.mean())) / r25.std(ddof=1), 1e-10)
    check("drift activation energy", js["activation_energy_ev"], 8.617333262e-5 * b.mean(), 1e-12)
    # --probe
    js = run_rc(db + ["drift", "--probe", "GH-0417", "--limit", "50mK", "--json"], ok=(1,))
    cmp_ = js["since_previous"][0]
    fa = run(db + ["show", "fit", str(cmp_["from_fit"]), "--json"])["coefficients"]
    fb = run(db + ["show", "fit", str(cmp_["to_fit"]), "--json"])["coefficients"]
    af = []
    for T in cmp_["at_k"]:
        L = sh3_L(fb, T)  # resistance the later calibration gives at T
        af.append(1e3 * (1 / (fa[0] + fa[1] * L + fa[2] * L ** 3) - T))
    check("drift probe as-found", cmp_["as_found_mk"], af, 1e-7, 1e-9)
    check("drift probe dR25", cmp_["d_r25_pct"], 100 * (math.exp(sh3_L(fb, T1)) / math.exp(sh3_L(fa, T1)) - 1), 1e-8)
    bb = lambda c: (sh3_L(c, T1) - sh3_L(c, T2)) / (1 / T1 - 1 / T2)
    check("drift probe dB", cmp_["d_b_k"], bb(fb) - bb(fa), 1e-7, 1e-9)
    t0 = np.datetime64(cmp_["from_time"].rstrip("Z")); t1 = np.datetime64(cmp_["to_time"].rstrip("Z"))
    years = (t1 - t0) / np.timedelta64(1, "s") / (365.2425 * 86400)
    check("drift probe years", cmp_["years"], years, 1e-12)
    check("drift probe rate", cmp_["rate_mk_per_year"], max(abs(x) for x in af) / years, 1e-7)
    # --part: X-bar/s limits from the baseline lot
    js = run_rc(db + ["drift", "--part", "SOIL-NTC-10K", "--baseline", "1", "--json"], ok=(0, 1))
    m = js["subgroup_size"]
    c4 = math.sqrt(2 / (m - 1)) * math.exp(math.lgamma(m / 2) - math.lgamma((m - 1) / 2))
    lot0 = js["lots"][0]
    a3 = 3 / (c4 * math.sqrt(m))
    check("drift part xbar ucl", js["xbar_r25_dev_pct"]["ucl"], lot0["r25_dev_mean_pct"] + a3 * lot0["r25_dev_sd_pct"], 1e-9)
    b4 = 1 + 3 * math.sqrt(1 - c4 * c4) / c4
    check("drift part s ucl", js["s_b_k"]["ucl"], b4 * lot0["b_sd_k"], 1e-9)
    print("xcheck ok drift (probe, lot, part)")


def main():
    rng = np.random.default_rng(20261201)
    coef = {"sh3": [1.1384e-3, 2.3245e-4, 9.4871e-8]}  # invented
    with tempfile.TemporaryDirectory() as tmp:
        for trial, (n, noise) in enumerate([(12, 0.003), (9, 0.001), (20, 0.004)]):
            tc = np.linspace(-30.0, 90.0, n)
            T = tc + 273.15
            c = coef["sh3"]
            R = np.array([math.exp(solve_L(c, [0, 1, 3], t)) for t in T])
            T = T + rng.normal(0, noise, n)
            R = R * (1 + rng.normal(0, 1e-5, n))
            uT = np.full(n, noise)
            uR = R * 1e-5
            for model in ("sh3", "sh4", "beta"):
                check_fit(tmp, "weighted-%s-%d" % (model, trial), model, T, R, uT, uR)
            check_fit(tmp, "unweighted-sh3-%d" % trial, "sh3", T, R, uT * 0, uR * 0)
        check_drift(tmp)
    check_eval()
    if failures:
        print("xcheck: %d mismatches" % failures)
        sys.exit(1)


main()
