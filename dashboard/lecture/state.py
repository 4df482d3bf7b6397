"""Session state of lecture mode: a lesson's steps, or one factor moved alone.

No Panel import here. Every number the lecture view shows is made here by the model: each
step or factor setting becomes a :class:`~dashboard.case.state.CaseState` case solved by
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

import dataclasses
from pathlib import Path

import numpy as np
import param

from ... import model
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

FETAL_P50_MMHG = 19.0
"""Standard-state P50 of fetal blood [mmHg]. From memory: typical fetal values are about
19-20 mmHg (the Siggaard-Andersen 1990 tanh model gives about 20 mmHg for all-fetal Hb)."""


@dataclasses.dataclass(frozen=True)
class Factor:
    """One factor the lecturer can move alone; ``values`` are model units of ``name``."""

    key: str
    label: str
    unit: str  # the model unit; "pressure" means mmHg shown in the display unit
    reference: float
    lo: float
    hi: float
    step: float
    caption: str
    percent: bool = False  # shown ×100 with a % sign
    choices: tuple[tuple[str, float], ...] = ()  # a two-state factor instead of a range

    def inputs(self, value: float, base_excess_mmol_l: float = 0.0) -> dict:
        """CaseState inputs (scenario key names) that move this factor alone.

        PCO2 moves at a constant base excess (the reference case's), so the pH follows it.
        """
        if self.key == "fetal":
            return {"p50_mmhg": FETAL_P50_MMHG} if value >= 0.5 else {}
        if self.key == "paco2_mmhg":
            return {"paco2_mmhg": value, "base_excess_mmol_l": base_excess_mmol_l}
        return {self.key: value}


FACTORS: dict[str, Factor] = {
    f.key: f
    for f in (
        Factor(
            "ph",
            "pH",
            "",
            7.40,
            6.90,
            7.70,
            0.01,
            "Only the pH moves; PCO2, temperature and everything else stay as at rest.",
        ),
        Factor(
            "paco2_mmhg",
            "PCO2",
            "pressure",
            40.0,
            20.0,
            80.0,
            1.0,
            "Only PCO2 moves, at the resting base excess, so the pH follows the CO2. In "
            "the lung more CO2 also leaves less room for O2 in alveolar gas: the arterial "
            "point falls.",
        ),
        Factor(
            "temperature_c",
            "Temperature",
            "°C",
            37.0,
            33.0,
            42.0,
            0.1,
            "Only the blood temperature moves; pH and PCO2 stay as given.",
        ),
        Factor(
            "dpg_mmol_l",
            "2,3-DPG",
            "mmol/L",
            model.NORMAL_DPG_MMOL_L,
            0.0,
            10.0,
            0.1,
            "Only red-cell 2,3-DPG moves; 5 mmol/L is normal, stored blood has little.",
        ),
        Factor(
            "cohb_fraction",
            "COHb",
            "%",
            0.0,
            0.0,
            0.5,
            0.01,
            "Only the COHb fraction moves: fewer sites carry O2, and those left hold it tighter.",
            percent=True,
        ),
        Factor(
            "fetal",
            "Fetal Hb",
            "",
            0.0,
            0.0,
            1.0,
            1.0,
            f"Fetal blood, modelled as a standard P50 of {FETAL_P50_MMHG:g} mmHg (a typical "
            "value); all else as in the adult.",
            choices=(("adult", 0.0), ("fetal", 1.0)),
        ),
    )
}

MODES = ("lesson", "factor")


def _p(x) -> float:
    return float(np.asarray(x))


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
    pressure_unit = param.Selector(default="mmHg", objects=["mmHg", "kPa"], label="Unit")

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

    def _to_shown(self, f: Factor, value: float) -> float:
        if f.unit == "pressure":
            return self.case.pressure_to_display(value)
        return 100.0 * value if f.percent else value

    def _from_shown(self, f: Factor, value: float) -> float:
        if f.unit == "pressure":
            return self.case.pressure_from_display(value)
        return value / 100.0 if f.percent else value

    def factor_control(self, key: str | None = None) -> dict:
        """A factor's slider in display units: label, unit, lo, hi, step, value, reference.

        ``key`` defaults to the current factor; another factor shows its reference value.
        """
        f = FACTORS[key] if key else self.current_factor
        current = f.key == self.factor
        unit = self.pressure_unit if f.unit == "pressure" else f.unit
        step = f.step
        if f.unit == "pressure" and self.pressure_unit == "kPa":
            step = 0.1
        elif f.percent:
            step = 100.0 * f.step
        return {
            "label": f.label,
            "unit": unit,
            "lo": self._to_shown(f, f.lo),
            "hi": self._to_shown(f, f.hi),
            "step": step,
            "value": self._to_shown(f, self.factor_value if current else f.reference),
            "reference": self._to_shown(f, f.reference),
            "choices": f.choices,
        }

    def set_factor_value(self, shown: float) -> bool:
        """Set the factor from a value in display units; refuse it outside the range."""
        f = self.current_factor
        c = self.factor_control()
        tol = 1e-9 * max(abs(c["lo"]), abs(c["hi"]), 1.0)
        if not c["lo"] - tol <= shown <= c["hi"] + tol:
            unit = f" {c['unit']}" if c["unit"] else ""
            self.message = (
                f"{f.label} = {shown:g} is outside the allowed range "
                f"{c['lo']:.4g}–{c['hi']:.4g}{unit}; kept {c['value']:.4g}{unit}."
            )
            return False
        value = min(max(self._from_shown(f, shown), f.lo), f.hi)
        self.message = ""
        self.param.update(mode="factor", factor_value=value)
        return True

    def set_tissue_po2(self, shown: float) -> bool:
        """Set the tissue PO2 (factor mode) from display units; refuse it outside 5–100 mmHg."""
        lo, hi = (self.case.pressure_to_display(v) for v in TISSUE_PO2_LIMITS_MMHG)
        tol = 1e-9 * hi
        if not lo - tol <= shown <= hi + tol:
            self.message = (
                f"Tissue PO2 = {shown:g} is outside the allowed range {lo:.3g}–{hi:.3g} "
                f"{self.pressure_unit}; kept the last value."
            )
            return False
        lo_mmhg, hi_mmhg = TISSUE_PO2_LIMITS_MMHG
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
        c = self.factor_control()
        if f.choices:
            shown = {v: k for k, v in f.choices}[round(self.factor_value)]
            heading = f"{f.label}: {shown} blood"
        else:
            digits = 2 if c["step"] < 0.1 else (1 if c["step"] < 1 else 0)
            unit = f" {c['unit']}" if c["unit"] else ""
            heading = f"{f.label} {c['value']:.{digits}f}{unit}"
        be = _p(self.reference.result.arterial.base_excess_mmol_l)
        return (
            f.inputs(self.factor_value, be),
            self.tissue_po2_mmhg,
            heading,
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
        inputs, tissue, heading, caption, tag = self._target()
        for s in (self.case, self.reference):
            s.pressure_unit = self.pressure_unit
        if not self.case.apply_inputs(inputs, name=heading):
            self.message = self.case.error_message
            return
        self.frame = self._frame(tissue, heading, caption, tag)

    def _unloaded_ml_per_l(self, result, tissue_mmhg: float) -> tuple[float, float]:
        """(SO2 at the tissue PO2 [-], O2 given up per litre from arterial to tissue [mL/L])."""
        cond = result.arterial_conditions
        so2 = _p(model.saturation(tissue_mmhg, **cond))
        content = _p(
            model.oxygen_content(
                result.hb_g_dl,
                so2,
                tissue_mmhg,
                cohb_fraction=cond["cohb_fraction"],
                methb_fraction=cond["methb_fraction"],
            )
        )
        return so2, 10.0 * (_p(result.arterial.o2_content_ml_dl) - content)

    def _frame(self, tissue_mmhg: float, heading: str, caption: str, tag: str) -> dict:
        case, ref = self.case, self.reference
        now, base = case.result, ref.result
        view, ref_view = case.curve_view(), ref.curve_view()
        so2_t, unloaded = self._unloaded_ml_per_l(now, tissue_mmhg)
        so2_t_ref, unloaded_ref = self._unloaded_ml_per_l(base, tissue_mmhg)
        p50_now = _p(now.arterial.p50_mmhg)
        p50_ref = _p(base.arterial.p50_mmhg)
        to = case.pressure_to_display
        return {
            "heading": heading,
            "caption": caption,
            "tag": tag,
            "unit": self.pressure_unit,
            "digits": case.pressure_digits,
            "x": np.asarray(view["x"], dtype=float),
            "current": np.asarray(view["arterial"], dtype=float),
            "reference": np.asarray(ref_view["arterial"], dtype=float),
            "x_max": case.x_max_display(),
            "loading": view["loading"],
            "reference_loading": ref_view["loading"],
            "tissue_po2": to(tissue_mmhg),
            "tissue_so2": 100.0 * so2_t,
            "reference_tissue_so2": 100.0 * so2_t_ref,
            "p50": to(p50_now),
            "reference_p50": to(p50_ref),
            "p50_shift": to(p50_now) - to(p50_ref),
            "unloaded_ml_per_l": unloaded,
            "reference_unloaded_ml_per_l": unloaded_ref,
            "unloaded_change_ml_per_l": unloaded - unloaded_ref,
            "arterial_so2": 100.0 * _p(now.arterial.so2),
            "arterial_content_ml_dl": _p(now.arterial.o2_content_ml_dl),
            "hb_g_dl": _p(now.hb_g_dl),
            "do2_ml_min": _p(now.do2_ml_min),
        }

    # ------------------------------------------------------------------ page address
    def to_query(self) -> dict[str, str]:
        """Address pairs that give back this view (lesson and step, or factor and value)."""
        out: dict[str, str] = {}
        if self.mode == "lesson" and self.current_lesson:
            out = {"lesson": self.lesson, "step": str(self.step)}
        else:
            f = self.current_factor
            out["factor"] = f.key
            if f.key == "fetal":
                out["fetal"] = "true" if self.factor_value >= 0.5 else "false"
            else:
                out[f.key] = format(self.factor_value, ".10g")
            if self.tissue_po2_mmhg != DEFAULT_TISSUE_PO2_MMHG:
                out["tissue_po2_mmhg"] = format(self.tissue_po2_mmhg, ".10g")
        if self.pressure_unit != "mmHg":
            out["pressure_unit"] = self.pressure_unit
        return out

    QUERY_KEYS = ("lesson", "step", "factor", "tissue_po2_mmhg", "pressure_unit", *FACTORS)

    def restore_query(self, pairs: dict[str, str]) -> list[str]:
        """Apply address pairs; return a message for each value not used (its default kept)."""
        messages: list[str] = []
        updates: dict = {}
        unit = pairs.get("pressure_unit")
        if unit is not None:
            if unit in ("mmHg", "kPa"):
                updates["pressure_unit"] = unit
            else:
                messages.append(f"pressure_unit = {unit!r} is not one of mmHg, kPa; mmHg is used")
        if "factor" in pairs:
            key = pairs["factor"]
            if key not in FACTORS:
                messages.append(
                    f"factor = {key!r} is not one of {', '.join(FACTORS)}; the lesson is shown"
                )
            else:
                f = FACTORS[key]
                updates.update(mode="factor", factor=key, factor_value=f.reference)
                raw = pairs.get(key)
                if raw is not None:
                    value = self._parse_factor(f, raw, messages)
                    if value is not None:
                        updates["factor_value"] = value
                raw = pairs.get("tissue_po2_mmhg")
                if raw is not None:
                    lo, hi = TISSUE_PO2_LIMITS_MMHG
                    try:
                        tissue = float(raw)
                    except ValueError:
                        tissue = float("nan")
                    if lo <= tissue <= hi:
                        updates["tissue_po2_mmhg"] = tissue
                    else:
                        messages.append(
                            f"Tissue PO2 = {raw!r} is outside the allowed range {lo:g}–{hi:g} "
                            f"mmHg; the default {DEFAULT_TISSUE_PO2_MMHG:g} mmHg is used"
                        )
        if updates.get("mode") != "factor":
            key = pairs.get("lesson")
            if key is not None and key not in self._lessons:
                known = ", ".join(self._lessons) or "none"
                messages.append(
                    f"lesson = {key!r} not found (lessons: {known}); the first is shown"
                )
                key = None
            if key is not None:
                updates.update(mode="lesson", lesson=key)
            lesson = self._lessons.get(updates.get("lesson", self.lesson))
            raw = pairs.get("step")
            if raw is not None and lesson is not None:
                n = len(lesson.steps)
                if raw.isdigit() and 1 <= int(raw) <= n:
                    updates["step"] = int(raw)
                else:
                    messages.append(
                        f"step = {raw!r} is outside the allowed range 1–{n}; step 1 is shown"
                    )
                    updates["step"] = 1
        for key in pairs:
            if key not in self.QUERY_KEYS:
                messages.append(f"{key!r} is not a setting of the lecture page; ignored")
        if updates:
            self.param.update(**updates)
        return messages

    def _parse_factor(self, f: Factor, raw: str, messages: list[str]) -> float | None:
        if f.choices:
            word = raw.strip().lower()
            if word in ("true", "1", "yes", "fetal"):
                return 1.0
            if word in ("false", "0", "no", "adult"):
                return 0.0
            messages.append(f"{f.key} = {raw!r} must be true or false; adult blood is shown")
            return None
        unit = "mmHg" if f.unit == "pressure" else ("" if f.percent else f.unit)
        span = f"{f.lo:g}–{f.hi:g}{' ' + unit if unit else ''}"
        try:
            value = float(raw)
        except ValueError:
            value = float("nan")
        if not f.lo <= value <= f.hi:
            messages.append(
                f"{f.label}: {f.key} = {raw!r} is outside the allowed range {span}; the "
                f"reference {f.reference:g}{' ' + unit if unit else ''} is used"
            )
            return None
        return value
