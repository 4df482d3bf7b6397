"""The measured-gas form of the bedside screen: draft, all-or-nothing Calculate, its rows.

No Panel import here. Typed values are kept as a *draft* in the model's units;
:meth:`GasEntry.calculate` checks the whole draft and either accepts all of it (``measured``
and ``derived`` set, from ``model.bedside.derive``) or none of it (a message per refused
field naming field, value, allowed range and unit). Display units follow the session's
:class:`dashboard.case.state.CaseState` (see :mod:`dashboard.bedside.display`).
"""

from __future__ import annotations

import inspect
import math

import numpy as np
import param

from ...model import bedside
from ..case.state import CaseState
from . import derived as derived_picture
from .display import (
    Row,
    display_range,
    display_unit,
    format_value,
    from_display,
    limits,
    to_display,
)

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
PRESSURE_SOURCES = ("altitude", "barometric pressure")
FLOW_SOURCES = ("cardiac output", "cardiac index")

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


def required_keys() -> tuple[str, ...]:
    """The measured fields ``model.bedside.derive`` cannot do without."""
    sig = inspect.signature(bedside.derive)
    return tuple(
        n
        for n, p in sig.parameters.items()
        if p.default is inspect.Parameter.empty
        and p.kind in (p.KEYWORD_ONLY, p.POSITIONAL_OR_KEYWORD)
    )


class GasEntry(param.Parameterized):
    """The typed measured gas of one patient, the accepted measurement and what follows."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (units).")
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
    measured = param.Dict(default=None, allow_None=True, doc="Last accepted measurement.")
    derived = param.Dict(default=None, allow_None=True, doc="model.bedside.derive output.")
    field_errors = param.Dict(default={}, doc="key -> why the typed value was refused.")
    entry_message = param.String(default="", doc="Outcome of the last Calculate.")

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
        return to_display(self.case, key, self.draft.get(key))

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
            draft[key] = from_display(self.case, key, display_value)
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
    def _refusals(self, values: dict, active: tuple[str, ...]) -> dict[str, str]:
        """key -> why: required fields left empty, values outside their limits."""
        errors: dict[str, str] = {}
        for key in required_keys():
            if key in active and key not in values:
                errors[key] = f"{limits(key)[3]}: a value is required."
        for key, v in values.items():
            lo, hi, _, label = limits(key)
            if not (np.isfinite(v) and lo <= v <= hi):
                unit = display_unit(self.case, key)
                shown = to_display(self.case, key, v)
                errors[key] = (
                    f"{label} = {shown:g}{' ' + unit if unit else ''} is outside the allowed "
                    f"range {display_range(self.case, key)}."
                )
        return errors

    def calculate(self) -> bool:
        """Check the whole draft; on success set ``measured`` and ``derived``.

        All or nothing: a refused field leaves the last accepted measurement and its
        derived values as they were, and names field, value, allowed range and unit.
        Every accepted Calculate sets ``measured`` anew, even to equal values; the fit
        and the what-ifs (which watch it) start again from it.
        """
        active = self.active_keys()
        values = {k: v for k, v in self.draft.items() if k in active}
        errors = self._refusals(values, active)
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
        )
        return True

    # ------------------------------------------------------------------ rows for views
    def measured_rows(self) -> list[Row]:
        """The accepted measurement, in form order and display units."""
        if not self.measured:
            return []
        return [
            Row(
                key,
                limits(key)[3],
                format_value(self.case, key, self.measured[key]),
                display_unit(self.case, key),
            )
            for key in MEASURED_KEYS
            if key in self.measured
        ]

    def derived_rows(self) -> list[derived_picture.DerivedRow]:
        """Derived values in display units with flag, short source and note."""
        return derived_picture.derived_rows(self.derived, self.case)

    def measured_flag(self, key: str) -> str:
        """Flag of an accepted measured value against model.bedside.USUAL_RANGES."""
        if not self.measured or key not in self.measured:
            return ""
        return derived_picture.flag(key, self.measured[key], self.derived)

    def derived_text(self, name: str) -> list[str]:
        """'notes', 'reasons' or 'flags' of the derivation, split into items."""
        text = str((self.derived or {}).get(name) or "")
        return [t for t in text.split("; ") if t]
