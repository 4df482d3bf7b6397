"""Does a case label or note look like it names a person? A warning, never a refusal.

No Panel import here. ``model.casebook.check_label`` refuses a long run of digits (a record
number); a name or a date of birth it cannot tell from a teaching label, so the screen warns
when text looks like one: a date (``12/03/1961``, ``1961-03-12``, ``DOB``), a title before a
capitalised word (``Mr Smith``), or two capitalised words in a row that are not words a
unit labels cases with (``John Smith``, but not ``Bed 4`` or ``ARDS Teaching``).
"""

from __future__ import annotations

import itertools
import re

_DATE = re.compile(
    r"\b\d{1,2}\s*[./-]\s*\d{1,2}\s*[./-]\s*(?:\d{2}|\d{4})\b"
    r"|\b(?:19|20)\d{2}\s*[./-]\s*\d{1,2}\s*[./-]\s*\d{1,2}\b"
    r"|\b(?:d\.?o\.?b\.?|born|geb\.?|n[ée]e?)\b",
    re.IGNORECASE,
)
_TITLE = re.compile(r"\b(?:Mr|Mrs|Ms|Miss|Mx|Dr|Prof|Sr|Fr)\.?\s+[A-Z][a-z]+")
_CAPITALISED = re.compile(r"\b[A-Z][a-z]+(?:[-'][A-Z]?[a-z]+)?\b")

CASE_WORDS = frozenset(
    """
    bed beds bay day days night nights shift morning evening ward room unit icu itu hdu
    picu nicu ccu case cases teaching topic lecture demo example test plan plans ards
    sepsis septic shock pneumonia covid copd asthma trauma burns cardiac surgery post op
    prone proning ecmo ventilated vent patient left right week monday tuesday wednesday
    thursday friday saturday sunday january february march april may june july august
    september october november december admission follow up
    """.split()  # noqa: SIM905 - a word list reads best as words
)
"""Words a unit labels a case with: two of them in a row are not taken for a name."""


def identifier_hints(*texts: str) -> list[str]:
    """What in ``texts`` looks like a name or a date of birth, as short phrases ([] if none).

    Examples
    --------
    >>> identifier_hints("John Smith 12/03/1961")
    ["a date ('12/03/1961')", "a name ('John Smith')"]
    >>> identifier_hints("Bed 4 Night", "ARDS Teaching case")
    []
    """
    hints: list[str] = []
    for text in texts:
        for m in _DATE.finditer(text or ""):
            hints.append(f"a date ({m.group(0)!r})")
        for m in _TITLE.finditer(text or ""):
            hints.append(f"a name ({m.group(0)!r})")
        words = list(_CAPITALISED.finditer(text or ""))
        for a, b in itertools.pairwise(words):
            between = (text or "")[a.end() : b.start()]
            if between.strip(" ") or {a.group(0).lower(), b.group(0).lower()} & CASE_WORDS:
                continue
            name = f"{a.group(0)} {b.group(0)}"
            hints.append(f"a name ({name!r})")
    out: list[str] = []
    for h in hints:
        if h not in out:
            out.append(h)
    return out


def identifier_message(label: str, notes: str = "") -> str:
    """A warning when the label or notes look like they identify a person, else ''."""
    hints = identifier_hints(label, notes)
    if not hints:
        return ""
    return (
        "⚠ Saved, but the label or notes look like they hold "
        + " and ".join(hints)
        + ". Case files are plain text and not protected: if this identifies a person, "
        "rename the case (bed, day or topic only) and remove it from the notes."
    )
