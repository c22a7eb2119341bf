#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Lookup tables of every sensor kind, recomputed independently: 'bandgap lut --format codes'
(what the emitted function returns at every ADC code) and '--format json' (the range and the
reported error) for tables of a platinum thermometer (IEC 60751 nominal coefficients,
../shared/refdata/REFERENCES.md section 3), silicon PTCs, junctions (the junction model with
the exact CODATA 2018 k and e, a pair at a current ratio, a Chebyshev series summed by
numpy.polynomial.chebyshev) and IC sensors, each on its front end.  The front-end algebra is
written out here afresh (divider, current source, leads, amplifier gain and offset, the IC's
offset-binary word), the exact temperature at every code is found with scipy.optimize.brentq
on the model's forward equation (or evaluated directly where the model gives T of the
reading), and the error at EVERY code of the range is compared with the table's.  The sensor
coefficients other than IEC 60751's are invented.  One line per failure; exit 1 on any."""
import json
import math
import subprocess
import sys

import numpy as np
from numpy.polynomial import Chebyshev
from scipy.optimize import brentq

BIN = sys.argv[1]
failures = 0
K_B = 1.380649e-23       # J/K, exact (2019 SI; CODATA 2018)
Q_E = 1.602176634e-19    # C, exact (2019 SI; CODATA 2018)
KQ = K_B / Q_E
ZERO_C = 273.15          # K, exact (ITS-90: t/degC = T/K - 273.15)
IEC = (3.9083e-3, -5.775e-7, -4.183e-12)  # IEC 60751 A, B, C (REFERENCES.md section 3)


def fail(msg):
    global failures
    failures += 1
    print("xcheck_lut_kinds FAIL " + msg)


# ---- the sensors' forward equations: reading at temperature T (K) ----

def cvd_r(T, r0, a, b, c=0.0):
    t = T - ZERO_C
    r = 1.0 + a * t + b * t * t
    if t < 0.0:
        r += c * (t - 100.0) * t ** 3
    return r0 * r


def ptc_r(T, r0, a, b, t0):
    d = T - t0
    return r0 * (1.0 + a * d + b * d * d)


def vbe_v(T, vg0, v0, eta, t0):
    return vg0 * (1.0 - T / t0) + v0 * T / t0 - eta * KQ * T * math.log(T / t0)


def inverse(f, lo, hi):
    """T in lo .. hi K with f(T) = 0, to 1e-12 K."""
    return lambda x: brentq(lambda T: f(T) - x, lo, hi, xtol=1e-12, rtol=1e-15, maxiter=500)


# ---- the front ends, written out here: code <-> reading ----

def fs_of(fe):
    n = 2.0 ** fe["bits"]
    return n if fe.get("pow2", True) else n - 1.0


def arm_of_branch(fe, rb):
    """The sensor's resistance from the branch: series off, parallel off, leads off."""
    r = rb - fe.get("series", 0.0)
    if fe.get("parallel"):
        r = 1.0 / (1.0 / r - 1.0 / fe["parallel"])
    return r - fe.get("leads", 0.0)


def branch_of_sensor(fe, r):
    r = r + fe.get("leads", 0.0)
    if fe.get("parallel"):
        r = r * fe["parallel"] / (r + fe["parallel"])
    return r + fe.get("series", 0.0)


def reading_of_code(fe, code):
    kind = fe["kind"]
    if kind == "ohms":
        return code * fe["opc"] - fe.get("leads", 0.0)
    if kind == "device":
        return (code - 2.0 ** (fe["bits"] - 1)) * fe["lsb"]
    x = code / fs_of(fe)
    if kind == "junction":
        return (x * fe["vref"] - fe.get("offset", 0.0)) / fe["gain"]
    if kind == "current":
        rb = x * fe["vref"] / fe["current"]
    elif kind == "low":
        rb = fe["fixed"] * x / (1.0 - x)
    else:  # high
        rb = fe["fixed"] * (1.0 - x) / x
    return arm_of_branch(fe, rb)


def code_of_reading(fe, r):
    kind = fe["kind"]
    if kind == "ohms":
        return (r + fe.get("leads", 0.0)) / fe["opc"]
    if kind == "device":
        return r / fe["lsb"] + 2.0 ** (fe["bits"] - 1)
    if kind == "junction":
        return (fe["gain"] * r + fe.get("offset", 0.0)) / fe["vref"] * fs_of(fe)
    rb = branch_of_sensor(fe, r)
    if kind == "current":
        x = fe["current"] * rb / fe["vref"]
    elif kind == "low":
        x = rb / (rb + fe["fixed"])
    else:
        x = fe["fixed"] / (rb + fe["fixed"])
    return x * fs_of(fe)


def run(args):
    p = subprocess.run([BIN, "lut"] + args, capture_output=True, text=True)
    if p.returncode != 0:
        fail("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr.strip()))
        return None
    return p.stdout


def case(name, args, fe, x_of_t, t_of_x, t_lo_c, t_hi_c, per_degree, bound=None):
    """Build the table, then check its range and its error at every code against the
    temperatures computed here."""
    rng = ["--range", "%gC:%gC" % (t_lo_c, t_hi_c)]
    js = run(args + rng + ["--format", "json"])
    codes = run(args + rng + ["--format", "codes"])
    if js is None or codes is None:
        return
    d = json.loads(js)
    c1 = code_of_reading(fe, x_of_t(t_lo_c + ZERO_C))
    c2 = code_of_reading(fe, x_of_t(t_hi_c + ZERO_C))
    lo, hi = math.ceil(min(c1, c2)), math.floor(max(c1, c2))
    if (d["code_lo"], d["code_hi"]) != (lo, hi):
        fail("%s: codes %d .. %d, computed here %d .. %d" % (name, d["code_lo"], d["code_hi"],
                                                              lo, hi))
        return
    rows = [ln.split(",") for ln in codes.splitlines() if ln and ln[0].isdigit()]
    # every code of the converter (a resistance input: up to one past the range)
    ncodes = hi + 2 if fe["kind"] == "ohms" else 2 ** fe["bits"]
    if len(rows) != ncodes:
        fail("%s: %d codes listed, not %d" % (name, len(rows), ncodes))
        return
    errs = []
    for c, v, st in rows:
        c = int(c)
        want = "below" if c < lo else "above" if c > hi else "in"
        if st != want:
            fail("%s: code %d status %s, not %s" % (name, c, st, want))
            return
        if want != "in":
            continue
        t_exact = t_of_x(reading_of_code(fe, float(c)))
        errs.append(float(v) / per_degree + ZERO_C - t_exact)
    errs = np.array(errs)
    mx, rms = np.max(np.abs(errs)), math.sqrt(np.mean(errs * errs))
    # the library's inverse and brentq's agree far below the 1e-6 K allowed here
    if abs(mx - d["max_error_c"]) > 1e-6 or abs(rms - d["rms_error_c"]) > 1e-6:
        fail("%s: max %.9f rms %.9f K, computed here %.9f %.9f" % (name, d["max_error_c"],
                                                                   d["rms_error_c"], mx, rms))
    if abs(abs(errs[d["worst_code"] - lo]) - mx) > 1e-6:
        fail("%s: worst code %d is not where the largest error is" % (name, d["worst_code"]))
    if bound is not None and not mx <= bound + 1e-12:
        fail("%s: error %.6f K beyond the bound %.6f K" % (name, mx, bound))
    # the temperatures run one way along the codes (the kind's guard rail)
    t_codes = np.array([t_of_x(reading_of_code(fe, float(c))) for c in (lo, (lo + hi) // 2, hi)])
    if not (np.all(np.diff(t_codes) > 0) or np.all(np.diff(t_codes) < 0)):
        fail("%s: temperatures not monotonic along the codes" % name)
    budget(name, fe, d)
    print("xcheck_lut_kinds ok %s: codes %d .. %d, max %.4f K over every code" % (name, lo, hi,
                                                                                  mx))


def budget(name, fe, d):
    """The fixed resistor's term applies to a divider only: elsewhere it is null, the reason
    is given, and the RSS and the sum are those of the other terms given, recomputed here."""
    divider = fe["kind"] in ("low", "high")
    why = d.get("fixed_resistor_not_applicable", "missing")
    if divider != (why is None) or (not divider and not isinstance(why, str)):
        fail("%s: fixed_resistor_not_applicable is %r for a %s front end" % (name, why,
                                                                             fe["kind"]))
    for row in d["budget"]:
        if not divider and row["fixed_resistor_k"] is not None:
            fail("%s: the fixed resistor term is %r where no resistor exists" % (
                name, row["fixed_resistor_k"]))
        if "at" in row:  # the worst row: each column's own largest over the codes
            continue
        terms = [row[k] for k in ("table_k", "adc_k", "fit_U_k", "fixed_resistor_k",
                                  "self_heating_k") if row[k] is not None]
        rss, total = math.sqrt(math.fsum(v * v for v in terms)), math.fsum(terms)
        if abs(rss - row["rss_k"]) > 1e-12 * max(1.0, rss) or \
           abs(total - row["sum_k"]) > 1e-12 * max(1.0, total):
            fail("%s: budget RSS %.15g sum %.15g, computed here %.15g %.15g" % (
                name, row["rss_k"], row["sum_k"], rss, total))


# 1. Pt100, IEC 60751 nominal, 1 mA into a 0.5 V reference, 16 bits, 0.8 ohm 2-wire loop
pt = lambda T: cvd_r(T, 100.0, *IEC)
case("cvd pt100 current leads", ["--model", "cvd", "--coef", "100,3.9083e-3,-5.775e-7,-4.183e-12",
                                 "--current", "1mA", "--vref", "0.5V", "--adc-bits", "16",
                                 "--leads", "0.8R", "--max-error", "0.05C"],
     {"kind": "current", "current": 1e-3, "vref": 0.5, "bits": 16, "leads": 0.8},
     pt, inverse(pt, 20.0, 1200.0), -50.0, 200.0, 100.0, 0.05)

# 2. Pt1000 (cvd2, IEC A and B) low in a 1k divider with 10 ohm series and 2 ohm of leads
pt1k = lambda T: cvd_r(T, 1000.0, IEC[0], IEC[1])
case("cvd2 pt1000 divider leads", ["--model", "cvd2", "--coef", "1000,3.9083e-3,-5.775e-7",
                                   "--fixed", "1k", "--series", "10R", "--leads", "2R",
                                   "--step", "16", "--resolution", "q8"],
     {"kind": "low", "fixed": 1000.0, "series": 10.0, "leads": 2.0, "bits": 12},
     pt1k, inverse(pt1k, 273.15, 1200.0), 0.0, 150.0, 256.0)

# 3. a silicon PTC (invented R25 1000 ohm, A 7.8e-3/K, B 1.9e-5/K^2) on the high side of a
#    2k divider with 50k across it and 1.5 ohm of leads
ptc = lambda T: ptc_r(T, 1000.0, 7.8e-3, 1.9e-5, 298.15)
case("ptc high parallel leads", ["--model", "ptc", "--coef", "1000,7.8e-3,1.9e-5", "--t0", "25C",
                                 "--fixed", "2k", "--sensor-side", "high", "--parallel", "50k",
                                 "--leads", "1.5R", "--max-error", "0.1C", "--strategy",
                                 "minimal"],
     {"kind": "high", "fixed": 2000.0, "parallel": 50000.0, "leads": 1.5, "bits": 12},
     ptc, inverse(ptc, 150.0, 600.0), -40.0, 125.0, 100.0, 0.1)

# 4. the linear PTC form on a resistance input of 0.1 ohm per code with leads (16 bits)
ptcl = lambda T: ptc_r(T, 2000.0, 7.7e-3, 0.0, 298.15)
case("ptc-lin ohms input", ["--model", "ptc-lin", "--coef", "2000,7.7e-3", "--t0", "25C",
                            "--ohms-input", "--ohms-per-code", "0.1R", "--leads", "0.5R",
                            "--max-error", "0.02C", "--resolution", "0.001", "--strategy",
                            "indexed"],
     {"kind": "ohms", "opc": 0.1, "leads": 0.5},
     ptcl, inverse(ptcl, 150.0, 600.0), -20.0, 120.0, 1000.0, 0.02)

# 5. a junction (vbe: invented Vg0 1.2 V, V0 0.6 V at 25 degC, eta 3.5) through an inverting
#    amplifier V_adc = 2.2 V - 1.5 V, 12 bits, full scale 2^N - 1
vbe = lambda T: vbe_v(T, 1.2, 0.6, 3.5, 298.15)
case("vbe inverting", ["--model", "vbe", "--coef", "1.2,0.6,3.5", "--t0", "25C", "--vref", "2.5V",
                       "--gain", "-1.5", "--offset", "2.2V", "--full-scale", "pow2-1",
                       "--current", "10uA", "--max-error", "0.2C", "--strategy", "minimal"],
     {"kind": "junction", "gain": -1.5, "offset": 2.2, "vref": 2.5, "bits": 12, "pow2": False},
     vbe, inverse(vbe, 100.0, 600.0), -40.0, 125.0, 100.0, 0.2)

# 6. the same junction, gain 2 and -0.1 V, in float
case("vbe float", ["--model", "vbe", "--coef", "1.2,0.6,3.5", "--t0", "25C", "--vref", "2.5V",
                   "--gain", "2", "--offset", "-0.1V", "--adc-bits", "14", "--max-error", "0.05C",
                   "--resolution", "float", "--strategy", "indexed"],
     {"kind": "junction", "gain": 2.0, "offset": -0.1, "vref": 2.5, "bits": 14},
     vbe, inverse(vbe, 100.0, 600.0), -40.0, 125.0, 1.0, 0.05)

# 7. a junction pair (dvbe: invented gain 1.02, offset 0.1 mV, p = 8): T from V in closed form
dv = lambda T: 1.02 * KQ * math.log(8.0) * T + 1e-4
case("dvbe p8", ["--model", "dvbe", "--coef", "1.02,1e-4", "--param", "p=8", "--vref", "3.3V",
                 "--gain", "30", "--offset", "0.1V", "--adc-bits", "16", "--step", "1024",
                 "--resolution", "q6"],
     {"kind": "junction", "gain": 30.0, "offset": 0.1, "vref": 3.3, "bits": 16},
     dv, lambda v: (v - 1e-4) / (1.02 * KQ * math.log(8.0)), -40.0, 125.0, 64.0)

# 8. a Chebyshev series in volts (cheb:3, invented coefficients on 0.4 .. 0.75 V), summed by
#    numpy's Chebyshev class on that domain
ch = Chebyshev([315.0, -85.0, 1.0, 0.3], domain=[0.4, 0.75])
case("cheb3 volts", ["--model", "cheb:3", "--coef", "315,-85,1,0.3", "--param", "x_lo=0.4",
                     "--param", "x_hi=0.75", "--vref", "1V", "--max-error", "0.1C",
                     "--strategy", "indexed"],
     {"kind": "junction", "gain": 1.0, "vref": 1.0, "bits": 12},
     lambda T: brentq(lambda v: ch(v) - T, 0.2, 1.0, xtol=1e-15),
     lambda v: float(ch(v)), -20.0, 100.0, 100.0, 0.1)

# 9. an IC sensor reporting degC in 1/16 degC, 13-bit word (invented trims 0.3 K, 0.002,
#    1e-5 /K about 25 degC): T = T_rep + c0 + c1 d + c2 d^2
def ic_t(trep_k):
    d = trep_k - 298.15
    return trep_k + 0.3 + 0.002 * d + 1e-5 * d * d


ic_rep = inverse(ic_t, 150.0, 500.0)   # T_rep (K) of a true T
case("ic reported 13 bit", ["--model", "ic", "--coef", "0.3,0.002,1e-5", "--t0", "25C",
                            "--device-bits", "13", "--device-lsb", "0.0625C", "--step", "1"],
     {"kind": "device", "bits": 13, "lsb": 0.0625},
     lambda T: ic_rep(T) - ZERO_C, lambda x: ic_t(x + ZERO_C), -40.0, 125.0, 100.0)

# 10. an IC sensor's code (1/128 K per count, 16-bit word)
case("ic-code 16 bit", ["--model", "ic-code", "--coef", "0.3,0.002,1e-5", "--t0", "25C",
                        "--param", "lsb_k=0.0078125", "--device-bits", "16", "--max-error",
                        "0.01C", "--resolution", "0.001", "--strategy", "minimal"],
     {"kind": "device", "bits": 16, "lsb": 1.0},
     lambda T: (ic_rep(T) - ZERO_C) / 0.0078125,
     lambda n: ic_t(n * 0.0078125 + ZERO_C), -40.0, 125.0, 1000.0, 0.01)


# ---- a table rebuilt from its own header ----
# The C and CSV headers name the model with every coefficient and held parameter (a Chebyshev
# series' x_lo and x_hi, a junction pair's current ratio p), the circuit, the range, the
# resolution and the strategy.  Each is parsed here, the table made again from those words
# alone through an inline 'lut', and the two outputs must be the same bytes.
NUM = r"[-+0-9.eE]+"


def header_args(text, fmt):
    """The lut arguments a header states (C: ' * ' lines; CSV: '# ' lines)."""
    import re
    m = re.search(r"model (\S+) \(given inline\):([^;\n]*)", text)
    if not m:
        return None
    kind, words = m.group(1), m.group(2).split()
    coefs, params, t0 = [], [], None
    for w in words:
        if w == "K":
            continue
        k, v = w.split("=")
        if k == "T0":
            t0 = v
        elif k in ("x_lo", "x_hi", "p", "lsb_k"):  # the kinds' held parameters
            params += ["--param", "%s=%s" % (k, v)]
        else:
            coefs.append(v)
    args = ["--model", kind, "--coef", ",".join(coefs)] + params
    if t0 is not None:
        args += ["--t0", t0 + "K"]
    c = re.search(r"V_adc = (%s) V ([+-]) (%s) V, reference (%s) V, (\d+)-bit ADC, "
                  r"full scale 2\^N( - 1)?" % (NUM, NUM, NUM), text)
    if not c:
        return None
    args += ["--gain", c.group(1), "--offset", ("-" if c.group(2) == "-" else "") + c.group(3)
             + "V", "--vref", c.group(4) + "V", "--adc-bits", c.group(5), "--full-scale",
             "pow2-1" if c.group(6) else "pow2"]
    r = re.search(r"range: (%s) \.\. (%s) degC" % (NUM, NUM), text)
    args += ["--range", "%sC:%sC" % (r.group(1), r.group(2))]
    if fmt == "c":
        res = re.search(r"temperature, (0\.0*1) degC per count", text)
        u = re.search(r"every (\d+) codes \(uniform table\)", text)
        seg = re.search(r"\((minimal|indexed) table.*?within (%s) K" % NUM, text, re.S)
    else:
        res = re.search(r"in (0\.0*1) degC", text)
        u = re.search(r"uniform: breakpoints every (\d+) codes", text)
        seg = None  # (the CSV cases here are uniform tables)
    args += ["--resolution", res.group(1)]
    if u:
        args += ["--step", u.group(1)]
    elif fmt == "c":
        args += ["--strategy", seg.group(1), "--max-error", seg.group(2) + "K"]
    return args


def rebuilt(name, args, fmt, extra=()):
    first = run(args + ["--format", fmt] + list(extra))
    if first is None:
        return
    again_args = header_args(first, fmt)
    if again_args is None:
        fail("%s: the %s header does not name the model and circuit" % (name, fmt))
        return
    again = run(again_args + ["--format", fmt] + list(extra))
    if again != first:
        fail("%s: the table rebuilt from its %s header differs (%s)" % (name, fmt,
                                                                        " ".join(again_args)))
        return
    print("xcheck_lut_kinds ok %s: rebuilt byte for byte from its %s header" % (name, fmt))


CHEB = ["--model", "cheb:3", "--coef", "315,-85,1,0.3", "--param", "x_lo=0.4", "--param",
        "x_hi=0.75", "--vref", "1V", "--range", "-20C:100C"]
rebuilt("cheb3 indexed", CHEB + ["--max-error", "0.1C", "--strategy", "indexed"], "c")
rebuilt("cheb3 uniform", CHEB + ["--step", "64"], "csv")
rebuilt("cheb3 uniform", CHEB + ["--step", "64"], "c")
DVBE = ["--model", "dvbe", "--coef", "1.02,1e-4", "--param", "p=8", "--vref", "3.3V", "--gain",
        "30", "--offset", "0.1V", "--adc-bits", "16", "--range", "-40C:125C", "--step", "1024"]
rebuilt("dvbe p8", DVBE, "c")
rebuilt("dvbe p8", DVBE, "csv")

sys.exit(1 if failures else 0)
