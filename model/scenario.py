"""Scenario files (``scenarios/*.toml``): read, validate, turn into solver inputs.

Every problem is reported as one :class:`ScenarioError` naming the file, the key, the
value, the allowed range and the unit; nothing is half-loaded.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from .limits import INPUT_CHOICES, INPUT_LIMITS, MAX_COHB_PLUS_METHB
from .units import UnitVariant, unit_variants

#: The example files shipped with o2transit: ``scenarios/`` at the top of the repository,
#: installed as the package data ``o2transit/scenarios`` (a sibling of this package either way).
EXAMPLES_DIR = Path(__file__).resolve().parent.parent / "scenarios"
ASCENT_EXAMPLES_DIR = EXAMPLES_DIR / "ascents"
LESSON_DIR = EXAMPLES_DIR / "lessons"

_TABLES = {
    "air": ("altitude_m", "barometric_pressure_mmhg", "pressure_model", "fio2"),
    "lungs": (
        "paco2_mmhg",
        "shunt_fraction",
        "diffusing_capacity_ml_min_mmhg",
        "capillary_volume_ml",
        "rq",
    ),
    "blood": (
        "hb_g_dl",
        "temperature_c",
        "ph",
        "base_excess_mmol_l",
        "dpg_mmol_l",
        "cohb_fraction",
        "methb_fraction",
        "p50_mmhg",
        "curve",
    ),
    "circulation": ("cardiac_output_l_min", "vo2_ml_min", "vo2_temperature_scaling"),
}
_IN_OTHER_UNITS = ("barometric_pressure_mmhg", "paco2_mmhg", "hb_g_dl", "p50_mmhg")
"""The quantities a scenario file may also give in kPa, g/L or mmol/L."""


def _table_keys(keys: tuple[str, ...]) -> dict[str, UnitVariant | None]:
    """Key -> how it reads: a number (canonical or a unit variant) or None (choice, flag)."""
    out: dict[str, UnitVariant | None] = {}
    for key in keys:
        out[key] = UnitVariant(key, 1.0, INPUT_LIMITS[key][2]) if key in INPUT_LIMITS else None
        if key in _IN_OTHER_UNITS:
            out.update(unit_variants(key))
    return out


_KEYS = {table: _table_keys(keys) for table, keys in _TABLES.items()}
_TOP = {"name", "description"}

SCENARIO_UNIT_VARIANTS: dict[str, UnitVariant] = {
    key: spec
    for table in _KEYS.values()
    for key, spec in table.items()
    if spec is not None and spec.key != key
}
"""Scenario keys in another unit -> :class:`model.units.UnitVariant` (canonical key, factor to
its unit, unit label): ``barometric_pressure_kpa, paco2_kpa, p50_kpa`` [kPa], ``hb_g_l``
[g/L], ``hb_mmol_l`` [mmol/L]. The page address reads the same variants."""


class ScenarioError(ValueError):
    """A scenario file that cannot be used; the message says where and why."""


@dataclass(frozen=True)
class Scenario:
    """A validated scenario: ``inputs`` are keywords of :func:`model.solve_transport`."""

    name: str
    description: str
    path: str
    inputs: dict = field(default_factory=dict)


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
            fail(
                f"unknown key {key!r}; allowed tables: {', '.join(_KEYS)}; "
                "top-level keys: name, description"
            )
        if not isinstance(value, dict):
            fail(f"{key} must be a table [{key}]")
        for sub, raw in value.items():
            if sub not in _KEYS[key]:
                fail(f"[{key}] unknown key {sub!r}; allowed: {', '.join(_KEYS[key])}")
            spec = _KEYS[key][sub]
            target = sub if spec is None else spec.key
            if target in source:
                fail(f"[{key}] {sub} and {source[target]} give the same quantity twice; keep one")
            source[target] = sub
            if spec is None:  # a choice, or a flag (true or false)
                choices = INPUT_CHOICES[target]
                if choices == (False, True):
                    if not isinstance(raw, bool):
                        fail(f"[{key}] {sub} = {raw!r} must be true or false")
                elif raw not in choices:
                    fail(f"[{key}] {sub} = {raw!r} is not one of {', '.join(choices)}")
                inputs[target] = raw
                continue
            if isinstance(raw, bool) or not isinstance(raw, (int, float)):
                fail(f"[{key}] {sub} = {raw!r} must be a number")
            converted = spec.to_canonical(float(raw))
            lo, hi, unit, label = INPUT_LIMITS[target]
            if not lo <= converted <= hi:
                if sub in SCENARIO_UNIT_VARIANTS:
                    shown = (spec.from_canonical(lo), spec.from_canonical(hi))
                    lo_txt = f"{shown[0]:.4g}-{shown[1]:.4g} {spec.unit}"
                else:
                    lo_txt = f"{lo:g}-{hi:g} {unit}".rstrip()
                fail(f"[{key}] {sub} = {raw!r} is outside the allowed range {lo_txt} ({label})")
            inputs[target] = converted
    if "ph" in inputs and "base_excess_mmol_l" in inputs:
        fail("[blood] ph and base_excess_mmol_l are both given; keep one")
    if "altitude_m" in inputs and "barometric_pressure_mmhg" in inputs:
        fail("[air] altitude_m and barometric pressure are both given; keep one")
    if inputs.get("cohb_fraction", 0.0) + inputs.get("methb_fraction", 0.0) >= MAX_COHB_PLUS_METHB:
        fail(f"[blood] cohb_fraction + methb_fraction must stay below {MAX_COHB_PLUS_METHB:g}")
    name = data.get("name", "")
    return Scenario(
        name=name or where, description=data.get("description", ""), path=where, inputs=inputs
    )


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
