"""Fixtures shared by the test modules, and the hypothesis profiles.

Profiles (``--hypothesis-profile=NAME`` picks one by hand):

- ``ci``: loaded when ``CI`` is set. Derandomized (each test's examples follow from its own
  source, so a run passes or fails the same way every time), no example database written
  into the checkout, a 10 s deadline per example as a guard against hangs.
- ``dev``: loaded otherwise, so ``make test`` on a laptop behaves as CI does.
- ``explore``: ``make fuzz``. Random seeds, a local example database in ``.hypothesis/``
  (git-ignored) that replays what it found; every budget scaled by ``O2TRANSIT_FUZZ_SCALE``
  (see ``tests/properties.py``). A counter-example found there becomes an ``@example`` on
  the test, and the model is mended, not the test.
"""

import os
from datetime import timedelta

import pytest
from hypothesis import HealthCheck, settings
from hypothesis.database import DirectoryBasedExampleDatabase

_REPEATABLE = dict(  # noqa: C408
    derandomize=True,
    database=None,
    deadline=timedelta(seconds=10),
    print_blob=True,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.register_profile("ci", **_REPEATABLE)
settings.register_profile("dev", **_REPEATABLE)
settings.register_profile(
    "explore",
    derandomize=False,
    database=DirectoryBasedExampleDatabase(
        os.path.join(os.path.dirname(os.path.dirname(__file__)), ".hypothesis", "examples")
    ),
    deadline=None,
    print_blob=True,
    max_examples=round(100 * float(os.environ.get("O2TRANSIT_FUZZ_SCALE", "1"))),
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("ci" if os.environ.get("CI") else "dev")


def pytest_collection_modifyitems(items):
    """Mark every hypothesis test ``property``, so ``make fuzz`` can run only those."""
    for item in items:
        if getattr(getattr(item, "obj", None), "is_hypothesis_test", False):
            item.add_marker(pytest.mark.property)


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
