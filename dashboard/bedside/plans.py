"""What-ifs from the fitted case: their settings, the ranked table, applying one.

No Panel import here. :class:`LeverPlans` calls ``model.levers.rank_levers`` on the fit of
:class:`dashboard.bedside.fit.PatientFit` and ranks again whenever the fit or a setting
changes; applying a what-if is left to the fit, which owns the live case's baseline.
"""

from __future__ import annotations

import param

from ...model import levers
from ...model.limits import INPUT_LIMITS
from ..case.state import CaseState
from .display import display_range, format_value, from_display, pressure_digits, signed, to_display
from .fit import PatientFit
from .wording import in_display_units, lever_label


class LeverPlans(param.Parameterized):
    """One-at-a-time what-ifs ranked from the fitted case."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (shared).")
    fitting = param.ClassSelector(class_=PatientFit, doc="The fit the what-ifs start from.")
    rank_by = param.Selector(
        default="do2",
        objects={
            "O2 delivery (DO2)": "do2",
            "PaO2": "pao2",
            "SvO2": "svo2",
            "PvO2": "pvo2",
            "O2 extraction (lower is better)": "extraction",
        },
        label="Rank by",
        doc="The predicted change the table is sorted on (model.levers.RANK_QUANTITIES).",
    )
    target_hb_g_dl = param.Number(
        default=10.0,
        bounds=(5.0, 18.0),
        label="Transfusion target Hb (g/dL)",
        doc="Haemoglobin after transfusion [g/dL].",
    )
    stored_blood = param.Boolean(
        default=False,
        label="Stored blood, low in 2,3-DPG",
        doc="Transfused cells carry little 2,3-DPG, shifting the curve left for a while.",
    )
    shunt_change_points = param.Number(
        default=-10.0,
        bounds=(-60.0, 60.0),
        label="Shunt change (% points, e.g. −10)",
        doc="Change in Qs/Qt you expect from a manoeuvre [% points], e.g. -10 (the shunt "
        "is shown in % on this screen, as the plans' shunt change is typed); 0 leaves it out.",
    )
    cooling_to_c = param.Number(
        default=36.0, bounds=(32.0, 37.5), label="Cool to (°C)", doc="Cooling target [°C]."
    )
    cardiac_output_factor = param.Number(
        default=1.2,
        bounds=(1.05, 2.0),
        label="Cardiac output × (factor)",
        doc="Multiple of the present cardiac output [-].",
    )
    lever_table = param.List(default=[], doc="Ranked model.levers.LeverOutcome list.")
    lever_message = param.String(default="")

    @property
    def shunt_change(self) -> float:
        """The shunt change as a fraction [-], as ``model.levers.rank_levers`` takes it."""
        return self.shunt_change_points / 100.0

    @shunt_change.setter
    def shunt_change(self, fraction: float) -> None:
        self.shunt_change_points = 100.0 * float(fraction)

    def __init__(self, **params):
        super().__init__(**params)
        # A new fit (or none) replaces the table, even when set to an equal value.
        self.fitting.param.watch(self._follow_fit, "fit", onlychanged=False)

    def _follow_fit(self, *_events) -> None:
        if self.fitting.fit is None:
            self.param.update(lever_table=[], lever_message="")
        else:
            self.rank_whatifs()

    def rank_whatifs(self) -> bool:
        """Rank one-at-a-time levers from the fitted case (model.levers.rank_levers)."""
        fit = self.fitting.fit
        if fit is None:
            self.param.update(lever_table=[], lever_message="Fit the model first.")
            return False
        shunt_now = float(fit.inputs.get("shunt_fraction", 0.0))
        lo, hi = INPUT_LIMITS["shunt_fraction"][:2]
        if self.shunt_change != 0 and not lo <= shunt_now + self.shunt_change <= hi:
            after = f"{100.0 * (shunt_now + self.shunt_change):.1f}".replace("-", "−")
            change = f"{self.shunt_change_points:+g}".replace("-", "−")
            self.param.update(
                lever_table=[],
                lever_message=(
                    f"What-ifs not ranked: a shunt change of {change} % points would take the "
                    f"shunt from {100.0 * shunt_now:.1f} % to {after} %, outside the allowed "
                    f"range {100 * lo:g}–{100 * hi:g} %."
                ),
            )
            return False
        try:
            table = levers.rank_levers(
                fit.inputs,
                target_hb_g_dl=self.target_hb_g_dl,
                stored_blood_dpg_depleted=self.stored_blood,
                cardiac_output_factor=self.cardiac_output_factor,
                cooling_to_c=self.cooling_to_c,
                shunt_change=self.shunt_change if self.shunt_change != 0 else None,
                rank_by=self.rank_by,
            )
        except (ValueError, TypeError) as exc:
            self.param.update(lever_table=[], lever_message=f"What-ifs not ranked: {exc}")
            return False
        self.param.update(lever_table=table, lever_message="")
        return True

    @param.depends("rank_by", watch=True)
    def _resort(self) -> None:
        if self.lever_table:
            self.lever_table = levers.sort_outcomes(self.lever_table, self.rank_by)

    @param.depends(
        "target_hb_g_dl",
        "stored_blood",
        "shunt_change_points",
        "cooling_to_c",
        "cardiac_output_factor",
        watch=True,
    )
    def _rerank(self) -> None:
        if self.fitting.fit is not None:
            self.rank_whatifs()

    def target_hb_display(self) -> float:
        return to_display(self.case, "hb_g_dl", self.target_hb_g_dl)

    def set_target_hb_display(self, value: float | None) -> bool:
        """Set the transfusion target typed in the Hb display unit; refuse out of range."""
        lo, hi = self.param.target_hb_g_dl.bounds
        unit = self.case.hb_unit
        if value is None:
            self.lever_message = "Transfusion target Hb: a value is required."
            return False
        g_dl = from_display(self.case, "hb_g_dl", value)
        if not lo - 1e-9 <= g_dl <= hi + 1e-9:
            kept = format_value(self.case, "hb_g_dl", self.target_hb_g_dl)
            self.lever_message = (
                f"Transfusion target Hb = {value:g} {unit} is outside the allowed range "
                f"{display_range(self.case, 'hb_g_dl', (lo, hi))}; kept {kept} {unit}."
            )
            return False
        self.target_hb_g_dl = min(max(g_dl, lo), hi)
        return True

    # ------------------------------------------------------------------ rows for views
    def rank_label(self) -> str:
        """The ranking quantity as the picker names it."""
        names = {v: k for k, v in self.param.rank_by.names.items()}
        return names.get(self.rank_by, self.rank_by)

    def lever_head(self) -> list[str]:
        p = self.case.pressure_unit
        return [
            "#",
            "What-if",
            "DO2 after (Δ), mL/min",
            f"PaO2 after (Δ), {p}",
            "SvO2 after (Δ), %",
            f"PvO2 after (Δ), {p}",
            "O2ER after (Δ), %",
            "Note",
        ]

    def lever_rows(self) -> list[list[str]]:
        """The ranked table as text, in display units; a refused what-if says why."""
        p = self.case.pressure_to_display
        d = pressure_digits(self.case)
        rows = []
        for i, o in enumerate(self.lever_table, start=1):
            if o.error:
                label = lever_label(self.case, o.label)
                rows.append([str(i), label, "", "", "", "", "", f"refused: {o.error}"])
                continue
            rows.append(
                [
                    str(i),
                    lever_label(self.case, o.label),
                    _after(o.do2_ml_min, o.delta_do2_ml_min, 0),
                    _after(p(o.pao2_mmhg), p(o.delta_pao2_mmhg), d),
                    _after(100.0 * o.svo2, 100.0 * o.delta_svo2, 1),
                    _after(p(o.pvo2_mmhg), p(o.delta_pvo2_mmhg), d),
                    _after(100.0 * o.extraction_ratio, 100.0 * o.delta_extraction_ratio, 1),
                    in_display_units(self.case, o.note),
                ]
            )
        return rows

    def lever_choices(self) -> dict[str, str]:
        """Label -> key of the what-ifs that can be applied."""
        return {lever_label(self.case, o.label): o.key for o in self.lever_table if not o.error}

    def apply_lever(self, key: str, case_label: str = "") -> bool:
        """Make a what-if the live case, with the fitted case as the baseline."""
        outcome = next((o for o in self.lever_table if o.key == key), None)
        if outcome is None or outcome.error:
            self.lever_message = "Choose a what-if from the ranked table first."
            return False
        label = lever_label(self.case, outcome.label)
        why_not = self.fitting.apply_what_if(outcome.inputs, label, case_label)
        self.lever_message = why_not or (f"Live case: {label}. Baseline: the fitted case.")
        return not why_not


def _after(value: float, delta: float, digits: int) -> str:
    """A what-if's value after the change and its change, as shown: "1012 (+140)"."""
    return f"{value:.{digits}f} ({signed(delta, digits)})"
