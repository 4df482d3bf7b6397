"""The lecture page address: ``?lesson=rest-to-altitude&step=3`` or ``?factor=ph&ph=7.2``.

No Panel import. :func:`query_pairs` writes what a :class:`~.state.LectureState` shows;
:func:`query_updates` reads address pairs back into state updates, with a message for each
value that cannot be used (its default is kept). Factor values are in model units.
Combined factors: ``?factor=ph&ph=7.2&temperature_c=39.5&combine=true`` (the factor
named by ``factor`` is the one whose slider shows). The O2 content plot: ``&view=content``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ...model.lesson import DEFAULT_TISSUE_PO2_MMHG, TISSUE_PO2_LIMITS_MMHG, Lesson
from .factors import FACTORS

if TYPE_CHECKING:
    from .state import LectureState

PRESSURE_UNITS = ("mmHg", "kPa")
VIEWS = ("saturation", "content")
QUERY_KEYS = (
    "lesson",
    "step",
    "factor",
    "tissue_po2_mmhg",
    "pressure_unit",
    "combine",
    "view",
    *FACTORS,
)


def query_pairs(state: LectureState) -> dict[str, str]:
    """Address pairs that give back this view (lesson and step, or factor and value)."""
    if state.mode == "lesson" and state.current_lesson:
        out = {"lesson": state.lesson, "step": str(state.step)}
    else:
        f = state.current_factor
        out = {"factor": f.key, f.key: f.query_text(state.factor_value)}
        if state.combine:
            for key, value in state.stacked.items():
                if key != f.key:
                    out[key] = FACTORS[key].query_text(value)
            out["combine"] = "true"
        if state.tissue_po2_mmhg != DEFAULT_TISSUE_PO2_MMHG:
            out["tissue_po2_mmhg"] = format(state.tissue_po2_mmhg, ".10g")
    if state.pressure_unit != "mmHg":
        out["pressure_unit"] = state.pressure_unit
    if state.view != VIEWS[0]:
        out["view"] = state.view
    return out


def _tissue(raw: str, messages: list[str]) -> float | None:
    lo, hi = TISSUE_PO2_LIMITS_MMHG
    try:
        tissue = float(raw)
    except ValueError:
        tissue = float("nan")
    if lo <= tissue <= hi:
        return tissue
    messages.append(
        f"Tissue PO2 = {raw!r} is outside the allowed range {lo:g}–{hi:g} "
        f"mmHg; the default {DEFAULT_TISSUE_PO2_MMHG:g} mmHg is used"
    )
    return None


def _combine(raw: str | None, messages: list[str]) -> bool:
    if raw is None:
        return False
    word = raw.strip().lower()
    if word in ("true", "1", "yes"):
        return True
    if word not in ("false", "0", "no"):
        messages.append(f"combine = {raw!r} must be true or false; one factor is shown")
    return False


def _factor_updates(pairs: dict[str, str], messages: list[str]) -> dict:
    key = pairs["factor"]
    if key not in FACTORS:
        messages.append(f"factor = {key!r} is not one of {', '.join(FACTORS)}; the lesson is shown")
        return {}
    f = FACTORS[key]
    updates: dict = {"mode": "factor", "factor": key, "factor_value": f.reference}
    if key in pairs:
        value, why = f.parse(pairs[key])
        if value is None:
            messages.append(why)
        else:
            updates["factor_value"] = value
    combine = _combine(pairs.get("combine"), messages)
    others = [k for k in FACTORS if k in pairs and k != key]
    if combine:
        stacked = {}
        for other in others:
            value, why = FACTORS[other].parse(pairs[other])
            if value is None:
                messages.append(why)
            elif value != FACTORS[other].reference:
                stacked[other] = value
        updates.update(combine=True, stacked=stacked)
    else:
        updates.update(combine=False, stacked={})
        messages += [
            f"{other} = {pairs[other]!r} is used only with combine=true; ignored"
            for other in others
        ]
    if "tissue_po2_mmhg" in pairs:
        tissue = _tissue(pairs["tissue_po2_mmhg"], messages)
        if tissue is not None:
            updates["tissue_po2_mmhg"] = tissue
    return updates


def _lesson_updates(
    pairs: dict[str, str], lessons: dict[str, Lesson], current: str | None, messages: list[str]
) -> dict:
    updates: dict = {}
    key = pairs.get("lesson")
    if key is not None and key not in lessons:
        known = ", ".join(lessons) or "none"
        messages.append(f"lesson = {key!r} not found (lessons: {known}); the first is shown")
        key = None
    if key is not None:
        updates.update(mode="lesson", lesson=key)
    lesson = lessons.get(updates.get("lesson", current))
    raw = pairs.get("step")
    if raw is not None and lesson is not None:
        n = len(lesson.steps)
        # ASCII digits only: str.isdigit() also takes '²', which int() refuses
        if raw.isascii() and raw.isdigit() and len(raw) <= 6 and 1 <= int(raw) <= n:
            updates["step"] = int(raw)
        else:
            shown = repr(raw) if len(raw) <= 40 else f"{raw[:38]!r}… ({len(raw)} characters)"
            messages.append(f"step = {shown} is outside the allowed range 1–{n}; step 1 is shown")
            updates["step"] = 1
    return updates


def query_updates(state: LectureState, pairs: dict[str, str]) -> tuple[dict, list[str]]:
    """(parameter updates for ``state``, a message for each value not used) from ``pairs``."""
    messages: list[str] = []
    updates: dict = {}
    unit = pairs.get("pressure_unit")
    if unit is not None:
        if unit in PRESSURE_UNITS:
            updates["pressure_unit"] = unit
        else:
            messages.append(f"pressure_unit = {unit!r} is not one of mmHg, kPa; mmHg is used")
    view = pairs.get("view")
    if view is not None:
        if view in VIEWS:
            updates["view"] = view
        else:
            messages.append(f"view = {view!r} is not one of {', '.join(VIEWS)}; saturation is used")
    if "factor" in pairs:
        updates.update(_factor_updates(pairs, messages))
    if updates.get("mode") != "factor":
        updates.update(_lesson_updates(pairs, state.lessons, state.lesson, messages))
    for key in pairs:
        if key not in QUERY_KEYS:
            messages.append(f"{key!r} is not a setting of the lecture page; ignored")
    return updates, messages
