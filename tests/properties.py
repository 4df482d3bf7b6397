"""Example budgets for the property tests, one knob for the whole suite.

``make test`` and CI run every property test derandomized with the budget written beside
it (``budget(60)``); ``make fuzz`` multiplies every budget by ``O2TRANSIT_FUZZ_SCALE`` and
draws random seeds. The profiles themselves are registered in ``tests/conftest.py``.
"""

from __future__ import annotations

import os

from hypothesis import settings

#: Multiplier on every property test's example budget (``make fuzz`` sets it; 1 otherwise).
SCALE = max(float(os.environ.get("O2TRANSIT_FUZZ_SCALE", "1")), 0.01)


def budget(max_examples: int) -> settings:
    """Settings for a property test worth ``max_examples`` examples at scale 1.

    No per-example deadline: the profile's deadline applies to tests without a budget, and
    slow examples on a shared 2-core machine must not turn into flaky failures.
    """
    return settings(max_examples=max(1, round(max_examples * SCALE)), deadline=None)
