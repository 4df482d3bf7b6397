"""Session state of lecture mode: a lesson's steps, or factors moved alone or combined.

No Panel import here. :class:`LectureState` steps through lessons and holds the factors'
settings; the factors themselves are in :mod:`.factors`, their combination and shares in
:mod:`.stack`, the frame the plot draws is made by :mod:`.frame`, and the page address is
read and written by :mod:`.query`.

Every number the lecture view shows is made by the model: each step or factor setting
becomes a :class:`~dashboard.case.state.CaseState` case solved by
:func:`model.solve_transport`; the **reference** (one word for it throughout) is the default
case, a resting adult at sea level (pH 7.40, PCO2 40 mmHg, 37 °C). Two derived numbers are
written on the plot:

* the **P50 shift**, arterial P50 of the case minus the reference P50;
* the **O2 extracted per litre** at the tissue point and its change from the reference
  (:mod:`.frame` says how it is read, at a held tissue PO2 or at the venous PO2 of the
  solve).

The thick curve is the blood under the case's arterial conditions (pH, PCO2, temperature,
2,3-DPG, CO, P50), the thin one under its venous conditions (with the Bohr shift); the plot
shows saturation or O2 content (:attr:`LectureState.view`).
"""

from __future__ import annotations

import hashlib
import stat
from functools import lru_cache
from pathlib import Path

import param

from ...model.lesson import (
    CAPTION_CHARS,
    DEFAULT_TISSUE_PO2_MMHG,
    TISSUE_PO2_LIMITS_MMHG,
    TITLE_CHARS,
    Lesson,
    LessonError,
    LessonStep,
    lesson_files,
    load_lesson,
)
from ...model.scenario import LESSON_DIR
from ..case.formatting import fmt
from ..case.state import CaseState
from .factors import FACTORS, FETAL_P50_MMHG, Factor
from .frame import TissuePoint, build_frame
from .query import PRESSURE_UNITS, QUERY_KEYS, VIEWS, query_pairs, query_updates
from .stack import active, combined_inputs, p50_shares

__all__ = ["FACTORS", "FETAL_P50_MMHG", "LESSON_DIR", "MODES", "VIEWS", "Factor", "LectureState"]

MODES = ("lesson", "factor")


SHOWN_PARAMS = (
    "mode",
    "lesson",
    "step",
    "factor",
    "factor_value",
    "tissue_po2_mmhg",
    "pressure_unit",
    "combine",
    "stacked",
    "view",
)
"""The parameters that decide what the lecture page shows (frame and address follow them)."""


@lru_cache(maxsize=64)
def _lesson_version(path: str, _digest: str) -> Lesson:
    return load_lesson(path)


_SHARED_LESSON_MAX_BYTES = 1 << 20


def shared_lesson(path) -> Lesson:
    """A lesson file read and checked once per content of the file, shared by every session
    (a :class:`Lesson` is frozen). Only a small regular file is shared; anything else, and a
    refused file every time, goes through :func:`load_lesson`, whose message names the file
    and the problem."""
    try:
        st = Path(path).stat()
        if not stat.S_ISREG(st.st_mode) or st.st_size > _SHARED_LESSON_MAX_BYTES:
            return load_lesson(path)
        digest = hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return load_lesson(path)
    return _lesson_version(str(path), digest)


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
    combine = param.Boolean(
        default=False,
        label="Combine factors",
        doc="In factor mode, keep each factor set while the next one moves.",
    )
    stacked = param.Dict(
        default={}, doc="With combine: the other factors set, key -> value (model units)."
    )
    view = param.Selector(
        default="saturation", objects=list(VIEWS), label="Plot", doc="SO2 or O2 content."
    )

    frame = param.Dict(default={}, doc="Everything the plot shows, in display units.")
    message = param.String(default="", doc="Why the last request was not applied.")
    lesson_problems = param.List(default=[], doc="Lesson files that could not be read.")

    def __init__(self, lesson_dir: Path | str = LESSON_DIR, **params):
        self._lessons: dict[str, Lesson] = {}
        problems = []
        for path in lesson_files(lesson_dir):
            try:
                lesson = shared_lesson(path)
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

    def first_step(self) -> bool:
        """Home: the lesson's first step."""
        return self.go_to(1)

    def last_step(self) -> bool:
        """End: the lesson's last step."""
        return self.go_to(self.step_count or 1)

    def choose_lesson(self, key: str) -> bool:
        if key not in self._lessons:
            known = ", ".join(self._lessons) or "none"
            self.message = f"Lesson {key!r} not found; lessons here: {known}."
            return False
        self.message = ""
        self.param.update(mode="lesson", lesson=key, step=1)
        return True

    def add_lesson(self, lesson: Lesson) -> None:
        """Offer ``lesson`` (e.g. one just made) in the picker, under its key, and show it."""
        self._lessons[lesson.key] = lesson
        self.param.lesson.objects = list(self._lessons)
        self.choose_lesson(lesson.key)
        self.param.trigger("lesson")  # the same key may now hold other steps

    # ------------------------------------------------------------------ one factor
    @property
    def current_factor(self) -> Factor:
        return FACTORS[self.factor]

    def choose_factor(self, key: str) -> bool:
        """Move to factor mode with ``key`` to be moved.

        Alone (``combine`` off), ``key`` starts at its reference value with all else at rest;
        combined, the factors set so far keep their values and ``key`` its last one.
        """
        if key not in FACTORS:
            self.message = f"Factor {key!r} unknown; choose one of {', '.join(FACTORS)}."
            return False
        self.message = ""
        if not self.combine:
            self.param.update(
                mode="factor", factor=key, factor_value=FACTORS[key].reference, stacked={}
            )
            return True
        stacked = active({**self.stacked, self.factor: self.factor_value})
        value = stacked.pop(key, FACTORS[key].reference)
        self.param.update(mode="factor", factor=key, factor_value=value, stacked=stacked)
        return True

    def set_combine(self, on: bool) -> None:
        """Combine factors or move one alone (which drops the others set)."""
        updates = {"mode": "factor", "combine": bool(on)}
        if not on:
            updates["stacked"] = {}
        self.message = ""
        self.param.update(**updates)

    def factor_values(self) -> dict[str, float]:
        """The factors applied now, key -> value (model units); others are at reference."""
        if self.combine:
            return {**self.stacked, self.factor: self.factor_value}
        return {self.factor: self.factor_value}

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
    def _target(self) -> tuple[dict, TissuePoint, dict[str, str]]:
        """(inputs, tissue point, texts: heading, caption, tag) of what is to be shown."""
        lesson = self.current_lesson
        if self.mode == "lesson" and lesson:
            s = lesson.steps[min(self.step, len(lesson.steps)) - 1]
            texts = {
                "heading": s.title,
                "caption": s.caption,
                "tag": f"Step {s.number} of {len(lesson.steps)}",
            }
            return s.inputs, TissuePoint(s.tissue_point, s.tissue_po2_mmhg), texts
        f = self.current_factor
        be = self._reference_base_excess()
        tissue = TissuePoint("held", self.tissue_po2_mmhg)
        if not self.combine:
            texts = {
                "heading": f.heading(self.factor_value, self.case),
                "caption": f.caption,
                "tag": "One factor",
            }
            return f.inputs(self.factor_value, be), tissue, texts
        moved = active(self.factor_values())
        heading = " + ".join(FACTORS[k].heading(v, self.case) for k, v in moved.items())
        texts = {
            "heading": heading or f.heading(self.factor_value, self.case),
            "caption": "",  # written from the shares once the case is solved
            "tag": "Factors combined",
        }
        return combined_inputs(moved, be), tissue, texts

    def _reference_base_excess(self) -> float:
        return float(self.reference.result.arterial.base_excess_mmol_l)

    def _shares_caption(self, shares) -> str:
        """The caption of combined factors: the total shift and how it is shared."""
        unit, d = self.pressure_unit, self.case.pressure_digits + 1
        to = self.case.pressure_to_display
        ref_p50 = float(self.reference.result.arterial.p50_mmhg)
        total = to(float(self.case.result.arterial.p50_mmhg)) - to(ref_p50)
        if not shares:
            return (
                f"{self.current_factor.caption} Combined: each factor you set keeps its value "
                "while you choose and move the next."
            )
        # a shift converts as a pressure: mmHg -> kPa is a plain scale
        parts = [
            f"{FACTORS[s.key].heading(s.value, self.case)} "
            f"{fmt(to(s.p50_shift_mmhg), d, True)} {unit}"
            for s in shares
        ]
        if len(shares) == 1:
            return (
                f"Alone, {parts[0]} of P50. Choose another factor and move it: the ones set "
                "keep their values, and each one's share of the shift is written here."
            )
        rest = total - sum(to(s.p50_shift_mmhg) for s in shares)
        return (
            f"Together the P50 moves {fmt(total, d, True)} {unit}. Each factor moved alone "
            f"from the reference: {'; '.join(parts)}. The remaining {fmt(rest, d, True)} "
            f"{unit} is their interaction: each factor scales the P50 rather than adding to "
            "it, so one-at-a-time shifts do not sum exactly."
        )

    @param.depends(*SHOWN_PARAMS, watch=True)
    def _update(self) -> None:
        if self.current_lesson and self.step > self.step_count:
            with param.parameterized.discard_events(self):
                self.step = self.step_count
        # The cases convert for the heading and the frame: give them the unit first.
        for s in (self.case, self.reference):
            s.pressure_unit = self.pressure_unit
        inputs, tissue, texts = self._target()
        if not self.case.apply_inputs(inputs, name=texts["heading"]):
            self.message = self.case.error_message
            return
        shares = None
        if self.mode == "factor" and self.combine:
            ref_p50 = float(self.reference.result.arterial.p50_mmhg)
            moved = active(self.factor_values())
            shares = p50_shares(moved, ref_p50, self._reference_base_excess())
            texts["caption"] = self._shares_caption(shares)
        self.frame = build_frame(self.case, self.reference, tissue, texts, self.view, shares)

    # ------------------------------------------------------------------ as a lesson step
    def shown_step(self) -> LessonStep:
        """What is shown as a lesson step: its case inputs, tissue point, title and caption.

        The title and caption are the heading and caption shown, cut to the lengths a lesson
        file allows; the lesson maker lets the lecturer rewrite them.
        """
        inputs, tissue, _ = self._target()
        frame = self.frame
        return LessonStep(
            number=0,
            title=frame["heading"][: TITLE_CHARS[1]],
            caption=frame["caption"][: CAPTION_CHARS[1]],
            tissue_po2_mmhg=tissue.po2_mmhg,
            inputs=dict(inputs),
            tissue_point=tissue.point,
        )

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
