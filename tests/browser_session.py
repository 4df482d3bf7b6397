"""Shared pieces of the browser tests (tests/*_browser.py): served screens, Chromium, logs.

Skipping is decided here: without Chromium the importing module is skipped, unless CI is
set, when it fails. The browser itself is the ``browser`` fixture in conftest.py.
"""

import logging
import os
import re
import socket
import time
import urllib.request
from contextlib import contextmanager
from pathlib import Path

import panel as pn
import pytest

CHROMIUM = os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium")
ARGS = [
    "--headless=new",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
ARTIFACTS = Path(__file__).resolve().parent.parent / "artifacts"
LOCAL_HOSTS = {"127.0.0.1", "localhost"}


def require_chromium() -> None:
    """Skip the calling module without Chromium; fail instead when CI is set."""
    if not Path(CHROMIUM).exists():
        if os.environ.get("CI"):
            pytest.fail(f"Chromium not found at {CHROMIUM} and CI is set", pytrace=False)
        pytest.skip(f"Chromium not found at {CHROMIUM}", allow_module_level=True)


@contextmanager
def served_screens(routes: dict, probe: str, *, startup_s: float = 90, request_s: float = 60):
    """Serve screens ``{path: factory}`` on a free port; yields the base URL (no path).

    Waits until ``probe`` (a path) answers HTTP 200: up to ``startup_s`` seconds in all,
    ``request_s`` seconds per request. Both are generous on purpose: a GET builds a whole
    session, which on two busy cores can take seconds, and a timed-out request would only
    be asked again (and build another session).
    """
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    from o2transit.dashboard.app import SecurityHeaders
    from o2transit.dashboard.sessions import RequestActivity

    server = pn.serve(
        routes,
        address="127.0.0.1",
        port=port,
        show=False,
        threaded=True,
        websocket_origin=[f"127.0.0.1:{port}", f"localhost:{port}"],
        # every browser test runs under the served page's CSP, and builds screens ahead
        transforms=[SecurityHeaders, RequestActivity],
    )
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + startup_s
    while True:
        try:
            urllib.request.urlopen(base + probe, timeout=request_s).close()
            break
        except OSError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)
    try:
        yield base
    finally:
        server.stop()
        server.join(timeout=5)


@contextmanager
def served(path: str, factory, **wait):
    """Serve one screen on a free port; yields its URL once it answers HTTP 200.

    ``wait``: ``startup_s`` and ``request_s`` as in :func:`served_screens`.
    """
    with served_screens({path: factory}, path, **wait) as base:
        yield base + path


class ErrorLog(logging.Handler):
    """Collects server-side errors (callbacks run in the server thread, not the page)."""

    def __init__(self):
        super().__init__(level=logging.ERROR)
        self.records = []

    def emit(self, record):
        self.records.append(self.format(record))


# Tornado logs this when a page's websocket closes while the server is still writing to it,
# as happens when the context is torn down mid-update: a property of closing, not of the app.
TEARDOWN_NOISE = ("WebSocketClosedError",)


@contextmanager
def checked_context(browser, *, ignore_server: tuple[str, ...] = TEARDOWN_NOISE, **options):
    """A browser context that fails the test on a page error or a server error log.

    ``options`` go to ``browser.new_context``; ``ctx.requests`` lists the URLs its pages
    asked for. A server record containing one of the ``ignore_server`` texts is not counted.
    """
    server_errors = ErrorLog()
    logging.getLogger().addHandler(server_errors)
    ctx = browser.new_context(**options)
    errors, requests = [], []
    ctx.on("weberror", lambda e: errors.append(str(e.error)))
    ctx.on("request", lambda r: requests.append(r.url))
    ctx.requests = requests
    try:
        yield ctx
    finally:
        ctx.close()
        logging.getLogger().removeHandler(server_errors)
    assert not errors, errors
    records = [r for r in server_errors.records if not any(t in r for t in ignore_server)]
    assert not records, records


def address(page) -> str:
    return page.evaluate("location.href")  # page.url lags behind history.pushState


def wait_for(read, ok, timeout: float, failure):
    """Call ``read()`` every 50 ms until ``ok`` accepts its value; returns that value.

    After ``timeout`` seconds: ``AssertionError(failure(value read once more))``.
    """
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = read()
        if ok(value):
            return value
        time.sleep(0.05)
    raise AssertionError(failure(read()))


def wait_match(read, pattern: str, what: str, timeout: float = 10.0) -> str:
    """Wait until the text ``read()`` matches ``pattern``; ``what`` names it in the failure."""
    return wait_for(
        read,
        lambda text: re.search(pattern, text),
        timeout,
        lambda text: f"{what} {text!r} never matched {pattern!r}",
    )


def wait_address(page, pattern: str, timeout: float = 10.0) -> str:
    return wait_match(lambda: address(page), pattern, "address", timeout)
