"""Fixtures for the report tests: the sample results, headless chromium, a PNG reader and a
minimal DevTools-protocol client (stdlib sockets only; no browser-automation dependency).

Browser fixture policy (DEVELOPERS.md): a missing chromium *fails* under ``CI=true`` and skips
elsewhere, with a message saying how to get it.
"""

from __future__ import annotations

import base64
import json
import os
import shutil
import socket
import struct
import subprocess
import time
import zlib
from html.parser import HTMLParser
from http.client import HTTPConnection
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import numpy as np
import pytest

from partcheck.result import CheckResult

DATA = Path(__file__).with_name("data")

#: Flags for every chromium run: headless, no sandbox (containers run as root), and no network:
#: every host name resolves to "not found" and every connection that is not to a host name
#: goes to a proxy on the discard port, which refuses it at once.
CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--no-default-browser-check",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
    "--disable-dev-shm-usage",
    "--host-resolver-rules=MAP * ~NOTFOUND",
    "--proxy-server=127.0.0.1:9",
    "--proxy-bypass-list=<-loopback>",
)


class Node:
    """One element of a parsed page: tag, attributes, children (nodes and text strings)."""

    def __init__(self, tag: str, attrs: dict[str, str | None]) -> None:
        self.tag, self.attrs, self.children = tag, attrs, []

    def text(self) -> str:
        """All text inside, whitespace collapsed."""
        return " ".join("".join(c if isinstance(c, str) else " " + c.text() + " " for c in self.children).split())

    def iter(self, tag: str | None = None):
        if tag is None or self.tag == tag:
            yield self
        for c in self.children:
            if isinstance(c, Node):
                yield from c.iter(tag)

    def find_all(self, tag: str, **attrs: str) -> list["Node"]:
        return [n for n in self.iter(tag) if all(n.attrs.get(k.rstrip("_")) == v for k, v in attrs.items())]


VOID = {"meta", "link", "br", "hr", "img", "input", "col", "area", "base", "wbr", "source", "track", "embed"}


class Collector(HTMLParser):
    """Every start tag with its attributes, and the document text, as a browser's parser sees them;
    also the element tree (``root``) for the tests that compare values across sections."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text: list[str] = []
        self._skip = 0
        self.root = Node("#document", {})
        self._stack = [self.root]

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag in ("style",):
            self._skip += 1
        node = Node(tag, dict(attrs))
        self._stack[-1].children.append(node)
        if tag not in VOID:
            self._stack.append(node)

    def handle_startendtag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        self._stack[-1].children.append(Node(tag, dict(attrs)))

    def handle_endtag(self, tag):
        if tag in ("style",):
            self._skip -= 1
        for i in range(len(self._stack) - 1, 0, -1):
            if self._stack[i].tag == tag:
                del self._stack[i:]
                break

    def handle_data(self, data):
        if not self._skip:
            self.text.append(data)
            self._stack[-1].children.append(data)


def parse(html: str) -> Collector:
    collector = Collector()
    collector.feed(html)
    collector.close()
    return collector


@pytest.fixture(scope="session")
def html_parse():
    """``parse(html) -> Collector`` (``--import-mode=importlib`` cannot import conftest)."""
    return parse


@pytest.fixture(scope="session")
def demo_results(tmp_path_factory) -> dict[str, tuple[CheckResult, str]]:
    """The three demo scenarios checked against the seeded demo catalog: ``{name: (result, html)}``."""
    from partcheck.demo import run_demo

    runs = run_demo(tmp_path_factory.mktemp("demo"))
    return {r.scenario: (r.result, r.report.read_text(encoding="utf-8")) for r in runs}


@pytest.fixture
def sample_result() -> CheckResult:
    """A hand-written result: two-output flyback, 14 parts, every status, corners, plots data."""
    return CheckResult.load(DATA / "sample_result.json")


@pytest.fixture
def hostile_result() -> CheckResult:
    """The sample with markup, event handlers and quotes in every user-supplied string."""
    return CheckResult.load(DATA / "hostile_result.json")


@pytest.fixture(scope="session")
def chromium() -> str:
    """Path of the chromium executable; fails under CI when missing, skips elsewhere."""
    path = shutil.which("chromium") or shutil.which("chromium-browser")
    if path:
        return path
    if os.environ.get("CI"):
        pytest.fail("chromium not found: tests/run-all.sh installs Debian's chromium")
    pytest.skip("chromium not found: `bash tests/run-all.sh` installs Debian's chromium")


def run_chromium(chromium: str, profile: Path, *args: str, timeout: float = 60.0) -> subprocess.CompletedProcess:
    """One headless chromium run with the no-network flags and a throw-away profile."""
    return subprocess.run([chromium, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=timeout, check=False)


# --------------------------------------------------------------------------------------------
# PNG reading (PNG specification, ISO/IEC 15948, sections 9 "Filtering" and 11 "Chunks")
# --------------------------------------------------------------------------------------------


def read_png(path: Path) -> np.ndarray:
    """Decode an 8-bit RGB or RGBA PNG into a ``(height, width, channels)`` uint8 array."""
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", f"{path} is not a PNG file"
    pos, idat, header = 8, [], None
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        pos += 12 + length
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
    assert header is not None, "PNG without IHDR"
    width, height, depth, colour, _, _, interlace = header
    assert depth == 8 and colour in (2, 6) and interlace == 0, f"unsupported PNG layout {header}"
    bpp = 3 if colour == 2 else 4
    raw = zlib.decompress(b"".join(idat))
    stride = width * bpp
    out = np.zeros((height, stride), dtype=np.uint8)
    prev = np.zeros(stride, dtype=np.int64)
    for y in range(height):
        start = y * (stride + 1)
        ftype = raw[start]
        line = np.frombuffer(raw, dtype=np.uint8, count=stride, offset=start + 1).astype(np.int64)
        if ftype == 0:
            cur = line
        elif ftype == 1:  # Sub: running sum along each channel
            cur = np.cumsum(line.reshape(width, bpp), axis=0).reshape(-1) & 255
        elif ftype == 2:  # Up
            cur = (line + prev) & 255
        elif ftype in (3, 4):  # Average, Paeth: sequential along the row
            cur_l = [0] * stride
            lv, pv = line.tolist(), prev.tolist()
            for i in range(stride):
                a = cur_l[i - bpp] if i >= bpp else 0
                b = pv[i]
                if ftype == 3:
                    cur_l[i] = (lv[i] + ((a + b) >> 1)) & 255
                else:
                    c = pv[i - bpp] if i >= bpp else 0
                    p = a + b - c
                    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                    pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                    cur_l[i] = (lv[i] + pred) & 255
            cur = np.array(cur_l, dtype=np.int64)
        else:
            raise AssertionError(f"bad PNG filter type {ftype} in row {y}")
        out[y] = cur
        prev = cur
    return out.reshape(height, width, bpp)


# --------------------------------------------------------------------------------------------
# DevTools protocol over a minimal WebSocket client (RFC 6455, client side)
# --------------------------------------------------------------------------------------------


class DevTools:
    """A headless chromium started with ``--remote-debugging-port=0``, driven over CDP.

    Only what the tests need: enable the Network, Runtime, Log and Page domains, navigate,
    collect every event, evaluate an expression.  JavaScript dialogs (``alert``) are recorded
    and dismissed so that a script that does run cannot hang the test.
    """

    def __init__(self, chromium: str, profile: Path) -> None:
        self.profile = profile
        self.proc = subprocess.Popen([chromium, *CHROMIUM_FLAGS, f"--user-data-dir={profile}",
                                      "--remote-debugging-port=0", "about:blank"],
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        self.events: list[dict[str, Any]] = []
        self._next_id = 0
        self.sock: socket.socket | None = None
        try:
            self._connect()
        except BaseException:
            self.close()
            raise

    def _connect(self) -> None:
        port_file = self.profile / "DevToolsActivePort"
        deadline = time.monotonic() + 30
        while not port_file.exists() or not port_file.read_text().strip():
            if self.proc.poll() is not None:
                raise RuntimeError(f"chromium exited with code {self.proc.returncode} before DevTools started")
            if time.monotonic() > deadline:
                raise RuntimeError("chromium did not open its DevTools port within 30 s")
            time.sleep(0.05)
        port = int(port_file.read_text().split()[0])
        page = None
        while page is None:
            conn = HTTPConnection("127.0.0.1", port, timeout=10)
            conn.request("GET", "/json/list")
            targets = json.loads(conn.getresponse().read())
            conn.close()
            page = next((t for t in targets if t.get("type") == "page"), None)
            if page is None and time.monotonic() > deadline:
                raise RuntimeError("chromium has no page target")
            time.sleep(0.05)
        ws_path = "/" + page["webSocketDebuggerUrl"].split("/", 3)[3]
        self.sock = socket.create_connection(("127.0.0.1", port), timeout=20)
        key = base64.b64encode(os.urandom(16)).decode()
        self.sock.sendall((f"GET {ws_path} HTTP/1.1\r\nHost: 127.0.0.1:{port}\r\nUpgrade: websocket\r\n"
                           f"Connection: Upgrade\r\nSec-WebSocket-Key: {key}\r\nSec-WebSocket-Version: 13\r\n\r\n")
                          .encode())
        head = b""
        while b"\r\n\r\n" not in head:
            chunk = self.sock.recv(4096)
            if not chunk:
                raise RuntimeError("DevTools closed the WebSocket handshake")
            head += chunk
        status = head.split(b"\r\n", 1)[0]
        if b" 101 " not in status:
            raise RuntimeError(f"WebSocket handshake refused: {status!r}")
        self._buffer = head.split(b"\r\n\r\n", 1)[1]
        self._parts: list[bytes] = []
        for domain in ("Network", "Runtime", "Log", "Page"):
            self.call(f"{domain}.enable")

    # -- frames --
    def _frame_from_buffer(self) -> tuple[int, int, bytes] | None:
        """(first byte, opcode, payload) of a complete frame at the buffer's start, consumed; else None."""
        buf = self._buffer
        if len(buf) < 2:
            return None
        b0, b1 = buf[0], buf[1]
        n, pos = b1 & 0x7F, 2
        if n == 126:
            if len(buf) < 4:
                return None
            (n,) = struct.unpack(">H", buf[2:4])
            pos = 4
        elif n == 127:
            if len(buf) < 10:
                return None
            (n,) = struct.unpack(">Q", buf[2:10])
            pos = 10
        mask = None
        if b1 & 0x80:
            if len(buf) < pos + 4:
                return None
            mask, pos = buf[pos:pos + 4], pos + 4
        if len(buf) < pos + n:
            return None
        payload = buf[pos:pos + n]
        if mask:
            payload = bytes(c ^ mask[i % 4] for i, c in enumerate(payload))
        self._buffer = buf[pos + n:]
        return b0, b0 & 0x0F, payload

    def _send_frame(self, payload: bytes, opcode: int = 1) -> None:
        header = bytes([0x80 | opcode])
        n = len(payload)
        if n < 126:
            header += bytes([0x80 | n])
        elif n < 65536:
            header += bytes([0x80 | 126]) + struct.pack(">H", n)
        else:
            header += bytes([0x80 | 127]) + struct.pack(">Q", n)
        mask = os.urandom(4)
        masked = bytes(b ^ mask[i % 4] for i, b in enumerate(payload))
        self.sock.sendall(header + mask + masked)

    def _recv_message(self) -> dict[str, Any]:
        """The next complete message; a socket timeout leaves any partial frame in the buffer."""
        while True:
            frame = self._frame_from_buffer()
            if frame is None:
                chunk = self.sock.recv(65536)
                if not chunk:
                    raise RuntimeError("DevTools connection closed")
                self._buffer += chunk
                continue
            b0, opcode, payload = frame
            if opcode == 9:  # ping
                self._send_frame(payload, opcode=10)
            elif opcode == 8:
                raise RuntimeError("DevTools closed the connection")
            elif opcode in (0, 1, 2):
                self._parts.append(payload)
                if b0 & 0x80:
                    message, self._parts = b"".join(self._parts), []
                    return json.loads(message)

    def _dispatch(self, message: dict[str, Any]) -> None:
        self.events.append(message)
        if message.get("method") == "Page.javascriptDialogOpening":
            self._send({"method": "Page.handleJavaScriptDialog", "params": {"accept": False}})

    def _send(self, message: dict[str, Any]) -> int:
        self._next_id += 1
        self._send_frame(json.dumps({"id": self._next_id, **message}).encode())
        return self._next_id

    # -- protocol --
    def call(self, method: str, **params: Any) -> dict[str, Any]:
        wanted = self._send({"method": method, "params": params})
        while True:
            message = self._recv_message()
            if message.get("id") == wanted:
                if "error" in message:
                    raise RuntimeError(f"{method}: {message['error']}")
                return message.get("result", {})
            if "method" in message:
                self._dispatch(message)

    def wait_for(self, method: str, timeout: float = 20.0) -> None:
        deadline = time.monotonic() + timeout
        while not any(e.get("method") == method for e in self.events):
            if time.monotonic() > deadline:
                raise AssertionError(f"no {method} within {timeout} s")
            self.sock.settimeout(max(deadline - time.monotonic(), 0.01))
            try:
                message = self._recv_message()
            except TimeoutError:
                raise AssertionError(f"no {method} within {timeout} s") from None
            if "method" in message:
                self._dispatch(message)
        self.sock.settimeout(20)

    def settle(self, seconds: float = 0.5) -> None:
        """Keep collecting events for a moment (late requests, deferred errors)."""
        deadline = time.monotonic() + seconds
        while (left := deadline - time.monotonic()) > 0:
            self.sock.settimeout(left)
            try:
                message = self._recv_message()
            except TimeoutError:
                break
            if "method" in message:
                self._dispatch(message)
        self.sock.settimeout(20)

    def open(self, url: str) -> list[dict[str, Any]]:
        """Navigate to ``url``, wait for the load event and return the events seen meanwhile."""
        self.events = []
        self.call("Page.navigate", url=url)
        self.wait_for("Page.loadEventFired")
        self.settle()
        return list(self.events)

    def evaluate(self, expression: str) -> Any:
        result = self.call("Runtime.evaluate", expression=expression, returnByValue=True)
        if "exceptionDetails" in result:
            raise AssertionError(f"evaluation failed: {result['exceptionDetails']}")
        return result["result"].get("value")

    def close(self) -> None:
        if self.sock is not None:
            try:
                self.sock.close()
            except OSError:
                pass
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)

    @staticmethod
    def requests_in(events: list[dict[str, Any]]) -> list[str]:
        """Every URL the page asked the network stack for."""
        return [e["params"]["request"]["url"] for e in events if e.get("method") == "Network.requestWillBeSent"]

    @staticmethod
    def console_errors(events: list[dict[str, Any]]) -> list[str]:
        """Console errors, uncaught exceptions and browser log errors (CSP violations among them)."""
        out = []
        for e in events:
            method, params = e.get("method"), e.get("params", {})
            if method == "Runtime.consoleAPICalled" and params.get("type") in ("error", "assert"):
                out.append("console: " + " ".join(str(a.get("value", a.get("description", ""))) for a in params.get("args", [])))
            elif method == "Runtime.exceptionThrown":
                out.append("exception: " + str(params.get("exceptionDetails", {}).get("text")))
            elif method == "Log.entryAdded" and params.get("entry", {}).get("level") == "error":
                out.append(f"log ({params['entry'].get('source')}): {params['entry'].get('text')}")
        return out

    @staticmethod
    def dialogs_in(events: list[dict[str, Any]]) -> list[str]:
        return [e["params"].get("message", "") for e in events if e.get("method") == "Page.javascriptDialogOpening"]


@pytest.fixture(scope="module")
def devtools(chromium, tmp_path_factory):
    """One headless chromium per test module, driven over the DevTools protocol."""
    browser = DevTools(chromium, tmp_path_factory.mktemp("chromium-profile"))
    yield browser
    browser.close()


@pytest.fixture(scope="session")
def browser_tools():
    """The helpers above, for test modules (``--import-mode=importlib`` cannot import conftest)."""
    return SimpleNamespace(read_png=read_png, run_chromium=run_chromium, flags=CHROMIUM_FLAGS)
