"""What the case screen reads off a result: numbers with ranges and changes, curves, cascade.

No Panel import and no physiology: every number comes from a ``model.TransportResult`` or
from ``model.saturation``; this module picks them out and puts them in the display units
of a :class:`~.units.DisplayUnits` (``units``). Ranges are :data:`.ranges.NORMAL_RANGES`;
a change is the value minus the baseline result's.
"""

from __future__ import annotations

import dataclasses
import inspect

import numpy as np

from ... import model
from ...model import plans as model_plans
from ...model.air import PRESSURE_MODEL_NAMES
from .ranges import NORMAL_RANGES
from .units import DisplayUnits

PO2_GRID_MMHG = np.linspace(0.5, 150.0, 300)

PB_SOURCES = PRESSURE_MODEL_NAMES
"""How the numbers table names the pressure model that gave PB (the result's
``pressure_model``)."""

READING_ROWS = (
    # key, label, kind
    ("barometric_pressure", "PB barometric", "pressure"),
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
AT_37 = {
    "arterial_po2": "PaO2 as read at 37 °C",
    "venous_po2": "PvO2 as read at 37 °C",
}
"""Rows shown twice away from 37 degC: at the case's temperature, then as an analyser
(which measures at 37 degC) reports them, flagged against the reference range."""
KIND_UNITS = {
    "percent": ("%", 1),
    "content": ("mL/dL", 1),
    "flow": ("mL/min", 0),
    "flow_index": ("mL/min/m²", 0),
    "per_litre": ("mL O2/L", 0),
}


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
        """'high', 'low' or '' against the reference range, for the value as shown (39.7
        shown as 40 is not below 40)."""
        shown = round(self.value, self.digits)
        if self.low is not None and shown < round(self.low, self.digits):
            return "low"
        if self.high is not None and shown > round(self.high, self.digits):
            return "high"
        return ""


def curves_for(result, curve: str) -> dict:
    """SO2 on :data:`PO2_GRID_MMHG` under arterial, venous and standard conditions [-],
    and each blood's (P50 [mmHg], SO2 there [-]); ``curve`` names the standard curve when
    the result's conditions do not."""
    standard = {"curve": result.arterial_conditions.get("curve", curve)}
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


def raw_numbers(result, bsa_m2: float | None = None) -> dict[str, float]:
    """The reported numbers in model units; ``do2i`` only with a body surface area [m²]."""
    a, v = result.arterial, result.venous
    numbers = {
        "barometric_pressure": float(result.barometric_pressure_mmhg),
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
    if bsa_m2:
        numbers["do2i"] = numbers["do2"] / bsa_m2
    at_37 = model_plans.readings(result)  # PO2s as a 37 degC analyser reads them
    numbers.update(
        temperature=float(result.temperature_c),
        arterial_po2_37=at_37["pao2_37_mmhg"],
        venous_po2_37=at_37["pvo2_37_mmhg"],
    )
    return numbers


def _to_display(units: DisplayUnits, kind: str, value: float) -> float:
    if kind == "pressure":
        return units.pressure_to_display(value)
    if kind == "percent":
        return 100.0 * value
    return value


def readings(result, baseline, units: DisplayUnits, bsa_m2: float | None = None) -> list[Reading]:
    """The reported numbers in display units, with range and change vs ``baseline``."""
    if result is None:
        return []
    now = raw_numbers(result, bsa_m2)
    base = raw_numbers(baseline, bsa_m2) if baseline is not None else {}
    rows = []
    for key, label, kind in READING_ROWS:
        if key not in now:
            continue
        if kind == "pressure":
            unit, digits = units.pressure_unit, units.pressure_digits
            if key.endswith("_p50"):
                digits += 1  # P50 moves by tenths; whole numbers would hide its shifts
        else:
            unit, digits = KIND_UNITS[kind]
        value = _to_display(units, kind, now[key])
        rng = NORMAL_RANGES.get(key)
        low, high = (
            (_to_display(units, kind, rng[0]), _to_display(units, kind, rng[1]))
            if rng
            else (None, None)
        )
        delta = value - _to_display(units, kind, base[key]) if key in base else None
        if key == "barometric_pressure":
            source = PB_SOURCES.get(getattr(result, "pressure_model", ""), "")
            label = f"{label} ({source})" if source else label
        if key in AT_37 and abs(now["temperature"] - 37.0) > 0.05:
            # Reference ranges are for gases as analysers report them, at 37 degC: the
            # value at the case's temperature is shown unflagged, then the 37 degC reading.
            at = f"{now['temperature']:.1f} °C"
            rows.append(Reading(key, f"{label} at {at}", value, unit, digits, None, None, delta))
            key, label = f"{key}_37", AT_37[key]
            value = _to_display(units, kind, now[key])
            delta = value - _to_display(units, kind, base[key]) if key in base else None
        rows.append(Reading(key, label, value, unit, digits, low, high, delta))
    return rows


def cascade(result, units: DisplayUnits) -> dict[str, list]:
    """PO2 at each stop of the path, in the display pressure unit."""
    stages = [
        ("Inspired", result.inspired_po2_mmhg),
        ("Alveolar", result.alveolar_po2_mmhg),
        ("End-capillary", result.end_capillary_po2_mmhg),
        ("Arterial", result.arterial.po2_mmhg),
        ("Venous", result.venous.po2_mmhg),
    ]
    return {
        "stage": [s for s, _ in stages],
        "po2": [units.pressure_to_display(float(p)) for _, p in stages],
    }


def curve_view(result, curves: dict, units: DisplayUnits) -> dict | None:
    """Curves and marked points in display units (PO2 in the pressure unit, SO2 in %).

    Keys: x, arterial, venous, standard (arrays); loading, unloading, arterial_p50,
    venous_p50 ((x, y) pairs); extracted_ml_per_l, shift_gain_ml_per_l (floats).
    """
    if result is None or not curves:
        return None

    def point(po2_mmhg, so2):
        return (units.pressure_to_display(float(po2_mmhg)), 100.0 * float(so2))

    return {
        "x": units.pressure_array(curves["po2_mmhg"]),
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


def standard_conditions_text(units: DisplayUnits) -> str:
    """The model's standard state (its saturation() defaults) in display units."""
    defaults = {k: v.default for k, v in inspect.signature(model.saturation).parameters.items()}
    pco2 = units.pressure_to_display(defaults["pco2_mmhg"])
    return (
        f"pH {defaults['ph']:.2f}, PCO2 {pco2:.{units.pressure_digits}f} "
        f"{units.pressure_unit}, {defaults['temperature_c']:g} °C"
    )
