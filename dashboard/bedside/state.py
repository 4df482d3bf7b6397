"""Session state of the bedside screen: measured gas entry, derived picture, fit, levers, cases.

No Panel import here. :class:`BedsideState` sits beside the session's
:class:`dashboard.case.state.CaseState` and shares its display units (``pressure_unit``,
``hb_unit``). Typed values are kept as a *draft* in the model's units; :meth:`calculate`
checks the whole draft and either accepts all of it (derived values computed) or none of
it (a message per refused field). Fitting, ranking what-ifs, applying them to the live case
and keeping cases call the model (``model.bedside``, ``model.fitting``, ``model.levers``,
``model.casebook``); this module only orders, converts and words their results.
"""

from __future__ import annotations

import dataclasses
import inspect
import math
from pathlib import Path

import numpy as np
import param

from ... import model
from ...model import bedside, casebook, fitting, levers
from ..case.state import PO2_GRID_MMHG, CaseState

# Groups of the entry form, in the order an arterial gas report is read.
FORM_GROUPS: tuple[tuple[str, tuple[str, ...]], ...] = (
    (
        "Arterial gas",
        ("pao2_mmhg", "paco2_mmhg", "ph", "hb_g_dl", "temperature_c", "lactate_mmol_l"),
    ),
    ("Co-oximetry", ("sao2", "cohb_fraction", "methb_fraction")),
    (
        "Gas and ventilator",
        ("fio2", "altitude_m", "barometric_pressure_mmhg", "mean_airway_pressure_cmh2o"),
    ),
    ("Venous gas (central or mixed), optional", ("pvo2_mmhg", "svo2", "pvco2_mmhg")),
    (
        "Flow and patient",
        (
            "cardiac_output_l_min",
            "cardiac_index_l_min_m2",
            "height_cm",
            "weight_kg",
            "age_years",
        ),
    ),
)
MEASURED_KEYS: tuple[str, ...] = tuple(k for _, keys in FORM_GROUPS for k in keys)
PERCENT_KEYS = frozenset({"sao2", "svo2", "cohb_fraction", "methb_fraction"})
"""Fractions typed and shown as percent, as co-oximeters print them."""
HB_KEYS = frozenset({"hb_g_dl"})
PRESSURE_SOURCES = ("altitude", "barometric pressure")
FLOW_SOURCES = ("cardiac output", "cardiac index")
FRACTION_AS_PERCENT = frozenset({"shunt_fraction", "extraction_ratio", "sao2_from_curve"})
"""Derived fractions shown in percent."""

DERIVED_SOURCES: dict[str, str] = {
    # Short citations of the method behind each derived value (full references in
    # model.bedside's docstring).
    "barometric_pressure_used_mmhg": "measured; else ICAO standard atmosphere",
    "alveolar_po2_mmhg": "alveolar gas equation, Fenn, Rahn & Otis 1946",
    "aa_gradient_mmhg": "PAO2 − PaO2",
    "aa_gradient_expected_mmhg": "Mellemgaard 1966: 2.5 + 0.21 × age (air)",
    "pao2_fio2_ratio": "PaO2 / FiO2",
    "pao2_fio2_ratio_pb_corrected": "× PB/760, Berlin definition 2012",
    "pf_category_berlin": "ARDS Definition Task Force, JAMA 2012",
    "pf_category_global2024": "Matthay et al., Am J Respir Crit Care Med 2024",
    "sao2_fio2_ratio": "Matthay et al. 2024 (SpO2/FiO2; SaO2 used)",
    "sf_category_global2024": "Matthay et al. 2024",
    "oxygenation_index": "FiO2 × mean airway pressure × 100 / PaO2",
    "sao2_from_curve": "Severinghaus 1979 with Kelman 1966 factors",
    "cao2_ml_dl": "1.34 × Hb × SaO2 + 0.003 × PaO2",
    "cco2_ml_dl": "as CaO2, at PAO2 on the curve",
    "cvo2_ml_dl": "as CaO2, venous",
    "shunt_fraction": "Berggren 1942",
    "bsa_m2": "Mosteller 1987",
    "cardiac_output_used_l_min": "measured; else CI × BSA",
    "cardiac_index_used_l_min_m2": "CO / BSA",
    "do2_ml_min": "10 × CO × CaO2",
    "do2i_ml_min_m2": "10 × CI × CaO2",
    "vo2_ml_min": "Fick 1870",
    "vo2i_ml_min_m2": "Fick 1870, per m²",
    "extraction_ratio": "(CaO2 − CvO2) / CaO2",
    "pco2_gap_mmhg": "PvCO2 − PaCO2; cut-off Ospina-Tascón 2013",
    "p50_insitu_mmhg": "single point, Hill n 2.7: Doyle 1997",
    "p50_standard_mmhg": "to pH 7.40, PCO2 40 by Kelman 1966",
    "alpha_stat_pao2_mmhg": "alpha-stat (Swan 1984): as measured",
    "alpha_stat_paco2_mmhg": "alpha-stat: as measured",
    "alpha_stat_ph": "alpha-stat: as measured",
    "ph_stat_pao2_mmhg": "Severinghaus 1979 Eq 3",
    "ph_stat_paco2_mmhg": "Bradley, Severinghaus & Stupfel 1956",
    "ph_stat_ph": "Rosenthal 1948, −0.0147/°C",
}

EXAMPLE_GAS: dict[str, float] = {
    # An invented ventilated patient (ours, not a real person): hypoxaemic on FiO2 0.6.
    "pao2_mmhg": 68.0,
    "paco2_mmhg": 46.0,
    "ph": 7.31,
    "hb_g_dl": 9.4,
    "temperature_c": 38.4,
    "lactate_mmol_l": 2.9,
    "sao2": 0.915,
    "cohb_fraction": 0.012,
    "methb_fraction": 0.008,
    "fio2": 0.6,
    "altitude_m": 0.0,
    "mean_airway_pressure_cmh2o": 16.0,
    "pvo2_mmhg": 36.0,
    "svo2": 0.64,
    "pvco2_mmhg": 53.0,
    "cardiac_output_l_min": 5.6,
    "height_cm": 172.0,
    "weight_kg": 78.0,
    "age_years": 64.0,
}


def _nice(x: float) -> str:
    """A number for a message: 0.6666 -> '0.667', 9000.0 -> '9000'."""
    return f"{x:.0f}" if abs(x) >= 100 else f"{x:.3g}"


def _signed(value: float, digits: int) -> str:
    """'+1.2' / '−0.3', and '0.0' for a change too small to show (no '−0.0')."""
    if round(value, digits) == 0:
        return f"{0.0:.{digits}f}"
    return f"{value:+.{digits}f}".replace("-", "−")


def _tidy(inputs: dict) -> dict:
    """Fitted inputs rounded for reading on the Model inputs tab (PaCO2 48.91, not
    48.905514; shunt 0.3483): at most 0.005 mmHg or 5e-5 in a fraction, far below what
    any measurement resolves."""
    out = {}
    for k, v in inputs.items():
        if isinstance(v, (float, np.floating)) and not isinstance(v, bool):
            v = float(v)
            out[k] = round(v, 4) if abs(v) < 10 else round(v, 2)
        else:
            out[k] = v
    return out


def _plain(value):
    """numpy scalars and 0-d arrays -> float; containers recursively."""
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return type(value)(_plain(v) for v in value)
    if isinstance(value, np.ndarray) and value.ndim == 0:
        return value.item()
    if isinstance(value, np.generic):
        return value.item()
    return value


@dataclasses.dataclass(frozen=True)
class Row:
    """One measured value as shown: key, label, formatted value, unit."""

    key: str
    label: str
    value: str
    unit: str


@dataclasses.dataclass(frozen=True)
class DerivedRow:
    """One derived value as shown: formatted value, unit, flag, source and any note."""

    key: str
    label: str
    value: str
    unit: str
    flag: str
    source: str
    note: str


class BedsideState(param.Parameterized):
    """Measured gas of one patient, what follows from it, and the cases kept on disk."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (shared).")

    # --- Entry
    pressure_source = param.Selector(
        default="altitude",
        objects=list(PRESSURE_SOURCES),
        label="Ambient pressure from",
        doc="Give the altitude of the unit, or a measured barometric pressure.",
    )
    flow_source = param.Selector(
        default="cardiac output",
        objects=list(FLOW_SOURCES),
        label="Flow given as",
        doc="Cardiac output, or cardiac index (then height and weight are needed).",
    )
    draft = param.Dict(default={}, doc="Typed values in model units (fractions, mmHg, g/dL).")
    draft_version = param.Integer(default=0, doc="Bumped when the draft is replaced as a whole.")

    # --- Accepted measurement and what follows
    measured = param.Dict(default=None, allow_None=True, doc="Last accepted measurement.")
    derived = param.Dict(default=None, allow_None=True, doc="model.bedside.derive output.")
    field_errors = param.Dict(default={}, doc="key -> why the typed value was refused.")
    entry_message = param.String(default="", doc="Outcome of the last Calculate.")
    fit = param.Parameter(default=None, doc="model.fitting.FitResult of the accepted gas.")
    fit_message = param.String(default="")
    fitted_applied = param.Boolean(default=False, doc="Fitted case is live and the baseline.")

    # --- What-ifs
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
    shunt_change = param.Number(
        default=-0.10,
        bounds=(-0.6, 0.6),
        label="Shunt change (fraction, e.g. −0.10)",
        doc="Change in Qs/Qt you expect from a manoeuvre [-], e.g. -0.10; 0 leaves it out.",
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
    applied_lever = param.String(default="")

    # --- Cases on disk
    case_dir = param.Path(default=None, allow_None=True, check_exists=False)
    case_label = param.String(default="", label="Case label (no names or record numbers)")
    notes = param.String(default="", label="Notes")
    saved_cases = param.List(default=[], doc="Records from model.casebook.list_cases.")
    case_problems = param.List(default=[], doc="Files that could not be read, with why.")
    case_message = param.String(default="")
    overwrite_offer = param.String(default="", doc="Path the last Save refused to overwrite.")

    def __init__(self, case: CaseState | None = None, case_dir: Path | str | None = None, **kw):
        super().__init__(case=case if case is not None else CaseState(), **kw)
        self.case_dir = str(case_dir) if case_dir is not None else str(casebook.default_case_dir())
        self.refresh_cases()

    # ------------------------------------------------------------------ units and labels
    def limits(self, key: str) -> tuple[float, float, str, str]:
        """(lo, hi, unit, label) of a measured field in model units."""
        return bedside.MEASURED_LIMITS[key]

    def display_unit(self, key: str) -> str:
        if key in PERCENT_KEYS:
            return "%"
        if key.endswith("_mmhg"):
            return self.case.pressure_unit
        if key in HB_KEYS:
            return self.case.hb_unit
        unit = self.limits(key)[2]
        return "" if unit in ("", "-", "fraction") else unit.replace("degC", "°C")

    def display_label(self, key: str) -> str:
        label = self.limits(key)[3]
        unit = self.display_unit(key)
        if unit == "%":
            label = label.replace(" fraction", "")
        if key == "fio2":
            unit = "fraction"
        return f"{label} ({unit})" if unit else label

    def to_display(self, key: str, value: float | None) -> float | None:
        """Model units -> the unit shown, rounded for reading."""
        if value is None:
            return None
        if key in PERCENT_KEYS:
            return round(100.0 * value, 2)
        if key.endswith("_mmhg"):
            shown = self.case.pressure_to_display(value)
            return round(shown, 2) if self.case.pressure_unit == "kPa" else round(shown, 1)
        if key in HB_KEYS:
            shown = self.case.hb_to_display(value)
            return round(shown, {"g/dL": 2, "g/L": 1}.get(self.case.hb_unit, 2))
        return float(value)

    def from_display(self, key: str, value: float) -> float:
        if key in PERCENT_KEYS:
            return float(value) / 100.0
        if key.endswith("_mmhg"):
            return self.case.pressure_from_display(value)
        if key in HB_KEYS:
            return self.case.hb_from_display(value)
        return float(value)

    def display_range(self, key: str) -> str:
        lo, hi, _, _ = self.limits(key)
        unit = self.display_unit(key)
        return f"{_nice(self.to_display(key, lo))}–{_nice(self.to_display(key, hi))}" + (
            f" {unit}" if unit else ""
        )

    def active_keys(self) -> tuple[str, ...]:
        """The fields the form shows now (altitude or PB; output or index)."""
        hidden = {
            "altitude": "barometric_pressure_mmhg",
            "barometric pressure": "altitude_m",
        }[self.pressure_source]
        hidden_flow = {
            "cardiac output": "cardiac_index_l_min_m2",
            "cardiac index": "cardiac_output_l_min",
        }[self.flow_source]
        return tuple(k for k in MEASURED_KEYS if k not in (hidden, hidden_flow))

    # ------------------------------------------------------------------ draft
    def draft_display(self, key: str) -> float | None:
        return self.to_display(key, self.draft.get(key))

    def set_draft(self, key: str, display_value: float | None) -> None:
        """Keep a typed value (display units); checked only by :meth:`calculate`."""
        if key not in MEASURED_KEYS:
            raise KeyError(key)
        draft = dict(self.draft)
        if display_value is None or (
            isinstance(display_value, float) and not math.isfinite(display_value)
        ):
            draft.pop(key, None)
        else:
            draft[key] = self.from_display(key, display_value)
        self.draft = draft

    def set_draft_model_units(self, values: dict) -> None:
        """Replace the whole draft with values in model units (an opened case, the example)."""
        unknown = set(values) - set(MEASURED_KEYS)
        if unknown:
            raise KeyError(", ".join(sorted(unknown)))
        draft = {k: float(v) for k, v in values.items() if v is not None}
        updates = {"draft": draft}
        if "barometric_pressure_mmhg" in draft and "altitude_m" not in draft:
            updates["pressure_source"] = "barometric pressure"
        elif "altitude_m" in draft:
            updates["pressure_source"] = "altitude"
        if "cardiac_index_l_min_m2" in draft and "cardiac_output_l_min" not in draft:
            updates["flow_source"] = "cardiac index"
        elif "cardiac_output_l_min" in draft:
            updates["flow_source"] = "cardiac output"
        updates["draft_version"] = self.draft_version + 1
        self.param.update(**updates)

    def fill_example(self) -> None:
        """Put the invented example gas in the form (not calculated yet)."""
        self.set_draft_model_units(EXAMPLE_GAS)
        self.param.update(field_errors={}, entry_message="Invented example gas entered: Calculate.")

    def clear_entry(self) -> None:
        self.set_draft_model_units({})
        self.param.update(field_errors={}, entry_message="")

    # ------------------------------------------------------------------ calculate
    def _required_keys(self) -> tuple[str, ...]:
        sig = inspect.signature(bedside.derive)
        return tuple(
            n
            for n, p in sig.parameters.items()
            if p.default is inspect.Parameter.empty
            and p.kind in (p.KEYWORD_ONLY, p.POSITIONAL_OR_KEYWORD)
        )

    def calculate(self) -> bool:
        """Check the whole draft; on success set ``measured`` and ``derived``.

        All or nothing: a refused field leaves the last accepted measurement, its derived
        values and its fit as they were, and names field, value, allowed range and unit.
        """
        active = self.active_keys()
        values = {k: v for k, v in self.draft.items() if k in active}
        errors: dict[str, str] = {}
        for key in self._required_keys():
            if key in active and key not in values:
                errors[key] = f"{self.limits(key)[3]}: a value is required."
        for key, v in values.items():
            lo, hi, _, label = self.limits(key)
            if not (np.isfinite(v) and lo <= v <= hi):
                unit = self.display_unit(key)
                shown = self.to_display(key, v)
                errors[key] = (
                    f"{label} = {shown:g}{' ' + unit if unit else ''} is outside the allowed "
                    f"range {self.display_range(key)}."
                )
        if not errors:
            try:
                bedside.check_measured(values)
                derived = bedside.derive(**values)
            except (ValueError, TypeError) as exc:
                errors["_all"] = str(exc)
        if errors:
            first = next(iter(errors.values()))
            count = len(errors)
            self.param.update(
                field_errors=errors,
                entry_message=(
                    f"Not calculated: {first}"
                    + (f" (and {count - 1} more field(s) marked)" if count > 1 else "")
                    + " Nothing was changed."
                ),
            )
            return False
        self.param.update(
            measured=values,
            derived=_plain(dict(derived)),
            field_errors={},
            entry_message="Calculated from the measured values below.",
            fit=None,
            fit_message="",
            fitted_applied=False,
            lever_table=[],
            lever_message="",
            applied_lever="",
        )
        return True

    # ------------------------------------------------------------------ rows for views
    def format_value(self, key: str, value: float | None) -> str:
        """A measured value in its display unit with the digits a gas report uses."""
        if value is None:
            return ""
        shown = self.to_display(key, value)
        if key in PERCENT_KEYS:
            digits = 1
        elif key.endswith("_mmhg"):
            digits = 2 if self.case.pressure_unit == "kPa" else 0
        elif key in HB_KEYS:
            digits = 0 if self.case.hb_unit == "g/L" else 1
        elif key == "ph" or key == "fio2":
            digits = 2
        else:
            digits = 1 if abs(shown) < 100 else 0
        return f"{shown:.{digits}f}".replace("-", "−")

    def measured_rows(self) -> list[Row]:
        """The accepted measurement, in form order and display units."""
        if not self.measured:
            return []
        return [
            Row(
                key,
                self.limits(key)[3],
                self.format_value(key, self.measured[key]),
                self.display_unit(key),
            )
            for key in MEASURED_KEYS
            if key in self.measured
        ]

    def patient_curve(self) -> dict:
        """Curves of the fitted (else live) case and the measured points, in display units."""
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
        m = self.measured or {}

        def point(p_key, s_key):
            # Analysers report PO2 at 37 degC; the curve is at the patient's temperature.
            if p_key in m and s_key in m:
                po2 = float(bedside.temperature_corrected_po2(m[p_key], m["temperature_c"]))
                return (to_p(po2), 100.0 * m[s_key])
            return (None, None)

        return {
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

    def _derived_unit_and_value(self, key: str, value: float, unit: str, digits: int):
        if unit == "mmHg":
            shown = self.case.pressure_to_display(value)
            if self.case.pressure_unit == "kPa":
                digits = 1 if digits == 0 else 2
            return shown, self.case.pressure_unit, digits
        if key in FRACTION_AS_PERCENT:
            return 100.0 * value, "%", max(digits - 2, 0)
        return value, unit.replace("m2", "m²"), digits

    def derived_rows(self) -> list[DerivedRow]:
        """Derived values in display units with flag, short source and note.

        A value that could not be computed is left out, except the in-situ P50, which is
        kept with its refusal reason so the user sees why it is missing.
        """
        d = self.derived
        if not d:
            return []
        rows = []
        for key, (unit, label, digits) in bedside.DERIVED_FIELDS.items():
            raw = d.get(key)
            note = ""
            if key.startswith(("pf_category", "sf_category")):
                labels = bedside.PF_CATEGORY_LABELS[
                    {
                        "pf_category_berlin": "berlin2012",
                        "pf_category_global2024": "global2024",
                        "sf_category_global2024": "global2024_sf",
                    }[key]
                ]
                code = str(raw) if raw is not None else ""
                if not code:
                    continue
                note = ""
                if key.startswith("pf_") and self.case.pressure_unit == "kPa":
                    kpa = ", ".join(
                        f"{self.case.pressure_to_display(c):.1f}" for c in (100, 200, 300)
                    )
                    note = f"cut-offs are in mmHg: 100, 200, 300 mmHg = {kpa} kPa"
                rows.append(
                    DerivedRow(
                        key, label, labels.get(code, code), "", "", DERIVED_SOURCES[key], note
                    )
                )
                continue
            value = float(raw) if raw is not None else float("nan")
            if not math.isfinite(value):
                if key == "p50_insitu_mmhg" and d.get("p50_insitu_reason"):
                    rows.append(
                        DerivedRow(
                            key,
                            label,
                            "refused",
                            "",
                            "",
                            DERIVED_SOURCES[key],
                            str(d["p50_insitu_reason"]),
                        )
                    )
                continue
            shown, shown_unit, shown_digits = self._derived_unit_and_value(key, value, unit, digits)
            rows.append(
                DerivedRow(
                    key,
                    label.replace("degC", "°C"),
                    f"{shown:.{shown_digits}f}".replace("-", "−"),
                    shown_unit,
                    self._flag(key, value),
                    DERIVED_SOURCES.get(key, ""),
                    note,
                )
            )
        return rows

    def _flag(self, key: str, value: float) -> str:
        """'▲ high' / '▼ low' against model.bedside.USUAL_RANGES, else ''."""
        if key.startswith("pao2_fio2_ratio"):
            codes = bedside.PF_CATEGORIES[1:]
            if str((self.derived or {}).get("pf_category_berlin", "")) in codes:
                return "▼ ARDS range"
            return ""
        if key == "aa_gradient_mmhg":
            expected = (self.derived or {}).get("aa_gradient_expected_mmhg")
            if expected is not None and math.isfinite(float(expected)) and value > expected:
                return "▲ above age-expected"
            return ""
        low, high = bedside.USUAL_RANGES.get(key, (None, None, "", ""))[:2]
        if low is not None and value < low:
            return "▼ low"
        if high is not None and value > high:
            return "▲ high"
        return ""

    def measured_flag(self, key: str) -> str:
        """Flag of an accepted measured value against model.bedside.USUAL_RANGES."""
        if not self.measured or key not in self.measured:
            return ""
        return self._flag(key, self.measured[key])

    def derived_text(self, name: str) -> list[str]:
        """'notes', 'reasons' or 'flags' of the derivation, split into items."""
        text = str((self.derived or {}).get(name) or "")
        return [t for t in text.split("; ") if t]

    # ------------------------------------------------------------------ fit
    def fit_result(self):
        """The TransportResult of the fit, or None."""
        return self.fit.result if self.fit is not None else None

    def fit_measured(self) -> bool:
        """Fit shunt, VO2 and a P50 offset to the accepted measurement (model.fitting)."""
        if not self.measured:
            self.fit_message = "Calculate a measured gas first; there is nothing to fit yet."
            return False
        try:
            fit = fitting.fit_case(self.measured, curve=self.case.curve)
        except (ValueError, TypeError, ArithmeticError) as exc:
            self.param.update(fit=None, fit_message=f"Not fitted: {exc}")
            return False
        self.param.update(
            fit=fit,
            fit_message=self.fit_summary(fit),
            fitted_applied=False,
            lever_table=[],
            lever_message="",
            applied_lever="",
        )
        self.rank_whatifs()
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
        return "The measurements do not fit together: " + " ".join(fit.messages)

    def fitted_rows(self) -> list[Row]:
        """The fitted free parameters, in display units."""
        if self.fit is None:
            return []
        f = self.fit.fitted
        rows = [
            Row(
                "shunt_fraction",
                "Shunt (venous admixture)",
                f"{100 * f['shunt_fraction']:.1f}",
                "%",
            )
        ]
        if "vo2_ml_min" in f:
            rows.append(Row("vo2_ml_min", "VO2", f"{f['vo2_ml_min']:.0f}", "mL/min"))
        if "p50_mmhg" in f:
            d = 2 if self.case.pressure_unit == "kPa" else 1
            p50 = self.case.pressure_to_display(f["p50_mmhg"])
            off = self.case.pressure_to_display(f["p50_offset_mmhg"])
            rows.append(
                Row(
                    "p50_mmhg",
                    "Standard P50 (offset from the curve's own)",
                    f"{p50:.{d}f} ({_signed(off, d)})",
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
                d = 2 if unit == "kPa" else 1
            else:
                conv, unit, d = (lambda v: 100.0 * v), "%", 1
            rows.append(
                [
                    r.quantity,
                    f"{conv(r.measured):.{d}f}",
                    f"{conv(r.model):.{d}f}",
                    _signed(conv(r.model) - conv(r.measured), d),
                    unit,
                    "fitted" if r.fitted else "compared",
                    "match" if r.within_tolerance else "off",
                ]
            )
        return rows

    def use_fitted(self) -> bool:
        """Make the fitted case the live case and keep it as the baseline."""
        if self.fit is None:
            self.fit_message = "Fit the model first."
            return False
        name = "Fitted to measured gas" + (f": {self.case_label}" if self.case_label else "")
        inputs = _tidy({**self.fit.inputs, **self.fit.body_size})
        if not self.case.apply_inputs(inputs, name=name, description="live case = fitted case"):
            self.fit_message = self.case.error_message
            return False
        self.case.keep_baseline()
        self.param.update(fitted_applied=True, applied_lever="")
        return True

    # ------------------------------------------------------------------ what-ifs
    def rank_whatifs(self) -> bool:
        """Rank one-at-a-time levers from the fitted case (model.levers.rank_levers)."""
        if self.fit is None:
            self.param.update(lever_table=[], lever_message="Fit the model first.")
            return False
        try:
            table = levers.rank_levers(
                self.fit.inputs,
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
        "shunt_change",
        "cooling_to_c",
        "cardiac_output_factor",
        watch=True,
    )
    def _rerank(self) -> None:
        if self.fit is not None:
            self.rank_whatifs()

    def target_hb_display(self) -> float:
        return self.to_display("hb_g_dl", self.target_hb_g_dl)

    def set_target_hb_display(self, value: float | None) -> bool:
        """Set the transfusion target typed in the Hb display unit; refuse out of range."""
        lo, hi = self.param.target_hb_g_dl.bounds
        unit = self.case.hb_unit
        if value is None:
            self.lever_message = "Transfusion target Hb: a value is required."
            return False
        g_dl = self.from_display("hb_g_dl", value)
        if not lo - 1e-9 <= g_dl <= hi + 1e-9:
            self.lever_message = (
                f"Transfusion target Hb = {value:g} {unit} is outside the allowed range "
                f"{_nice(self.to_display('hb_g_dl', lo))}–{_nice(self.to_display('hb_g_dl', hi))}"
                f" {unit}; kept {self.format_value('hb_g_dl', self.target_hb_g_dl)} {unit}."
            )
            return False
        self.target_hb_g_dl = min(max(g_dl, lo), hi)
        return True

    def rank_label(self) -> str:
        """The ranking quantity as the picker names it."""
        names = {v: k for k, v in self.param.rank_by.names.items()}
        return names.get(self.rank_by, self.rank_by)

    def lever_head(self) -> list[str]:
        p = self.case.pressure_unit
        return [
            "#",
            "What-if",
            "ΔDO2 (mL/min)",
            f"ΔPaO2 ({p})",
            "ΔSvO2 (%)",
            f"ΔPvO2 ({p})",
            "ΔO2ER (% points)",
            "Note",
        ]

    def lever_rows(self) -> list[list[str]]:
        """The ranked table as text, in display units; a refused what-if says why."""
        p = self.case.pressure_to_display
        d = 2 if self.case.pressure_unit == "kPa" else 1
        rows = []
        for i, o in enumerate(self.lever_table, start=1):
            if o.error:
                rows.append([str(i), o.label, "", "", "", "", "", f"refused: {o.error}"])
                continue
            rows.append(
                [
                    str(i),
                    o.label,
                    _signed(o.delta_do2_ml_min, 0),
                    _signed(p(o.delta_pao2_mmhg), d),
                    _signed(100.0 * o.delta_svo2, 1),
                    _signed(p(o.delta_pvo2_mmhg), d),
                    _signed(100.0 * o.delta_extraction_ratio, 1),
                    o.note,
                ]
            )
        return rows

    def lever_choices(self) -> dict[str, str]:
        """Label -> key of the what-ifs that can be applied."""
        return {o.label: o.key for o in self.lever_table if not o.error}

    def apply_lever(self, key: str) -> bool:
        """Make a what-if the live case, with the fitted case as the baseline."""
        outcome = next((o for o in self.lever_table if o.key == key), None)
        if outcome is None or outcome.error:
            self.lever_message = "Choose a what-if from the ranked table first."
            return False
        body = self.fit.body_size
        if not self.fitted_applied or self.case.baseline is None:
            if not self.use_fitted():
                self.lever_message = self.fit_message
                return False
        else:
            # Back to the fitted case before keeping it, so the baseline is the fit.
            if not self.case.apply_inputs(_tidy({**self.fit.inputs, **body})):
                self.lever_message = self.case.error_message
                return False
            self.case.keep_baseline()
        if not self.case.apply_inputs(
            _tidy({**outcome.inputs, **body}),
            name=f"What-if: {outcome.label}",
            description="baseline = fitted case",
        ):
            self.lever_message = self.case.error_message
            return False
        self.param.update(
            applied_lever=outcome.label,
            lever_message=f"Live case: {outcome.label}. Baseline: the fitted case.",
        )
        return True

    # ------------------------------------------------------------------ cases on disk
    def case_dir_path(self) -> Path:
        return Path(self.case_dir).expanduser()

    @property
    def identifier_warning(self) -> str:
        return casebook.IDENTIFIER_WARNING

    def refresh_cases(self) -> None:
        """Re-read the case folder; unreadable files are listed as problems, not hidden."""
        try:
            records, problems = casebook.list_cases(self.case_dir)
        except OSError as exc:
            records, problems = [], [f"{self.case_dir}: cannot read the folder ({exc})"]
        self.param.update(saved_cases=records, case_problems=problems)

    def case_choices(self) -> dict[str, str]:
        """'label · saved at' -> file path, newest first."""
        out = {}
        for r in self.saved_cases:
            when = r.saved_at.astimezone().strftime("%Y-%m-%d %H:%M")
            out[f"{r.label} · {when}"] = str(r.path)
        return out

    def save(self, overwrite: bool = False) -> bool:
        """Save the accepted measurement, its fit and the notes under the label.

        An existing file of the same name is never replaced silently: the first Save
        refuses and offers the overwrite, which needs :meth:`save` with ``overwrite``.
        """
        if not self.measured:
            self.case_message = "Nothing to save yet: Calculate a measured gas first."
            return False
        try:
            target = casebook.case_path(self.case_dir, self.case_label)
            if target.exists() and not overwrite:
                self.param.update(
                    overwrite_offer=str(target),
                    case_message=(
                        f"Not saved: a case named {target.name} already exists in "
                        f"{target.parent}. Choose another label, or overwrite it."
                    ),
                )
                return False
            path = casebook.save_case(
                self.case_dir,
                self.case_label,
                self.measured,
                self.fit,
                self.notes,
                overwrite=overwrite,
            )
        except (casebook.CaseFileError, ValueError) as exc:
            self.param.update(case_message=f"Not saved: {exc}", overwrite_offer="")
            return False
        self.param.update(
            case_message=f"Saved {path.name} in {path.parent}"
            + (" (replaced the earlier file)." if overwrite else "."),
            overwrite_offer="",
        )
        self.refresh_cases()
        return True

    def open(self, path: str | Path) -> bool:
        """Restore a saved case: measured entry, label, notes, then the fit recomputed.

        The fit is solved again from the saved measurement, so the curve and the what-ifs
        are whole; if it no longer matches the saved fit (a newer model), this is said.
        """
        try:
            record = casebook.open_case(path)
        except casebook.CaseFileError as exc:
            self.case_message = f"Not opened: {exc}"
            return False
        self.set_draft_model_units(record.measured)
        self.param.update(case_label=record.label, notes=record.notes, overwrite_offer="")
        if not self.calculate():
            self.case_message = f"Opened {Path(path).name}, but: {self.entry_message}"
            return False
        message = f"Opened {record.label} (saved {record.saved_at.astimezone():%Y-%m-%d %H:%M})."
        if record.fitted:
            self.fit_measured()
            now = self.fit.fitted if self.fit is not None else {}
            differs = [
                k
                for k, v in record.fitted.items()
                if k in now and not math.isclose(now[k], v, rel_tol=1e-3, abs_tol=1e-4)
            ]
            message += (
                " Fit recomputed; it differs from the saved fit in "
                + ", ".join(differs)
                + " (the model has changed since)."
                if differs
                else " Fit recomputed: same as saved."
            )
        self.case_message = message
        return True
