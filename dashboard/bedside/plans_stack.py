"""Plans of the bedside screen: up to four named stacks of changes, solved from the fit.

No Panel import here. :class:`PlanStack` keeps the plans (``model.plans.Plan``: a name and
changes applied in order), solves them against the fitted case of
:class:`dashboard.bedside.fit.PatientFit` with ``model.plans.compare_plans`` whenever the fit
or a plan changes, and words the comparison in display units: each reading of the patient
(the fitted case) beside each plan's value and change, the curve models' spread beside
SaO2, P50 and O2 extracted per litre (``model.spread.reading_spread``), each plan's curve and
points. A ranked what-if of :class:`dashboard.bedside.plans.LeverPlans` becomes a plan
change with ``model.plans.change_from_lever``. A plan's definition outlives a new fit (the
same plan on the next gas); opening a case replaces the plans with the case's.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import param

from ... import model
from ...model import plans as model_plans
from ...model import spread
from ...model.plans import Change, Plan
from ..case.state import PO2_GRID_MMHG, CaseState
from .fit import PatientFit
from .plans import LeverPlans
from .wording import (
    change_from_display,
    change_range,
    change_text,
    change_to_display,
    kind_label,
    kind_name,
    kind_unit,
    number,
    step_text,
    unit_of,
)

PLAN_NAMES = ("Plan A", "Plan B", "Plan C", "Plan D")
"""Names given to new plans, the first free one each time."""

COMPARE_ROWS: tuple[tuple[str, str, str], ...] = (
    # reading key (model.plans.READINGS), label, kind of number
    ("fio2", "FiO2", "fraction"),
    ("hb_g_dl", "Hb", "hb"),
    ("temperature_c", "Temperature", "temperature"),
    ("pao2_37_mmhg", "PaO2 (as read at 37 °C)", "pressure"),
    ("sao2", "SaO2", "percent"),
    ("cao2_ml_dl", "CaO2", "content"),
    ("do2_ml_min", "DO2", "flow"),
    ("svo2", "SvO2", "percent"),
    ("pvo2_37_mmhg", "PvO2 (as read at 37 °C)", "pressure"),
    ("extraction_ratio", "O2 extraction", "percent"),
    ("o2_extracted_ml_per_l", "O2 extracted per litre", "per_litre"),
    ("p50_mmhg", "P50 in vivo (arterial)", "p50"),
    ("vo2_ml_min", "VO2", "flow"),
)
"""Rows of the side-by-side table, in reading order."""

SPREAD_ROWS = {
    "sao2": "sao2",
    "p50_mmhg": "p50_mmhg",
    "o2_extracted_ml_per_l": "o2_extracted_ml_per_l",
}
"""Table row -> key of ``model.spread.reading_spread`` shown as the curve models' range."""


@dataclasses.dataclass(frozen=True)
class Cell:
    """One column of a comparison row: value, change from the patient, curve-model range."""

    value: str
    delta: str = ""
    spread: str = ""


@dataclasses.dataclass(frozen=True)
class CompareRow:
    key: str
    label: str
    unit: str
    cells: tuple[Cell, ...]


class PlanStack(param.Parameterized):
    """Up to four plans from the fitted case, solved and compared with the patient."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (units).")
    fitting = param.ClassSelector(class_=PatientFit, doc="The fit the plans start from.")
    levers = param.ClassSelector(class_=LeverPlans, doc="The ranked what-ifs.")
    plans = param.List(default=[], doc="model.plans.Plan, in the order made.")
    base = param.Dict(default=None, allow_None=True, doc="Readings of the fitted case.")
    outcomes = param.List(default=[], doc="model.plans.PlanOutcome per plan.")
    spreads = param.List(default=[], doc="Curve models' reading spread: patient, each plan.")
    plan_message = param.String(default="", doc="Outcome of the last plan action.")

    def __init__(self, **params):
        super().__init__(**params)
        # A new fit (or none) solves the plans again, even when set to an equal value.
        self.fitting.param.watch(lambda _e: self.solve(), "fit", onlychanged=False)
        self.case.param.watch(lambda _e: self._refresh_words(), ["hb_unit", "pressure_unit"])

    def _refresh_words(self) -> None:
        # Words follow the units: views watch ``outcomes``; send them again as they are.
        self.param.trigger("outcomes")

    # ------------------------------------------------------------------ solving
    def solve(self) -> None:
        """Solve every plan against the fitted case (model.plans.compare_plans)."""
        fit = self.fitting.fit
        if fit is None:
            self.param.update(base=None, outcomes=[], spreads=[])
            return
        try:
            base, outcomes = model_plans.compare_plans(fit.inputs, self.plans)
        except ValueError as exc:
            self.param.update(base=None, outcomes=[], spreads=[], plan_message=f"Not solved: {exc}")
            return
        results = [fit.result] + [o.result for o in outcomes]
        spreads = [self._spread(r) for r in results]
        self.param.update(base=base, outcomes=outcomes, spreads=spreads)

    @staticmethod
    def _spread(result) -> dict | None:
        if result is None:
            return None
        return spread.reading_spread(
            float(result.arterial.po2_mmhg),
            float(result.venous.po2_mmhg),
            float(result.hb_g_dl),
            result.arterial_conditions,
            result.venous_conditions,
        )

    # ------------------------------------------------------------------ editing
    def _set_plans(self, plans: list[Plan], message: str) -> None:
        self.plans = plans
        self.plan_message = message
        self.solve()

    def add_plan(self, name: str = "") -> int | None:
        """A new empty plan (named the first free 'Plan A'...); its index, None if full."""
        if len(self.plans) >= model_plans.MAX_PLANS:
            self.plan_message = (
                f"Not added: {model_plans.MAX_PLANS} plans are compared at most; remove one first."
            )
            return None
        taken = {p.name for p in self.plans}
        name = name or next(n for n in (*PLAN_NAMES, "Plan E") if n not in taken)
        self._set_plans([*self.plans, Plan(name)], f"{name} added: give it its changes.")
        return len(self.plans) - 1

    def remove_plan(self, index: int) -> bool:
        if not 0 <= index < len(self.plans):
            return False
        gone = self.plans[index].name
        self._set_plans([p for i, p in enumerate(self.plans) if i != index], f"{gone} removed.")
        return True

    def rename_plan(self, index: int, name: str) -> bool:
        if not 0 <= index < len(self.plans):
            return False
        try:
            text = model_plans.check_plan_name(name)
        except ValueError as exc:
            self.plan_message = f"Not renamed: {exc}."
            return False
        if text == self.plans[index].name:
            return True
        plans = list(self.plans)
        plans[index] = dataclasses.replace(plans[index], name=text)
        self._set_plans(plans, f"Renamed to {text}.")
        return True

    def set_change(
        self, index: int, position: int, kind: str, display_value, stored_blood: bool = False
    ) -> bool:
        """Set the change at ``position`` of a plan (or add one at the end), typed in display
        units; a value out of range is refused with field, value, range and unit."""
        if not 0 <= index < len(self.plans):
            self.plan_message = "Add a plan first."
            return False
        plan = self.plans[index]
        unit = kind_unit(self.case, kind)
        if display_value is None or not math.isfinite(float(display_value)):
            self.plan_message = f"Not changed: {kind_label(self.case, kind)} needs a value."
            return False
        change = Change(kind, change_from_display(self.case, kind, float(display_value)))
        change = dataclasses.replace(change, stored_blood=bool(stored_blood and kind == "hb"))
        try:
            change = model_plans.check_change(change)
        except ValueError:
            self.plan_message = (
                f"Not changed: {kind_name(kind)} = {float(display_value):g}"
                f"{' ' + unit if unit else ''} is outside the allowed range "
                f"{change_range(self.case, kind)}."
            )
            return False
        changes = list(plan.changes)
        if 0 <= position < len(changes):
            changes[position] = change
        elif len(changes) >= model_plans.MAX_CHANGES:
            self.plan_message = f"Not added: a plan holds {model_plans.MAX_CHANGES} changes."
            return False
        else:
            changes.append(change)
        plans = list(self.plans)
        plans[index] = Plan(plan.name, tuple(changes))
        self._set_plans(plans, f"{plan.name}: {change_text(self.case, change)}.")
        return True

    def remove_change(self, index: int, position: int) -> bool:
        if not 0 <= index < len(self.plans):
            return False
        plan = self.plans[index]
        if not 0 <= position < len(plan.changes):
            return False
        gone = change_text(self.case, plan.changes[position])
        changes = tuple(c for j, c in enumerate(plan.changes) if j != position)
        plans = list(self.plans)
        plans[index] = Plan(plan.name, changes)
        self._set_plans(plans, f"{plan.name}: removed {gone}.")
        return True

    def add_lever(self, key: str, target: int = -1) -> bool:
        """Put a ranked what-if into plan ``target`` (a new plan when -1), replacing a change
        of the same kind there."""
        outcome = next((o for o in self.levers.lever_table if o.key == key), None)
        fit = self.fitting.fit
        if outcome is None or outcome.error or fit is None:
            self.plan_message = "Choose a what-if from the ranked table first."
            return False
        change = model_plans.change_from_lever(outcome, fit.inputs)
        if not 0 <= target < len(self.plans):
            target = self.add_plan()
            if target is None:
                return False
        plan = self.plans[target]
        changes = list(plan.changes)
        same = next((j for j, c in enumerate(changes) if c.kind == change.kind), None)
        if same is None:
            if len(changes) >= model_plans.MAX_CHANGES:
                self.plan_message = f"Not added: a plan holds {model_plans.MAX_CHANGES} changes."
                return False
            changes.append(change)
        else:
            changes[same] = change
        plans = list(self.plans)
        plans[target] = Plan(plan.name, tuple(changes))
        self._set_plans(plans, f"{plan.name}: {change_text(self.case, change)}.")
        return True

    def apply_plan(self, index: int, case_label: str = "") -> bool:
        """Make a solved plan the live case, the fitted case its baseline."""
        if not 0 <= index < len(self.outcomes):
            self.plan_message = "Fit the model first: plans start from the fitted case."
            return False
        outcome = self.outcomes[index]
        if outcome.error:
            self.plan_message = f"Not applied: {outcome.error}"
            return False
        why_not = self.fitting.apply_what_if(outcome.inputs, outcome.plan.name, case_label)
        self.plan_message = (
            f"Not applied: {why_not}"
            if why_not
            else f"Live case: {outcome.plan.name}. Baseline: the fitted case."
        )
        return not why_not

    def restore(self, plans) -> None:
        """Replace the plans with those of an opened case."""
        self._set_plans([model_plans.check_plan(p) for p in plans][: model_plans.MAX_PLANS], "")

    def saved(self) -> list[Plan]:
        return list(self.plans)

    # ------------------------------------------------------------------ for views
    def change_choices(self, index: int) -> dict[str, int]:
        """'1. Transfuse to Hb 100 g/L' -> position, then '+ new change' -> -1."""
        if not 0 <= index < len(self.plans):
            return {}
        out = {
            f"{j + 1}. {change_text(self.case, c)}": j
            for j, c in enumerate(self.plans[index].changes)
        }
        out["+ new change"] = -1
        return out

    def change_display(self, index: int, position: int) -> tuple[str, float | None, bool]:
        """(kind, value in display units, stored blood) of a change, for its editor."""
        if not 0 <= index < len(self.plans) or not 0 <= position < len(self.plans[index].changes):
            return ("fio2", None, False)
        c = self.plans[index].changes[position]
        return (c.kind, change_to_display(self.case, c.kind, c.value), c.stored_blood)

    def steps_text(self, index: int) -> list[str]:
        """The plan's changes as applied to the fitted case (else as typed), in order."""
        if not 0 <= index < len(self.plans):
            return []
        plan = self.plans[index]
        outcome = self.outcomes[index] if index < len(self.outcomes) else None
        if outcome is None:
            return [change_text(self.case, c) for c in plan.changes]
        texts = [step_text(self.case, s) for s in outcome.steps]
        texts += [change_text(self.case, c) + ": not reached" for c in plan.changes[len(texts) :]]
        return texts

    def step_notes(self, index: int) -> list[str]:
        if not 0 <= index < len(self.outcomes):
            return []
        return [s.note for s in self.outcomes[index].steps if s.applied and s.note]

    def column_names(self) -> list[str]:
        return ["Patient (fitted)", *(p.name for p in self.plans)]

    def _format(self, kind: str, value: float, delta: bool = False) -> str:
        return number(self.case, kind, value, delta)

    def _unit(self, kind: str) -> str:
        return unit_of(self.case, kind)

    def _spread_text(self, kind: str, column: int, key: str) -> str:
        if column >= len(self.spreads) or self.spreads[column] is None:
            return ""
        part = self.spreads[column][SPREAD_ROWS[key]]
        low, high = self._format(kind, part["low"]), self._format(kind, part["high"])
        return f"{low}–{high}" if low != high else low

    def compare_rows(self) -> list[CompareRow]:
        """The side-by-side table: patient (fitted) then each plan; changes are plan minus
        patient; the curve models' range beside SaO2, P50 and O2 extracted per litre."""
        if self.base is None:
            return []
        rows = []
        for key, label, kind in COMPARE_ROWS:
            cells = [Cell(self._format(kind, self.base[key]), "", self._spread_cell(kind, 0, key))]
            for i, o in enumerate(self.outcomes, start=1):
                if o.error:
                    cells.append(Cell("–", "", ""))
                    continue
                cells.append(
                    Cell(
                        self._format(kind, o.values[key]),
                        self._format(kind, o.deltas[key], delta=True),
                        self._spread_cell(kind, i, key),
                    )
                )
            rows.append(CompareRow(key, label, self._unit(kind), tuple(cells)))
        return rows

    def _spread_cell(self, kind: str, column: int, key: str) -> str:
        return self._spread_text(kind, column, key) if key in SPREAD_ROWS else ""

    def curves(self) -> dict:
        """The patient's curve with the curve models' band, and each plan's arterial curve and
        arterial and venous points, in display units (PO2 at each case's temperature)."""
        fit = self.fitting.fit
        to_p = self.case.pressure_to_display
        x = np.array([to_p(p) for p in PO2_GRID_MMHG])
        out: dict = {"x": x, "patient": None, "band": None, "plans": []}
        if fit is None:
            return out
        r = fit.result
        out["patient"] = self._curve_view(r, "Patient (fitted)")
        band = spread.curve_band(PO2_GRID_MMHG, r.arterial_conditions)
        out["band"] = (100.0 * band["low"], 100.0 * band["high"])
        for o in self.outcomes:
            if o.result is not None:
                out["plans"].append(self._curve_view(o.result, o.plan.name))
            else:
                out["plans"].append(None)
        tops = [out["patient"]["arterial_point"][0]] + [
            p["arterial_point"][0] for p in out["plans"] if p is not None
        ]
        out["x_max"] = max(float(x[-1]), 1.08 * max(tops))
        return out

    def _curve_view(self, result, name: str) -> dict:
        to_p = self.case.pressure_to_display
        grid = PO2_GRID_MMHG
        x_extra = float(result.arterial.po2_mmhg)
        po2 = np.append(grid, x_extra) if x_extra > grid[-1] else grid
        so2 = 100.0 * np.asarray(model.saturation(po2, **result.arterial_conditions), dtype=float)
        return {
            "name": name,
            "x": np.array([to_p(p) for p in po2]),
            "y": so2,
            "arterial_point": (
                to_p(float(result.arterial.po2_mmhg)),
                100.0 * float(result.arterial.so2),
            ),
            "venous_point": (to_p(float(result.venous.po2_mmhg)), 100.0 * float(result.venous.so2)),
            "temperature_c": float(result.temperature_c),
        }
