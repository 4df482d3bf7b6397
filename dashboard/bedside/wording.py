"""Words of the bedside screen in the units on screen: plan changes, what-if labels, flags.

No Panel import here. The model words some of its results itself (a what-if's label
"Transfuse: Hb 8.5 → 10.0 g/dL", a note "760 mmHg assumed", a flag "PaCO2 [mmHg] below
35"); the screen shows them in the pressure and Hb units chosen, so every pressure and Hb in
such a text is moved to the display unit here, and flags are worded again from
``model.bedside.USUAL_RANGES`` with the value as shown. Plan changes are typed and read in
display units (Hb in g/L, a shunt change in % points).
"""

from __future__ import annotations

import math
import re

from ...model import bedside
from ...model.plans import CHANGE_KINDS, Change, Step
from ..case.state import CaseState
from .display import format_value, from_display, to_display

ADULT_AGE_YEARS = 80.0
"""Age whose expected A-a gradient stands for 'adult' when no age is given: the upper end of
adult ages, so that a gradient above it is high for any adult (common practice, no source)."""

# ------------------------------------------------------------------ plan changes
KIND_ORDER = ("fio2", "hb", "cardiac_output", "temperature", "ph", "shunt")

_KIND_LABELS = {
    "fio2": "FiO2 to",
    "hb": "Transfuse to Hb",
    "cardiac_output": "Cardiac output to",
    "temperature": "Cool to",
    "ph": "Correct pH to (read at 37 °C)",
    "shunt": "Shunt change by",
}


def kind_unit(case: CaseState, kind: str) -> str:
    """The unit a change of this kind is typed in ('' for FiO2 and pH)."""
    return {
        "fio2": "",
        "hb": case.hb_unit,
        "cardiac_output": "L/min",
        "temperature": "°C",
        "ph": "",
        "shunt": "% points",
    }[kind]


def kind_name(kind: str) -> str:
    """'Transfuse to Hb': what a change of this kind does, without its unit."""
    return _KIND_LABELS[kind]


def kind_label(case: CaseState, kind: str) -> str:
    """'Transfuse to Hb (g/L)': the label of a change with its display unit."""
    unit = kind_unit(case, kind)
    return _KIND_LABELS[kind] + (f" ({unit})" if unit else "")


def kind_choices(case: CaseState) -> dict[str, str]:
    """Label -> kind, for a picker."""
    return {kind_label(case, k): k for k in KIND_ORDER}


def change_to_display(case: CaseState, kind: str, value: float) -> float:
    """A change's value (model units) in the unit it is typed in."""
    if kind == "hb":
        return to_display(case, "hb_g_dl", value)
    if kind == "shunt":
        return round(100.0 * value, 2)
    return float(value)


def change_from_display(case: CaseState, kind: str, value: float) -> float:
    """A typed change value -> model units."""
    if kind == "hb":
        return from_display(case, "hb_g_dl", value)
    if kind == "shunt":
        return float(value) / 100.0
    return float(value)


def change_range(case: CaseState, kind: str) -> str:
    """The allowed values of a change in display units, '50–180 g/L'."""
    k = CHANGE_KINDS[kind]
    lo, hi = (change_to_display(case, kind, v) for v in (k.low, k.high))
    unit = kind_unit(case, kind)
    return f"{lo:g}–{hi:g}" + (f" {unit}" if unit else "")


def _quantity(case: CaseState, kind: str, value: float) -> str:
    """The quantity a change acts on, as shown: '85 g/L', '0.60', '29.4 %', '39.0 °C'."""
    if not math.isfinite(value):
        return "–"
    if kind == "hb":
        return f"{format_value(case, 'hb_g_dl', value)} {case.hb_unit}"
    if kind == "fio2":
        return f"{value:.2f}"
    if kind == "ph":
        return f"{value:.2f}"
    if kind == "shunt":
        return f"{100.0 * value:.1f} %"
    if kind == "temperature":
        return f"{value:.1f} °C"
    return f"{value:.1f} L/min"


def change_text(case: CaseState, change: Change) -> str:
    """A change as typed: 'Transfuse to Hb 100 g/L, stored blood'."""
    shown = change_to_display(case, change.kind, change.value)
    unit = kind_unit(case, change.kind)
    if change.kind == "hb":
        value = format_value(case, "hb_g_dl", change.value)
    elif change.kind == "shunt":
        value = f"{shown:+.0f}" if float(shown).is_integer() else f"{shown:+.1f}"
        value = value.replace("-", "−")
    elif change.kind in ("fio2", "ph"):
        value = f"{shown:.2f}"
    else:
        value = f"{shown:.1f}"
    text = f"{_KIND_LABELS[change.kind]} {value}" + (f" {unit}" if unit else "")
    if change.kind == "hb" and change.stored_blood:
        text += ", stored blood"
    return text


_STEP_NAMES = {
    "fio2": "FiO2",
    "hb": "Transfuse: Hb",
    "cardiac_output": "Cardiac output",
    "temperature": "Cool:",
    "ph": "pH (read at 37 °C)",
    "shunt": "Shunt",
}


def step_text(case: CaseState, step: Step) -> str:
    """A step as applied: 'Transfuse: Hb 85 → 100 g/L', or why it changed nothing."""
    kind = step.change.kind
    if not step.applied:
        return f"{change_text(case, step.change)}: {step.note[0].lower()}{step.note[1:]}"
    before = _quantity(case, kind, step.before)
    after = _quantity(case, kind, step.after)
    unit_tail = re.search(r" [^\d.−-]+$", after)
    if unit_tail and before.endswith(unit_tail.group(0)):
        before = before[: -len(unit_tail.group(0))]
    text = f"{_STEP_NAMES[kind]} {before} → {after}"
    if kind == "hb" and step.change.stored_blood:
        text += ", stored blood"
    return text


# ------------------------------------------------------------------ numbers in tables
KIND_UNITS = {
    "percent": "%",
    "fraction": "",
    "content": "mL/dL",
    "temperature": "°C",
    "flow": "mL/min",
    "per_litre": "mL O2/L",
}
"""Units of the kinds of number the plan, shift and 'how sure' tables show; pressures
("pressure", "p50") and Hb ("hb") follow the display units."""


def number(case: CaseState, kind: str, value: float, delta: bool = False) -> str:
    """A value (model units) as those tables show it, or a change ('+1.4', '±0').

    Pressures to 1 decimal in kPa and none in mmHg (P50 one more); Hb as the form shows it;
    fractions in percent to 1 decimal; FiO2 to 2; contents and temperatures to 1; flows whole.
    """
    if not math.isfinite(value):
        return "–"
    if kind in ("pressure", "p50"):
        shown = case.pressure_to_display(value)
        digits = (1 if case.pressure_unit == "kPa" else 0) + (kind == "p50")
    elif kind == "hb":
        if not delta:
            return format_value(case, "hb_g_dl", value)
        shown, digits = case.hb_to_display(value), 0 if case.hb_unit == "g/L" else 1
    elif kind == "percent":
        shown, digits = 100.0 * value, 1
    elif kind == "fraction":
        shown, digits = value, 2
    elif kind in ("content", "temperature"):
        shown, digits = value, 1
    else:
        shown, digits = value, 0
    if delta:
        if round(shown, digits) == 0:
            return "±0"
        return f"{shown:+.{digits}f}".replace("-", "−")
    return f"{shown:.{digits}f}".replace("-", "−")


def unit_of(case: CaseState, kind: str) -> str:
    """The unit of a kind of :func:`number`."""
    if kind in ("pressure", "p50"):
        return case.pressure_unit
    if kind == "hb":
        return case.hb_unit
    return KIND_UNITS[kind]


# ------------------------------------------------------------------ model texts
_NUMBER = r"(\d+(?:\.\d+)?)"
_UNIT_TEXT = re.compile(_NUMBER + r"(\s*(?:→|–|-)\s*" + _NUMBER + r")?\s*(mmHg|g/dL)\b")
_SHUNT_LABEL = re.compile(r"^Shunt (\d\.\d+) → (\d\.\d+)$")


def _pressure(case: CaseState, mmhg: float) -> str:
    shown = case.pressure_to_display(mmhg)
    if case.pressure_unit == "kPa":
        return f"{shown:.1f}" if abs(shown) >= 10 else f"{shown:.2f}"
    return f"{shown:g}"


def _hb(case: CaseState, g_dl: float) -> str:
    return format_value(case, "hb_g_dl", g_dl)


def in_display_units(case: CaseState, text: str) -> str:
    """``text`` with every 'n mmHg' / 'a → b g/dL' moved to the display units.

    Only when a display unit differs from the model's; the digits follow the display unit
    (kPa to one decimal above 10, g/L whole).
    """
    if case.pressure_unit == "mmHg" and case.hb_unit == "g/dL":
        return text

    def moved(match: re.Match) -> str:
        unit = match.group(4)
        if unit == "mmHg" and case.pressure_unit == "mmHg":
            return match.group(0)
        if unit == "g/dL" and case.hb_unit == "g/dL":
            return match.group(0)
        convert = _pressure if unit == "mmHg" else _hb
        new_unit = case.pressure_unit if unit == "mmHg" else case.hb_unit
        first = convert(case, float(match.group(1)))
        if match.group(3) is None:
            return f"{first} {new_unit}"
        arrow = re.match(r"\s*(→|–|-)\s*", match.group(2)).group(0)
        return f"{first}{arrow}{convert(case, float(match.group(3)))} {new_unit}"

    return _UNIT_TEXT.sub(moved, text)


def lever_label(case: CaseState, label: str) -> str:
    """A ranked what-if's label in display units (a shunt change in %, as shown elsewhere)."""
    shunt = _SHUNT_LABEL.match(label)
    if shunt:
        a, b = (100.0 * float(g) for g in shunt.groups())
        return f"Shunt {a:.1f} → {b:.1f} %"
    return in_display_units(case, label)


# ------------------------------------------------------------------ usual ranges and flags
_DERIVED_PERCENT = frozenset({"shunt_fraction", "extraction_ratio", "sao2_from_curve"})
_MEASURED_PERCENT = frozenset({"sao2", "svo2", "cohb_fraction", "methb_fraction"})
_RANGE_KEYS = {"cardiac_index_used_l_min_m2": "cardiac_index_l_min_m2"}
"""Derived row -> its key in model.bedside.USUAL_RANGES, where the two differ."""


def _range_unit(case: CaseState, key: str) -> tuple[str, float]:
    """(unit shown, factor or 0 for a pressure) of a USUAL_RANGES key."""
    if key.endswith("_mmhg"):
        return case.pressure_unit, 0.0
    if key == "hb_g_dl":
        return case.hb_unit, -1.0
    if key in _DERIVED_PERCENT or key in _MEASURED_PERCENT:
        return "%", 100.0
    units = {
        "lactate_mmol_l": "mmol/L",
        "temperature_c": "°C",
        "do2i_ml_min_m2": "mL/min/m²",
        "cardiac_index_l_min_m2": "L/min/m²",
    }
    return units.get(key, ""), 1.0


def _bound(case: CaseState, key: str, value: float) -> str:
    unit, factor = _range_unit(case, key)
    if factor == 0.0:
        shown = _pressure(case, value)
    elif factor < 0:
        shown = _hb(case, value)
    else:
        shown = f"{factor * value:g}"
    return shown + (f" {unit}" if unit else "")


def usual_range(case: CaseState, key: str, derived: dict | None = None) -> str:
    """The usual range of a row in display units ('35–45 mmHg', '≤ 10 %', '≥ 65 %'), or ''.

    P/F is above 300 mmHg (outside the Berlin range); the A-a gradient is at or below the
    value expected for age, or for an adult of 80 when no age is given (said so).
    """
    if key.startswith("pao2_fio2_ratio"):
        return f"> {_pressure(case, 300.0)} {case.pressure_unit}"
    if key == "aa_gradient_mmhg":
        expected, fallback = expected_aa(derived)
        if expected is None:
            return ""
        where = f" (adult, age {ADULT_AGE_YEARS:.0f}: age not given)" if fallback else " for age"
        return f"≤ {_pressure(case, expected)} {case.pressure_unit}{where}"
    rkey = _RANGE_KEYS.get(key, key)
    if rkey not in bedside.USUAL_RANGES:
        return ""
    low, high = bedside.USUAL_RANGES[rkey][:2]
    if low is not None and high is not None:
        lo, hi = _bound(case, rkey, low), _bound(case, rkey, high)
        unit = _range_unit(case, rkey)[0]
        tail = f" {unit}" if unit else ""
        if tail and lo.endswith(tail):
            lo = lo[: -len(tail)]
        return f"{lo}–{hi}"
    if low is not None:
        return f"≥ {_bound(case, rkey, low)}"
    return f"≤ {_bound(case, rkey, high)}"


def expected_aa(derived: dict | None) -> tuple[float | None, bool]:
    """(expected A-a gradient [mmHg], True when it is the adult value for want of an age)."""
    expected = (derived or {}).get("aa_gradient_expected_mmhg")
    if expected is not None and math.isfinite(float(expected)):
        return float(expected), False
    if not derived:
        return None, False
    return float(bedside.expected_aa_gradient(ADULT_AGE_YEARS)), True


def shown_value(case: CaseState, key: str, value: float, digits: int) -> float:
    """A value (model units) rounded to the digits it is shown with, back in model units, so
    that a flag agrees with the number on screen (a shunt of 10.04 % shows 10.0 and is not
    above 10)."""
    if key.endswith("_mmhg"):
        return case.pressure_from_display(round(case.pressure_to_display(value), digits))
    if key in _DERIVED_PERCENT or key in _MEASURED_PERCENT:
        return round(100.0 * value, digits) / 100.0
    if key == "hb_g_dl":
        return from_display(case, "hb_g_dl", round(case.hb_to_display(value), digits))
    return round(value, digits)


_MEASURED_DIGITS = {"ph": 2, "lactate_mmol_l": 1, "temperature_c": 1}


def flag_items(
    case: CaseState, measured: dict | None, rows: list, model_flags: list[str] = ()
) -> list[str]:
    """'Outside usual ranges' in display units: measured values against
    model.bedside.USUAL_RANGES at the precision shown, then the flagged derived rows, then
    the model's own flags that no row carries (a negative A-a gradient)."""
    if not measured:
        return []
    items = []
    for key, (low, high, label, _source) in bedside.USUAL_RANGES.items():
        if key not in measured:
            continue
        unit, _ = _range_unit(case, key)
        if key.endswith("_mmhg"):
            digits = 2 if case.pressure_unit == "kPa" else 0
        elif key == "hb_g_dl":
            digits = 0 if case.hb_unit == "g/L" else 1
        elif key in _MEASURED_PERCENT:
            digits = 1
        else:
            digits = _MEASURED_DIGITS.get(key, 2)
        value = shown_value(case, key, float(measured[key]), digits)
        name = re.sub(r" \[[^\]]*\]", "", label)
        shown = format_value(case, key, value) if key in bedside.MEASURED_LIMITS else f"{value}"
        shown += f" {unit}" if unit else ""
        if low is not None and value < low:
            items.append(f"{name} {shown}: below {_bound(case, key, low)}")
        elif high is not None and value > high:
            items.append(f"{name} {shown}: above {_bound(case, key, high)}")
    for row in rows:
        if row.flag:
            what = row.flag.lstrip("▲▼ ")
            items.append(f"{row.label} {row.value} {row.unit}".rstrip() + f": {what}")
    items += [in_display_units(case, f) for f in model_flags if "negative" in f]
    return items


# ------------------------------------------------------------------ fit messages
_RESIDUAL_PRESSURE = re.compile(
    r"\b(PaO2|PvO2|PaCO2|PvCO2) measured " + _NUMBER + ", model " + _NUMBER
)
_RESIDUAL_SATURATION = re.compile(r"\b(SaO2|SvO2) measured " + _NUMBER + ", model " + _NUMBER)
_SATURATION = re.compile(r"\b(SaO2|SvO2|curve's) (0\.\d+|1\.0+)\b")
_SATURATION_OFF = re.compile(r"\bis (0\.\d+) off\b")


def fit_words(case: CaseState, text: str) -> str:
    """A message of ``model.fitting`` with saturations in % and pressures in the display
    unit, as the fit's table shows them ('SvO2 measured 62.0 %, model 59.6 %')."""
    d = 2 if case.pressure_unit == "kPa" else 0
    unit = case.pressure_unit

    def pressure(m: re.Match) -> str:
        a, b = (case.pressure_to_display(float(g)) for g in m.groups()[1:])
        return f"{m.group(1)} measured {a:.{d}f} {unit}, model {b:.{d}f} {unit}"

    def saturation(m: re.Match) -> str:
        a, b = (100.0 * float(g) for g in m.groups()[1:])
        return f"{m.group(1)} measured {a:.1f} %, model {b:.1f} %"

    text = _RESIDUAL_PRESSURE.sub(pressure, text)
    text = _RESIDUAL_SATURATION.sub(saturation, text)
    text = _SATURATION.sub(lambda m: f"{m.group(1)} {100.0 * float(m.group(2)):.1f} %", text)
    text = _SATURATION_OFF.sub(lambda m: f"is {100.0 * float(m.group(1)):.1f} % points off", text)
    return in_display_units(case, text)
