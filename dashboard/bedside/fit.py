"""Fit of the model to the accepted gas, and the fitted case as the live case's baseline.

No Panel import here. :class:`PatientFit` calls ``model.fitting.fit_case`` on the
measurement accepted by :class:`dashboard.bedside.entry.GasEntry` and starts again whenever
a new one is accepted. It owns how the live case relates to the fit: the fitted case made
live and kept as the baseline, and which what-if (if any) is live on top of it.
"""

from __future__ import annotations

import numpy as np
import param

from ... import model
from ...model import bedside, fitting
from ..case.state import PO2_GRID_MMHG, CaseState
from .display import Row, pressure_digits, signed
from .entry import GasEntry
from .wording import fit_words

SHOWN_DIGITS: dict[str, int] = {
    "fio2": 2,
    "shunt_fraction": 3,
    "vo2_ml_min": 0,
    "ph": 3,
    "base_excess_mmol_l": 1,
    "paco2_mmhg": 1,
    "p50_mmhg": 1,
    "barometric_pressure_mmhg": 1,
    "hb_g_dl": 2,
    "temperature_c": 1,
    "cardiac_output_l_min": 2,
    "dpg_mmol_l": 2,
    "cohb_fraction": 3,
    "methb_fraction": 3,
    "altitude_m": 0,
    "height_cm": 0,
    "weight_kg": 1,
}
"""Decimals a fitted input keeps when it fills the Model inputs sidebar, the precision the
bedside tables show it with: shunt 28.6 % (0.286), VO2 287 mL/min, pH 7.221 (an analyser's
three decimals), PaCO2 and P50 to 0.1 mmHg (0.01 kPa in a kPa field), Hb to 0.01 g/dL
(0.1 g/L), temperature to 0.1 degC. Inputs not named keep 4 significant decimals."""


def tidy(inputs: dict) -> dict:
    """Fitted inputs rounded to :data:`SHOWN_DIGITS`, so that the sidebar shows shunt 0.286,
    VO2 287 and pH 7.221 rather than 0.2857, 287.13 and 7.2206. The live case is then solved
    from these values, and kept as the baseline, so the screen's numbers agree with the
    fields; the change from the fit is far below what a measurement resolves."""
    out = {}
    for k, v in inputs.items():
        if isinstance(v, (float, np.floating)) and not isinstance(v, bool):
            v = float(v)
            digits = SHOWN_DIGITS.get(k, 4 if abs(v) < 10 else 2)
            out[k] = round(v, digits) if digits else float(round(v))
        else:
            out[k] = v
    return out


class PatientFit(param.Parameterized):
    """The fit to the accepted measurement and what of it is live."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (shared).")
    entry = param.ClassSelector(class_=GasEntry, doc="The form whose measurement is fitted.")
    fit = param.Parameter(default=None, doc="model.fitting.FitResult of the accepted gas.")
    fit_message = param.String(default="")
    fitted_applied = param.Boolean(default=False, doc="Fitted case is live and the baseline.")
    applied_lever = param.String(default="", doc="Label of the what-if live on the fit.")

    def __init__(self, **params):
        super().__init__(**params)
        # Every accepted Calculate, even of equal values, drops the fit made before it.
        self.entry.param.watch(lambda _e: self.clear(), "measured", onlychanged=False)

    def clear(self) -> None:
        self.param.update(fit=None, fit_message="", fitted_applied=False, applied_lever="")

    def fit_result(self):
        """The TransportResult of the fit, or None."""
        return self.fit.result if self.fit is not None else None

    def fit_measured(self) -> bool:
        """Fit shunt, VO2 and a P50 offset to the accepted measurement (model.fitting)."""
        if not self.entry.measured:
            self.fit_message = "Calculate a measured gas first; there is nothing to fit yet."
            return False
        try:
            fit = fitting.fit_case(self.entry.measured, curve=self.case.curve)
        except (ValueError, TypeError, ArithmeticError) as exc:
            self.param.update(fit=None, fit_message=f"Not fitted: {exc}")
            return False
        self.param.update(
            fit=fit, fit_message=self.fit_summary(fit), fitted_applied=False, applied_lever=""
        )
        return True

    def fit_summary(self, fit=None) -> str:
        """The consistency verdict in plain words."""
        fit = fit if fit is not None else self.fit
        if fit is None:
            return ""
        if fit.consistent:
            return (
                "The model reproduces these measurements together: they are consistent with "
                "each other within the usual analyser and co-oximeter error."
            )
        words = " ".join(fit_words(self.case, m) for m in fit.messages)
        return "The measurements do not fit together: " + words

    # ------------------------------------------------------------------ rows for views
    def fitted_rows(self) -> list[Row]:
        """The fitted free parameters, in display units."""
        if self.fit is None:
            return []
        f = self.fit.fitted
        shunt = f"{100 * f['shunt_fraction']:.1f}"
        rows = [Row("shunt_fraction", "Shunt (venous admixture)", shunt, "%")]
        if "vo2_ml_min" in f:
            rows.append(Row("vo2_ml_min", "VO2", f"{f['vo2_ml_min']:.0f}", "mL/min"))
        if "p50_mmhg" in f:
            d = pressure_digits(self.case)
            p50 = self.case.pressure_to_display(f["p50_mmhg"])
            off = self.case.pressure_to_display(f["p50_offset_mmhg"])
            rows.append(
                Row(
                    "p50_mmhg",
                    "Standard P50 (offset from the curve's own)",
                    f"{p50:.{d}f} ({signed(off, d)})",
                    self.case.pressure_unit,
                )
            )
        return rows

    def fit_rows(self) -> list[list[str]]:
        """Residual rows: quantity, measured, model, model − measured, unit, role, verdict."""
        if self.fit is None:
            return []
        rows = []
        for r in self.fit.residuals:
            if r.unit == "mmHg":
                conv, unit = self.case.pressure_to_display, self.case.pressure_unit
                d = pressure_digits(self.case)
            else:
                conv, unit, d = (lambda v: 100.0 * v), "%", 1
            rows.append(
                [
                    r.quantity,
                    f"{conv(r.measured):.{d}f}",
                    f"{conv(r.model):.{d}f}",
                    signed(conv(r.model) - conv(r.measured), d),
                    unit,
                    "fitted" if r.fitted else "compared",
                    "match" if r.within_tolerance else "off",
                ]
            )
        return rows

    def patient_curve(self) -> dict:
        """Curves of the fitted (else live) case and the measured points, in display units;
        ``x_label`` and ``moved`` say at which temperature the points are shown."""
        result = self.fit_result() or self.case.result
        to_p = self.case.pressure_to_display
        x = np.array([to_p(p) for p in PO2_GRID_MMHG])
        standard = {"curve": result.arterial_conditions.get("curve", self.case.curve)}
        curves = {
            name: 100.0 * np.asarray(model.saturation(PO2_GRID_MMHG, **cond), dtype=float)
            for name, cond in (
                ("arterial", result.arterial_conditions),
                ("venous", result.venous_conditions),
                ("standard", standard),
            )
        }
        m = self.entry.measured or {}

        def point(p_key, s_key):
            # Analysers report PO2 at 37 degC; the curve is at the patient's temperature.
            if p_key in m and s_key in m:
                po2 = float(bedside.temperature_corrected_po2(m[p_key], m["temperature_c"]))
                return (to_p(po2), 100.0 * m[s_key])
            return (None, None)

        # The analyser's 37 degC PO2 is moved to the patient's temperature to sit on the
        # curve: say so, since the numbers differ from the gas report's.
        t_c = m.get("temperature_c")
        where = f" at the patient's {t_c:.1f} °C" if t_c is not None else ""
        moved = " (moved from 37 °C)" if t_c is not None and abs(t_c - 37.0) > 0.05 else ""
        return {
            "x_label": f"PO2 ({self.case.pressure_unit}){where}",
            "moved": moved,
            "x": x,
            "x_max": float(x[-1]),
            "arterial": curves["arterial"],
            "venous": curves["venous"],
            "standard": curves["standard"],
            "measured_arterial": point("pao2_mmhg", "sao2"),
            "measured_venous": point("pvo2_mmhg", "svo2"),
            "title": (
                "Fitted curve with the measured points"
                if self.fit_result() is not None
                else "Live case curve with the measured points (not fitted yet)"
            ),
        }

    # ------------------------------------------------------------------ the live case
    def live_inputs(self, inputs: dict) -> dict:
        """Chain inputs from the fitted case with the patient's body size, tidied."""
        return tidy({**inputs, **self.fit.body_size})

    def use_fitted(self, case_label: str = "") -> bool:
        """Make the fitted case the live case and keep it as the baseline."""
        if self.fit is None:
            self.fit_message = "Fit the model first."
            return False
        name = "Fitted to measured gas" + (f": {case_label}" if case_label else "")
        inputs = self.live_inputs(self.fit.inputs)
        if not self.case.apply_inputs(inputs, name=name, description="live case = fitted case"):
            self.fit_message = self.case.error_message
            return False
        self.case.keep_baseline()
        self.param.update(fitted_applied=True, applied_lever="")
        return True

    def apply_what_if(self, inputs: dict, label: str, case_label: str = "") -> str:
        """Make a what-if (inputs from the fitted case) live with the fitted case as the
        baseline; '' when done, else why not."""
        if self.fit is None:
            return "Fit the model first."
        if self.fitted_applied and self.case.baseline is not None:
            # Back to the fitted case before keeping it, so the baseline is the fit.
            if not self.case.apply_inputs(self.live_inputs(self.fit.inputs)):
                return self.case.error_message
            self.case.keep_baseline()
        elif not self.use_fitted(case_label):
            return self.fit_message
        if not self.case.apply_inputs(
            self.live_inputs(inputs), name=f"What-if: {label}", description="baseline = fitted case"
        ):
            return self.case.error_message
        self.applied_lever = label
        return ""
