"""The design report in a real browser: headless Chromium renders every bundled example.

One browser launch serves every page: the test drives Chromium through its DevTools protocol
over a pipe (``--remote-debugging-pipe``: JSON messages ending in a NUL byte on file
descriptors 3 and 4; Chrome DevTools Protocol, "Page", "Runtime", "Log", "Network" and
"Emulation" domains, from the protocol's published reference). For each report it checks:
no console error, no exception, no network request; the page's text (from the DOM)
carries the title and the port quantities; the screenshot is not blank; printing to PDF
works. One page is also dumped with the command-line ``--dump-dom`` and its text compared.
The dark preference (``prefers-color-scheme``) is emulated once and must darken the page.

Skips with a message only when no Chromium is installed (.ci/run installs Debian's package).
"""
from __future__ import annotations

import base64
import fcntl
import io
import json
import os
import re
import select
import shutil
import subprocess
import tempfile
import time
from html.parser import HTMLParser
from pathlib import Path

import pytest

from conftest import CIRCUITS

BROWSERS = ("chromium", "chromium-browser")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-extensions", "--disable-default-apps", "--mute-audio", "--hide-scrollbars"]
EXAMPLES = sorted(CIRCUITS.glob("*.pw"))


def browser() -> str | None:
    for name in BROWSERS:
        path = shutil.which(name)
        if path:
            return path
    return None


class DevTools:
    """A minimal DevTools-protocol client over the browser's pipe (fd 3 in, fd 4 out)."""

    def __init__(self, exe: str, profile: str):
        to_child_r, self._w = os.pipe()
        self._r, from_child_w = os.pipe()
        a, b = to_child_r, from_child_w

        def fds():  # in the child: the browser reads commands on 3 and writes answers on 4
            x = fcntl.fcntl(a, fcntl.F_DUPFD, 10)
            y = fcntl.fcntl(b, fcntl.F_DUPFD, 10)
            os.dup2(x, 3)
            os.dup2(y, 4)

        self.proc = subprocess.Popen([exe, *FLAGS, f"--user-data-dir={profile}", "--remote-debugging-pipe",
                                      "about:blank"], stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                     stderr=subprocess.DEVNULL, pass_fds=(3, 4), preexec_fn=fds)
        os.close(to_child_r)
        os.close(from_child_w)
        self._buf = b""
        self._id = 0
        self.events: list[dict] = []
        self.session = None

    def _read(self, deadline: float) -> dict:
        while b"\0" not in self._buf:
            left = deadline - time.monotonic()
            if left <= 0 or not select.select([self._r], [], [], left)[0]:
                raise TimeoutError("the browser did not answer")
            chunk = os.read(self._r, 1 << 20)
            if not chunk:
                raise EOFError("the browser closed its pipe")
            self._buf += chunk
        msg, self._buf = self._buf.split(b"\0", 1)
        return json.loads(msg)

    def call(self, method: str, timeout: float = 30.0, session: bool = True, **params) -> dict:
        self._id += 1
        msg = {"id": self._id, "method": method, "params": params}
        if session and self.session:
            msg["sessionId"] = self.session
        os.write(self._w, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + timeout
        while True:
            m = self._read(deadline)
            if m.get("id") == self._id:
                if "error" in m:
                    raise RuntimeError(f"{method}: {m['error']}")
                return m["result"]
            self.events.append(m)

    def wait_event(self, method: str, timeout: float = 30.0) -> dict:
        deadline = time.monotonic() + timeout
        for k, m in enumerate(self.events):
            if m.get("method") == method:
                return self.events.pop(k)
        while True:
            m = self._read(deadline)
            if m.get("method") == method:
                return m
            self.events.append(m)

    def close(self) -> None:
        try:
            self.call("Browser.close", timeout=5, session=False)
        except Exception:
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
        os.close(self._w)
        os.close(self._r)


def problems(events: list[dict]) -> list[str]:
    """Console errors, uncaught exceptions, error log entries and any request beyond the file itself."""
    out = []
    for e in events:
        m, p = e.get("method"), e.get("params", {})
        if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert", "warning"):
            out.append("console: " + " ".join(str(a.get("value", a.get("description"))) for a in p.get("args", [])))
        elif m == "Runtime.exceptionThrown":
            out.append("exception: " + p["exceptionDetails"].get("text", ""))
        elif m == "Log.entryAdded" and p["entry"]["level"] in ("error", "warning"):
            out.append(f"log: {p['entry']['source']}: {p['entry']['text']}")
        elif m == "Network.requestWillBeSent" and not p["request"]["url"].startswith(("file:", "data:", "about:")):
            out.append("request: " + p["request"]["url"])
        elif m == "Network.loadingFailed":
            out.append("failed load: " + p.get("errorText", ""))
    return out


def not_blank(png: bytes) -> tuple[int, float]:
    """(grey levels in use, fraction of pixels unlike the corner) of a PNG screenshot."""
    Image = pytest.importorskip("PIL.Image")  # Pillow comes with matplotlib (the test extra)
    im = Image.open(io.BytesIO(png)).convert("L")
    small = im.resize((max(1, im.width // 8), max(1, im.height // 8)))
    hist = small.histogram()
    bg = small.getpixel((0, 0))
    differ = sum(n for level, n in enumerate(hist) if abs(level - bg) > 24)
    return sum(1 for n in hist if n), differ / (small.width * small.height)


class _Text(HTMLParser):
    def __init__(self):
        super().__init__()
        self.parts, self._skip = [], 0

    def handle_starttag(self, tag, attrs):
        self._skip += tag in ("style", "script", "title")

    def handle_endtag(self, tag):
        self._skip -= tag in ("style", "script", "title")

    def handle_data(self, d):
        if not self._skip:
            self.parts.append(d)


def words(html: str) -> str:
    t = _Text()
    t.feed(html)
    return re.sub(r"\s+", " ", "".join(t.parts)).strip()


def _make(src: Path, out: Path):
    from solver import api
    rep = api.report(src, date="2026-12-03 00:00 UTC")
    path = out / (src.stem + ".html")
    path.write_text(rep.html, encoding="utf-8")
    return src, path, rep.to_dict(), rep.html


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    # the reports are made side by side on every core (each in a worker's main thread, where the
    # report's timers work); the browser part below is one launch for every page
    from concurrent.futures import ProcessPoolExecutor
    out = tmp_path_factory.mktemp("browser")
    with ProcessPoolExecutor(max_workers=max(1, min(4, os.cpu_count() or 1))) as pool:
        return list(pool.map(_make, EXAMPLES, [out] * len(EXAMPLES)))


def test_every_bundled_example_renders_in_chromium(reports, tmp_path):
    exe = browser()
    if exe is None:
        pytest.skip("no Chromium installed (Debian: apt-get install -y chromium; .ci/run does it)")
    dt = DevTools(exe, tempfile.mkdtemp(prefix="pw-chromium-", dir=tmp_path))
    try:
        target = dt.call("Target.createTarget", session=False, url="about:blank")["targetId"]
        dt.session = dt.call("Target.attachToTarget", session=False, targetId=target, flatten=True)["sessionId"]
        for domain in ("Page", "Runtime", "Log", "Network"):
            dt.call(f"{domain}.enable")
        dt.call("Emulation.setDeviceMetricsOverride", width=900, height=1200, deviceScaleFactor=1, mobile=False)
        for src, path, data, html in reports:
            dt.events.clear()
            dt.call("Page.navigate", url=path.as_uri())
            dt.wait_event("Page.loadEventFired")
            page = dt.call("Runtime.evaluate", returnByValue=True, expression=(
                "({text: document.body.innerText, dom: document.documentElement.outerHTML, "
                "sized: [...document.querySelectorAll('math')].every(m => m.getBoundingClientRect().width > 0)})"))
            page = page["result"]["value"]
            text, dom = page["text"], page["dom"]
            shot = base64.b64decode(dt.call("Page.captureScreenshot", format="png")["data"])
            pdf = base64.b64decode(dt.call("Page.printToPDF", printBackground=True, generateTaggedPDF=False,
                                           generateDocumentOutline=False)["data"])
            assert problems(dt.events) == [], src.name
            title = data["sections"]["netlist"]["title"]
            assert title in text, src.name
            assert "Port quantities" in text and "not a safety assessment" in text
            for q in data["sections"]["ports"]["quantities"]:
                assert re.search(rf"\b{q}\b", text), (src.name, q)
            assert words(dom).count(title) >= 1
            colours, inked = not_blank(shot)
            assert colours > 8 and inked > 0.01, (src.name, colours, inked)
            assert pdf.startswith(b"%PDF-") and pdf.count(b"/Type /Page") >= 2, src.name
            assert page["sized"] is True, src.name   # MathML laid out natively: every formula has a size
        # the dark preference darkens the page (the light page's corner is near white)
        dt.call("Emulation.setEmulatedMedia", features=[{"name": "prefers-color-scheme", "value": "dark"}])
        dt.call("Page.navigate", url=reports[0][1].as_uri())
        dt.wait_event("Page.loadEventFired")
        Image = pytest.importorskip("PIL.Image")
        dark = Image.open(io.BytesIO(base64.b64decode(dt.call("Page.captureScreenshot", format="png")["data"])))
        assert sum(dark.convert("RGB").getpixel((2, 2))) < 150
    finally:
        dt.close()


def test_dump_dom_text_matches_the_file(reports, tmp_path):
    exe = browser()
    if exe is None:
        pytest.skip("no Chromium installed (Debian: apt-get install -y chromium; .ci/run does it)")
    src, path, data, html = next(r for r in reports if r[0].stem == "hydrophone_ce_stage")
    p = subprocess.run([exe, *FLAGS, f"--user-data-dir={tempfile.mkdtemp(dir=tmp_path)}", "--dump-dom",
                        path.as_uri()], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stderr[-2000:]
    dumped = words(p.stdout)
    assert dumped == words(html)       # the browser's DOM holds exactly the text we wrote
    assert "Frequency response" in dumped and "hydrophone receiver, CE gain stage" in dumped


def test_the_blank_check_sees_a_blank_screenshot():
    Image = pytest.importorskip("PIL.Image")
    buf = io.BytesIO()
    Image.new("RGB", (400, 300), (253, 253, 251)).save(buf, format="PNG")
    colours, inked = not_blank(buf.getvalue())
    assert colours == 1 and inked == 0.0
