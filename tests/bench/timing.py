# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""make bench: time a command against its anchor, side by side, in interleaved rounds.

  timing.py pair  [options] FIGURE ANCHOR   FIGURE and ANCHOR are shell commands (sh -c)
  timing.py rss   [--label T] [--setup CMD] [--max-rss-mb X] [--timeout S] FIGURE ANCHOR
  timing.py slope --record FILE --key KEY [--target MAX] [--label T] [--unit WORD]

pair runs, each round, the figure and the anchor once, alternating which goes first (the
machine's speed drifts over seconds, so side by side means interleaved); before each
command it runs --setup (untimed; e.g. a fresh copy of a database the command writes). It
prints the median and the range (min..max) of the per-round ratio figure/anchor, the
median times, the machine's 1-minute load average (smallest..largest, read before the first
round and after each), the target and PASS or MISS.  Options:
  --label TEXT       what is measured (printed)
  --rounds N         rounds (default 5; fewer than 5 is refused)
  --setup CMD        run before every timed command, untimed
  --target OP:X      the ratio's target, e.g. le:3 (<= 3), ge:1.5, lt:1
  --max-s X          the figure's median time must be below X seconds
  --max-rss-mb X     the figure's peak RSS must be below X MB
  --rss              measure peak RSS of both with /usr/bin/time -v (package 'time')
  --ok-rc LIST       exit statuses that count as success (default 0; drift --lot: 0,1)
  --timeout S        stop a command after S seconds; the pair then ends and its figure is
                     reported as more than S seconds (default 600)
  --record FILE --key KEY --size N
                     append the medians to FILE, for 'slope'
rss runs each command once (after --setup) under /usr/bin/time -v and prints their peak
resident set sizes: for sizes where five rounds would take too long and only memory counts.
slope fits log(time) = a + b log(size) by least squares over the recorded sizes of KEY and
prints b for the figure and for the anchor; a size whose figure was stopped makes the
slope a lower bound.  Exit status 0 unless the helper itself is misused (a MISS or a failed
command is printed, not fatal, so that one path does not hide the others).
"""
import math
import os
import re
import signal
import statistics
import subprocess
import sys
import tempfile
import threading
import time

OPS = {"le": ("<=", lambda a, b: a <= b), "lt": ("<", lambda a, b: a < b),
       "ge": (">=", lambda a, b: a >= b), "gt": (">", lambda a, b: a > b)}


class Stopped(Exception):
    pass


class Failed(Exception):
    pass


def run_once(cmd, timeout, rss, ok_rc):
    """Run 'cmd' under sh; return (seconds, peak RSS in kB or None)."""
    tf = None
    argv = ["sh", "-c", cmd]
    if rss:
        fd, tf = tempfile.mkstemp(prefix="bench-rss-")
        os.close(fd)
        argv = ["/usr/bin/time", "-v", "-o", tf] + argv
    err = tempfile.TemporaryFile()
    t0 = time.perf_counter()
    p = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=err, start_new_session=True)
    # A blocking wait, with a timer to stop the command: Popen.wait(timeout) polls with a
    # growing sleep (up to 50 ms), which would round every time up to its next poll.
    stop = threading.Timer(timeout, os.killpg, (p.pid, signal.SIGKILL))  # our child's group
    stop.start()
    rc = p.wait()
    dt = time.perf_counter() - t0
    stop.cancel()
    if rc == -signal.SIGKILL or (rc == 128 + signal.SIGKILL and dt >= timeout):
        raise Stopped()
    kb = None
    if tf:
        with open(tf) as f:
            text = f.read()
        os.unlink(tf)
        m = re.search(r"Maximum resident set size \(kbytes\): (\d+)", text)
        kb = int(m.group(1)) if m else None
        m = re.search(r"Command exited with non-zero status (\d+)", text)
        rc = int(m.group(1)) if m else rc
    if rc not in ok_rc:
        err.seek(0)
        tail = err.read().decode(errors="replace").strip().splitlines()[-3:]
        raise Failed("exit status %d: %s" % (rc, " | ".join(tail)))
    return dt, kb


def setup(cmd):
    if cmd:
        subprocess.run(["sh", "-c", cmd], check=True)


def fmt_s(x):
    return "%.3g s" % x if x < 100 else "%.0f s" % x


def parse_target(t):
    op, x = t.split(":")
    return op, float(x)


def summarize(tf, ta):
    """Median figure and anchor times, and the median, min and max of the per-round ratio."""
    ratios = [f / a for f, a in zip(tf, ta)]
    return (statistics.median(tf), statistics.median(ta), statistics.median(ratios),
            min(ratios), max(ratios))


def pair(args):
    opt = {"label": "", "rounds": "5", "setup": "", "target": "", "max-s": "",
           "max-rss-mb": "", "ok-rc": "0", "timeout": "600", "record": "", "key": "",
           "size": ""}
    rss = False
    pos = []
    i = 0
    while i < len(args):
        a = args[i]
        if a == "--rss":
            rss = True
        elif a.startswith("--") and a[2:] in opt and i + 1 < len(args):
            opt[a[2:]] = args[i + 1]
            i += 1
        else:
            pos.append(a)
        i += 1
    rounds = int(opt["rounds"])
    if len(pos) != 2 or rounds < 5:
        sys.exit("usage: timing.py pair [--label T] [--rounds N>=5] [--setup CMD] "
                 "[--target OP:X] [--rss] ... FIGURE ANCHOR")
    fig, anc = pos
    ok_rc = {int(x) for x in opt["ok-rc"].split(",")}
    timeout = float(opt["timeout"])
    tf, ta, ratios, rf, ra = [], [], [], [], []
    loads = [os.getloadavg()[0]]
    state = "ok"
    why = ""
    try:
        for r in range(rounds):
            order = [(fig, tf, rf), (anc, ta, ra)]
            if r % 2:
                order.reverse()
            for cmd, times, rsss in order:
                setup(opt["setup"])
                dt, kb = run_once(cmd, timeout, rss, ok_rc)
                times.append(dt)
                rsss.append(kb)
            ratios.append(tf[-1] / ta[-1])
            loads.append(os.getloadavg()[0])
    except Stopped:
        state = "stopped"
    except Failed as e:
        state, why = "failed", str(e)
    label = opt["label"]
    tgt = ""
    verdicts = []
    if opt["target"]:
        op, x = parse_target(opt["target"])
        tgt = "ratio %s %g" % (OPS[op][0], x)
    if opt["max-s"]:
        tgt += (", " if tgt else "") + "< %g s" % float(opt["max-s"])
    if opt["max-rss-mb"]:
        tgt += (", " if tgt else "") + "peak RSS < %g MB" % float(opt["max-rss-mb"])
    load = "load %.2f..%.2f" % (min(loads), max(loads))
    if state == "failed":
        print("%s: FAILED (%s)" % (label, why))
        return 0
    if state == "stopped" and not ratios:
        done = ta[0] if ta else None
        print("%s: figure did not finish in %s (stopped)%s; %s; target %s: MISS" % (
            label, fmt_s(timeout),
            ", anchor %s" % fmt_s(done) if done else "", load,
            tgt or "none"))
        record(opt, timeout, done, math.inf, "stopped")
        return 0
    mf, ma, mr, lo, hi = summarize(tf[:len(ratios)], ta[:len(ratios)])
    if opt["target"]:
        op, x = parse_target(opt["target"])
        verdicts.append(OPS[op][1](mr, x))
    if opt["max-s"]:
        verdicts.append(mf < float(opt["max-s"]))
    line = "%s: ratio %.3g (range %.3g..%.3g, %d rounds); figure %s, anchor %s (medians); %s" % (
        label, mr, lo, hi, len(ratios), fmt_s(mf), fmt_s(ma), load)
    if rss:
        kf = max(k for k in rf if k is not None) / 1024.0
        ka = max(k for k in ra if k is not None) / 1024.0
        line += "; peak RSS %.1f MB, anchor %.1f MB" % (kf, ka)
        if opt["max-rss-mb"]:
            verdicts.append(kf < float(opt["max-rss-mb"]))
    if state == "stopped":
        line += "; stopped after %d rounds (a run over %s)" % (len(ratios), fmt_s(timeout))
        verdicts.append(False)
    if verdicts:
        line += "; target %s: %s" % (tgt, "PASS" if all(verdicts) else "MISS")
    print(line)
    record(opt, mf, ma, mr, state)
    return 0


def rss_once(args):
    opt = {"label": "", "setup": "", "max-rss-mb": "", "timeout": "600", "ok-rc": "0"}
    pos = []
    i = 0
    while i < len(args):
        if args[i].startswith("--") and args[i][2:] in opt and i + 1 < len(args):
            opt[args[i][2:]] = args[i + 1]
            i += 2
        else:
            pos.append(args[i])
            i += 1
    if len(pos) != 2:
        sys.exit("usage: timing.py rss [--label T] [--setup CMD] [--max-rss-mb X] FIGURE ANCHOR")
    ok_rc = {int(x) for x in opt["ok-rc"].split(",")}
    res = []
    try:
        for cmd in pos:
            setup(opt["setup"])
            res.append(run_once(cmd, float(opt["timeout"]), True, ok_rc))
    except Stopped:
        print("%s: stopped after %s s; target peak RSS < %s MB: MISS" % (
            opt["label"], opt["timeout"], opt["max-rss-mb"] or "-"))
        return 0
    except Failed as e:
        print("%s: FAILED (%s)" % (opt["label"], e))
        return 0
    (tf, kf), (ta, ka) = res
    line = "%s: peak RSS %.1f MB in %s, anchor %.1f MB in %s (one run each)" % (
        opt["label"], kf / 1024.0, fmt_s(tf), ka / 1024.0, fmt_s(ta))
    if opt["max-rss-mb"]:
        x = float(opt["max-rss-mb"])
        line += "; target < %g MB: %s" % (x, "PASS" if kf / 1024.0 < x else "MISS")
    print(line)
    return 0


def record(opt, tf, ta, ratio, state):
    if not opt["record"]:
        return
    with open(opt["record"], "a") as f:
        f.write("%s\t%s\t%r\t%r\t%r\t%s\n" % (opt["key"], opt["size"], tf, ta, ratio, state))


def lsq_slope(xs, ys):
    lx = [math.log(x) for x in xs]
    ly = [math.log(y) for y in ys]
    mx, my = statistics.fmean(lx), statistics.fmean(ly)
    sxx = sum((a - mx) ** 2 for a in lx)
    return sum((a - mx) * (b - my) for a, b in zip(lx, ly)) / sxx


def slope(args):
    opt = {"record": "", "key": "", "target": "1.1", "label": "", "unit": "size"}
    i = 0
    while i + 1 < len(args):
        opt[args[i].lstrip("-")] = args[i + 1]
        i += 2
    rows = []
    with open(opt["record"]) as f:
        for ln in f:
            k, n, t_f, t_a, _, st = ln.rstrip("\n").split("\t")
            if k == opt["key"]:
                rows.append((float(n), float(t_f), None if t_a == "None" else float(t_a), st))
    label = opt["label"] or opt["key"]
    rows.sort()
    if len(rows) < 2:
        print("%s: growth needs two sizes at least" % label)
        return 0
    xs = [r[0] for r in rows]
    bf = lsq_slope(xs, [r[1] for r in rows])
    stopped = any(r[3] == "stopped" for r in rows)
    anc = [r for r in rows if r[2]]
    ba = lsq_slope([r[0] for r in anc], [r[2] for r in anc]) if len(anc) >= 2 else None
    sizes = ", ".join("%g" % x for x in xs)
    target = float(opt["target"])
    ok = bf <= target and not stopped
    top = lsq_slope(xs[-2:], [r[1] for r in rows[-2:]])
    print("%s: log-log slope of the time over %s %s: %s%.2f (the top two sizes alone %s%.2f)%s;"
          " target <= %g: %s" % (
              label, opt["unit"], sizes, ">= " if stopped else "", bf,
              ">= " if stopped else "", top,
              ", anchor %.2f" % ba if ba is not None else "", target, "PASS" if ok else "MISS"))
    return 0


def main():
    cmds = {"pair": pair, "rss": rss_once, "slope": slope}
    if len(sys.argv) < 2 or sys.argv[1] not in cmds:
        sys.exit("usage: timing.py pair|rss|slope ... (see the comment at the top)")
    return cmds[sys.argv[1]](sys.argv[2:])


if __name__ == "__main__":
    sys.exit(main())
