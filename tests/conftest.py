"""Fixtures shared by the test modules."""

import pytest


@pytest.fixture(scope="module")
def browser():
    """Headless Chromium for one browser test module (path and flags: browser_session.py).

    The module calls ``browser_session.require_chromium()`` first, so a missing browser skips
    it, or fails it under CI. Scoped to the module, not the session: only one sync Playwright
    can run at a time in a process, and a session-wide one would stay open for the whole run.
    Imported here, not at the top, so model-only test runs do not load Panel and Playwright.
    """
    from browser_session import ARGS, CHROMIUM
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        yield b
        b.close()
