# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Debian's Chromium, headless, driven through chromedriver's W3C WebDriver protocol with the
standard library's urllib: the one browser session the report tests share.

    with Browser(extra_args, logging) as b:
        b.cmd("POST", "/url", {"url": ...})    # a command of the session
"""
import json, socket, subprocess, time, urllib.request


class Browser:
    def __init__(self, args=(), logging=None):
        sock = socket.socket()
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
        sock.close()
        self.base = "http://127.0.0.1:%d" % port
        self.drv = subprocess.Popen(["chromedriver", "--port=%d" % port],
                                    stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        self.sid = None
        for _ in range(100):
            try:
                self.wd("GET", "/status")
                break
            except Exception:
                time.sleep(0.1)
        caps = {"capabilities": {"alwaysMatch": {
            "browserName": "chrome",
            "goog:chromeOptions": {"binary": "/usr/bin/chromium",
                                   "args": ["--headless=new", "--no-sandbox", "--disable-gpu",
                                            "--disable-dev-shm-usage", *args]},
            "goog:loggingPrefs": logging or {"browser": "ALL"}}}}
        try:
            self.sid = self.wd("POST", "/session", caps)["sessionId"]
        except Exception:
            self.close()
            raise

    def wd(self, method, path, body=None):
        """A request to the driver; returns the response's value."""
        data = json.dumps(body).encode() if body is not None else None
        req = urllib.request.Request(self.base + path, data=data, method=method,
                                     headers={"Content-Type": "application/json"})
        with urllib.request.urlopen(req, timeout=120) as r:
            return json.loads(r.read())["value"]

    def cmd(self, method, path, body=None):
        """A command of the session ('path' after /session/ID)."""
        return self.wd(method, "/session/%s%s" % (self.sid, path), body)

    def close(self):
        try:
            if self.sid:
                self.wd("DELETE", "/session/%s" % self.sid)
        finally:
            self.drv.terminate()
            self.drv.wait(timeout=30)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
