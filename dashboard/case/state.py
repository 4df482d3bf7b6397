"""Session state of the dashboard: the case inputs, the model result, the baseline.

No Panel import here: this module can be driven from a test, a notebook or a script. The
inputs are grouped along the oxygen path (air, lungs, blood, circulation); one derivation,
:meth:`CaseState._solve`, calls :func:`model.solve_transport` and sets :attr:`result`.
Everything the views show is read from here, already in the chosen display units.
"""

from __future__ import annotations

import dataclasses
import inspect
from pathlib import Path

import numpy as np
import param

from ... import model
from ...model.scenario import EXAMPLES_DIR
from .ranges import NORMAL_RANGES

SCENARIO_DIR = EXAMPLES_DIR
PO2_GRID_MMHG = np.linspace(0.5, 150.0, 300)

CURVE_LABELS = {
    "Severinghaus 1979": "severinghaus",
    "Dash 2016": "dash",
    "Hill (n 2.7, P50 26.8)": "hill",
    "Siggaard-Andersen 1990": "siggaard_andersen1990",
}
_CURVE_ALIASES = {"severinghaus1979": "severinghaus", "dash2016": "dash", "hill1910": "hill"}
PRESSURE_UNITS = ("mmHg", "kPa")
HB_UNITS = ("g/dL", "g/L", "mmol/L")

# Inputs handed to model.solve_transport under the same name.
_MODEL_INPUTS = (
    "altitude_m",
    "pressure_model",
    "fio2",
    "paco2_mmhg",
    "rq",
    "shunt_fraction",
    "diffusing_capacity_ml_min_mmhg",
    "capillary_volume_ml",
    "hb_g_dl",
    "temperature_c",
    "dpg_mmol_l",
    "cohb_fraction",
    "methb_fraction",
    "curve",
    "cardiac_output_l_min",
    "vo2_ml_min",
    "vo2_temperature_scaling",
)
CASE_INPUTS = (
    *_MODEL_INPUTS,
    "use_pressure_override",
    "barometric_pressure_mmhg",
    "acid_base_input",
    "ph",
    "base_excess_mmol_l",
    "use_p50_override",
    "p50_mmhg",
    "height_cm",
    "weight_kg",
)


def _num(name: str, default: float, label: str, doc: str, step: float):
    """A bounded input whose bounds are the model's own validation limits."""
    lo, hi = model.INPUT_LIMITS[name][:2]
    return param.Number(
        default=default, bounds=(float(lo), float(hi)), label=label, doc=doc, step=step
    )


READING_ROWS = (
    # key, label, kind
    ("alveolar_po2", "PAO2 alveolar", "pressure"),
    ("arterial_po2", "PaO2 arterial", "pressure"),
    ("arterial_so2", "SaO2", "percent"),
    ("arterial_o2_content", "CaO2", "content"),
    ("venous_po2", "PvO2 venous", "pressure"),
    ("venous_so2", "SvO2", "percent"),
    ("venous_o2_content", "CvO2", "content"),
    ("do2", "DO2 delivery", "flow"),
    ("do2i", "DO2I delivery index", "flow_index"),
    ("vo2", "VO2 uptake", "flow"),
    ("extraction_ratio", "O2ER extraction ratio", "percent"),
    ("o2_extracted_per_l", "O2 extracted per litre", "per_litre"),
    ("arterial_p50", "P50 arterial", "pressure"),
    ("venous_p50", "P50 venous", "pressure"),
)
KIND_UNITS = {
    "percent": ("%", 1),
    "content": ("mL/dL", 1),
    "flow": ("mL/min", 0),
    "flow_index": ("mL/min/m²", 0),
    "per_litre": ("mL O2/L", 0),
}


def _nice(x: float) -> str:
    """A bound for people: 0.6666 -> '0.667', 9000.0 -> '9000'."""
    return f"{x:.0f}" if abs(x) >= 100 else f"{x:.3g}"


def _field(label: str) -> str:
    """'Hb (g/dL)' -> 'Hb'."""
    return label.rsplit(" (", 1)[0] if label.endswith(")") else label


def _unit(label: str) -> str:
    """'Hb (g/dL)' -> ' g/dL'; units '-' and 'fraction' give ''."""
    if not label.endswith(")"):
        return ""
    unit = label.rsplit(" (", 1)[1][:-1]
    return "" if unit in ("-", "fraction") or unit.startswith("fraction") else f" {unit}"


@dataclasses.dataclass(frozen=True)
class Reading:
    """One reported number, in display units, with its reference range and change."""

    key: str
    label: str
    value: float
    unit: str
    digits: int
    low: float | None
    high: float | None
    delta: float | None

    @property
    def flag(self) -> str:
        """'high', 'low' or '' against the reference range."""
        if self.low is not None and self.value < self.low:
            return "low"
        if self.high is not None and self.value > self.high:
            return "high"
        return ""


class CaseState(param.Parameterized):
    """Inputs of one case along the oxygen path, its result and an optional baseline."""

    # --- Air
    altitude_m = _num("altitude_m", 0.0, "Altitude (m)", "Altitude above sea level [m].", 100.0)
    use_pressure_override = param.Boolean(
        default=False,
        label="Enter barometric pressure instead of altitude",
        doc="Use barometric_pressure_mmhg rather than the pressure from altitude.",
    )
    barometric_pressure_mmhg = _num(
        "barometric_pressure_mmhg",
        760.0,
        "Barometric pressure (mmHg)",
        "Ambient pressure when entered directly [mmHg].",
        5.0,
    )
    pressure_model = param.Selector(
        default="standard",
        objects=["standard", "mountain"],
        label="Pressure–altitude model",
        doc="'standard' atmosphere or the heavier 'mountain' atmosphere of high ranges.",
    )
    fio2 = _num("fio2", 0.21, "FiO2 (fraction)", "Inspired O2 fraction, dry gas [-].", 0.01)

    # --- Lungs
    paco2_mmhg = _num("paco2_mmhg", 40.0, "PaCO2 (mmHg)", "Arterial = alveolar PCO2 [mmHg].", 1.0)
    rq = _num("rq", 0.8, "Respiratory quotient (-)", "CO2 output / O2 uptake [-].", 0.05)
    shunt_fraction = _num(
        "shunt_fraction",
        0.02,
        "Shunt (fraction of output)",
        "Venous admixture Qs/Qt [-].",
        0.01,
    )
    diffusing_capacity_ml_min_mmhg = _num(
        "diffusing_capacity_ml_min_mmhg",
        30.0,
        "O2 diffusing capacity (mL/min/mmHg)",
        "Lung O2 diffusing capacity [mL/min/mmHg].",
        1.0,
    )
    capillary_volume_ml = _num(
        "capillary_volume_ml",
        75.0,
        "Pulmonary capillary volume (mL)",
        "Blood volume in the lung capillaries [mL].",
        5.0,
    )

    # --- Blood
    hb_g_dl = _num("hb_g_dl", 15.0, "Hb (g/dL)", "Haemoglobin [g/dL].", 0.1)
    temperature_c = _num("temperature_c", 37.0, "Temperature (°C)", "Blood temperature [°C].", 0.1)
    acid_base_input = param.Selector(
        default="pH",
        objects=["pH", "base excess"],
        label="Acid–base given as",
        doc="Give arterial pH, or base excess (pH then follows from PaCO2).",
    )
    ph = _num("ph", 7.40, "Arterial pH (-)", "Arterial pH [-].", 0.01)
    base_excess_mmol_l = _num(
        "base_excess_mmol_l",
        0.0,
        "Base excess (mmol/L)",
        "Base excess [mmol/L].",
        0.5,
    )
    dpg_mmol_l = _num(
        "dpg_mmol_l",
        5.0,
        "2,3-DPG (mmol/L)",
        "Red-cell 2,3-DPG [mmol/L]; 5.0 is normal.",
        0.1,
    )
    cohb_fraction = _num(
        "cohb_fraction",
        0.0,
        "COHb (fraction)",
        "Carboxyhaemoglobin fraction of total Hb [-].",
        0.01,
    )
    methb_fraction = _num(
        "methb_fraction",
        0.0,
        "MetHb (fraction)",
        "Methaemoglobin fraction of total Hb [-].",
        0.01,
    )
    use_p50_override = param.Boolean(
        default=False, label="Set standard P50", doc="Override the standard-state P50 of the curve."
    )
    p50_mmhg = _num(
        "p50_mmhg",
        26.8,
        "Standard P50 (mmHg)",
        "Standard-state P50 when overridden [mmHg].",
        0.1,
    )
    curve = param.Selector(
        default="severinghaus",
        objects=CURVE_LABELS,
        label="Dissociation curve",
        doc="Model of the O2 dissociation curve.",
    )

    # --- Circulation & demand
    cardiac_output_l_min = _num(
        "cardiac_output_l_min",
        5.0,
        "Cardiac output (L/min)",
        "Cardiac output [L/min].",
        0.1,
    )
    vo2_ml_min = _num("vo2_ml_min", 250.0, "VO2 (mL/min)", "Whole-body O2 uptake [mL/min].", 10.0)
    vo2_temperature_scaling = param.Boolean(
        default=False,
        label="Scale VO2 with temperature",
        doc="Let the model scale VO2 with body temperature.",
    )
    height_cm = param.Number(
        default=None,
        allow_None=True,
        bounds=(50.0, 250.0),
        label="Height (cm)",
        doc="Height for BSA and DO2I [cm]; optional.",
    )
    weight_kg = param.Number(
        default=None,
        allow_None=True,
        bounds=(2.0, 350.0),
        label="Weight (kg)",
        doc="Weight for BSA and DO2I [kg]; optional.",
    )

    # --- Display
    pressure_unit = param.Selector(
        default="mmHg", objects=list(PRESSURE_UNITS), label="Pressure unit"
    )
    hb_unit = param.Selector(default="g/dL", objects=list(HB_UNITS), label="Hb unit")

    # --- Derived (read-only for views)
    result = param.Parameter(default=None, doc="Last valid model.TransportResult.")
    curves = param.Dict(default={}, doc="PO2 grid and SO2 arrays: arterial, venous, standard.")
    baseline = param.Parameter(default=None, doc="Result kept as baseline, or None.")
    baseline_curves = param.Dict(default=None, allow_None=True, doc="Curves of the baseline.")
    error_message = param.String(default="", doc="Why the last change was not applied.")
    scenario_name = param.String(default="", doc="Name of the last scenario loaded.")
    scenario_description = param.String(default="")

    def __init__(self, **params):
        super().__init__(**params)
        self._solve()

    # ------------------------------------------------------------------ derivation
    def model_inputs(self) -> dict:
        """Keyword arguments for model.solve_transport from the current inputs."""
        kw = {name: getattr(self, name) for name in _MODEL_INPUTS}
        if self.use_pressure_override:
            kw["barometric_pressure_mmhg"] = self.barometric_pressure_mmhg
        if self.acid_base_input == "pH":
            kw["ph"] = self.ph
        else:
            kw["base_excess_mmol_l"] = self.base_excess_mmol_l
        if self.use_p50_override:
            kw["p50_mmhg"] = self.p50_mmhg
        return kw

    def _curves_for(self, result) -> dict:
        standard = {"curve": result.arterial_conditions.get("curve", self.curve)}
        out = {"po2_mmhg": PO2_GRID_MMHG}
        for name, cond in (
            ("arterial", result.arterial_conditions),
            ("venous", result.venous_conditions),
            ("standard", standard),
        ):
            out[name] = np.asarray(model.saturation(PO2_GRID_MMHG, **cond), dtype=float)
        for name, cond, blood in (
            ("arterial", result.arterial_conditions, result.arterial),
            ("venous", result.venous_conditions, result.venous),
        ):
            p50 = float(blood.p50_mmhg)
            out[f"{name}_p50"] = (p50, float(model.saturation(p50, **cond)))
        return out

    @param.depends(*CASE_INPUTS, watch=True)
    def _solve(self) -> None:
        try:
            result = model.solve_transport(**self.model_inputs())
            curves = self._curves_for(result)
        except ValueError as exc:
            self.error_message = str(exc)
            return
        self.param.update(result=result, curves=curves, error_message="")

    def set_input(self, name: str, value) -> bool:
        """Set one input; refuse a value outside its bounds with a message naming the field.

        Returns True when the value was taken. A refused value leaves the input, the result
        and the baseline as they were, and explains itself in :attr:`error_message`.
        """
        p = self.param[name]
        bounds = getattr(p, "bounds", None)
        if value is None and not p.allow_None:
            self.error_message = f"{p.label}: a value is required."
            return False
        if bounds and value is not None:
            lo, hi = bounds
            if not lo <= value <= hi:
                self.error_message = (
                    f"{_field(p.label)} = {value:g} is outside the allowed "
                    f"range {lo:g}–{hi:g}{_unit(p.label)}; kept "
                    f"{getattr(self, name):g}."
                )
                return False
        previous = getattr(self, name)
        self.error_message = ""  # a stale refusal must not be read as this change's
        try:
            setattr(self, name, value)
        except ValueError as exc:
            self.error_message = f"{p.label}: {exc}"
            return False
        if self.error_message:
            # The model refused the case: put the input back so inputs and result agree.
            refusal = self.error_message
            with param.parameterized.discard_events(self):
                setattr(self, name, previous)
            self.error_message = f"{_field(p.label)} = {value:g} not applied: {refusal}"
            return False
        return True

    # Inputs whose unit follows the display choice, and the unit written in their label.
    _PRESSURE_INPUTS = ("paco2_mmhg", "barometric_pressure_mmhg", "p50_mmhg")
    _HB_INPUTS = ("hb_g_dl",)

    def _display_pair(self, name: str):
        if name in self._PRESSURE_INPUTS:
            return (
                "(mmHg)",
                f"({self.pressure_unit})",
                self.pressure_to_display,
                self.pressure_from_display,
            )
        if name in self._HB_INPUTS:
            return "(g/dL)", f"({self.hb_unit})", self.hb_to_display, self.hb_from_display
        return None, None, float, float

    def display_label(self, name: str) -> str:
        """Label of an input with the unit it is shown in."""
        label = self.param[name].label
        old, new, _, _ = self._display_pair(name)
        return label.replace(old, new) if old else label

    def display_bounds(self, name: str) -> tuple[float, float]:
        _, _, to_display, _ = self._display_pair(name)
        lo, hi = self.param[name].bounds
        return to_display(lo), to_display(hi)

    def display_value(self, name: str) -> float | None:
        """Current value of an input in its display unit, rounded for reading."""
        value = getattr(self, name)
        if value is None:
            return None
        _, _, to_display, _ = self._display_pair(name)
        shown = to_display(value)
        if name in self._PRESSURE_INPUTS and self.pressure_unit == "kPa":
            return round(shown, 2)
        if name in self._HB_INPUTS and self.hb_unit != "g/dL":
            return round(shown, 1 if self.hb_unit == "g/L" else 2)
        return round(shown, 6)

    def set_display_input(self, name: str, value: float | None) -> bool:
        """Set an input typed in display units; refuse it with a message if out of bounds."""
        p = self.param[name]
        if value is None:
            if p.allow_None:
                return self.set_input(name, None)
            self.error_message = f"{self.display_label(name)}: a value is required."
            return False
        lo, hi = self.display_bounds(name)
        # Accept what the message promises: the bounds as shown (then clamped to the true ones).
        lo, hi = min(lo, float(_nice(lo))), max(hi, float(_nice(hi)))
        tol = 1e-9 * max(abs(lo), abs(hi), 1.0)
        if not lo - tol <= value <= hi + tol:
            label = self.display_label(name)
            self.error_message = (
                f"{_field(label)} = {value:g} is outside the allowed range "
                f"{_nice(lo)}–{_nice(hi)}{_unit(label)}; kept the last valid value."
            )
            return False
        _, _, _, from_display = self._display_pair(name)
        return self.set_input(name, min(max(from_display(value), p.bounds[0]), p.bounds[1]))

    # ------------------------------------------------------------------ baseline
    def keep_baseline(self) -> None:
        """Keep the current result and curves to compare later changes against."""
        self.param.update(baseline=self.result, baseline_curves=dict(self.curves))

    def clear_baseline(self) -> None:
        self.param.update(baseline=None, baseline_curves=None)

    # ------------------------------------------------------------------ scenarios
    def scenario_files(self, directory: Path | str = SCENARIO_DIR) -> list[Path]:
        return sorted(Path(directory).glob("*.toml"))

    def scenario_choices(self, directory: Path | str = SCENARIO_DIR) -> dict[str, str]:
        """Scenario name -> file path, for a picker; unreadable files are marked, not hidden."""
        choices = {}
        for path in self.scenario_files(directory):
            try:
                label = model.load_scenario(path).name
            except (ValueError, OSError):
                label = f"{path.stem} (cannot be read)"
            choices[label if label not in choices else f"{label} ({path.stem})"] = str(path)
        return choices

    def load_scenario(self, path: Path | str) -> bool:
        """Apply a scenario's inputs all-or-nothing; False (and error_message) if refused.

        Inputs the scenario does not name return to their defaults, so a scenario always
        gives the same case whatever was on screen before.
        """
        try:
            scenario = model.load_scenario(path)
            updates = self._updates_from_inputs(dict(scenario.inputs))
            model.solve_transport(**self._inputs_after(updates))
        except (ValueError, OSError, TypeError) as exc:
            self.error_message = f"Scenario not loaded: {exc}"
            return False
        updates.update(scenario_name=scenario.name, scenario_description=scenario.description)
        self.param.update(**updates)
        return True

    def apply_inputs(self, inputs: dict, name: str = "", description: str = "") -> bool:
        """Make ``inputs`` (scenario key names) the live case, all-or-nothing.

        Inputs not named return to their defaults, as for a scenario. Returns False and sets
        ``error_message`` (nothing changed) when a key is unknown or a value is refused.
        """
        try:
            updates = self._updates_from_inputs(dict(inputs))
            model.solve_transport(**self._inputs_after(updates))
        except (ValueError, TypeError) as exc:
            self.error_message = f"Case not applied: {exc}"
            return False
        updates.update(scenario_name=name, scenario_description=description)
        self.param.update(**updates)
        return True

    def _updates_from_inputs(self, inputs: dict) -> dict:
        updates = {name: self.param[name].default for name in CASE_INPUTS}
        if "barometric_pressure_mmhg" in inputs and inputs["barometric_pressure_mmhg"] is not None:
            updates["use_pressure_override"] = True
        if inputs.get("base_excess_mmol_l") is not None and inputs.get("ph") is None:
            updates["acid_base_input"] = "base excess"
        if inputs.get("p50_mmhg") is not None:
            updates["use_p50_override"] = True
        known = set(CASE_INPUTS)
        for key, value in inputs.items():
            if value is None:
                continue
            if key not in known:
                raise ValueError(f"scenario input {key!r} is not handled by the dashboard")
            updates[key] = _CURVE_ALIASES.get(value, value) if key == "curve" else value
        for name, value in updates.items():
            p = self.param[name]
            bounds = getattr(p, "bounds", None)
            if bounds and value is not None and not isinstance(value, bool):
                lo, hi = bounds
                if not lo <= value <= hi:
                    label = p.label or name
                    raise ValueError(
                        f"{label} = {value} is outside the allowed range {lo:g}–{hi:g}"
                    )
        return updates

    def _inputs_after(self, updates: dict) -> dict:
        with param.parameterized.discard_events(self):
            saved = {name: getattr(self, name) for name in updates}
            try:
                self.param.update(**updates)
                return self.model_inputs()
            finally:
                self.param.update(**saved)

    # ------------------------------------------------------------------ display units
    def pressure_to_display(self, mmhg: float) -> float:
        return float(model.mmhg_to_kpa(mmhg)) if self.pressure_unit == "kPa" else float(mmhg)

    def pressure_from_display(self, value: float) -> float:
        return float(model.kpa_to_mmhg(value)) if self.pressure_unit == "kPa" else float(value)

    def hb_to_display(self, g_dl: float) -> float:
        if self.hb_unit == "g/L":
            return float(model.hb_g_dl_to_g_l(g_dl))
        if self.hb_unit == "mmol/L":
            return float(model.hb_g_dl_to_mmol_l(g_dl))
        return float(g_dl)

    def hb_from_display(self, value: float) -> float:
        if self.hb_unit == "g/L":
            return float(model.hb_g_l_to_g_dl(value))
        if self.hb_unit == "mmol/L":
            return float(model.hb_mmol_l_to_g_dl(value))
        return float(value)

    @property
    def pressure_digits(self) -> int:
        return 1 if self.pressure_unit == "kPa" else 0

    # ------------------------------------------------------------------ numbers
    def body_surface_area_m2(self) -> float | None:
        """Mosteller body surface area sqrt(height_cm * weight_kg / 3600) [m²], if given."""
        if self.height_cm is None or self.weight_kg is None:
            return None
        return float(model.body_surface_area(self.height_cm, self.weight_kg))

    def _raw_numbers(self, result) -> dict[str, float]:
        a, v = result.arterial, result.venous
        numbers = {
            "inspired_po2": float(result.inspired_po2_mmhg),
            "alveolar_po2": float(result.alveolar_po2_mmhg),
            "end_capillary_po2": float(result.end_capillary_po2_mmhg),
            "arterial_po2": float(a.po2_mmhg),
            "arterial_so2": float(a.so2),
            "arterial_o2_content": float(a.o2_content_ml_dl),
            "venous_po2": float(v.po2_mmhg),
            "venous_so2": float(v.so2),
            "venous_o2_content": float(v.o2_content_ml_dl),
            "do2": float(result.do2_ml_min),
            "vo2": float(result.vo2_ml_min),
            "extraction_ratio": float(result.extraction_ratio),
            "o2_extracted_per_l": float(result.o2_extracted_ml_per_l),
            "arterial_p50": float(a.p50_mmhg),
            "venous_p50": float(v.p50_mmhg),
        }
        bsa = self.body_surface_area_m2()
        if bsa:
            numbers["do2i"] = numbers["do2"] / bsa
        return numbers

    def _to_display(self, kind: str, value: float) -> float:
        if kind == "pressure":
            return self.pressure_to_display(value)
        if kind == "percent":
            return 100.0 * value
        return value

    def readings(self) -> list[Reading]:
        """The reported numbers in display units, with range and change vs the baseline."""
        if self.result is None:
            return []
        now = self._raw_numbers(self.result)
        base = self._raw_numbers(self.baseline) if self.baseline is not None else {}
        rows = []
        for key, label, kind in READING_ROWS:
            if key not in now:
                continue
            if kind == "pressure":
                unit, digits = self.pressure_unit, self.pressure_digits
                if key.endswith("_p50"):
                    digits += 1  # P50 moves by tenths; whole numbers would hide its shifts
            else:
                unit, digits = KIND_UNITS[kind]
            value = self._to_display(kind, now[key])
            rng = NORMAL_RANGES.get(key)
            low, high = (
                (self._to_display(kind, rng[0]), self._to_display(kind, rng[1]))
                if rng
                else (None, None)
            )
            delta = value - self._to_display(kind, base[key]) if key in base else None
            rows.append(Reading(key, label, value, unit, digits, low, high, delta))
        return rows

    def cascade(self) -> dict[str, list]:
        """PO2 at each stop of the path, in the display pressure unit."""
        r = self.result
        stages = [
            ("Inspired", r.inspired_po2_mmhg),
            ("Alveolar", r.alveolar_po2_mmhg),
            ("End-capillary", r.end_capillary_po2_mmhg),
            ("Arterial", r.arterial.po2_mmhg),
            ("Venous", r.venous.po2_mmhg),
        ]
        return {
            "stage": [s for s, _ in stages],
            "po2": [self.pressure_to_display(float(p)) for _, p in stages],
        }

    def _pressure_array(self, mmhg) -> np.ndarray:
        mmhg = np.asarray(mmhg, dtype=float)
        return (
            np.asarray(model.mmhg_to_kpa(mmhg), dtype=float)
            if self.pressure_unit == "kPa"
            else mmhg
        )

    def curve_view(self, baseline: bool = False) -> dict | None:
        """Curves and marked points in display units (PO2 in the pressure unit, SO2 in %).

        Keys: x, arterial, venous, standard (arrays); loading, unloading, arterial_p50,
        venous_p50 ((x, y) pairs); extracted_ml_per_l, shift_gain_ml_per_l (floats).
        """
        result = self.baseline if baseline else self.result
        curves = self.baseline_curves if baseline else self.curves
        if result is None or not curves:
            return None

        def point(po2_mmhg, so2):
            return (self.pressure_to_display(float(po2_mmhg)), 100.0 * float(so2))

        return {
            "x": self._pressure_array(curves["po2_mmhg"]),
            "arterial": 100.0 * curves["arterial"],
            "venous": 100.0 * curves["venous"],
            "standard": 100.0 * curves["standard"],
            "loading": point(result.arterial.po2_mmhg, result.arterial.so2),
            "unloading": point(result.venous.po2_mmhg, result.venous.so2),
            "arterial_p50": point(*curves["arterial_p50"]),
            "venous_p50": point(*curves["venous_p50"]),
            "extracted_ml_per_l": float(result.o2_extracted_ml_per_l),
            "shift_gain_ml_per_l": float(result.venous_shift_gain_ml_per_l),
        }

    def standard_conditions_text(self) -> str:
        """The model's standard state (its saturation() defaults) in display units."""
        defaults = {k: v.default for k, v in inspect.signature(model.saturation).parameters.items()}
        pco2 = self.pressure_to_display(defaults["pco2_mmhg"])
        return (
            f"pH {defaults['ph']:.2f}, PCO2 {pco2:.{self.pressure_digits}f} "
            f"{self.pressure_unit}, {defaults['temperature_c']:g} °C"
        )

    def x_max_display(self) -> float:
        return self.pressure_to_display(float(PO2_GRID_MMHG[-1]))
