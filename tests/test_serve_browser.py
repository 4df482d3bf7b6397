"""``o2transit serve --address 0.0.0.0`` works for a browser that knows this machine by a name.

The browser is told to resolve an invented, non-loopback host name to 127.0.0.1
(Chromium's ``--host-resolver-rules``), so every packet stays on this machine while the page's
Host and Origin carry a name that is not ``localhost`` or ``127.0.0.1``: exactly what a
student's laptop sends when a lecturer serves the page to a room. The live connection must be
accepted (the numbers appear and follow a change), not refused by the origin check.
"""

from __future__ import annotations

import socket

import pytest
from browser_session import ARGS, CHROMIUM, require_chromium
from o2transit.dashboard.app import serve
from playwright.sync_api import expect, sync_playwright

require_chromium()

NAME = "o2transit-ward.test"  # .test is reserved for testing (RFC 2606): never a real host


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def lan_server():
    port = _free_port()
    server = serve(port=port, address="0.0.0.0", show=False, threaded=True)
    try:
        yield port
    finally:
        server.stop()
        server.join(timeout=5)


def test_page_opened_under_another_name_goes_live(lan_server):
    port = lan_server
    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=CHROMIUM,
            args=[*ARGS, f"--host-resolver-rules=MAP {NAME} 127.0.0.1"],
        )
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 900})
            errors = []
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.goto(f"http://{NAME}:{port}/", timeout=90_000)
            numbers = page.locator(".o2-numbers")
            expect(numbers).to_contain_text("PaO2", timeout=60_000)
            cell = page.locator(".o2-numbers tr[data-key=arterial_po2] td.val")
            before = cell.evaluate("e => e.textContent")
            box = page.locator(".o2-in-altitude_m input")
            box.fill("3000")
            box.press("Enter")
            expect(cell).not_to_have_text(before, timeout=30_000)
            assert not errors, errors
        finally:
            browser.close()
