"""How the bedside screen shows a number: display units, labels, ranges, digits, signs.

Shared by the parts of :class:`dashboard.bedside.state.BedsideState` (entry, fit, what-ifs).
Values are kept in the model's units (fractions, mmHg, g/dL); the session's
:class:`dashboard.case.state.CaseState` says which pressure and Hb units are shown and does
the conversion. No Panel import here.
"""

from __future__ import annotations

import dataclasses

from ...model import bedside
from ..case.state import CaseState

PERCENT_KEYS = frozenset({"sao2", "svo2", "cohb_fraction", "methb_fraction"})
"""Fractions typed and shown as percent, as co-oximeters print them."""
HB_KEYS = frozenset({"hb_g_dl"})


@dataclasses.dataclass(frozen=True)
class Row:
    """One measured or fitted value as shown: key, label, formatted value, unit."""

    key: str
    label: str
    value: str
    unit: str


def nice(x: float) -> str:
    """A number for a message: 0.6666 -> '0.667', 9000.0 -> '9000'."""
    return f"{x:.0f}" if abs(x) >= 100 else f"{x:.3g}"


def signed(value: float, digits: int) -> str:
    """'+1.2' / '−0.3', and '0.0' for a change too small to show (no '−0.0')."""
    if round(value, digits) == 0:
        return f"{0.0:.{digits}f}"
    return f"{value:+.{digits}f}".replace("-", "−")


def pressure_digits(case: CaseState) -> int:
    """Decimals of a pressure in a table: 2 in kPa, 1 in mmHg."""
    return 2 if case.pressure_unit == "kPa" else 1


def limits(key: str) -> tuple[float, float, str, str]:
    """(lo, hi, unit, label) of a measured field in model units."""
    return bedside.MEASURED_LIMITS[key]


def display_unit(case: CaseState, key: str) -> str:
    """The unit a measured field is typed and shown in ('' for a bare number)."""
    if key in PERCENT_KEYS:
        return "%"
    if key.endswith("_mmhg"):
        return case.pressure_unit
    if key in HB_KEYS:
        return case.hb_unit
    unit = limits(key)[2]
    return "" if unit in ("", "-", "fraction") else unit.replace("degC", "°C")


OWNER_LABELS = {"fio2": "FiO2 when drawn", "hb_g_dl": "Measured Hb"}
"""Form labels that say whose value this is: the Model inputs sidebar has its own FiO2 and
Hb ("Model FiO2", "Model Hb"), which only "Use fitted case" fills from these."""


def display_label(case: CaseState, key: str) -> str:
    """The form label of a measured field with its display unit."""
    label = OWNER_LABELS.get(key, limits(key)[3])
    unit = display_unit(case, key)
    if unit == "%":
        label = label.replace(" fraction", "")
    if key == "fio2":
        unit = "fraction"
    return f"{label} ({unit})" if unit else label


def to_display(case: CaseState, key: str, value: float | None) -> float | None:
    """Model units -> the unit shown, rounded for reading."""
    if value is None:
        return None
    if key in PERCENT_KEYS:
        return round(100.0 * value, 2)
    if key.endswith("_mmhg"):
        return round(case.pressure_to_display(value), pressure_digits(case))
    if key in HB_KEYS:
        shown = case.hb_to_display(value)
        return round(shown, {"g/dL": 2, "g/L": 1}.get(case.hb_unit, 2))
    return float(value)


def from_display(case: CaseState, key: str, value: float) -> float:
    """The unit shown -> model units."""
    if key in PERCENT_KEYS:
        return float(value) / 100.0
    if key.endswith("_mmhg"):
        return case.pressure_from_display(value)
    if key in HB_KEYS:
        return case.hb_from_display(value)
    return float(value)


def display_range(case: CaseState, key: str, bounds: tuple[float, float] | None = None) -> str:
    """An allowed range in display units, '1.33–100 kPa': the field's limits unless
    ``bounds`` (model units) are given."""
    lo, hi = bounds if bounds is not None else limits(key)[:2]
    unit = display_unit(case, key)
    shown = f"{nice(to_display(case, key, lo))}–{nice(to_display(case, key, hi))}"
    return shown + (f" {unit}" if unit else "")


def format_value(case: CaseState, key: str, value: float | None) -> str:
    """A measured value in its display unit with the digits a gas report uses."""
    if value is None:
        return ""
    shown = to_display(case, key, value)
    if key in PERCENT_KEYS:
        digits = 1
    elif key.endswith("_mmhg"):
        digits = 2 if case.pressure_unit == "kPa" else 0
    elif key in HB_KEYS:
        digits = 0 if case.hb_unit == "g/L" else 1
    elif key == "ph" or key == "fio2":
        digits = 2
    else:
        digits = 1 if abs(shown) < 100 else 0
    return f"{shown:.{digits}f}".replace("-", "−")
