"""Session state of lecture mode: a lesson's steps, or one factor moved alone.

No Panel import here. :class:`LectureState` steps through lessons and holds the one
factor's setting; the factors themselves are in :mod:`.factors`, the frame the plot draws
is made by :mod:`.frame`, and the page address is read and written by :mod:`.query`.

Every number the lecture view shows is made by the model: each step or factor setting
becomes a :class:`~dashboard.case.state.CaseState` case solved by
:func:`model.solve_transport`; the faint reference is the default case (a resting adult at
sea level, pH 7.40, PCO2 40 mmHg, 37 °C). Two derived numbers are written on the plot:

* the **P50 shift**, arterial P50 of the case minus the reference P50;
* the **change in O2 unloaded per litre at the tissue point**: blood that leaves the lung at
  its arterial point and comes to equilibrium with a tissue PO2 gives up
  ``10 (CaO2 - C(P_tissue))`` mL O2 per litre, with ``C`` from :func:`model.oxygen_content`
  on the case's own curve; the change is that amount minus the reference case's at the same
  tissue PO2.

The curve drawn is the blood under the case's arterial conditions (pH, PCO2, temperature,
2,3-DPG, CO, P50); the venous Bohr shift is left out so that one factor shows alone.
"""

from __future__ import annotations

from pathlib import Path

import param

from ...model.lesson import (
    DEFAULT_TISSUE_PO2_MMHG,
    TISSUE_PO2_LIMITS_MMHG,
    Lesson,
    LessonError,
    lesson_files,
    load_lesson,
)
from ...model.scenario import LESSON_DIR
from ..case.state import CaseState
from .factors import FACTORS, FETAL_P50_MMHG, Factor
from .frame import build_frame
from .query import PRESSURE_UNITS, QUERY_KEYS, query_pairs, query_updates

__all__ = ["FACTORS", "FETAL_P50_MMHG", "LESSON_DIR", "MODES", "Factor", "LectureState"]

MODES = ("lesson", "factor")


class LectureState(param.Parameterized):
    """What the lecture screen shows: a lesson step or one factor, and the derived frame."""

    mode = param.Selector(default="lesson", objects=list(MODES), label="Show")
    lesson = param.Selector(default=None, objects=[], allow_None=True, label="Lesson")
    step = param.Integer(default=1, bounds=(1, None), label="Step")
    factor = param.Selector(default="ph", objects=list(FACTORS), label="Factor")
    factor_value = param.Number(default=7.40, label="Factor value (model unit)")
    tissue_po2_mmhg = param.Number(
        default=DEFAULT_TISSUE_PO2_MMHG,
        bounds=TISSUE_PO2_LIMITS_MMHG,
        label="Tissue PO2 (mmHg)",
        doc="PO2 at which the unloading is read in factor mode [mmHg].",
    )
    pressure_unit = param.Selector(default="mmHg", objects=list(PRESSURE_UNITS), label="Unit")

    frame = param.Dict(default={}, doc="Everything the plot shows, in display units.")
    message = param.String(default="", doc="Why the last request was not applied.")
    lesson_problems = param.List(default=[], doc="Lesson files that could not be read.")

    def __init__(self, lesson_dir: Path | str = LESSON_DIR, **params):
        self._lessons: dict[str, Lesson] = {}
        problems = []
        for path in lesson_files(lesson_dir):
            try:
                lesson = load_lesson(path)
            except LessonError as exc:
                problems.append(str(exc))
                continue
            self._lessons[lesson.key] = lesson
        self.case = CaseState()
        self.reference = CaseState()
        super().__init__(**params)
        self.param.lesson.objects = list(self._lessons)
        self.lesson_problems = problems
        if self.lesson is None and self._lessons:
            self.lesson = next(iter(self._lessons))
        if not self._lessons:
            self.mode = "factor"
        self._update()

    # ------------------------------------------------------------------ lessons
    @property
    def lessons(self) -> dict[str, Lesson]:
        return dict(self._lessons)

    @property
    def current_lesson(self) -> Lesson | None:
        return self._lessons.get(self.lesson) if self.lesson else None

    @property
    def step_count(self) -> int:
        lesson = self.current_lesson
        return len(lesson.steps) if lesson else 0

    def step_titles(self) -> list[str]:
        """'1. Title' for each step of the current lesson (the index list)."""
        lesson = self.current_lesson
        return [f"{s.number}. {s.title}" for s in lesson.steps] if lesson else []

    def go_to(self, number: int) -> bool:
        """Show step ``number`` (from 1) of the current lesson; False and a message if none."""
        n = self.step_count
        if not n:
            self.message = "No lesson is loaded."
            return False
        if not 1 <= number <= n:
            self.message = f"Step {number} does not exist; this lesson has steps 1–{n}."
            return False
        self.message = ""
        self.param.update(mode="lesson", step=int(number))
        return True

    def next_step(self) -> bool:
        if self.mode != "lesson":
            return self.go_to(self.step)
        return self.step < self.step_count and self.go_to(self.step + 1)

    def previous_step(self) -> bool:
        if self.mode != "lesson":
            return self.go_to(self.step)
        return self.step > 1 and self.go_to(self.step - 1)

    def choose_lesson(self, key: str) -> bool:
        if key not in self._lessons:
            known = ", ".join(self._lessons) or "none"
            self.message = f"Lesson {key!r} not found; lessons here: {known}."
            return False
        self.message = ""
        self.param.update(mode="lesson", lesson=key, step=1)
        return True

    # ------------------------------------------------------------------ one factor
    @property
    def current_factor(self) -> Factor:
        return FACTORS[self.factor]

    def choose_factor(self, key: str) -> bool:
        """Move to factor mode with ``key`` at its reference value (all else at rest)."""
        if key not in FACTORS:
            self.message = f"Factor {key!r} unknown; choose one of {', '.join(FACTORS)}."
            return False
        self.message = ""
        self.param.update(mode="factor", factor=key, factor_value=FACTORS[key].reference)
        return True

    def factor_control(self, key: str | None = None) -> dict:
        """A factor's slider in display units: label, unit, lo, hi, step, value, reference.

        ``key`` defaults to the current factor; another factor shows its reference value.
        """
        f = FACTORS[key] if key else self.current_factor
        return f.control(self.factor_value if f.key == self.factor else f.reference, self.case)

    def set_factor_value(self, shown: float) -> bool:
        """Set the factor from a value in display units; refuse it outside the range."""
        f = self.current_factor
        c = self.factor_control()
        if not _within(shown, c["lo"], c["hi"]):
            unit = f" {c['unit']}" if c["unit"] else ""
            self.message = (
                f"{f.label} = {shown:g} is outside the allowed range "
                f"{c['lo']:.4g}–{c['hi']:.4g}{unit}; kept {c['value']:.4g}{unit}."
            )
            return False
        value = min(max(f.from_shown(shown, self.case), f.lo), f.hi)
        self.message = ""
        self.param.update(mode="factor", factor_value=value)
        return True

    def set_tissue_po2(self, shown: float) -> bool:
        """Set the tissue PO2 (factor mode) from display units; refuse it outside 5–100 mmHg."""
        lo_mmhg, hi_mmhg = TISSUE_PO2_LIMITS_MMHG
        lo, hi = (self.case.pressure_to_display(v) for v in TISSUE_PO2_LIMITS_MMHG)
        if not _within(shown, lo, hi):
            self.message = (
                f"Tissue PO2 = {shown:g} is outside the allowed range {lo:.3g}–{hi:.3g} "
                f"{self.pressure_unit}; kept the last value."
            )
            return False
        mmhg = min(max(self.case.pressure_from_display(shown), lo_mmhg), hi_mmhg)
        self.message = ""
        self.tissue_po2_mmhg = mmhg
        return True

    # ------------------------------------------------------------------ derivation
    def _target(self) -> tuple[dict, float, str, str, str]:
        """(inputs, tissue PO2, heading, caption, short tag) of what is to be shown."""
        lesson = self.current_lesson
        if self.mode == "lesson" and lesson:
            s = lesson.steps[min(self.step, len(lesson.steps)) - 1]
            tag = f"Step {s.number} of {len(lesson.steps)}"
            return s.inputs, s.tissue_po2_mmhg, s.title, s.caption, tag
        f = self.current_factor
        be = float(self.reference.result.arterial.base_excess_mmol_l)
        return (
            f.inputs(self.factor_value, be),
            self.tissue_po2_mmhg,
            f.heading(self.factor_value, self.case),
            f.caption,
            "One factor",
        )

    @param.depends(
        "mode",
        "lesson",
        "step",
        "factor",
        "factor_value",
        "tissue_po2_mmhg",
        "pressure_unit",
        watch=True,
    )
    def _update(self) -> None:
        if self.current_lesson and self.step > self.step_count:
            with param.parameterized.discard_events(self):
                self.step = self.step_count
        # The cases convert for the heading and the frame: give them the unit first.
        for s in (self.case, self.reference):
            s.pressure_unit = self.pressure_unit
        inputs, tissue, heading, caption, tag = self._target()
        if not self.case.apply_inputs(inputs, name=heading):
            self.message = self.case.error_message
            return
        self.frame = build_frame(self.case, self.reference, tissue, heading, caption, tag)

    # ------------------------------------------------------------------ page address
    QUERY_KEYS = QUERY_KEYS

    def to_query(self) -> dict[str, str]:
        """Address pairs that give back this view (lesson and step, or factor and value)."""
        return query_pairs(self)

    def restore_query(self, pairs: dict[str, str]) -> list[str]:
        """Apply address pairs; return a message for each value not used (its default kept)."""
        updates, messages = query_updates(self, pairs)
        if updates:
            self.param.update(**updates)
        return messages


def _within(shown: float, lo: float, hi: float) -> bool:
    """``lo <= shown <= hi``, forgiving the rounding of a value converted for display."""
    tol = 1e-9 * max(abs(lo), abs(hi), 1.0)
    return lo - tol <= shown <= hi + tol
