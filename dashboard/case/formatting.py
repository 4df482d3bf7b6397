"""How the case screen writes a number: fixed digits, a true minus sign, no "−0"."""

from __future__ import annotations


def fmt(value: float | None, digits: int, signed: bool = False) -> str:
    """'−0.1', '+2', '0.0' (never '−0.0'); '' for None."""
    if value is None:
        return ""
    if round(value, digits) == 0:
        value = 0.0  # no "−0.0": a change too small to show is no change
        signed = False
    text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
    return text.replace("-", "−")


MAX_SHOWN_CHARS = 40
"""A refused value longer than this is shortened in a notice [characters]."""


def quoted(raw: str) -> str:
    """``repr(raw)``, shortened to about :data:`MAX_SHOWN_CHARS` characters for a notice.

    >>> quoted("9" * 5000)
    "'99999999999999999999999999999999999999…' (5000 characters)"
    """
    if len(raw) <= MAX_SHOWN_CHARS:
        return repr(raw)
    return f"{raw[: MAX_SHOWN_CHARS - 2]!r}"[:-1] + f"…' ({len(raw)} characters)"
