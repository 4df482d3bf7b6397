"""Typed values for the case inputs: bounds checks, display units, refusals that explain.

No Panel import. :class:`CaseEntry` adds to the inputs (:class:`~.inputs.CaseInputs`) and
the display units (:class:`~.units.DisplayUnits`) the ways a value arrives: typed in one
field (in model units or in display units), or as a whole case of scenario-named inputs. A
value outside its bounds is refused with a message naming the field, the value, the allowed
range and the unit, and nothing changes.
"""

from __future__ import annotations

import param

from .inputs import CASE_INPUTS, CURVE_ALIASES, CaseInputs
from .units import DisplayUnits

# Inputs whose unit follows the display choice.
PRESSURE_INPUTS = ("paco2_mmhg", "barometric_pressure_mmhg", "p50_mmhg")
HB_INPUTS = ("hb_g_dl",)
PER_PRESSURE_INPUTS = ("diffusing_capacity_ml_min_mmhg",)
"""Inputs per unit of pressure, shown per kPa when pressures are in kPa."""


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


def _outside(p: param.Parameter, value) -> tuple[float, float] | None:
    """The bounds of ``p`` when ``value`` lies outside them, else None."""
    bounds = getattr(p, "bounds", None)
    if not bounds or value is None or isinstance(value, bool):
        return None
    lo, hi = bounds
    return None if lo <= value <= hi else (lo, hi)


class CaseEntry(CaseInputs, DisplayUnits):
    """The case inputs as the screen sets them, with :attr:`error_message` for refusals.

    The derivation that solves the case (:class:`~.state.CaseState`) writes
    :attr:`error_message` when the model refuses the inputs; :meth:`set_input` reads it to
    put a refused value back.
    """

    error_message = param.String(default="", doc="Why the last change was not applied.")

    def set_input(self, name: str, value) -> bool:
        """Set one input; refuse a value outside its bounds with a message naming the field.

        Returns True when the value was taken. A refused value leaves the input, the result
        and the baseline as they were, and explains itself in :attr:`error_message`.
        """
        p = self.param[name]
        if value is None and not p.allow_None:
            self.error_message = f"{p.label}: a value is required."
            return False
        outside = _outside(p, value)
        if outside:
            lo, hi = outside
            self.error_message = (
                f"{_field(p.label)} = {value:g} is outside the allowed "
                f"range {lo:g}–{hi:g}{_unit(p.label)}; kept {getattr(self, name):g}."
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

    # ------------------------------------------------------------------ display units
    def _display_pair(self, name: str):
        if name in PRESSURE_INPUTS:
            return (
                "(mmHg)",
                f"({self.pressure_unit})",
                self.pressure_to_display,
                self.pressure_from_display,
            )
        if name in HB_INPUTS:
            return "(g/dL)", f"({self.hb_unit})", self.hb_to_display, self.hb_from_display
        if name in PER_PRESSURE_INPUTS:
            # x per mmHg is x / (kPa per mmHg) per kPa.
            per_kpa = self.pressure_to_display(1.0)
            return (
                "/mmHg)",
                f"/{self.pressure_unit})",
                lambda v: float(v) / per_kpa,
                lambda v: float(v) * per_kpa,
            )
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
        if name in PRESSURE_INPUTS and self.pressure_unit == "kPa":
            return round(shown, 2)
        if name in HB_INPUTS and self.hb_unit != "g/dL":
            return round(shown, 1 if self.hb_unit == "g/L" else 2)
        if name in PER_PRESSURE_INPUTS and self.pressure_unit == "kPa":
            return round(shown, 1)
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

    # ------------------------------------------------------------------ a whole case
    def input_updates(self, inputs: dict) -> dict:
        """Every case input's new value from ``inputs`` (scenario key names), all checked.

        Inputs not named return to their defaults; a named pressure, base excess or P50
        turns its switch on. Raises ValueError for an unknown key or a value out of bounds.
        """
        updates = {name: self.param[name].default for name in CASE_INPUTS}
        if inputs.get("barometric_pressure_mmhg") is not None:
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
            updates[key] = CURVE_ALIASES.get(value, value) if key == "curve" else value
        for name, value in updates.items():
            outside = _outside(self.param[name], value)
            if outside:
                label = self.param[name].label or name
                raise ValueError(
                    f"{label} = {value} is outside the allowed range {outside[0]:g}–{outside[1]:g}"
                )
        return updates

    def model_inputs_after(self, updates: dict) -> dict:
        """What :meth:`model_inputs` would give with ``updates`` applied; nothing changes."""
        with param.parameterized.discard_events(self):
            saved = {name: getattr(self, name) for name in updates}
            try:
                self.param.update(**updates)
                return self.model_inputs()
            finally:
                self.param.update(**saved)
