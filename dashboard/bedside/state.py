"""Session state of the bedside screen: its four parts composed into one object.

No Panel import here. :class:`BedsideState` sits beside the session's
:class:`dashboard.case.state.CaseState` and shares its display units (``pressure_unit``,
``hb_unit``). It composes four ``param.Parameterized`` parts, each in its own module:

- ``entry``, :class:`~dashboard.bedside.entry.GasEntry`: the measured-gas form, the
  all-or-nothing Calculate and the derived picture (``entry.py``, ``derived.py``);
- ``fitting``, :class:`~dashboard.bedside.fit.PatientFit`: the fit to the patient, its rows,
  and the fitted case as the live case's baseline (``fit.py``);
- ``plans``, :class:`~dashboard.bedside.plans.LeverPlans`: the ranked what-ifs, their
  settings and applying one (``plans.py``);
- ``cases``, :class:`~dashboard.bedside.cases.CaseFiles`: saved case files (``cases.py``);
- ``plan_stack``, :class:`~dashboard.bedside.plans_stack.PlanStack`: up to four plans, each a
  stack of changes solved from the fit and compared with the patient (``plans_stack.py``);
- ``series``, :class:`~dashboard.bedside.series.GasSeries`: the gases of a shift, each
  fitted in turn, and their trend (``series.py``);
- ``doubt``, :class:`~dashboard.bedside.spread.MeasurementDoubt`: ranges from the analyser
  tolerances and the curve models (``spread.py``).

The parts follow each other by watching (an accepted Calculate drops the fit, a new fit
ranks the what-ifs again), so an action does all it did whichever object it is called on.
Every parameter and method of the parts is also reachable here under its own name, read and
set; parameters are watched on the part that holds them (``state.fitting.param.watch``).
Formatting shared by the parts lives in ``display.py``. The model is called by the parts
(``model.bedside``, ``model.fitting``, ``model.levers``, ``model.casebook``); they only
order, convert and word its results.
"""

from __future__ import annotations

from pathlib import Path

import param

from ..case.state import CaseState
from . import display
from .cases import CaseFiles
from .derived import DERIVED_SOURCES, DerivedRow
from .display import Row
from .entry import EXAMPLE_GAS, FORM_GROUPS, MEASURED_KEYS, GasEntry
from .fit import PatientFit
from .plans import LeverPlans
from .plans_stack import PlanStack
from .series import GasSeries
from .spread import MeasurementDoubt

__all__ = [
    "DERIVED_SOURCES",
    "EXAMPLE_GAS",
    "FORM_GROUPS",
    "MEASURED_KEYS",
    "BedsideState",
    "DerivedRow",
    "Row",
]


def _forward(part: str, name: str) -> property:
    """``name`` of the part ``part``, read and set through the composed state."""

    def get(self):
        return getattr(getattr(self, part), name)

    def put(self, value) -> None:
        setattr(getattr(self, part), name, value)

    return property(get, put, doc=f"Same as ``self.{part}.{name}``.")


class BedsideState(param.Parameterized):
    """Measured gas of one patient, what follows from it, and the cases kept on disk."""

    case = param.ClassSelector(
        class_=CaseState, constant=True, doc="The session's live case, shared by the parts."
    )
    entry = param.ClassSelector(class_=GasEntry, constant=True, doc="The measured-gas form.")
    fitting = param.ClassSelector(class_=PatientFit, constant=True, doc="The fit to it.")
    plans = param.ClassSelector(class_=LeverPlans, constant=True, doc="What-ifs from the fit.")
    cases = param.ClassSelector(class_=CaseFiles, constant=True, doc="Cases kept on disk.")
    plan_stack = param.ClassSelector(class_=PlanStack, constant=True, doc="Plans from the fit.")
    series = param.ClassSelector(class_=GasSeries, constant=True, doc="Gases of the shift.")
    doubt = param.ClassSelector(class_=MeasurementDoubt, constant=True, doc="How sure.")

    def __init__(self, case: CaseState | None = None, case_dir: Path | str | None = None, **kw):
        """``kw`` may set any parameter of a part by its name (``rank_by="pao2"``)."""
        case = case if case is not None else CaseState()
        entry = GasEntry(case=case, **_taken(GasEntry, kw))
        fitting = PatientFit(case=case, entry=entry, **_taken(PatientFit, kw))
        plans = LeverPlans(case=case, fitting=fitting, **_taken(LeverPlans, kw))
        stack = PlanStack(case=case, fitting=fitting, levers=plans)
        series = GasSeries(case=case, entry=entry, fitting=fitting)
        doubt = MeasurementDoubt(
            case=case, entry=entry, fitting=fitting, **_taken(MeasurementDoubt, kw)
        )
        cases = CaseFiles(
            case_dir,
            entry=entry,
            fitting=fitting,
            plan_stack=stack,
            series=series,
            **_taken(CaseFiles, kw),
        )
        super().__init__(
            case=case,
            entry=entry,
            fitting=fitting,
            plans=plans,
            cases=cases,
            plan_stack=stack,
            series=series,
            doubt=doubt,
            **kw,
        )

    # ------------------------------------------------------------------ display units
    def limits(self, key: str) -> tuple[float, float, str, str]:
        """(lo, hi, unit, label) of a measured field in model units."""
        return display.limits(key)

    def display_unit(self, key: str) -> str:
        return display.display_unit(self.case, key)

    def display_label(self, key: str) -> str:
        return display.display_label(self.case, key)

    def to_display(self, key: str, value: float | None) -> float | None:
        return display.to_display(self.case, key, value)

    def from_display(self, key: str, value: float) -> float:
        return display.from_display(self.case, key, value)

    def display_range(self, key: str) -> str:
        return display.display_range(self.case, key)

    def format_value(self, key: str, value: float | None) -> str:
        return display.format_value(self.case, key, value)

    # ------------------------------------------------------------------ across parts
    def use_fitted(self) -> bool:
        """Make the fitted case the live case (named by the case label) and the baseline."""
        return self.fitting.use_fitted(self.cases.case_label)

    def apply_lever(self, key: str) -> bool:
        """Make a what-if the live case, with the fitted case as the baseline."""
        return self.plans.apply_lever(key, self.cases.case_label)

    # ------------------------------------------------------------------ the entry form
    pressure_source = _forward("entry", "pressure_source")
    flow_source = _forward("entry", "flow_source")
    draft = _forward("entry", "draft")
    draft_version = _forward("entry", "draft_version")
    measured = _forward("entry", "measured")
    derived = _forward("entry", "derived")
    field_errors = _forward("entry", "field_errors")
    entry_message = _forward("entry", "entry_message")
    active_keys = _forward("entry", "active_keys")
    draft_display = _forward("entry", "draft_display")
    set_draft = _forward("entry", "set_draft")
    set_draft_model_units = _forward("entry", "set_draft_model_units")
    fill_example = _forward("entry", "fill_example")
    clear_entry = _forward("entry", "clear_entry")
    calculate = _forward("entry", "calculate")
    measured_rows = _forward("entry", "measured_rows")
    derived_rows = _forward("entry", "derived_rows")
    measured_flag = _forward("entry", "measured_flag")
    derived_text = _forward("entry", "derived_text")

    # ------------------------------------------------------------------ the fit
    fit = _forward("fitting", "fit")
    fit_message = _forward("fitting", "fit_message")
    fitted_applied = _forward("fitting", "fitted_applied")
    applied_lever = _forward("fitting", "applied_lever")
    fit_result = _forward("fitting", "fit_result")
    fit_measured = _forward("fitting", "fit_measured")
    fit_summary = _forward("fitting", "fit_summary")
    fitted_rows = _forward("fitting", "fitted_rows")
    fit_rows = _forward("fitting", "fit_rows")
    patient_curve = _forward("fitting", "patient_curve")

    # ------------------------------------------------------------------ the what-ifs
    rank_by = _forward("plans", "rank_by")
    target_hb_g_dl = _forward("plans", "target_hb_g_dl")
    stored_blood = _forward("plans", "stored_blood")
    shunt_change = _forward("plans", "shunt_change")
    shunt_change_points = _forward("plans", "shunt_change_points")
    cooling_to_c = _forward("plans", "cooling_to_c")
    cardiac_output_factor = _forward("plans", "cardiac_output_factor")
    lever_table = _forward("plans", "lever_table")
    lever_message = _forward("plans", "lever_message")
    rank_whatifs = _forward("plans", "rank_whatifs")
    target_hb_display = _forward("plans", "target_hb_display")
    set_target_hb_display = _forward("plans", "set_target_hb_display")
    rank_label = _forward("plans", "rank_label")
    lever_head = _forward("plans", "lever_head")
    lever_rows = _forward("plans", "lever_rows")
    lever_choices = _forward("plans", "lever_choices")

    # ------------------------------------------------------------------ cases on disk
    case_dir = _forward("cases", "case_dir")
    case_label = _forward("cases", "case_label")
    notes = _forward("cases", "notes")
    saved_cases = _forward("cases", "saved_cases")
    case_problems = _forward("cases", "case_problems")
    case_message = _forward("cases", "case_message")
    overwrite_offer = _forward("cases", "overwrite_offer")
    identifier_warning = _forward("cases", "identifier_warning")
    case_dir_path = _forward("cases", "case_dir_path")
    refresh_cases = _forward("cases", "refresh_cases")
    case_choices = _forward("cases", "case_choices")
    save = _forward("cases", "save")
    open = _forward("cases", "open")


def _taken(part: type[param.Parameterized], kw: dict) -> dict:
    """Remove from ``kw`` and return the values meant for parameters of ``part``."""
    names = set(part.param) - {"name"}
    return {k: kw.pop(k) for k in list(kw) if k in names}
