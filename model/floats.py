"""The few numpy functions the stage code calls, for one case of plain floats.

Each equation and each Newton solve of the chain is written once, in terms of ``m``: numpy
for arrays, or this module for the floats of one case, where numpy's per-call overhead
would cost ten times the arithmetic (see :func:`model.transport.solve_transport`). The
functions keep numpy's meaning on one number: ``where(c, a, b)`` is ``a if c else b``,
``any`` and ``all`` of one truth value are that value, ``log(0)`` is ``-inf``,
``asarray`` and ``errstate`` do nothing. What numpy turns into ``inf`` or ``nan`` with a
warning (a division by zero, ``exp`` of more than 709.78) raises in Python instead; the
chain then solves that case on arrays.
"""

from __future__ import annotations

import contextlib
import math

nan = math.nan
inf = math.inf
minimum = min
maximum = max
isnan = math.isnan
isfinite = math.isfinite
tanh = math.tanh
sqrt = math.sqrt
cbrt = math.cbrt
log10 = math.log10
exp = math.exp  # raises OverflowError above 709.78 (the chain then takes the array path)
_NO_CONTEXT = contextlib.nullcontext()


def asarray(x, dtype=None):
    """``x`` itself (a float already)."""
    return x


def errstate(**_ignored):
    """A context that does nothing: floats raise rather than warn."""
    return _NO_CONTEXT


def where(condition, a, b):
    """``a`` if ``condition`` else ``b``.

    >>> where(2.0 > 1.0, "a", "b")
    'a'
    """
    return a if condition else b


# numpy's names on purpose: of one truth value, any and all are that value
any = bool
all = bool


def clip(x, lo, hi):
    """``x`` held within ``[lo, hi]``.

    >>> clip(5.0, 0.0, 1.0), clip(-1.0, 0.0, 1.0)
    (1.0, 0.0)
    """
    return min(max(x, lo), hi)


def ones_like(x):
    """1.0 (the shape of one number)."""
    return 1.0


def zeros_like(x):
    """0.0 (the shape of one number)."""
    return 0.0


def log(x):
    """Natural logarithm, ``-inf`` at 0 and ``nan`` below (as numpy's).

    >>> log(0.0), log(1.0)
    (-inf, 0.0)
    """
    if x > 0.0:
        return math.log(x)
    return -math.inf if x == 0.0 else math.nan
