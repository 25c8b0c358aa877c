"""Drive Debian's headless Chromium over the DevTools protocol, with the standard library only.

Used by the browser test (tests/test_browser_report.py) and by tools/screenshot_report.py.
Why no dependency: the DevTools protocol is JSON over one WebSocket on 127.0.0.1; the client
side of RFC 6455 that it needs (handshake, masked text frames out, unmasked frames in, ping,
close, continuation) is ~80 lines, less than a new test dependency to pin and audit.

Chromium runs as root here, so it needs ``--no-sandbox``; every flag that would make it reach
the network on its own (component updates, sync, background networking, QUIC) is off, and it
gets a fresh, empty profile directory each time.
"""

from __future__ import annotations

import base64
import contextlib
import json
import os
import shutil
import socket
import struct
import subprocess
import tempfile
import time
from pathlib import Path

#: Flags for headless Chromium as root with no network side-traffic.
CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-default-apps",
    "--disable-extensions",
    "--hide-scrollbars",
    "--mute-audio",
)


def find_chromium() -> str | None:
    """Path of a Chromium executable on PATH, or None."""
    for name in ("chromium", "chromium-browser"):
        p = shutil.which(name)
        if p:
            return p
    return None


def ensure_chromium(timeout_s: float = 900.0) -> tuple[str | None, str]:
    """Find Chromium; when missing, install Debian's ``chromium`` package with apt-get.

    Returns (path or None, a sentence saying what happened). Installing needs root and
    apt-get (as on the project's machines and in CI); anywhere else it says why not.
    """
    p = find_chromium()
    if p:
        return p, f"found {p}"
    if shutil.which("apt-get") is None:
        return None, "Chromium is not installed and apt-get is not available to install it"
    if hasattr(os, "geteuid") and os.geteuid() != 0:
        return None, "Chromium is not installed and installing it needs root (apt-get install -y chromium)"
    env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
    log = []
    for cmd in (["apt-get", "update"], ["apt-get", "install", "-y", "chromium"]):
        try:
            r = subprocess.run(cmd, env=env, capture_output=True, text=True, timeout=timeout_s)
        except (OSError, subprocess.TimeoutExpired) as exc:
            return None, f"{' '.join(cmd)} failed: {exc}"
        log.append(r.stderr[-400:])
        if r.returncode != 0:
            return None, f"{' '.join(cmd)} exited {r.returncode}: {r.stderr.strip()[-400:]}"
    p = find_chromium()
    return (p, f"installed {p} with apt-get") if p else (None, "apt-get finished but no chromium on PATH")


class _WebSocket:
    """The client side of RFC 6455 that the DevTools protocol needs."""

    def __init__(self, url: str, timeout: float = 30.0) -> None:
        assert url.startswith("ws://")
        hostport, _, path = url[5:].partition("/")
        host, _, port = hostport.partition(":")
        self.sock = socket.create_connection((host, int(port)), timeout=timeout)
        key = base64.b64encode(os.urandom(16)).decode()
        req = (
            f"GET /{path} HTTP/1.1\r\nHost: {hostport}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\n"
            f"Sec-WebSocket-Key: {key}\r\nSec-WebSocket-Version: 13\r\n\r\n"
        )
        self.sock.sendall(req.encode())
        head = b""
        while b"\r\n\r\n" not in head:
            chunk = self.sock.recv(4096)
            if not chunk:
                raise ConnectionError("DevTools closed the connection during the handshake")
            head += chunk
        status, _, rest = head.partition(b"\r\n\r\n")
        if b" 101 " not in status.split(b"\r\n", 1)[0]:
            raise ConnectionError(f"WebSocket handshake refused: {status[:200]!r}")
        self.buf = rest

    def _read(self, n: int) -> bytes:
        while len(self.buf) < n:
            chunk = self.sock.recv(max(65536, n - len(self.buf)))
            if not chunk:
                raise ConnectionError("DevTools connection closed")
            self.buf += chunk
        out, self.buf = self.buf[:n], self.buf[n:]
        return out

    def _send_frame(self, opcode: int, payload: bytes) -> None:
        head = bytes([0x80 | opcode])
        n = len(payload)
        if n < 126:
            head += bytes([0x80 | n])
        elif n < 1 << 16:
            head += bytes([0x80 | 126]) + struct.pack(">H", n)
        else:
            head += bytes([0x80 | 127]) + struct.pack(">Q", n)
        mask = os.urandom(4)
        masked = bytes(b ^ mask[i % 4] for i, b in enumerate(payload))
        self.sock.sendall(head + mask + masked)

    def send(self, text: str) -> None:
        self._send_frame(0x1, text.encode("utf-8"))

    def recv(self) -> str:
        parts = []
        while True:
            b0, b1 = self._read(2)
            fin, opcode = b0 & 0x80, b0 & 0x0F
            n = b1 & 0x7F
            if n == 126:
                n = struct.unpack(">H", self._read(2))[0]
            elif n == 127:
                n = struct.unpack(">Q", self._read(8))[0]
            mask = self._read(4) if b1 & 0x80 else None
            data = self._read(n)
            if mask:
                data = bytes(b ^ mask[i % 4] for i, b in enumerate(data))
            if opcode == 0x9:
                self._send_frame(0xA, data)
                continue
            if opcode == 0x8:
                raise ConnectionError("DevTools closed the WebSocket")
            if opcode in (0x1, 0x2, 0x0):
                parts.append(data)
                if fin:
                    return b"".join(parts).decode("utf-8")

    def close(self) -> None:
        with contextlib.suppress(OSError):
            self._send_frame(0x8, b"")
        self.sock.close()


class Browser:
    """A headless Chromium started for one job (context manager).

    ``events`` collects every DevTools event received (dicts with ``method``, ``params`` and
    ``sessionId``). The process is ended on exit by its own id.
    """

    def __init__(self, executable: str, *, window=(1100, 900), timeout: float = 60.0) -> None:
        self.executable = executable
        self.window = window
        self.timeout = timeout
        self.events: list[dict] = []
        self._id = 0

    def __enter__(self) -> Browser:
        self.profile = tempfile.mkdtemp(prefix="lumeval-chromium-")
        self.log_path = Path(self.profile).parent / (Path(self.profile).name + ".log")
        self._log = open(self.log_path, "wb")
        cmd = [
            self.executable, *CHROMIUM_FLAGS, f"--user-data-dir={self.profile}",
            "--remote-debugging-port=0", "--remote-debugging-address=127.0.0.1",
            f"--window-size={self.window[0]},{self.window[1]}", "about:blank",
        ]
        self.proc = subprocess.Popen(cmd, stdout=self._log, stderr=subprocess.STDOUT, stdin=subprocess.DEVNULL)
        port_file = Path(self.profile) / "DevToolsActivePort"
        t0 = time.monotonic()
        while True:
            if port_file.exists():
                lines = port_file.read_text().split("\n")
                if len(lines) >= 2 and lines[0].strip() and lines[1].strip():
                    break
            if self.proc.poll() is not None:
                raise RuntimeError(f"Chromium exited with {self.proc.returncode}; log: {self.log_path}")
            if time.monotonic() - t0 > self.timeout:
                self._stop()
                raise TimeoutError(f"Chromium did not open its DevTools port in {self.timeout:.0f} s")
            time.sleep(0.05)
        self.ws = _WebSocket(f"ws://127.0.0.1:{lines[0].strip()}{lines[1].strip()}", timeout=self.timeout)
        return self

    def __exit__(self, *exc) -> None:
        with contextlib.suppress(Exception):
            self.call("Browser.close")
        self._stop()

    def _stop(self) -> None:
        with contextlib.suppress(Exception):
            self.ws.close()
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=5)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self._log.close()
        shutil.rmtree(self.profile, ignore_errors=True)

    def call(self, method: str, params: dict | None = None, session: str | None = None) -> dict:
        """Send one command and wait for its reply; events arriving meanwhile are kept."""
        self._id += 1
        msg = {"id": self._id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        self.ws.send(json.dumps(msg))
        deadline = time.monotonic() + self.timeout
        while time.monotonic() < deadline:
            reply = json.loads(self.ws.recv())
            if reply.get("id") == self._id:
                if "error" in reply:
                    raise RuntimeError(f"{method}: {reply['error']}")
                return reply.get("result", {})
            if "method" in reply:
                self.events.append(reply)
        raise TimeoutError(f"no reply to {method}")

    def wait_for(self, method: str, session: str | None = None, timeout: float | None = None) -> dict:
        """Wait for an event named ``method`` (already received ones count)."""
        deadline = time.monotonic() + (timeout or self.timeout)
        seen = 0
        while True:
            for ev in self.events[seen:]:
                if ev.get("method") == method and (session is None or ev.get("sessionId") == session):
                    return ev
            seen = len(self.events)
            if time.monotonic() > deadline:
                raise TimeoutError(f"no {method} event")
            self.events.append(json.loads(self.ws.recv()))

    def open(self, url: str, *, width: int = 1100, height: int = 900) -> str:
        """Open ``url`` in a new page with console, log and network events on; return its session id.

        Waits for the page's load event and then two animation frames, so that layout is done.
        """
        target = self.call("Target.createTarget", {"url": "about:blank"})["targetId"]
        s = self.call("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
        for dom in ("Page", "Runtime", "Log", "Network"):
            self.call(f"{dom}.enable", session=s)
        self.call("Emulation.setDeviceMetricsOverride",
                  {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False}, session=s)
        n0 = len(self.events)
        self.call("Page.navigate", {"url": url}, session=s)
        deadline = time.monotonic() + self.timeout
        while not any(e.get("method") == "Page.loadEventFired" and e.get("sessionId") == s for e in self.events[n0:]):
            if time.monotonic() > deadline:
                raise TimeoutError(f"{url} did not finish loading")
            self.events.append(json.loads(self.ws.recv()))
        self.evaluate(s, "new Promise(r => requestAnimationFrame(() => requestAnimationFrame(() => r(1))))", await_promise=True)
        return s

    def evaluate(self, session: str, expression: str, *, await_promise: bool = False):
        """Evaluate JavaScript in the page and return its value (JSON-serialisable)."""
        r = self.call("Runtime.evaluate", {"expression": expression, "returnByValue": True,
                                           "awaitPromise": await_promise}, session=session)
        if "exceptionDetails" in r:
            raise RuntimeError(f"page script failed: {r['exceptionDetails']}")
        return r["result"].get("value")

    def console_errors(self, session: str) -> list[str]:
        """Console errors, uncaught exceptions and error-level log entries of the page."""
        out = []
        for e in self.events:
            if e.get("sessionId") != session:
                continue
            m, p = e.get("method"), e.get("params", {})
            if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
                out.append("console: " + " ".join(str(a.get("value", a.get("description", ""))) for a in p.get("args", [])))
            elif m == "Runtime.exceptionThrown":
                out.append("exception: " + str(p.get("exceptionDetails", {}).get("text")))
            elif m == "Log.entryAdded" and p.get("entry", {}).get("level") == "error":
                out.append("log: " + str(p["entry"].get("text")))
        return out

    def requested_urls(self, session: str) -> list[str]:
        """Every URL the page requested (from Network.requestWillBeSent)."""
        return [e["params"]["request"]["url"] for e in self.events
                if e.get("sessionId") == session and e.get("method") == "Network.requestWillBeSent"]

    def screenshot(self, session: str, path, *, full_page: bool = True, max_height: int | None = None) -> Path:
        """Save a PNG of the page (the whole page, or its top ``max_height`` CSS pixels)."""
        params: dict = {"format": "png"}
        if full_page:
            m = self.call("Page.getLayoutMetrics", session=session)
            size = m.get("cssContentSize") or m["contentSize"]
            h = size["height"] if max_height is None else min(size["height"], max_height)
            params.update(captureBeyondViewport=True,
                          clip={"x": 0, "y": 0, "width": size["width"], "height": h, "scale": 1})
        data = self.call("Page.captureScreenshot", params, session=session)["data"]
        p = Path(path)
        p.write_bytes(base64.b64decode(data))
        return p

    def print_pdf(self, session: str, *, paper: str = "A4") -> bytes:
        """The page printed to PDF on A4 or US Letter paper (the print style sheet applies)."""
        w, h = {"A4": (8.27, 11.69), "Letter": (8.5, 11.0)}[paper]
        data = self.call("Page.printToPDF", {"paperWidth": w, "paperHeight": h, "preferCSSPageSize": True,
                                             "printBackground": True}, session=session)["data"]
        return base64.b64decode(data)
