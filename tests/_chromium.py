"""A small client for headless Chromium over its DevTools pipe (standard library only).

Chromium started with ``--remote-debugging-pipe`` reads DevTools protocol commands from file
descriptor 3 and writes answers and events to descriptor 4, one JSON message per NUL-ended
record. This is enough to open a page, wait until it has loaded, measure its elements after
layout, list every request it made, and take a full-page screenshot, without a WebDriver.

Used by tests/test_report_browser.py and docs/make_screenshots.py.
"""

from __future__ import annotations

import base64
import fcntl
import json
import os
import select
import shutil
import subprocess
import time

#: Flags that keep a headless run quiet and off the network (with the resolver rule below).
FLAGS = (
    "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
    "--disable-background-networking", "--disable-component-update", "--disable-sync",
    "--disable-extensions", "--disable-default-apps", "--mute-audio", "--hide-scrollbars",
    "--host-resolver-rules=MAP * ~NOTFOUND",
)


def find_chromium():
    """Path of Debian's chromium (or a chromium on PATH), or None."""
    for name in ("/usr/bin/chromium", "chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


class Chromium:
    """One headless browser, driven over the DevTools pipe.

    Parameters
    ----------
    binary : str
    profile : str
        An empty directory for the browser's profile (``--user-data-dir``).
    timeout : float
        Seconds to wait for any one answer.
    """

    def __init__(self, binary, profile, timeout=60.0):
        self.timeout = timeout
        self.events = []
        self._next = 0
        self._buf = b""
        cmd_r, cmd_w = os.pipe()
        out_r, out_w = os.pipe()
        # Copies at 10 and above (close-on-exec, as every fd Python opens), so that putting
        # them at 3 and 4 in the child cannot clobber one with the other; dup2 clears
        # close-on-exec on 3 and 4 only, so the browser inherits those two and no others.
        hi_r = fcntl.fcntl(cmd_r, fcntl.F_DUPFD_CLOEXEC, 10)
        hi_w = fcntl.fcntl(out_w, fcntl.F_DUPFD_CLOEXEC, 10)
        os.close(cmd_r)
        os.close(out_w)

        def child_fds():
            os.dup2(hi_r, 3)
            os.dup2(hi_w, 4)

        self.log_path = os.path.join(profile, "chromium.log")
        self._log = open(self.log_path, "wb")
        self.proc = subprocess.Popen(
            [binary, *FLAGS, f"--user-data-dir={profile}", "--remote-debugging-pipe",
             "about:blank"],
            stdin=subprocess.DEVNULL, stdout=self._log, stderr=self._log,
            close_fds=False, preexec_fn=child_fds,
        )
        os.close(hi_r)
        os.close(hi_w)
        self._w, self._r = cmd_w, out_r

    # -- protocol ---------------------------------------------------------------------------
    def _read_message(self, deadline):
        while b"\0" not in self._buf:
            left = deadline - time.monotonic()
            if left <= 0:
                raise TimeoutError("chromium: no answer in time (log: " + self.log_path + ")")
            ready, _, _ = select.select([self._r], [], [], left)
            if ready:
                chunk = os.read(self._r, 1 << 20)
                if not chunk:
                    raise RuntimeError("chromium: the browser closed its pipe (log: "
                                       + self.log_path + ")")
                self._buf += chunk
        raw, self._buf = self._buf.split(b"\0", 1)
        return json.loads(raw)

    def send(self, method, params=None, session=None):
        """Send one command and return its ``result`` (events met meanwhile are kept)."""
        self._next += 1
        msg = {"id": self._next, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        os.write(self._w, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + self.timeout
        while True:
            reply = self._read_message(deadline)
            if reply.get("id") == self._next:
                if "error" in reply:
                    raise RuntimeError(f"chromium: {method}: {reply['error']}")
                return reply.get("result", {})
            if "method" in reply:
                self.events.append(reply)

    def wait_event(self, method, session=None):
        """Wait for the event ``method`` (of ``session``) and return its params."""
        deadline = time.monotonic() + self.timeout
        for k, ev in enumerate(self.events):
            if ev["method"] == method and ev.get("sessionId") == session:
                return self.events.pop(k)["params"]
        while True:
            ev = self._read_message(deadline)
            if "method" in ev:
                self.events.append(ev)
                if ev["method"] == method and ev.get("sessionId") == session:
                    return self.events.pop()["params"]

    # -- a page -----------------------------------------------------------------------------
    def open(self, url, width=1400, height=900):
        """Open ``url`` in a new page, wait for its load event, return the session id."""
        target = self.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = self.send("Target.attachToTarget",
                            {"targetId": target, "flatten": True})["sessionId"]
        self.send("Network.enable", session=session)
        self.send("Page.enable", session=session)
        self.send("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False},
                  session=session)
        self.send("Page.navigate", {"url": url}, session=session)
        self.wait_event("Page.loadEventFired", session)
        return session

    def evaluate(self, session, expression):
        """The value of a JavaScript expression in the page (the test's probe; the report
        itself has no script)."""
        res = self.send("Runtime.evaluate", {"expression": expression, "returnByValue": True},
                        session=session)
        if "exceptionDetails" in res:
            raise RuntimeError(f"chromium: {res['exceptionDetails']}")
        return res["result"].get("value")

    def requests(self):
        """URLs of every request the pages made (Network.requestWillBeSent)."""
        return [ev["params"]["request"]["url"] for ev in self.events
                if ev["method"] == "Network.requestWillBeSent"]

    def screenshot(self, session, width=1400):
        """PNG bytes of the whole page, at ``width`` CSS pixels."""
        size = self.send("Page.getLayoutMetrics", session=session)["cssContentSize"]
        height = int(size["height"]) + 1
        self.send("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False},
                  session=session)
        data = self.send("Page.captureScreenshot",
                         {"format": "png", "captureBeyondViewport": True}, session=session)
        return base64.b64decode(data["data"])

    def close(self):
        try:
            self.send("Browser.close")
        except (RuntimeError, TimeoutError, OSError):
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        for fd in (self._w, self._r):
            try:
                os.close(fd)
            except OSError:
                pass
        self._log.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
