"""Scenario files (``scenarios/*.toml``): read, validate, turn into solver inputs.

Every problem in a file is reported at once in one :class:`ScenarioError`, one line per
problem naming the file, the table, the key, the value, the allowed range and the unit;
nothing is half-loaded. Files are read through :mod:`model.files` (special, empty, oversized,
non-UTF-8 and deeply nested files refused in one line); ``read_toml`` is re-exported here
for the ascent and lesson loaders.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path

from .files import read_toml
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


EXCLUSIVE_INPUTS = (
    ("blood", "ph", "base_excess_mmol_l"),
    ("air", "altitude_m", "barometric_pressure_mmhg"),
)
"""Inputs that give the same thing two ways, so a case names one of each pair, never both:
the acid-base state as pH or as base excess, the barometric pressure as an altitude or as
the pressure itself: (table, input, input)."""


def exclusive_pairs(given: dict[str, str]) -> list[tuple[str, str, str]]:
    """The pairs of :data:`EXCLUSIVE_INPUTS` that are both given.

    ``given`` maps each canonical input named to the key it was named by (a unit variant such
    as ``barometric_pressure_kpa``, or the input itself); returns (table, key, key) as named.
    Scenario files and the page address refuse a case with either pair.

    >>> exclusive_pairs({"ph": "ph", "base_excess_mmol_l": "base_excess_mmol_l"})
    [('blood', 'ph', 'base_excess_mmol_l')]
    >>> exclusive_pairs({"altitude_m": "altitude_m", "fio2": "fio2"})
    []
    """
    return [
        (table, given[a], given[b]) for table, a, b in EXCLUSIVE_INPUTS if a in given and b in given
    ]


class ScenarioError(ValueError):
    """A scenario file that cannot be used; the message says where and why.

    ``problems`` lists every problem found (one per line of the message, each line starting
    with the file), so a user fixes a file in one pass instead of one error at a time.
    """

    def __init__(self, message: str, problems: tuple[str, ...] = ()):
        super().__init__(message)
        self.problems = problems or (message,)


@dataclass(frozen=True)
class Scenario:
    """A validated scenario: ``inputs`` are keywords of :func:`model.solve_transport`."""

    name: str
    description: str
    path: str
    inputs: dict = field(default_factory=dict)


def _suggest(word: str, choices) -> str:
    close = [c for c in choices if word and (c.startswith(word) or word.startswith(c))]
    close = close or difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f"did you mean {close[0]!r}? " if close else ""


def _home_table(key: str) -> str | None:
    """The table a top-level key belongs in (``hb_g_dl`` -> ``blood``), if any."""
    for table, keys in _KEYS.items():
        if key in keys:
            return table
    return None


def _range_text(sub: str, spec: UnitVariant, target: str) -> str:
    lo, hi, unit, _ = INPUT_LIMITS[target]
    if sub in SCENARIO_UNIT_VARIANTS:
        return f"{spec.from_canonical(lo):.4g}-{spec.from_canonical(hi):.4g} {spec.unit}"
    return f"{lo:g}-{hi:g} {unit}".rstrip()


def _check_value(table: str, sub: str, raw, problems: list[str]):
    """The canonical value of one table key, or None after adding its problem."""
    spec = _KEYS[table][sub]
    target = sub if spec is None else spec.key
    if spec is None:  # a choice, or a flag (true or false)
        choices = INPUT_CHOICES[target]
        if choices == (False, True):
            if not isinstance(raw, bool):
                problems.append(f"[{table}] {sub} = {raw!r} must be true or false")
                return None
        elif not isinstance(raw, str) or raw not in choices:
            problems.append(f"[{table}] {sub} = {raw!r} is not one of {', '.join(choices)}")
            return None
        return raw
    lo, hi, _, label = INPUT_LIMITS[target]
    allowed = f"allowed range {_range_text(sub, spec, target)} ({label})"
    if isinstance(raw, bool) or not isinstance(raw, (int, float)):
        problems.append(f"[{table}] {sub} = {raw!r} must be a number; {allowed}")
        return None
    value = float(raw)
    if math.isnan(value):
        problems.append(f"[{table}] {sub} = nan is not a number; {allowed}")
        return None
    converted = spec.to_canonical(value)
    if not lo <= converted <= hi:
        problems.append(f"[{table}] {sub} = {raw!r} is outside the {allowed}")
        return None
    return converted


def _problems(data: dict) -> tuple[dict, list[str]]:
    """Inputs of a parsed scenario mapping and every problem found in it."""
    problems: list[str] = []
    inputs: dict = {}
    source: dict = {}
    for key, value in data.items():
        if key in _TOP:
            if not isinstance(value, str):
                problems.append(f"{key} = {value!r} must be text")
            continue
        if key not in _KEYS:
            home = _home_table(key)
            if home is not None and not isinstance(value, dict):
                problems.append(f"{key} is not a top-level key; put it in the [{home}] table")
            else:
                kind = "table" if isinstance(value, dict) else "top-level key"
                shown = f"[{key}]" if isinstance(value, dict) else repr(key)
                problems.append(
                    f"unknown {kind} {shown}; {_suggest(key, _KEYS)}allowed tables: "
                    f"{', '.join(_KEYS)}; top-level keys: name, description"
                )
            continue
        if not isinstance(value, dict):
            problems.append(f"{key} must be a table [{key}], not a single value")
            continue
        for sub, raw in value.items():
            if sub not in _KEYS[key]:
                home = _home_table(sub)
                where = f"it belongs in [{home}]; " if home else _suggest(sub, _KEYS[key])
                problems.append(
                    f"[{key}] unknown key {sub!r}; {where}allowed: {', '.join(_KEYS[key])}"
                )
                continue
            spec = _KEYS[key][sub]
            target = sub if spec is None else spec.key
            if target in source:
                problems.append(
                    f"[{key}] {sub} and {source[target]} give the same quantity twice; keep one"
                )
                continue
            source[target] = sub
            checked = _check_value(key, sub, raw, problems)
            if checked is not None:
                inputs[target] = checked
    problems += [
        f"[{table}] {first} and {second} are both given; keep one"
        for table, first, second in exclusive_pairs(source)
    ]
    if inputs.get("cohb_fraction", 0.0) + inputs.get("methb_fraction", 0.0) >= MAX_COHB_PLUS_METHB:
        total = inputs.get("cohb_fraction", 0.0) + inputs.get("methb_fraction", 0.0)
        problems.append(
            f"[blood] cohb_fraction + methb_fraction must stay below {MAX_COHB_PLUS_METHB:g} "
            f"(given: {total:g}; fractions of total haemoglobin)"
        )
    return inputs, problems


def _raise(where: str, problems: list[str]) -> None:
    lines = tuple(f"{where}: {p}" for p in problems)
    raise ScenarioError("\n".join(lines), lines)


def scenario_from_mapping(
    data: dict, where: str = "<scenario>", default_name: str | None = None
) -> Scenario:
    """Validate a parsed scenario mapping (as from TOML or a URL) and build a Scenario.

    Every key is optional. Every problem is collected, then all are raised together as
    one :class:`ScenarioError` (one line each: where, table, key, value, allowed range and
    unit). The name falls back to ``default_name``, else ``where``.

    Examples
    --------
    >>> s = scenario_from_mapping({"name": "x", "blood": {"hb_g_l": 90}})
    >>> s.inputs["hb_g_dl"]
    9.0
    >>> try:
    ...     scenario_from_mapping({"blod": {}, "air": {"fio2": 2}}, "f.toml")
    ... except ScenarioError as exc:
    ...     print("\\n".join(p.split("?")[0] for p in exc.problems))
    f.toml: unknown table [blod]; did you mean 'blood'
    f.toml: [air] fio2 = 2 is outside the allowed range 0.05-1 (FiO2)
    """
    if not isinstance(data, dict):
        _raise(where, [f"expected a table of keys, not {type(data).__name__}"])
    inputs, problems = _problems(data)
    if problems:
        _raise(where, problems)
    name = data.get("name", "")
    return Scenario(
        name=name or default_name or where,
        description=data.get("description", ""),
        path=where,
        inputs=inputs,
    )


def load_scenario(path) -> Scenario:
    """Read and validate one scenario file (every key optional; the name falls back to the
    file's name without ``.toml``).

    Raises
    ------
    ScenarioError
        Unreadable, special, empty, oversized or non-UTF-8 file, TOML syntax error or
        nesting (:mod:`model.files`); unknown table or key, wrong type, value out of range
        or an impossible combination, all reported at once (file, table, key, value, range
        and unit); or a case the chain cannot solve.
    """
    p = Path(path)
    data = read_toml(p, ScenarioError)
    scenario = scenario_from_mapping(data, str(p), default_name=p.stem)
    from .transport import solve_transport

    try:
        solve_transport(**scenario.inputs)
    except ValueError as exc:
        raise ScenarioError(f"{p}: the case cannot be solved: {exc}") from None
    return scenario
