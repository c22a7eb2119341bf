#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Lot statistics of every sensor kind against an independent recomputation: four lots of
INVENTED sensors (junctions read in volts, silicon PTCs, platinum thermometers, IC sensors
reporting degC), each fitted by bandgap, judged against its part's nominal values
('bandgap part set --sensor ...'), and 'bandgap drift --lot --json' recomputed here from the
stored fits' coefficients with numpy/scipy:
  - each kind's two values from the model's own formula (the junction model and the PTC
    polynomial differentiated by hand; IEC 60751 alpha = (R100 - R0) / (100 K R0));
  - mean and sd (numpy, ddof=1), Cpk = min(USL - mean, mean - LSL) / (3 sd) (D. C.
    Montgomery, Introduction to Statistical Quality Control, process capability; common
    practice), Grubbs' G = max |x - mean| / sd and its two-sided critical value
    (n-1)/sqrt(n) sqrt(t^2 / (n - 2 + t^2)), t = scipy.stats.t.ppf(1 - alpha/(2n), n - 2)
    (NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.5.17, Grubbs' test);
  - the deviation T_nom(x(T)) - T at the check temperatures, the PRT's by the closed-form
    inverse of the IEC 60751 curve above 0 degC, and the IEC 60751 class A tolerance
    0.15 K + 0.002 |t| (IEC 60751:2008 tolerance classes; REFERENCES.md section 3).
One line per failure; exit 1 on any."""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats as sps

BIN = sys.argv[1]
K_B = 1.380649e-23       # J/K, exact (2019 SI; CODATA 2018)
Q_E = 1.602176634e-19    # C, exact (2019 SI; CODATA 2018)
IEC_A, IEC_B = 3.9083e-3, -5.775e-7   # IEC 60751 (REFERENCES.md section 3)
failures = 0
rng = np.random.default_rng(20261203)
tmp = tempfile.mkdtemp()
DB = os.path.join(tmp, "lots.db")


def check(name, got, want, rel, abs_=0.0):
    global failures
    got, want = np.asarray(got, dtype=float), np.asarray(want, dtype=float)
    if not (got.shape == want.shape and np.all(np.abs(got - want) <= rel * np.abs(want) + abs_)):
        failures += 1
        print("xcheck_lots FAIL %s: got %s want %s" % (name, got, want))


def cli(*args, ok=(0,)):
    global failures
    p = subprocess.run([BIN, "--db", DB, *args], capture_output=True, text=True)
    if p.returncode not in ok:
        failures += 1
        print("xcheck_lots FAIL %s: exit %d: %s" % (" ".join(args), p.returncode,
                                                    p.stderr.strip()))
    return p


def lot_of(code, part, header, rows_of, model, spec):
    """Lot 'code' of part 'part': probes with the readings rows_of(i) gives, fitted with
    'model', the part specified by 'spec'; returns drift --lot --json and each fit's
    coefficients by probe."""
    # the lot table's required NTC fields (not used for a part of another kind)
    cli("lot", "add", code, "--part", part, "--r25", "10k", "--beta", "3950K", "--tol-r25",
        "1%", "--tol-beta", "1%")
    for i in range(5):
        serial = "%s-%02d" % (code, i + 1)
        cli("probe", "add", serial, "--lot", code)
        path = os.path.join(tmp, serial + ".csv")
        with open(path, "w") as f:
            f.write(header + "\n")
            for r in rows_of(i):
                f.write(",".join(repr(float(v)) for v in r) + "\n")
        cli("import", path, "--probe", serial, "--at", "2026-11-2%dT09:00:00Z" % (i + 1))
    cli("fit", "--lot", code, "--model", model)
    cli("part", "set", part, *spec)
    p = cli("drift", "--lot", code, "--json", ok=(0, 1))
    j = json.loads(p.stdout)
    coef = {}
    for pr in j["probes"]:
        s = json.loads(cli("show", "fit", str(pr["fit"]), "--json").stdout)
        coef[pr["probe"]] = np.array(s["coefficients"])
    return j, coef


def grubbs(x, alpha):
    n = len(x)
    g = np.max(np.abs(x - x.mean())) / x.std(ddof=1)
    t = sps.t.ppf(1 - alpha / (2 * n), n - 2)
    return g, (n - 1) / np.sqrt(n) * np.sqrt(t * t / (n - 2 + t * t))


def check_stats(kind, j, v1, v2, tol1, nom2, tol2):
    k1, k2 = j["values"]["value1"], j["values"]["value2"]
    got1 = np.array([p[k1] for p in j["probes"]])
    got2 = np.array([p[k2] for p in j["probes"]])
    check(kind + " value 1 per probe", got1, v1, 1e-9, 1e-9)
    check(kind + " value 2 per probe", got2, v2, 1e-7, 1e-9)
    for key, v, lo, hi in ((k1, v1, -tol1, tol1), (k2, v2, nom2 - tol2, nom2 + tol2)):
        s = j[key]
        check(kind + " " + key + " mean", s["mean"], v.mean(), 1e-9, 1e-12)
        check(kind + " " + key + " sd", s["sd"], v.std(ddof=1), 1e-6)
        cpk = min(hi - v.mean(), v.mean() - lo) / (3 * v.std(ddof=1))
        check(kind + " " + key + " Cpk", s["cpk"], cpk, 1e-6)
    g1, gc = grubbs(v1, 0.05)
    g2, _ = grubbs(v2, 0.05)
    check(kind + " Grubbs G value 1", j["grubbs"]["g_r25"], g1, 1e-6)
    check(kind + " Grubbs G value 2", j["grubbs"]["g_b"], g2, 1e-6)
    check(kind + " Grubbs critical", j["grubbs"]["g_crit"], gc, 1e-9)
    out = (np.abs(v1) > tol1) | (np.abs(v2 - nom2) > tol2)
    got = [p["out_of_tolerance"] for p in j["probes"]]
    if list(out) != got:
        global failures
        failures += 1
        print("xcheck_lots FAIL %s out of tolerance: got %s want %s" % (kind, got, list(out)))


def newton(f, x, t0):
    t = np.full_like(np.asarray(x, dtype=float), t0)
    for _ in range(60):
        h = 1e-4
        t = t - (f(t) - x) / ((f(t + h) - f(t - h)) / (2 * h))
    return t


cli("init")

# ---- junctions (a diode at 10 uA), model vbe, part nominal V 600 mV and -2.2 mV/K at 25 C --
TR = 298.15
vbe = lambda c: (lambda t: c[0] * (1 - t / TR) + c[1] * t / TR
                 - c[2] * (K_B / Q_E) * t * np.log(t / TR))
Tj = np.linspace(233.15, 373.15, 8)
jrows = lambda i: [(t, vbe([1.205 + 0.002 * i, 0.600 + 0.0021 * (i - 2), 3.5])(t)
                    + rng.normal(0, 5e-6), 5e-6, 1e-5) for t in Tj]
j, coef = lot_of("J", "JN-1", "temp_k,volts,u_volts,excite_a", jrows, "vbe",
                 ["--sensor", "junction", "--v-ref", "600mV", "--dvdt", "-2.2mV/K", "--tol-v",
                  "5mV", "--tol-dvdt", "0.1mV/K"])
c = [coef[p["probe"]] for p in j["probes"]]
v1 = np.array([1e3 * (vbe(cc)(TR) - 0.600) for cc in c])
# dV/dT = (V0 - Vg0)/T_r - eta k/q (ln(T/T_r) + 1), at T = T_r
v2 = np.array([1e3 * ((cc[1] - cc[0]) / TR - cc[2] * K_B / Q_E) for cc in c])
check_stats("junction", j, v1, v2, 5.0, -2.2, 0.1)
at = np.array(j["at_k"])
dev = np.array([[1e3 * (TR + (vbe(cc)(t) - 0.600) / -2.2e-3 - t) for t in at] for cc in c])
check("junction deviation", np.array([p["deviation_mk"] for p in j["probes"]]), dev, 1e-6, 1e-6)
check("junction band", j["band_hi_mk"], 1e3 * (5e-3 + 1e-4 * np.abs(at - TR)) / 2.2e-3, 1e-9)

# the as-found drift of a junction in temperature: J-01 recalibrated half a year later reads
# 0.8 mV higher; T_old(V_new(T)) - T at the check temperatures by Newton on the junction model
old = coef["J-01"]
path = os.path.join(tmp, "J-01-recal.csv")
with open(path, "w") as f:
    f.write("temp_k,volts,u_volts,excite_a\n")
    for t in Tj:
        f.write("%r,%r,5e-06,1e-05\n" % (t, vbe(old)(t) + 0.8e-3 + rng.normal(0, 5e-6)))
cli("import", path, "--probe", "J-01", "--at", "2027-05-21T09:00:00Z")
cli("fit", "--probe", "J-01", "--model", "vbe")
p = cli("drift", "--probe", "J-01", "--json", ok=(0, 1))
d = json.loads(p.stdout)["since_previous"][0]
new = np.array(json.loads(cli("show", "fit", str(d["to_fit"]), "--json").stdout)["coefficients"])
at = np.array(d["at_k"])
want = 1e3 * (newton(vbe(old), vbe(new)(at), at) - at)
check("junction as-found drift", d["as_found_mk"], want, 1e-6, 1e-6)
check("junction as-found near -0.8 mV / 2.2 mV/K", np.mean(want), -800 / 2.2, 0.1)

# ---- silicon PTCs, model ptc, part nominal R 1000 ohm +-1 %, alpha 0.79 %/K +-2 % ---------
ptc = lambda c: (lambda t: c[0] * (1 + c[1] * (t - TR) + c[2] * (t - TR) ** 2))
Tp = np.linspace(233.15, 398.15, 9)
prows = lambda i: [(t, ptc([1000 * (1 + 0.003 * (i - 2)), 7.9e-3 * (1 + 0.004 * i), 1.9e-5])(t)
                    * (1 + rng.normal(0, 2e-6))) for t in Tp]
j, coef = lot_of("P", "PTC-1", "temp_k,ohms", prows, "ptc",
                 ["--sensor", "ptc", "--r-ref", "1000R", "--alpha", "0.79%/K", "--tol-r", "1%",
                  "--tol-alpha", "2%"])
c = [coef[p["probe"]] for p in j["probes"]]
v1 = np.array([100 * (cc[0] - 1000) / 1000 for cc in c])      # R(T_r) = R0 at T0 = T_r
v2 = np.array([1e6 * cc[1] for cc in c])                        # (1/R) dR/dT at T0 = A
check_stats("ptc", j, v1, v2, 1.0, 7900.0, 158.0)
at = np.array(j["at_k"])
dev = np.array([[1e3 * (TR + (ptc(cc)(t) / 1000 - 1) / 7.9e-3 - t) for t in at] for cc in c])
check("ptc deviation", np.array([p["deviation_mk"] for p in j["probes"]]), dev, 1e-6, 1e-6)

# ---- platinum thermometers, model cvd2 (0 .. 200 C), part R0 100 ohm, class A -------------
cvd = lambda c: (lambda tc: c[0] * (1 + c[1] * tc + c[2] * tc * tc))
tcs = np.linspace(0, 200, 9)
rrows = lambda i: [(tc, cvd([100 + 0.02 * (i - 2), 3.9083e-3 + 2e-7 * i, -5.775e-7])(tc)
                    + rng.normal(0, 2e-4)) for tc in tcs]
j, coef = lot_of("R", "PT100-A", "temp_c,ohms", rrows, "cvd2",
                 ["--sensor", "prt", "--r0-nominal", "100R", "--class", "A"])
c = [coef[p["probe"]] for p in j["probes"]]
v1 = np.array([100 * (cc[0] - 100) / 100 for cc in c])
v2 = np.array([1e6 * (cvd(cc)(100.0) - cc[0]) / (100 * cc[0]) for cc in c])
# R0's share of the class A tolerance at 0 C (0.15 K times A), and the alpha error that alone
# takes the 100 C point to the class limit there (0.35 K) with R0 exact
tol1 = 100 * 0.15 * IEC_A
tol2 = 1e6 * 0.35 * (IEC_A + 200 * IEC_B) / 100
check_stats("prt", j, v1, v2, tol1, 1e6 * (IEC_A + 100 * IEC_B), tol2)
at = np.array(j["at_k"])


def iec_t(r, r0=100.0):
    """t (C) of R on the IEC 60751 curve above 0 C: the root of B t^2 + A t + 1 - R/R0."""
    return (-IEC_A + np.sqrt(IEC_A ** 2 - 4 * IEC_B * (1 - r / r0))) / (2 * IEC_B)


dev = np.array([[1e3 * (iec_t(cvd(cc)(t - 273.15)) - (t - 273.15)) for t in at] for cc in c])
check("prt deviation", np.array([p["deviation_mk"] for p in j["probes"]]), dev, 1e-6, 1e-6)
check("prt class A band", j["band_hi_mk"], 1e3 * (0.15 + 0.002 * np.abs(at - 273.15)), 1e-12)

# ---- IC sensors reporting degC, model ic, nominal offset 0 K +-0.5 K, gain 0 +-0.5 % -----
ict = lambda c: (lambda xk: xk + c[0] + c[1] * (xk - TR) + c[2] * (xk - TR) ** 2)
Ti = np.linspace(233.15, 398.15, 10)
irows = lambda i: [(t, (t - 273.15) - (0.1 * i - 0.2) + 0.001 * i * (t - TR)
                    + rng.normal(0, 0.005)) for t in Ti]
j, coef = lot_of("I", "IC-1", "temp_k,reported_c", irows, "ic",
                 ["--sensor", "ic", "--offset", "0K", "--gain", "0%", "--tol-offset", "0.5K",
                  "--tol-gain", "0.5%"])
c = [coef[p["probe"]] for p in j["probes"]]
v1 = np.array([1e3 * cc[0] for cc in c])      # T(x) - T_r where x reports T_r: c0
v2 = np.array([100 * cc[1] for cc in c])      # dT/dT_rep - 1 there: c1
check_stats("ic", j, v1, v2, 500.0, 0.0, 0.5)
at = np.array(j["at_k"])
# the reported temperature at each true T (the fitted correction inverted), read through the
# nominal correction (offset 0, gain 0): the deviation is T_rep - T
dev = np.array([[1e3 * (newton(ict(cc), t, t) - t) for t in at] for cc in c])
check("ic deviation", np.array([p["deviation_mk"] for p in j["probes"]]), dev, 1e-6, 1e-6)

# ---- a wrong kind's value is refused, naming the option, and nothing is written ----------
before = open(DB, "rb").read()
p = cli("part", "set", "JN-1", "--sensor", "junction", "--r-ref", "1k", ok=(64,))
if "--r-ref is a ptc part's nominal value" not in p.stderr:
    failures += 1
    print("xcheck_lots FAIL wrong kind's option: %s" % p.stderr.strip())
p = cli("part", "set", "JN-1", "--sensor", "junction", "--v-ref", "600mV", "--dvdt",
        "-2.2mV/K", "--tol-v", "5mV", "--tol-dvdt", "0.1mV/K", "--model", "sh3", "--coef",
        "1e-3,2e-4,1e-7", ok=(65,))
if "must be a model of a voltage" not in p.stderr:
    failures += 1
    print("xcheck_lots FAIL an NTC curve for a junction part: %s" % p.stderr.strip())
if open(DB, "rb").read() != before:
    failures += 1
    print("xcheck_lots FAIL a refused part set changed the database")

print("xcheck_lots: %d failures" % failures)
sys.exit(1 if failures else 0)
