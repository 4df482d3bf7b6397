"""Scenario files (``scenarios/*.toml``): read, validate, turn into solver inputs.

Every problem is reported as one :class:`ScenarioError` naming the file, the key, the
value, the allowed range and the unit; nothing is half-loaded.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from .dissociation import CURVES
from .limits import INPUT_LIMITS
from .units import HB_MMOL_L_PER_G_DL, MMHG_PER_KPA

#: The example files shipped with o2transit: ``scenarios/`` at the top of the repository,
#: installed as the package data ``o2transit/scenarios`` (a sibling of this package either way).
EXAMPLES_DIR = Path(__file__).resolve().parent.parent / "scenarios"
ASCENT_EXAMPLES_DIR = EXAMPLES_DIR / "ascents"
LESSON_DIR = EXAMPLES_DIR / "lessons"

# table -> key -> (solver keyword, factor to the solver's unit or None)
_KEYS: dict[str, dict[str, tuple[str, float | None]]] = {
    "air": {
        "altitude_m": ("altitude_m", 1.0),
        "barometric_pressure_mmhg": ("barometric_pressure_mmhg", 1.0),
        "barometric_pressure_kpa": ("barometric_pressure_mmhg", MMHG_PER_KPA),
        "pressure_model": ("pressure_model", None),
        "fio2": ("fio2", 1.0),
    },
    "lungs": {
        "paco2_mmhg": ("paco2_mmhg", 1.0),
        "paco2_kpa": ("paco2_mmhg", MMHG_PER_KPA),
        "shunt_fraction": ("shunt_fraction", 1.0),
        "diffusing_capacity_ml_min_mmhg": ("diffusing_capacity_ml_min_mmhg", 1.0),
        "capillary_volume_ml": ("capillary_volume_ml", 1.0),
        "rq": ("rq", 1.0),
    },
    "blood": {
        "hb_g_dl": ("hb_g_dl", 1.0),
        "hb_g_l": ("hb_g_dl", 0.1),
        "hb_mmol_l": ("hb_g_dl", 1.0 / HB_MMOL_L_PER_G_DL),
        "temperature_c": ("temperature_c", 1.0),
        "ph": ("ph", 1.0),
        "base_excess_mmol_l": ("base_excess_mmol_l", 1.0),
        "dpg_mmol_l": ("dpg_mmol_l", 1.0),
        "cohb_fraction": ("cohb_fraction", 1.0),
        "methb_fraction": ("methb_fraction", 1.0),
        "p50_mmhg": ("p50_mmhg", 1.0),
        "p50_kpa": ("p50_mmhg", MMHG_PER_KPA),
        "curve": ("curve", None),
    },
    "circulation": {
        "cardiac_output_l_min": ("cardiac_output_l_min", 1.0),
        "vo2_ml_min": ("vo2_ml_min", 1.0),
        "vo2_temperature_scaling": ("vo2_temperature_scaling", None),
    },
}
_CHOICES = {"pressure_model": ("standard", "mountain"), "curve": CURVES}
_TOP = {"name", "description"}


class ScenarioError(ValueError):
    """A scenario file that cannot be used; the message says where and why."""


@dataclass(frozen=True)
class Scenario:
    """A validated scenario: ``inputs`` are keywords of :func:`model.solve_transport`."""

    name: str
    description: str
    path: str
    inputs: dict = field(default_factory=dict)


def _unit_of(key: str) -> str:
    for suffix, unit in (("_kpa", "kPa"), ("_g_l", "g/L"), ("_mmol_l", "mmol/L")):
        if key.endswith(suffix):
            return unit
    return ""


def scenario_from_mapping(data: dict, where: str = "<scenario>") -> Scenario:
    """Validate a parsed scenario mapping (as from TOML or a URL) and build a Scenario.

    Examples
    --------
    >>> s = scenario_from_mapping({"name": "x", "blood": {"hb_g_l": 90}})
    >>> s.inputs["hb_g_dl"]
    9.0
    """
    def fail(msg):
        raise ScenarioError(f"{where}: {msg}")

    inputs: dict = {}
    source: dict = {}
    for key, value in data.items():
        if key in _TOP:
            if not isinstance(value, str):
                fail(f"{key} = {value!r} must be text")
            continue
        if key not in _KEYS:
            fail(f"unknown key {key!r}; allowed tables: {', '.join(_KEYS)}; top-level keys: name, description")
        if not isinstance(value, dict):
            fail(f"{key} must be a table [{key}]")
        for sub, raw in value.items():
            if sub not in _KEYS[key]:
                fail(f"[{key}] unknown key {sub!r}; allowed: {', '.join(_KEYS[key])}")
            target, factor = _KEYS[key][sub]
            if target in source:
                fail(f"[{key}] {sub} and {source[target]} give the same quantity twice; keep one")
            source[target] = sub
            if target == "vo2_temperature_scaling":
                if not isinstance(raw, bool):
                    fail(f"[{key}] {sub} = {raw!r} must be true or false")
                inputs[target] = raw
                continue
            if factor is None:
                if raw not in _CHOICES[target]:
                    fail(f"[{key}] {sub} = {raw!r} is not one of {', '.join(_CHOICES[target])}")
                inputs[target] = raw
                continue
            if isinstance(raw, bool) or not isinstance(raw, (int, float)):
                fail(f"[{key}] {sub} = {raw!r} must be a number")
            converted = float(raw) * factor
            lo, hi, unit, label = INPUT_LIMITS[target]
            if not lo <= converted <= hi:
                u = _unit_of(sub)
                if u:
                    lo_txt = f"{lo / factor:.4g}-{hi / factor:.4g} {u}"
                else:
                    lo_txt = f"{lo:g}-{hi:g} {unit}".rstrip()
                fail(f"[{key}] {sub} = {raw!r} is outside the allowed range {lo_txt} ({label})")
            inputs[target] = converted
    if "ph" in inputs and "base_excess_mmol_l" in inputs:
        fail("[blood] ph and base_excess_mmol_l are both given; keep one")
    if "altitude_m" in inputs and "barometric_pressure_mmhg" in inputs:
        fail("[air] altitude_m and barometric pressure are both given; keep one")
    if inputs.get("cohb_fraction", 0.0) + inputs.get("methb_fraction", 0.0) >= 0.9:
        fail("[blood] cohb_fraction + methb_fraction must stay below 0.9")
    name = data.get("name", "")
    return Scenario(name=name or where, description=data.get("description", ""), path=where,
                    inputs=inputs)


def read_toml(path: Path, error: type[ValueError]) -> dict:
    """Parse a TOML file, raising ``error`` with the path on an unreadable or invalid file."""
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise error(f"{path}: cannot read the file ({exc.strerror or exc})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"{path}: not valid TOML ({exc})") from None


def load_scenario(path) -> Scenario:
    """Read and validate one scenario file.

    Raises
    ------
    ScenarioError
        Unreadable file, TOML syntax error, unknown key, wrong type, value out of range
        or an impossible combination; the message names file, key, value, range and unit.
    """
    p = Path(path)
    data = read_toml(p, ScenarioError)
    for key in ("name", "description"):
        if key not in data:
            raise ScenarioError(f"{p}: missing required top-level key {key!r} (text)")
    scenario = scenario_from_mapping(data, str(p))
    from .transport import solve_transport

    try:
        solve_transport(**scenario.inputs)
    except ValueError as exc:
        raise ScenarioError(f"{p}: the case cannot be solved: {exc}") from None
    return scenario
