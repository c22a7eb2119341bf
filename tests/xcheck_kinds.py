#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The sensor kinds beside the NTC ones, checked against the world: 'bandgap fit --json' on
readings files of each kind, recomputed independently with numpy/scipy (numpy.linalg.lstsq,
scipy.optimize.least_squares on the temperature residuals, numpy.polynomial.chebyshev), the
IEC 60751 table (../shared/refdata/REFERENCES.md section 3) fitted back, and junction readings
generated here in 50-digit arithmetic (mpmath) with the exact CODATA k and e.  Invented data,
fixed seed.  One line per failure; exit 1 on any."""
import json
import math
import os
import subprocess
import sys
import tempfile

import mpmath
import numpy as np
from numpy.polynomial import chebyshev as npcheb
from scipy.optimize import least_squares

BIN = sys.argv[1]
failures = 0
K_B = 1.380649e-23       # J/K, exact (2019 SI; CODATA 2018)
Q_E = 1.602176634e-19    # C, exact (2019 SI; CODATA 2018)


def check(name, got, want, rel, abs_=0.0):
    global failures
    got, want = np.asarray(got, dtype=float), np.asarray(want, dtype=float)
    if not (got.shape == want.shape and np.all(np.abs(got - want) <= rel * np.abs(want) + abs_)):
        failures += 1
        print("xcheck_kinds FAIL %s: got %s want %s" % (name, got, want))


def run_fit(header, rows, model, *extra):
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
        f.write(header + "\n")
        for r in rows:
            f.write(",".join(repr(float(v)) for v in r) + "\n")
        path = f.name
    try:
        p = subprocess.run([BIN, "fit", path, "--model", model, "--json", *extra],
                           capture_output=True, text=True)
    finally:
        os.unlink(path)
    if p.returncode != 0:
        global failures
        failures += 1
        print("xcheck_kinds FAIL %s: exit %d: %s" % (model, p.returncode, p.stderr.strip()))
        return None
    return json.loads(p.stdout)


def lsq_in_t(T, x, t_of_x, c0, x_of_t=None):
    """Least squares on T - T(x; c) by scipy; the covariance (J^T J)^-1 s^2 (equal weights)
    with J = dT/dc at the solution: -(dx/dc)/(dx/dT) by central differences of x(T; c) when
    the kind is x = f(T) ('x_of_t'), else of T(x; c) itself."""
    res = least_squares(lambda c: T - t_of_x(x, c), c0, xtol=1e-15, ftol=1e-15, gtol=1e-15,
                        x_scale='jac', method='lm')
    c = res.x
    Tm = t_of_x(x, c)
    J = np.empty((len(T), len(c)))
    for k in range(len(c)):
        h = 1e-6 * max(abs(c[k]), 1e-30)
        cp, cm = c.copy(), c.copy()
        cp[k] += h
        cm[k] -= h
        if x_of_t:
            ht = 1e-3
            dxdt = (x_of_t(Tm + ht, c) - x_of_t(Tm - ht, c)) / (2 * ht)
            J[:, k] = -((x_of_t(Tm, cp) - x_of_t(Tm, cm)) / (2 * h)) / dxdt
        else:
            J[:, k] = (t_of_x(x, cp) - t_of_x(x, cm)) / (2 * h)
    dof = len(T) - len(c)
    r = T - Tm
    cov = np.linalg.inv(J.T @ J) * float(r @ r) / dof
    return c, cov


def lin_in_t(T, x, rows, fixed):
    """A kind linear in T: numpy.linalg.lstsq, covariance (X^T X)^-1 s^2."""
    X = rows(x)
    y = T - fixed(x)
    c = np.linalg.lstsq(X, y, rcond=None)[0]
    r = y - X @ c
    cov = np.linalg.inv(X.T @ X) * float(r @ r) / (len(T) - len(c))
    return c, cov


def newton_t(f, x, t0):
    """T with f(T) = x by the secant/Newton of numpy arrays (each reading)."""
    T = np.full_like(x, t0, dtype=float)
    for _ in range(100):
        h = 1e-4
        d = (f(T + h) - f(T - h)) / (2 * h)
        T = T - (f(T) - x) / d
    return T


rng = np.random.default_rng(20261203)

# ---- IEC 60751: the table fitted back (refdata section 3, published) ---------------------
IEC = [(-200, 18.52008), (-100, 60.25584), (-40, 84.27065203), (0, 100.0), (50, 119.397125),
       (100, 138.5055), (200, 175.856), (400, 247.092), (850, 390.481125)]
j = run_fit("temp_c,ohms", IEC, "cvd")
if j:
    c = j["coefficients"]
    # IEC 60751 (published; refdata 3): R0 = 100 ohm, A = 3.9083e-3, B = -5.775e-7,
    # C = -4.183e-12.  The -40 degC value is printed to 1e-8 ohm (exact: 84.270652032), which
    # moves C by 1.1e-9 relative; R0, A and B come back within 1e-9.
    check("iec60751 R0", c[0], 100.0, 1e-9)
    check("iec60751 A", c[1], 3.9083e-3, 1e-9)
    check("iec60751 B", c[2], -5.775e-7, 1e-9)
    check("iec60751 C (table as printed)", c[3], -4.183e-12, 2e-9)
    d = {x["name"]: x for x in j["derived"]}
    check("iec60751 nominal curve deviation", d["deviation from IEC 60751"]["value"], 0.0, 0,
          1e-6)
    if d["IEC 60751 class"].get("text") != "AA":
        failures += 1
        print("xcheck_kinds FAIL iec60751 class of the nominal curve: %s" % d["IEC 60751 class"])
# with the -40 degC entry to full precision (from the equation and the published constants)
IEC_FULL = [(t, r if t != -40 else 84.270652032) for t, r in IEC]
j = run_fit("temp_c,ohms", IEC_FULL, "cvd")
if j:
    check("iec60751 C (full -40 degC value)", j["coefficients"][3], -4.183e-12, 1e-9)
    check("iec60751 A (full)", j["coefficients"][1], 3.9083e-3, 1e-9)

# ---- every kind against an independent least squares --------------------------------------
def cvd_r(t, c):
    r0, a, b = c[0], c[1], c[2]
    cc = c[3] if len(c) > 3 else 0.0
    return r0 * (1 + a * t + b * t * t + np.where(t < 0, cc * (t - 100) * t ** 3, 0.0))


def kind_case(model, header, T, x, t_of_x, c0, params=(), x_of_t=None, lin=None):
    j = run_fit(header, list(zip(*header_cols(header, T, x))), model, *params)
    if not j:
        return None
    if lin:
        c, cov = lin_in_t(T, x, *lin)
    else:
        c, cov = lsq_in_t(T, x, t_of_x, np.array(c0, dtype=float), x_of_t)
    check(model + " coefficients", j["coefficients"], c, 1e-7, 1e-12 * np.max(np.abs(c)))
    check(model + " covariance", np.array(j["covariance"]), cov, 1e-4,
          1e-6 * np.sqrt(np.outer(np.diag(cov), np.diag(cov))))
    resid = 1e3 * (T - t_of_x(x, c))
    check(model + " residuals", j["residuals_mk"], resid, 1e-4, 1e-6)
    return j


def header_cols(header, T, x):
    tcol = T - 273.15 if header.startswith("temp_c") else T
    return tcol, x


# silicon PTC, invented part: R25 = 1 kohm, A = 7.8e-3/K, B = 1.9e-5/K^2, noise 0.02 ohm
T = np.linspace(233.15, 423.15, 15)
R = 1000 * (1 + 7.8e-3 * (T - 298.15) + 1.9e-5 * (T - 298.15) ** 2) + rng.normal(0, 0.02, 15)
ptc = lambda c: (lambda t: c[0] * (1 + c[1] * (t - 298.15) + c[2] * (t - 298.15) ** 2))
kind_case("ptc", "temp_k,ohms", T, R, lambda x, c: newton_t(ptc(c), x, 300.0),
          [1000, 7.8e-3, 1.9e-5], x_of_t=lambda t, c: ptc(c)(t))
ptcl = lambda c: (lambda t: c[0] * (1 + c[1] * (t - 298.15)))
Tn = np.linspace(283.15, 313.15, 9)
Rn = 1000 * (1 + 7.8e-3 * (Tn - 298.15) + 1.9e-5 * (Tn - 298.15) ** 2) + rng.normal(0, .02, 9)
kind_case("ptc-lin", "temp_k,ohms", Tn, Rn, lambda x, c: newton_t(ptcl(c), x, 300.0),
          [1000, 7.8e-3], x_of_t=lambda t, c: ptcl(c)(t))
# platinum under test: an invented Pt100 slightly off the nominal curve, noise 1 mK
tc = np.array([-196, -80, -40, 0, 0.01, 50, 100, 157, 232, 300, 420], dtype=float)
Rp = cvd_r(tc, [100.012, 3.9080e-3, -5.78e-7, -4.1e-12]) + rng.normal(0, 4e-4, len(tc))
kind_case("cvd", "temp_c,ohms", tc + 273.15, Rp,
          lambda x, c: newton_t(lambda t: cvd_r(t - 273.15, c), x, 300.0),
          [100, 3.9083e-3, -5.775e-7, -4.183e-12], x_of_t=lambda t, c: cvd_r(t - 273.15, c))
kind_case("cvd2", "temp_c,ohms", tc[tc >= 0] + 273.15, Rp[tc >= 0],
          lambda x, c: newton_t(lambda t: cvd_r(t - 273.15, c), x, 300.0),
          [100, 3.9083e-3, -5.775e-7], x_of_t=lambda t, c: cvd_r(t - 273.15, c))
# IC sensor reporting degC, invented: reads 0.4 K high at 25 degC, gain off by 0.3 %
Tt = np.linspace(233.15, 398.15, 12)
rep = (Tt - 273.15) - 0.4 + 0.003 * (Tt - 298.15) + rng.normal(0, 0.01, 12)
icT = lambda x, c: (x + 273.15) + c[0] + c[1] * (x + 273.15 - 298.15) + c[2] * (x + 273.15 - 298.15) ** 2
icrows = lambda x: np.vstack([np.ones_like(x), x + 273.15 - 298.15,
                              (x + 273.15 - 298.15) ** 2]).T
kind_case("ic", "temp_k,reported_c", Tt, rep, icT, [0.4, -0.003, 0.0],
          lin=(icrows, lambda x: x + 273.15))
codes = np.round(rep / 0.0625)
icC = lambda x, c: icT(x * 0.0625, c)
j = kind_case("ic-code", "temp_k,code", Tt, codes, icC, [0.4, -0.003, 0.0],
              ("--param", "lsb_k=0.0625"),
              lin=(lambda x: icrows(x * 0.0625), lambda x: x * 0.0625 + 273.15))
if j:
    d = {x["name"]: x for x in j["derived"]}
    check("ic-code offset trim in LSB", d["offset trim c0"]["value"], j["coefficients"][0] / 0.0625,
          1e-12)

# ---- junction: readings in 50-digit arithmetic, Vg0 and eta recovered ----------------------
mpmath.mp.dps = 50
kq = mpmath.mpf("1.380649e-23") / mpmath.mpf("1.602176634e-19")
VG0, V0, ETA, TR = mpmath.mpf("1.2063"), mpmath.mpf("0.6021"), mpmath.mpf("3.6"), mpmath.mpf("298.15")
Tj = [mpmath.mpf(220) + 10 * i for i in range(19)]
noise = rng.normal(0, 2e-6, len(Tj))  # 2 uV, a good bench voltmeter (invented)
Vj = [VG0 * (1 - t / TR) + V0 * t / TR - ETA * kq * t * mpmath.log(t / TR) for t in Tj]
Tjf = np.array([float(t) for t in Tj])
Vjf = np.array([float(v) for v in Vj]) + noise
vbe = lambda c: (lambda t: c[0] * (1 - t / 298.15) + c[1] * t / 298.15
                 - c[2] * (K_B / Q_E) * t * np.log(t / 298.15))
j = kind_case("vbe", "temp_k,volts", Tjf, Vjf, lambda x, c: newton_t(vbe(c), x, 300.0),
              [1.2, 0.6, 3.0], x_of_t=lambda t, c: vbe(c)(t))
if j:
    u = np.sqrt(np.diag(np.array(j["covariance"])))
    # within 3 standard uncertainties (the readings carry 2 uV of invented noise)
    check("vbe Vg0 recovered", j["coefficients"][0], float(VG0), 0, 3 * u[0])
    check("vbe eta recovered", j["coefficients"][2], float(ETA), 0, 3 * u[2])
    check("vbe V0 recovered", j["coefficients"][1], float(V0), 0, 3 * u[1])
    d = {x["name"]: x for x in j["derived"]}
    s = d["dV/dT at T0"]["value"]
    # a silicon junction falls by 1.5 .. 2.5 mV/K near room temperature (common practice)
    if not (-2.5e-3 <= s <= -1.5e-3):
        failures += 1
        print("xcheck_kinds FAIL vbe dV/dT at T0 %g outside -2.5 .. -1.5 mV/K" % s)
    # the same noise-free: Vg0, V0, eta to 1e-9 relative
    j2 = run_fit("temp_k,volts", list(zip(Tjf, [float(v) for v in Vj])), "vbe")
    if j2:
        check("vbe noise-free", j2["coefficients"], [float(VG0), float(V0), float(ETA)], 1e-7)
    # with stated uncertainties: u(T) = 5 mK, u(V) = 2 uV carried through the slope dT/dV
    # (docs/methods.md), chi2 and the covariance scaled by max(1, chi2/dof) as for the NTC fit
    uT, uV = 5e-3, 2e-6
    rows = [(t, v, uT, uV) for t, v in zip(Tjf, Vjf)]
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
        f.write("temp_k,volts,u_temp_k,u_volts\n")
        for r in rows:
            f.write(",".join(repr(float(v)) for v in r) + "\n")
        wp = f.name
    pw = subprocess.run([BIN, "fit", wp, "--model", "vbe", "--json"], capture_output=True,
                        text=True)
    os.unlink(wp)
    if pw.returncode != 0:
        failures += 1
        print("xcheck_kinds FAIL vbe weighted: %s" % pw.stderr.strip())
    else:
        jw = json.loads(pw.stdout)
        c = np.array(j["coefficients"])
        h = 1e-4
        dTdV = 1.0 / ((vbe(c)(Tjf + h) - vbe(c)(Tjf - h)) / (2 * h))
        u = np.sqrt(uT ** 2 + (dTdV * uV) ** 2)
        res = least_squares(lambda cc: (Tjf - newton_t(vbe(cc), Vjf, 300.0)) / u, c,
                            xtol=1e-15, ftol=1e-15, gtol=1e-15, method='lm')
        cw = res.x
        Tm = newton_t(vbe(cw), Vjf, 300.0)
        dxdt = (vbe(cw)(Tm + h) - vbe(cw)(Tm - h)) / (2 * h)
        J = np.empty((len(Tjf), 3))
        for k in range(3):
            e = np.zeros(3)
            e[k] = 1e-6 * abs(cw[k])
            J[:, k] = -((vbe(cw + e)(Tm) - vbe(cw - e)(Tm)) / (2 * e[k])) / dxdt / u
        chi2 = float(np.sum(((Tjf - Tm) / u) ** 2))
        covw = np.linalg.inv(J.T @ J) * max(1.0, chi2 / (len(Tjf) - 3))
        check("vbe weighted coefficients", jw["coefficients"], cw, 1e-7)
        check("vbe weighted chi2", jw["chi2"], chi2, 1e-4)
        check("vbe weighted covariance", np.array(jw["covariance"]), covw, 1e-3,
              1e-6 * np.sqrt(np.outer(np.diag(covw), np.diag(covw))))
        check("vbe weighted u_k", jw["u_k"], u, 1e-6)
# difference of two junctions, p = 8: gain 0.998, offset 0.3 mV (invented)
dV = 0.998 * (K_B / Q_E) * math.log(8) * Tjf + 3e-4 + rng.normal(0, 1e-6, len(Tjf))
kind_case("dvbe", "temp_k,volts", Tjf, dV,
          lambda x, c: (x - c[1]) / (c[0] * (K_B / Q_E) * math.log(8)), [1.0, 0.0],
          ("--param", "p=8"),
          x_of_t=lambda t, c: c[0] * (K_B / Q_E) * math.log(8) * t + c[1])

# ---- Chebyshev: against numpy.polynomial.chebyshev on the same domain ----------------------
Tc = np.linspace(80, 320, 25)
Vc = 1.15 - 1.9e-3 * (Tc - 80) - 1.2e-6 * (Tc - 80) ** 2 + 2e-9 * (Tc - 80) ** 3
for deg in (3, 5):
    j = run_fit("temp_k,volts", list(zip(Tc, Vc)), "cheb:%d" % deg)
    if j:
        lo, hi = j["parameters"]["x_lo"], j["parameters"]["x_hi"]
        ref = npcheb.Chebyshev.fit(Vc, Tc, deg, domain=[lo, hi])
        check("cheb:%d vs numpy chebfit" % deg, j["coefficients"], ref.coef, 1e-8,
              1e-9 * np.max(np.abs(ref.coef)))
        # the series reproduces the invented curve to its stated residuals
        check("cheb:%d residuals" % deg, j["residuals_mk"], 1e3 * (Tc - ref(Vc)), 0, 1e-5)

# ---- Chebyshev in ranges: a smooth invented curve over 30 .. 330 K that one 6-term series
# cannot hold to 5 mK; each range's series against numpy's on the same readings ------------
Tw = np.linspace(30, 330, 121)
Vw = 1.10 - 2.0e-3 * (Tw - 30) + 0.05 * np.exp(-(Tw - 30) / 40.0)
with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
    f.write("temp_k,volts\n")
    for t, v in zip(Tw, Vw):
        f.write("%r,%r\n" % (float(t), float(v)))
    wpath = f.name
one = subprocess.run([BIN, "fit", wpath, "--model", "cheb:5", "--json"], capture_output=True,
                     text=True)
p = subprocess.run([BIN, "fit", wpath, "--model", "cheb:5", "--bound", "5mK", "--json"],
                   capture_output=True, text=True)
os.unlink(wpath)
if p.returncode != 0 or one.returncode != 0:
    failures += 1
    print("xcheck_kinds FAIL cheb ranges: exit %d %d: %s" % (one.returncode, p.returncode,
                                                             p.stderr.strip()))
else:
    whole = json.loads(one.stdout)
    sp = json.loads(p.stdout)
    if not (whole["max_abs_mk"] > 5.0 and sp["all_hold"] and len(sp["ranges"]) >= 2):
        failures += 1
        print("xcheck_kinds FAIL cheb ranges: one series %.3g mK, %d ranges, all hold %s"
              % (whole["max_abs_mk"], len(sp["ranges"]), sp["all_hold"]))
    for k, r in enumerate(sp["ranges"]):
        sel = (Vw >= r["x_lo"]) & (Vw <= r["x_hi"])
        ref = npcheb.Chebyshev.fit(Vw[sel], Tw[sel], 5, domain=[r["x_lo"], r["x_hi"]])
        check("cheb range %d vs numpy" % k, r["coefficients"], ref.coef, 1e-7,
              1e-8 * np.max(np.abs(ref.coef)))
        # the series reproduces the invented curve inside its range to the bound
        err = np.max(np.abs(npcheb.chebval((2 * Vw[sel] - r["x_lo"] - r["x_hi"]) /
                                           (r["x_hi"] - r["x_lo"]), r["coefficients"]) - Tw[sel]))
        check("cheb range %d holds 5 mK" % k, err <= 5e-3, True, 0)
        if k > 0 and sp["ranges"][k - 1]["x_hi"] != r["x_lo"]:
            failures += 1
            print("xcheck_kinds FAIL cheb ranges do not meet at a reading")

# ---- eval and curve for the other kinds, against the equations evaluated here -------------
def run_json(*args):
    p = subprocess.run([BIN, *args, "--json"], capture_output=True, text=True)
    if p.returncode != 0:
        global failures
        failures += 1
        print("xcheck_kinds FAIL %s: exit %d: %s" % (args, p.returncode, p.stderr.strip()))
        return None
    return json.loads(p.stdout)


j = run_json("eval", "--model", "vbe", "--coef", "1.2063,0.6021,3.6", "--temp", "350K",
             "--reading", "0.5")
if j:
    c = [1.2063, 0.6021, 3.6]
    check("eval vbe V(350 K)", j["results"][0]["volts"], vbe(c)(np.array([350.0]))[0], 1e-13)
    check("eval vbe T(0.5 V)", vbe(c)(np.array([j["results"][1]["t_k"]]))[0], 0.5, 1e-12)
j = run_json("eval", "--model", "dvbe", "--coef", "1,0", "--param", "p=8", "--temp", "300K")
if j:  # (k/q) ln 8 at 300 K, k and e exact (2019 SI)
    check("eval dvbe ideal", j["results"][0]["volts"], K_B / Q_E * math.log(8) * 300.0, 1e-14)
j = run_json("curve", "--model", "cvd", "--coef", "100,3.9083e-3,-5.775e-7,-4.183e-12",
             "--from", "-200C", "--to", "850C", "--step", "50K")
if j:  # the IEC 60751 equation with its published constants (refdata 3)
    tt = np.array([r["t_k"] for r in j["rows"]]) - 273.15
    check("curve cvd = IEC 60751 equation", [r["ohms"] for r in j["rows"]],
          cvd_r(tt, [100, 3.9083e-3, -5.775e-7, -4.183e-12]), 1e-14)
j = run_json("curve", "--model", "cheb:3", "--coef", "200,-120,6,-0.5", "--param", "x_lo=0.3",
             "--param", "x_hi=1.1", "--readings", "0.3,0.55,0.8,1.1")
if j:
    ref = npcheb.Chebyshev([200, -120, 6, -0.5], domain=[0.3, 1.1])
    check("curve cheb:3 = numpy Chebyshev", [r["t_k"] for r in j["rows"]],
          ref(np.array([0.3, 0.55, 0.8, 1.1])), 1e-14)
    check("curve cheb:3 dT/dV = numpy deriv", [r["dtdx"] for r in j["rows"]],
          ref.deriv()(np.array([0.3, 0.55, 0.8, 1.1])), 1e-12)

# ---- fits of stored runs: import, fit --probe, and the stored fit read back (show fit) ------
# the same invented junction readings as above, imported as a voltage run at 10 uA, and an
# invented IC sensor's reported temperatures (some below 0 degC) as a reported-temperature
# run; each stored fit recomputed by scipy as the file fits are
with tempfile.TemporaryDirectory() as tmp:
    db = os.path.join(tmp, "k.db")

    def cli(*args):
        p = subprocess.run([BIN, "--db", db, *args], capture_output=True, text=True)
        if p.returncode != 0:
            global failures
            failures += 1
            print("xcheck_kinds FAIL stored: %s: exit %d: %s" % (args, p.returncode,
                                                                  p.stderr.strip()))
        return p.stdout

    cli("init")
    cli("lot", "add", "L", "--part", "P", "--r25", "10k", "--beta", "3950K", "--tol-r25", "1%",
        "--tol-beta", "1%")
    cli("probe", "add", "D-1", "--lot", "L")
    cli("probe", "add", "IC-1", "--lot", "L")
    jp = os.path.join(tmp, "j.csv")
    with open(jp, "w") as f:
        f.write("temp_k,volts,excite_a\n")
        for t, v in zip(Tjf, Vjf):
            f.write("%r,%r,1e-5\n" % (float(t), float(v)))
    cli("import", jp, "--probe", "D-1", "--at", "2026-11-21T09:00:00Z")
    run = json.loads(cli("--json", "show", "run", "1") or "null")
    if run and (run["quantity"], run["quantity_unit"], run["measuring_current_a"]) != \
            ("voltage", "V", 1e-5):
        failures += 1
        print("xcheck_kinds FAIL stored run quantity: %s" % run)
    js = json.loads(cli("--json", "fit", "--probe", "D-1", "--model", "vbe") or "null")
    if js:
        c, cov = lsq_in_t(Tjf, Vjf, lambda x, c: newton_t(vbe(c), x, 300.0),
                          np.array([1.2, 0.6, 3.0]), lambda t, c: vbe(c)(t))
        check("stored vbe coefficients", js["coefficients"], c, 1e-7)
        sf = json.loads(cli("--json", "show", "fit", str(js.get("fit_id", 1))) or "null")
        if sf:
            check("stored vbe read back", sf["coefficients"], c, 1e-7)
            if sf["model"] != "vbe":
                failures += 1
                print("xcheck_kinds FAIL stored fit names model %s" % sf["model"])
    # IC sensor: T_true = T_rep + c0 + c1 (T_rep - T_r) + c2 (T_rep - T_r)^2 is linear in c
    Tic = np.linspace(233.15, 373.15, 9)
    rep = (Tic - 273.15) - 0.35 - 0.004 * (Tic - 298.15) + rng.normal(0, 0.01, 9)
    ip = os.path.join(tmp, "ic.csv")
    with open(ip, "w") as f:
        f.write("temp_k,reported_c\n")
        for t, r in zip(Tic, rep):
            f.write("%r,%r\n" % (float(t), float(r)))
    cli("import", ip, "--probe", "IC-1", "--at", "2026-11-21T10:00:00Z")
    ji = json.loads(cli("--json", "fit", "--probe", "IC-1", "--model", "ic") or "null")
    if ji:
        d = rep - 25.0  # T_r = 25 degC
        A = np.column_stack([np.ones_like(d), d, d * d])
        cc = np.linalg.lstsq(A, (Tic - 273.15) - rep, rcond=None)[0]
        check("stored ic coefficients (numpy lstsq)", ji["coefficients"], cc, 1e-7, 1e-12)

sys.exit(1 if failures else 0)
