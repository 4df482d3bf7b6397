"""Shared pieces of the address and lecture browser tests: a served screen, Chromium, logs.

Skipping is decided here: without Chromium the importing module is skipped, unless CI is
set, when it fails.
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


def require_chromium() -> None:
    """Skip the calling module without Chromium; fail instead when CI is set."""
    if not Path(CHROMIUM).exists():
        if os.environ.get("CI"):
            pytest.fail(f"Chromium not found at {CHROMIUM} and CI is set", pytrace=False)
        pytest.skip(f"Chromium not found at {CHROMIUM}", allow_module_level=True)


@contextmanager
def served(path: str, factory):
    """Serve one screen on a free port; yields its URL once it answers HTTP 200."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    server = pn.serve(
        {path: factory},
        address="127.0.0.1",
        port=port,
        show=False,
        threaded=True,
        websocket_origin=[f"127.0.0.1:{port}", f"localhost:{port}"],
    )
    url = f"http://127.0.0.1:{port}{path}"
    deadline = time.monotonic() + 20
    while True:
        try:
            urllib.request.urlopen(url, timeout=5).close()
            break
        except OSError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)
    try:
        yield url
    finally:
        server.stop()
        server.join(timeout=5)


class ErrorLog(logging.Handler):
    """Collects server-side errors (callbacks run in the server thread, not the page)."""

    def __init__(self):
        super().__init__(level=logging.ERROR)
        self.records = []

    def emit(self, record):
        self.records.append(self.format(record))


@contextmanager
def checked_context(browser, **options):
    """A browser context that fails the test on a page error or a server error log."""
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
    assert not server_errors.records, server_errors.records


def address(page) -> str:
    return page.evaluate("location.href")  # page.url lags behind history.pushState


def wait_address(page, pattern: str, timeout: float = 10.0) -> str:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        href = address(page)
        if re.search(pattern, href):
            return href
        time.sleep(0.05)
    raise AssertionError(f"address {address(page)!r} never matched {pattern!r}")
