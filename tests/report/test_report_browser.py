"""The HTML report in headless Chromium: it loads, logs nothing, fetches nothing, shows.

Chromium is driven through the DevTools protocol over a pipe (``--remote-debugging-pipe``:
JSON messages ending in a NUL byte on file descriptors 3 and 4), so no websocket library
or network port is needed. Needs Debian's ``chromium`` package (``apt-get install -y
chromium``); without ``/usr/bin/chromium`` the test is skipped and says why.
"""

from __future__ import annotations

import base64
import fcntl
import io
import json
import os
import re
import select
import subprocess
import time
from pathlib import Path

import numpy as np
import pytest

CHROMIUM = Path("/usr/bin/chromium")
# CI sets MECHFIT_REQUIRE_BROWSER=1: there a missing browser fails instead of skipping
NO_BROWSER = not CHROMIUM.exists() and not os.environ.get("MECHFIT_REQUIRE_BROWSER")
TIMEOUT = 90.0
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-extensions", "--remote-debugging-pipe"]


class DevTools:
    """A minimal DevTools-protocol client over Chromium's debugging pipe."""

    def __init__(self, profile: Path) -> None:
        to_browser_r, self._to_browser = os.pipe()
        self._from_browser, from_browser_w = os.pipe()

        def wire():  # in the child: the protocol pipes become fds 3 (in) and 4 (out)
            r = fcntl.fcntl(to_browser_r, fcntl.F_DUPFD, 10)
            w = fcntl.fcntl(from_browser_w, fcntl.F_DUPFD, 10)
            os.dup2(r, 3)
            os.dup2(w, 4)

        profile.mkdir(parents=True, exist_ok=True)
        self._log = open(profile.parent / "chromium-stderr.txt", "wb")  # noqa: SIM115
        self.process = subprocess.Popen(
            [str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", "about:blank"],
            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=self._log,
            preexec_fn=wire, close_fds=False)
        os.close(to_browser_r)
        os.close(from_browser_w)
        self._buffer = b""
        self._next_id = 0
        self.events: list[dict] = []
        self.deadline = time.monotonic() + TIMEOUT

    def _read_message(self) -> dict:
        while b"\0" not in self._buffer:
            left = self.deadline - time.monotonic()
            if left <= 0:
                raise TimeoutError("Chromium did not answer in time")
            ready, _, _ = select.select([self._from_browser], [], [], left)
            if ready:
                chunk = os.read(self._from_browser, 1 << 20)
                if not chunk:
                    raise RuntimeError("Chromium closed the debugging pipe")
                self._buffer += chunk
        message, self._buffer = self._buffer.split(b"\0", 1)
        return json.loads(message)

    def call(self, method: str, session: str | None = None, **params) -> dict:
        self._next_id += 1
        request = {"id": self._next_id, "method": method, "params": params}
        if session:
            request["sessionId"] = session
        os.write(self._to_browser, json.dumps(request).encode() + b"\0")
        while True:
            message = self._read_message()
            if message.get("id") == self._next_id:
                if "error" in message:
                    raise RuntimeError(f"{method}: {message['error']}")
                return message.get("result", {})
            self.events.append(message)

    def wait_for(self, method: str) -> dict:
        for event in self.events:
            if event.get("method") == method:
                return event
        while True:
            message = self._read_message()
            self.events.append(message)
            if message.get("method") == method:
                return message

    def close(self) -> None:
        try:
            self.call("Browser.close")
        except (RuntimeError, TimeoutError, OSError):
            pass
        try:
            self.process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()
        for fd in (self._to_browser, self._from_browser):
            try:
                os.close(fd)
            except OSError:
                pass
        self._log.close()


def load_in_chromium(page: Path, profile: Path, width: int = 1280, height: int = 2000,
                     pdf: bool = False):
    """Open ``page``; return (events, screenshot PNG bytes, facts evaluated in the page).

    With ``pdf`` the facts also hold the page printed to PDF (``facts["pdf"]``, bytes).
    """
    browser = DevTools(profile)
    try:
        target = browser.call("Target.createTarget", url="about:blank")["targetId"]
        session = browser.call("Target.attachToTarget", targetId=target,
                               flatten=True)["sessionId"]
        for domain in ("Page", "Runtime", "Log", "Network"):
            browser.call(f"{domain}.enable", session)
        browser.call("Emulation.setDeviceMetricsOverride", session, width=width,
                     height=height, deviceScaleFactor=1, mobile=False)
        browser.call("Page.navigate", session, url=page.resolve().as_uri())
        browser.wait_for("Page.loadEventFired")
        facts = browser.call("Runtime.evaluate", session, returnByValue=True, expression=(
            "JSON.stringify({title: document.title, h2: document.querySelectorAll('h2').length,"
            " images: document.images.length, broken: Array.from(document.images)"
            ".filter(i => !(i.complete && i.naturalWidth > 0)).length,"
            " scripts: document.scripts.length})"))["result"]["value"]
        shot = browser.call("Page.captureScreenshot", session, format="png")["data"]
        facts = json.loads(facts)
        if pdf:
            facts["pdf"] = base64.b64decode(browser.call(
                "Page.printToPDF", session, printBackground=False)["data"])
        return browser.events, base64.b64decode(shot), facts
    finally:
        browser.close()


@pytest.mark.skipif(NO_BROWSER,
                    reason="no /usr/bin/chromium: install Debian's package with "
                           "'apt-get install -y chromium' to run the browser test")
def test_report_loads_in_headless_chromium(written_report, tmp_path):
    from PIL import Image

    events, png, facts = load_in_chromium(written_report.html, tmp_path / "profile", pdf=True)
    assert facts["title"] == "A + B to P at three temperatures (invented example)"
    assert facts["h2"] == 10 and facts["scripts"] == 0
    assert facts["images"] >= 10 and facts["broken"] == 0
    console = [e for e in events if e.get("method") in (
        "Runtime.consoleAPICalled", "Runtime.exceptionThrown")]
    assert console == [], f"console messages: {console[:3]}"
    logged = [e["params"]["entry"] for e in events if e.get("method") == "Log.entryAdded"]
    assert [e for e in logged if e.get("level") in ("error", "warning")] == []
    failed = [e for e in events if e.get("method") == "Network.loadingFailed"]
    assert failed == []
    page_uri = written_report.html.resolve().as_uri()
    requested = [e["params"]["request"]["url"] for e in events
                 if e.get("method") == "Network.requestWillBeSent"]
    assert page_uri in requested
    outside = [u for u in requested if u != page_uri and not u.startswith("data:")]
    assert outside == [], f"the page fetched {outside}"
    image = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
    assert image.shape == (2000, 1280)
    assert image.std() > 20.0  # not blank: text and figures on white
    assert (image < 128).mean() > 0.005
    pdf = facts["pdf"]  # printing for a group meeting works too
    assert pdf.startswith(b"%PDF") and len(re.findall(rb"/Type\s*/Page[^s]", pdf)) >= 3


@pytest.mark.skipif(NO_BROWSER,
                    reason="no /usr/bin/chromium: install Debian's package with "
                           "'apt-get install -y chromium' to run the browser test")
def test_the_browser_check_sees_console_errors_and_failed_loads(tmp_path):
    page = tmp_path / "faulty.html"
    page.write_text("<!DOCTYPE html><html><head><title>faulty</title></head><body><h2>x</h2>"
                    '<img src="missing.png"><script>console.error("broken"); missing();'
                    "</script></body></html>", encoding="utf-8")
    events, png, facts = load_in_chromium(page, tmp_path / "profile", 400, 300)
    methods = [e.get("method") for e in events]
    assert facts["broken"] == 1 and facts["scripts"] == 1
    assert "Runtime.consoleAPICalled" in methods and "Runtime.exceptionThrown" in methods
    assert "Network.loadingFailed" in methods
    assert png.startswith(b"\x89PNG")
