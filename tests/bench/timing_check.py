# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Checks of tests/bench/timing.py, the bench's timing helper (run by make check; no time is
asserted here, only the helper's order of runs, its arithmetic and its reports).  Prints
'ok NAME' or 'not ok NAME' per check.  Check values come from numpy (median, polyfit)."""
import os
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import timing  # noqa: E402

failed = 0


def check(name, cond, detail=""):
    global failed
    print(("ok " if cond else "not ok ") + name + ("" if cond else ": " + detail))
    failed += 0 if cond else 1


def helper(*args):
    p = subprocess.run([sys.executable, os.path.join(HERE, "timing.py")] + list(args),
                       capture_output=True, text=True)
    return p.returncode, p.stdout + p.stderr


tmp = tempfile.mkdtemp(prefix="timing-check-")
log = os.path.join(tmp, "log")

# Interleaving: every round runs both once, the figure first in even rounds; setup before each.
rc, text = helper("pair", "--rounds", "6", "--label", "order", "--setup", "echo S >> " + log,
                  "echo F >> " + log, "echo A >> " + log)
with open(log) as f:
    seq = "".join(f.read().split())
check("pair_interleaves", seq == "SFSA" "SASF" "SFSA" "SASF" "SFSA" "SASF", seq)
check("pair_reports_rounds", rc == 0 and "order: ratio " in text and "6 rounds" in text, text)
# The load average beside the figure: the smallest and largest 1-minute load seen over the
# rounds (os.getloadavg), the smaller first.
lo_hi = text.split("; load ")[1].split(";")[0].split("..") if "; load " in text else []
check("pair_reports_load", len(lo_hi) == 2 and 0.0 <= float(lo_hi[0]) <= float(lo_hi[1]),
      text)

# The summary: median and range of the per-round ratios (numpy's median as the check).
tf = [1.0, 4.0, 2.5, 3.0, 9.0, 2.0]
ta = [0.5, 1.0, 2.0, 1.5, 3.0, 1.0]
mf, ma, mr, lo, hi = timing.summarize(tf, ta)
r = np.array(tf) / np.array(ta)
check("summary_median_range",
      (mf, ma, mr, lo, hi) == (np.median(tf), np.median(ta), np.median(r), r.min(), r.max()),
      repr((mf, ma, mr, lo, hi)))

# The slope: least squares of log t on log n, against numpy.polyfit.
n = [1e3, 1e4, 1e5, 1e6]
t = [2e-6 * x ** 1.3 * k for x, k in zip(n, [1.1, 0.9, 1.05, 0.97])]
want = np.polyfit(np.log(n), np.log(t), 1)[0]
check("slope_least_squares", abs(timing.lsq_slope(n, t) - want) < 1e-12,
      "%r vs %r" % (timing.lsq_slope(n, t), want))

# Targets and verdicts, the record and the slope line.
rec = os.path.join(tmp, "rec.tsv")
rc, text = helper("pair", "--label", "fast", "--target", "le:1e9", "--record", rec,
                  "--key", "k", "--size", "10", "true", "true")
check("pair_pass", "target ratio <= 1e+09: PASS" in text, text)
rc, text = helper("pair", "--label", "slow", "--target", "lt:0.000001", "true", "true")
check("pair_miss", "target ratio < 1e-06: MISS" in text, text)
rc, text = helper("pair", "--rounds", "4", "true", "true")
check("pair_refuses_fewer_than_5_rounds", rc != 0, text)
rc, text = helper("pair", "--label", "bad", "sh -c 'echo broken >&2; exit 3'", "true")
check("pair_reports_failure", "bad: FAILED (exit status 3: broken)" in text, text)
rc, text = helper("pair", "--label", "flag", "--ok-rc", "0,1", "exit 1", "true")
check("pair_accepts_ok_rc", "flag: ratio" in text, text)
rc, text = helper("pair", "--label", "stop", "--timeout", "0.2", "--record", rec, "--key", "k",
                  "--size", "1000", "sleep 30", "true")
check("pair_stops_at_timeout", "stop: figure did not finish in 0.2 s (stopped)" in text, text)
rc, text = helper("slope", "--record", rec, "--key", "k", "--label", "grow", "--unit", "n")
check("slope_lower_bound_when_stopped",
      "grow: log-log slope of the time over n 10, 1000: >= " in text and "MISS" in text, text)

# Peak RSS through /usr/bin/time -v: a child holding 64 MiB shows at least that.
hold = "%s -c 'b = bytearray(64 << 20); b[::4096] = b\"x\" * len(b[::4096])'" % sys.executable
rc, text = helper("rss", "--label", "mem", "--max-rss-mb", "32", hold, "true")
mb = float(text.split("peak RSS ")[1].split(" MB")[0]) if "peak RSS " in text else 0.0
check("rss_measures_child", mb >= 64 and "target < 32 MB: MISS" in text, text)

sys.exit(1 if failed else 0)
