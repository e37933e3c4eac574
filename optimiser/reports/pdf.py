"""PDF of a report page, printed by a headless Chromium over its DevTools pipe.

Why Chromium: the report's charts are drawn by plotly.js as SVG in the page, and a
browser prints SVG as vector graphics, so the PDF shows exactly the charts of the HTML
report; Chromium's print engine honours ``break-inside: avoid`` on table rows and repeats
table headers on each page; the page size and a footer with page numbers are set per
print. It works offline (every network request is refused), and CI already installs
Debian's ``chromium`` for the HTML test. Nothing is downloaded at run time.

The browser is found as ``$OPTIMISER_CHROMIUM``, else ``chromium`` or
``chromium-browser`` on the PATH. The protocol is spoken over ``--remote-debugging-pipe``
(JSON messages ending in a NUL byte on file descriptors 3 and 4), so no client library
and no network port are needed.
"""

from __future__ import annotations

import base64
import contextlib
import html
import json
import os
import shutil
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

PAPER_SIZES_IN: dict[str, tuple[float, float]] = {
    "a4": (210.0 / 25.4, 297.0 / 25.4),   # ISO 216 A4, 210 mm x 297 mm
    "letter": (8.5, 11.0),                # US letter, 8.5 in x 11 in
}
"""Paper width and height [in] by name."""

MARGIN_IN = 15.0 / 25.4
"""Page margin on every side [in] (15 mm); the footer sits in the bottom margin."""

PRINTABLE_WIDTH_PX = 680
"""Width the charts are laid out at for print [CSS px]: fits inside A4 (180 mm = 680 px)
and US letter (186 mm) between 15 mm margins."""

_TIMEOUT_S = 120.0


class PdfUnavailableError(RuntimeError):
    """No PDF could be made (no browser, or the browser failed); the message is one line."""


@dataclass(frozen=True)
class PageFooter:
    """Text at the foot of every page, left of the page number."""

    text: str


def find_browser() -> str | None:
    """The Chromium executable to print with, or None when there is none."""
    chosen = os.environ.get("OPTIMISER_CHROMIUM")
    if chosen:
        return chosen if Path(chosen).is_file() else None
    return shutil.which("chromium") or shutil.which("chromium-browser")


def _footer_template(footer: PageFooter) -> str:
    return ("<div style='font-family:Helvetica,Arial,sans-serif;font-size:7.5pt;"
            "color:#444;width:100%;margin:0 15mm;display:flex;"
            "justify-content:space-between'>"
            f"<span>{html.escape(footer.text)}</span>"
            "<span>page <span class='pageNumber'></span> of "
            "<span class='totalPages'></span></span></div>")


class _Pipe:
    """Requests and replies over Chromium's DevTools pipe."""

    def __init__(self, process: subprocess.Popen, write_fd: int, read_fd: int) -> None:
        self.process = process
        self.write_fd = write_fd
        self.read_fd = read_fd
        self.buffer = b""
        self.next_id = 0
        self.events: list[dict[str, Any]] = []

    def _message(self, deadline: float) -> dict[str, Any]:
        while b"\0" not in self.buffer:
            if time.monotonic() > deadline:
                raise PdfUnavailableError("the browser did not answer in time")
            chunk = os.read(self.read_fd, 1 << 20)
            if not chunk:
                raise PdfUnavailableError("the browser closed before the page was printed")
            self.buffer += chunk
        raw, self.buffer = self.buffer.split(b"\0", 1)
        return json.loads(raw)

    def call(self, method: str, session: str | None = None, **params: Any) -> dict[str, Any]:
        self.next_id += 1
        message: dict[str, Any] = {"id": self.next_id, "method": method, "params": params}
        if session:
            message["sessionId"] = session
        os.write(self.write_fd, json.dumps(message).encode() + b"\0")
        deadline = time.monotonic() + _TIMEOUT_S
        while True:
            reply = self._message(deadline)
            if reply.get("id") == self.next_id:
                if "error" in reply:
                    raise PdfUnavailableError(f"the browser refused {method}: "
                                         f"{reply['error'].get('message', '')}")
                return reply.get("result", {})
            self.events.append(reply)

    def wait_event(self, name: str) -> None:
        deadline = time.monotonic() + _TIMEOUT_S
        while not any(e.get("method") == name for e in self.events):
            self.events.append(self._message(deadline))


def _launch(browser: str, profile: Path) -> _Pipe:
    to_browser_r, to_browser_w = os.pipe()
    from_browser_r, from_browser_w = os.pipe()

    def child_fds() -> None:  # the protocol's fixed descriptors: 3 in, 4 out
        # close_fds=False: the closing of other descriptors would run after this and
        # close 3 and 4; Python opens every other descriptor non-inheritable anyway.
        reading, writing = os.dup(to_browser_r), os.dup(from_browser_w)
        os.dup2(reading, 3)
        os.dup2(writing, 4)

    command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               "--disable-background-networking", "--disable-component-update",
               "--disable-sync", "--disable-extensions", "--mute-audio",
               "--proxy-server=127.0.0.1:9", "--host-resolver-rules=MAP * ~NOTFOUND",
               f"--user-data-dir={profile}", "--remote-debugging-pipe", "about:blank"]
    try:
        process = subprocess.Popen(command, stdin=subprocess.DEVNULL,
                                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                                   close_fds=False, preexec_fn=child_fds)
    except OSError as error:
        raise PdfUnavailableError(f"the browser {browser} could not start ({error})") from None
    finally:
        os.close(to_browser_r)
        os.close(from_browser_w)
    return _Pipe(process, to_browser_w, from_browser_r)


def _print(pipe: _Pipe, page: Path, paper: str, footer: PageFooter) -> bytes:
    target = pipe.call("Target.createTarget", url="about:blank")["targetId"]
    session = pipe.call("Target.attachToTarget", targetId=target, flatten=True)["sessionId"]
    pipe.call("Page.enable", session)
    pipe.call("Page.navigate", session, url=page.resolve().as_uri())
    pipe.wait_event("Page.loadEventFired")
    # The page sets window.reportReady to a promise that settles once every chart is drawn.
    pipe.call("Runtime.evaluate", session, expression="Promise.resolve(window.reportReady)",
              awaitPromise=True)
    width_in, height_in = PAPER_SIZES_IN[paper]
    result = pipe.call(
        "Page.printToPDF", session, paperWidth=width_in, paperHeight=height_in,
        marginTop=MARGIN_IN, marginBottom=MARGIN_IN, marginLeft=MARGIN_IN,
        marginRight=MARGIN_IN, printBackground=True, displayHeaderFooter=True,
        headerTemplate="<span></span>", footerTemplate=_footer_template(footer))
    return base64.b64decode(result["data"])


def html_to_pdf(page: Path, paper: str, footer: PageFooter) -> bytes:
    """The PDF of the HTML file ``page`` on ``paper`` ("a4" or "letter"), with
    ``footer`` and "page N of M" at the foot of every page.

    Raises
    ------
    PdfUnavailableError
        No browser was found, or it failed; the message says which, in one line.
    """
    if paper not in PAPER_SIZES_IN:
        raise ValueError(f"paper must be one of {sorted(PAPER_SIZES_IN)}, got {paper!r}")
    browser = find_browser()
    if browser is None:
        raise PdfUnavailableError("no Chromium browser found (install chromium, or set "
                             "OPTIMISER_CHROMIUM to its path)")
    with tempfile.TemporaryDirectory(prefix="optimiser-pdf-") as profile:
        pipe = _launch(browser, Path(profile))
        try:
            data = _print(pipe, page, paper, footer)
            with contextlib.suppress(PdfUnavailableError):  # it may close before answering
                pipe.call("Browser.close")
        finally:
            os.close(pipe.write_fd)
            os.close(pipe.read_fd)
            try:
                pipe.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                pipe.process.kill()
                pipe.process.wait()
    return data
