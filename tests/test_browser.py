"""report.html in a real browser: every section renders, hostile text stays text, and the
page makes no network request of its own.

Chromium is driven through the DevTools protocol over ``--remote-debugging-pipe`` (file
descriptors 3 and 4, NUL-separated JSON), so no websocket package is needed, and the
network log is the page's own: Chromium's background services are not page requests.
Host resolution is disabled, so nothing can leave the machine whatever the page asks for.
"""

from __future__ import annotations

import base64
import fcntl
import json
import os
import re
import select
import struct
import subprocess
import time
from html.parser import HTMLParser
from pathlib import Path

import pytest

from trawl.report.html import render_html

from .test_report_html import HOSTILE_TITLE, sample_bundle

CHROMIUM = Path(os.environ.get("TRAWL_CHROMIUM", "/usr/bin/chromium"))
pytestmark = [pytest.mark.slow, pytest.mark.skipif(
    not CHROMIUM.exists(),
    reason=f"Chromium not found at {CHROMIUM} (install Debian's chromium, as `make test` does, "
           "or set TRAWL_CHROMIUM)")]
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--host-resolver-rules=MAP * ~NOTFOUND", "--remote-debugging-pipe",
         "--window-size=1200,900"]
TIMEOUT_S = 60


def _high_pipe() -> tuple[int, int]:
    """A pipe whose ends sit above fd 9, so moving them onto 3 and 4 cannot clobber them."""
    ends = []
    for fd in os.pipe():
        ends.append(fcntl.fcntl(fd, fcntl.F_DUPFD_CLOEXEC, 10))
        os.close(fd)
    return ends[0], ends[1]


class DevTools:
    """A minimal DevTools-protocol client over Chromium's debugging pipe."""

    def __init__(self, profile: Path) -> None:
        to_browser_r, self._to_browser = _high_pipe()
        self._from_browser, from_browser_w = _high_pipe()

        def fds() -> None:  # runs in the child: the browser expects its ends as fd 3 and 4
            os.dup2(to_browser_r, 3)
            os.dup2(from_browser_w, 4)

        # fds 3 and 4 are kept open in the child (subprocess closes others after preexec_fn)
        self.proc = subprocess.Popen(
            [str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", "about:blank"],
            preexec_fn=fds, pass_fds=(3, 4), stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL)
        os.close(to_browser_r)
        os.close(from_browser_w)
        self._buf = b""
        self._next = 0
        self.events: list[dict] = []

    def send(self, method: str, params: dict | None = None, session: str | None = None) -> dict:
        self._next += 1
        msg = {"id": self._next, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        os.write(self._to_browser, json.dumps(msg).encode() + b"\0")
        while True:
            reply = self._read()
            if reply.get("id") == self._next:
                if "error" in reply:
                    raise RuntimeError(f"{method}: {reply['error']}")
                return reply["result"]
            self.events.append(reply)

    def wait_for(self, method: str) -> dict:
        for e in self.events:
            if e.get("method") == method:
                return e
        while True:
            e = self._read()
            self.events.append(e)
            if e.get("method") == method:
                return e

    def _read(self) -> dict:
        deadline = time.monotonic() + TIMEOUT_S
        while b"\0" not in self._buf:
            left = deadline - time.monotonic()
            ready, _, _ = select.select([self._from_browser], [], [], max(left, 0))
            if not ready:
                raise TimeoutError("Chromium did not answer within "
                                   f"{TIMEOUT_S} s")
            chunk = os.read(self._from_browser, 1 << 20)
            if not chunk:
                raise RuntimeError("Chromium closed the debugging pipe")
            self._buf += chunk
        raw, self._buf = self._buf.split(b"\0", 1)
        return json.loads(raw)

    def close(self) -> None:
        try:
            self.send("Browser.close")
        except (RuntimeError, TimeoutError, OSError):
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        os.close(self._to_browser)
        os.close(self._from_browser)


def visit(url: str, profile: Path) -> tuple[str, list[str], list[str], bytes]:
    """Load ``url``; return its rendered DOM, requested URLs, console/log lines, screenshot."""
    tools = DevTools(profile)
    try:
        target = tools.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = tools.send("Target.attachToTarget",
                             {"targetId": target, "flatten": True})["sessionId"]
        for domain in ("Network", "Page", "Log", "Runtime"):
            tools.send(f"{domain}.enable", session=session)
        tools.send("Page.navigate", {"url": url}, session=session)
        tools.wait_for("Page.loadEventFired")
        root = tools.send("DOM.getDocument", {"depth": -1}, session=session)["root"]
        dom = tools.send("DOM.getOuterHTML", {"nodeId": root["nodeId"]},
                         session=session)["outerHTML"]
        size = tools.send("Page.getLayoutMetrics", session=session)["cssContentSize"]
        shot = tools.send("Page.captureScreenshot", {
            "format": "png", "captureBeyondViewport": True,
            "clip": {"x": 0, "y": 0, "width": size["width"], "height": size["height"],
                     "scale": 1}}, session=session)["data"]
        requests = [e["params"]["request"]["url"] for e in tools.events
                    if e.get("method") == "Network.requestWillBeSent"
                    and e.get("sessionId") == session]
        logs = [e["params"]["entry"]["text"] for e in tools.events
                if e.get("method") == "Log.entryAdded"]
        logs += [str(e["params"].get("args")) for e in tools.events
                 if e.get("method") == "Runtime.consoleAPICalled"]
        return dom, requests, logs, base64.b64decode(shot)
    finally:
        tools.close()


def png_size(data: bytes) -> tuple[int, int]:
    # PNG specification (W3C, 2003), section 11.2.2: IHDR is the first chunk after the
    # 8-byte signature; width and height are its first two big-endian 4-byte fields.
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", data[16:24])


class _Sections(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.ids: set[str] = set()
        self.tags: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        a = dict(attrs)
        if "id" in a:
            self.ids.add(a["id"])


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    folder = tmp_path_factory.mktemp("browser")
    report = folder / "report.html"
    report.write_text(render_html(sample_bundle()), encoding="utf-8")
    dom, requests, logs, shot = visit(report.as_uri(), folder / "profile")
    keep = os.environ.get("TRAWL_SCREENSHOT_DIR")
    out = Path(keep) if keep else folder
    out.mkdir(parents=True, exist_ok=True)
    (out / "report.png").write_bytes(shot)
    return report, dom, requests, logs, shot


def test_every_section_renders(rendered):
    _, dom, _, _, _ = rendered
    parsed = _Sections()
    parsed.feed(dom)
    expected = {"setup", "agreement", "reading"}
    for name in ("silver", "gold"):
        expected |= {f"eval-{name}", f"quality-{name}", f"types-{name}", f"compare-{name}",
                     f"misses-{name}", f"worst-{name}", f"chart-ql-{name}",
                     f"chart-types-{name}", f"chart-diff-{name}"}
    expected.add("chart-agreement")
    assert expected <= parsed.ids, expected - parsed.ids
    assert parsed.tags.count("svg") == 7


def test_hostile_title_shows_as_text(rendered):
    _, dom, _, logs, _ = rendered
    parsed = _Sections()
    parsed.feed(dom)
    assert "script" not in parsed.tags and "img" not in parsed.tags
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in dom  # a text node, serialised escaped
    assert HOSTILE_TITLE not in dom
    assert not logs, logs  # no CSP violation or console message: nothing tried to run


def test_page_makes_no_network_request(rendered):
    report, _, requests, _, _ = rendered
    assert requests == [report.as_uri()]  # the document itself, nothing else


def test_screenshot_saved(rendered):
    _, _, _, _, shot = rendered
    width, height = png_size(shot)
    assert width >= 1000 and height > 2000  # the whole page, not just the first screen


def test_the_request_log_would_catch_a_leak(tmp_path):
    """Positive control: a page that does load something from elsewhere is caught."""
    page = tmp_path / "leaky.html"
    page.write_text('<!doctype html><p>x</p><img src="http://elsewhere.invalid/pixel.png">',
                    encoding="utf-8")
    _, requests, _, _ = visit(page.as_uri(), tmp_path / "profile")
    assert any(re.match(r"http://elsewhere\.invalid/", u) for u in requests), requests

