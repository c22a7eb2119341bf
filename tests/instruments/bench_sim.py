#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""A simulated calibration bench for bandgap's tests: a bath, a scanner, a meter reading
invented NTC probes and a reference thermometer readout, speaking SCPI (newline-terminated,
IEEE 488.2 common commands, SYST:ERR? queue) over TCP on 127.0.0.1.  Standard library only.

INVENTED: the probes' curves, the bath's behaviour and every identity string below are made up
for testing; they describe no real product.

The bath approaches its setpoint with a first-order lag (time constant --tau, simulated
seconds) plus noise and a small gradient between channels; the clock runs --speed times
faster than real time.  The reference readout reads the bath temperature in degC with
--ref-noise K of Gaussian noise.  The meter reads the closed channel's resistance at the
bath temperature plus the channel's gradient and its self-heating (10 uA through the probe,
dissipation constant 2 mW/K), with a relative noise of --r-noise.

With --pty-file it answers on a pseudo-terminal too (a serial line for bandgap's termios
transport).  With --port2 the same bench also answers on a second port (say, the meter and scanner on one
and the bath and reference on the other), and --fault-port K limits the faults to one port.
Faults for tests: --drop-after N closes the connection and stops that port answering at the
Nth command;
--error-after N makes the Nth command put -222,"Data out of range" in the error queue;
--garbage-after N answers the Nth query with text that is not a number; --never-settle
makes the bath oscillate (0.3 K, 60 s period), --unsettled-setpoint C only at that setpoint;
--idn TEXT changes the identity; --log FILE records every command received.

Commands: *IDN?  SYST:ERR?  SOUR:TEMP <degC>  SOUR:TEMP?  MEAS:TEMP?  ROUT:CLOS (@<ch>)
ROUT:CLOS?  MEAS:FRES?
"""
import argparse
import math
import os
import random
import socket
import socketserver
import sys
import threading
import time
import tty

# INVENTED probe curves: Steinhart-Hart 1/T = A + B ln R + C (ln R)^3, one per channel.
PROBES = {
    "101": (1.1250e-3, 2.3470e-4, 8.60e-8),
    "102": (1.1270e-3, 2.3460e-4, 8.65e-8),
    "103": (1.1235e-3, 2.3480e-4, 8.55e-8),
    "104": (1.1260e-3, 2.3475e-4, 8.58e-8),
}
GRADIENT_K = {"101": 0.0, "102": 0.001, "103": -0.001, "104": 0.002}  # invented
CURRENT_A = 10e-6       # measuring current (invented)
DISSIPATION_W_K = 2e-3  # dissipation constant (invented)
IDN = "bandgap-sim,simulated-bench,0001,1.0"  # invented identity


def sh_resistance(coef, t_k):
    """R at T for 1/T = A + B x + C x^3, x = ln R: the real root of the cubic (Cardano)."""
    a, b, c = coef
    y = (a - 1.0 / t_k) / c
    x_ = math.sqrt((b / (3.0 * c)) ** 3 + (y / 2.0) ** 2)
    return math.exp(math.copysign(abs(x_ - y / 2.0) ** (1 / 3), x_ - y / 2.0)
                    - math.copysign(abs(x_ + y / 2.0) ** (1 / 3), x_ + y / 2.0))


class Bench:
    def __init__(self, args):
        self.a = args
        self.rng = random.Random(args.seed)
        self.lock = threading.Lock()
        self.t0 = time.monotonic()
        self.sp_c = args.start
        self.from_c = args.start
        self.t_set = 0.0
        self.channel = None
        self.errors = []
        self.count = {}
        self.log = open(args.log, "a", encoding="utf-8") if args.log else None

    def now(self):
        return (time.monotonic() - self.t0) * self.a.speed

    def bath_c(self, t):
        lag = self.sp_c + (self.from_c - self.sp_c) * math.exp(-(t - self.t_set) / self.a.tau)
        if self.a.never_settle or (self.a.unsettled_setpoint is not None
                                   and abs(self.sp_c - self.a.unsettled_setpoint) < 1e-9):
            lag += 0.3 * math.sin(2 * math.pi * t / 60.0)
        return lag

    def handle(self, line, port):
        """The reply to one command line on port 'port' (1 or 2; None: no reply), or raises
        ConnectionError to drop the connection."""
        with self.lock:
            if self.log:
                self.log.write(line + "\n")
                self.log.flush()
            if line != "SYST:ERR?" and self.a.fault_port in (0, port):
                n = self.count[port] = self.count.get(port, 0) + 1
                if self.a.drop_after and n >= self.a.drop_after:
                    raise ConnectionError("dropped on purpose")
                if self.a.error_after and n == self.a.error_after:
                    self.errors.append('-222,"Data out of range"')
                if self.a.garbage_after and n == self.a.garbage_after and line.endswith("?"):
                    return "#!?garbage"
            return self.command(line)

    def command(self, line):
        t = self.now()
        head, _, arg = line.partition(" ")
        head = head.upper()
        if head == "*IDN?":
            return self.a.idn
        if head == "SYST:ERR?":
            return self.errors.pop(0) if self.errors else '0,"No error"'
        if head == "SOUR:TEMP":
            try:
                v = float(arg)
            except ValueError:
                self.errors.append('-224,"Illegal parameter value"')
                return None
            self.from_c = self.bath_c(t)
            self.sp_c = v
            self.t_set = t
            return None
        if head == "SOUR:TEMP?":
            return repr(self.sp_c)
        if head == "MEAS:TEMP?":
            return "%+.5f" % (self.bath_c(t) + self.rng.gauss(0.0, self.a.ref_noise))
        if head == "ROUT:CLOS" and arg.startswith("(@") and arg.endswith(")"):
            ch = arg[2:-1]
            if ch not in PROBES:
                self.errors.append('-222,"Data out of range"')
                return None
            self.channel = ch
            return None
        if head == "ROUT:CLOS?":
            return "(@%s)" % self.channel if self.channel else "(@)"
        if head == "MEAS:FRES?":
            if self.channel is None:
                self.errors.append('-221,"Settings conflict"')
                return "9.9E37"
            t_k = self.bath_c(t) + 273.15 + GRADIENT_K[self.channel]
            r = sh_resistance(PROBES[self.channel], t_k)
            # self-heating: the probe sits above the bath by P / delta
            r = sh_resistance(PROBES[self.channel], t_k + CURRENT_A ** 2 * r / DISSIPATION_W_K)
            return "%+.6E" % (r * (1.0 + self.rng.gauss(0.0, self.a.r_noise)))
        self.errors.append('-113,"Undefined header"')
        return None


class Handler(socketserver.StreamRequestHandler):
    def handle(self):
        bench = self.server.bench
        for raw in self.rfile:
            line = raw.decode("utf-8", "replace").strip()
            if not line:
                continue
            try:
                reply = bench.handle(line, self.server.index)
            except ConnectionError:
                # this instrument is lost: its port stops answering, the others go on
                threading.Thread(target=self.server.shutdown, daemon=True).start()
                return
            if reply is not None:
                self.wfile.write((reply + "\n").encode())
                self.wfile.flush()


def serve_pty(bench, master):
    """The bench on a pseudo-terminal's master side, as port 3."""
    buf = b""
    while True:
        try:
            data = os.read(master, 4096)
        except OSError:
            time.sleep(0.01)  # no one has the other side open yet
            continue
        buf += data
        while b"\n" in buf:
            raw, buf = buf.split(b"\n", 1)
            line = raw.decode("utf-8", "replace").strip()
            if not line:
                continue
            try:
                reply = bench.handle(line, 3)
            except ConnectionError:
                return
            if reply is not None:
                os.write(master, (reply + "\n").encode())


class Server(socketserver.ThreadingTCPServer):
    allow_reuse_address = True
    daemon_threads = True


def main():
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--port", type=int, default=0, help="TCP port on 127.0.0.1 (0: any free)")
    p.add_argument("--port2", type=int, default=-1,
                   help="a second port for the same bench (0: any free; -1: none)")
    p.add_argument("--fault-port", type=int, default=0,
                   help="faults count commands on this port only (1 or 2; 0: on every port)")
    p.add_argument("--port-file", help="write the port(s) here once listening")
    p.add_argument("--pty-file", help="also answer on a pseudo-terminal (as port 3): write "
                   "its device name here")
    p.add_argument("--speed", type=float, default=1.0)
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--tau", type=float, default=60.0, help="bath time constant, simulated s")
    p.add_argument("--start", type=float, default=20.0, help="bath temperature at start, degC")
    p.add_argument("--ref-noise", type=float, default=0.001, help="K")
    p.add_argument("--r-noise", type=float, default=2e-6, help="relative")
    p.add_argument("--never-settle", action="store_true")
    p.add_argument("--unsettled-setpoint", type=float, help="oscillate at this setpoint, degC")
    p.add_argument("--idn", default=IDN, help="the *IDN? reply")
    p.add_argument("--drop-after", type=int, default=0)
    p.add_argument("--error-after", type=int, default=0)
    p.add_argument("--garbage-after", type=int, default=0)
    p.add_argument("--log")
    p.add_argument("--lifetime", type=float, default=120.0, help="exit after this many real s")
    args = p.parse_args()
    bench = Bench(args)
    servers = []
    for i, port in enumerate([args.port] + ([args.port2] if args.port2 >= 0 else [])):
        srv = Server(("127.0.0.1", port), Handler)
        srv.bench, srv.index = bench, i + 1
        servers.append(srv)
    if args.port_file:
        with open(args.port_file + ".tmp", "w") as f:
            f.write(" ".join(str(s.server_address[1]) for s in servers) + "\n")
        os.replace(args.port_file + ".tmp", args.port_file)
    threads = [threading.Thread(target=s.serve_forever, kwargs={"poll_interval": 0.05},
                                daemon=True) for s in servers]
    if args.pty_file:
        master, slave = os.openpty()
        tty.setraw(slave)  # no echo, no line editing: a serial line
        with open(args.pty_file + ".tmp", "w") as f:
            f.write(os.ttyname(slave) + "\n")
        os.replace(args.pty_file + ".tmp", args.pty_file)
        threads.append(threading.Thread(target=serve_pty, args=(bench, master), daemon=True))
    for t in threads:
        t.start()
    deadline = time.monotonic() + args.lifetime  # bounded in time, always
    while time.monotonic() < deadline and any(t.is_alive() for t in threads):
        time.sleep(0.05)
    for s in servers:
        s.server_close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
