"""Plans: named stacks of changes applied to a fitted case, each solved through the chain.

A what-if (:mod:`model.levers`) changes one thing. A plan is what a unit decides: transfuse to
10 g/dL *and* FiO2 0.8 *and* cool to 37 degC. :func:`solve_plan` applies a plan's changes in
the order given, each to the case the previous one left, and solves the chain once for the
result; :func:`compare_plans` does so for a few plans against the base case and gives every
reading as a value and as a change from the base.

The changes and their rules (each applied by :func:`model.levers.one_change`, the rule of
one ranked what-if, so that a plan step and the what-if it came from predict the same):

* ``"fio2"`` — FiO2 set to the value [-], up or down, nothing else changed.
* ``"hb"`` — transfusion to the target Hb [g/dL], cardiac output and VO2 unchanged; with
  ``stored_blood`` the donor cells are low in 2,3-DPG and mixed by Hb (the transfusion rule of
  :mod:`model.levers`). Not applied when Hb is already at or above the target.
* ``"cardiac_output"`` — cardiac output set to the value [L/min], VO2 unchanged.
* ``"temperature"`` — cooling to the value [degC], VO2 by Q10 and PaCO2/pH by the alpha-stat
  rule (the cooling rule of :mod:`model.levers`). Not applied unless cooler.
* ``"ph"`` — arterial pH corrected to the value as read at 37 degC [-], PaCO2 held (the pH
  rule of :mod:`model.levers`).
* ``"shunt"`` — shunt fraction changed by the value [-] (e.g. -0.10 after recruitment).

The readings of a plan (:data:`READINGS`) are those of the chain at the patient's
temperature, plus PaO2 and PvO2 as a 37 degC analyser would report them (``*_37_mmhg``),
which is how the patient's measured gas reads. The inverse of the temperature correction is
the correction by the opposite step (Severinghaus 1979 Eq 3 depends on the step only).

References
----------
1. Severinghaus JW. Simple, accurate equations for human blood O2 dissociation
   computations. J Appl Physiol 1979; 46:599-602 (Eq 3, PO2 against temperature).
2. Fick A. Sitzungsber Phys Med Ges Würzburg 1870 (VO2 = Q (CaO2 - CvO2)).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, NamedTuple

from .bedside import temperature_corrected_ph, temperature_corrected_po2
from .levers import LeverOutcome, one_change
from .limits import INPUT_LIMITS
from .transport import TransportResult, solve_transport

MAX_PLANS = 4
"""Plans compared at once (beside the patient, four columns still read on one screen)."""

MAX_CHANGES = 8
"""Changes in one plan."""

PLAN_NAME_MAX_CHARS = 40


class ChangeKind(NamedTuple):
    """What one kind of change acts on and what its value may be."""

    quantity: str
    """The chain input it changes (``solve_transport`` keyword)."""
    low: float
    high: float
    unit: str
    """Unit of the value, as in the key names of the model ([-] is "")."""
    label: str
    """How the value reads ("Transfuse to Hb")."""


CHANGE_KINDS: dict[str, ChangeKind] = {
    "fio2": ChangeKind("fio2", *INPUT_LIMITS["fio2"][:3], "FiO2 to"),
    "hb": ChangeKind("hb_g_dl", 5.0, 18.0, "g/dL", "Transfuse to Hb"),
    "cardiac_output": ChangeKind(
        "cardiac_output_l_min", *INPUT_LIMITS["cardiac_output_l_min"][:3], "Cardiac output to"
    ),
    "temperature": ChangeKind("temperature_c", 32.0, 37.5, "degC", "Cool to"),
    "ph": ChangeKind("ph", 7.0, 7.6, "", "Correct pH to (as read at 37 degC)"),
    "shunt": ChangeKind("shunt_fraction", -0.6, 0.6, "", "Shunt change by"),
}
"""kind -> what it changes and its allowed values. The Hb, cooling and shunt bounds are those
of the ranked what-ifs' settings on the bedside screen; pH 7.0-7.6 is the span a metabolic
correction is aimed within (common practice, no source)."""

READINGS = (
    "pao2_mmhg",
    "pao2_37_mmhg",
    "sao2",
    "cao2_ml_dl",
    "do2_ml_min",
    "svo2",
    "pvo2_mmhg",
    "pvo2_37_mmhg",
    "extraction_ratio",
    "o2_extracted_ml_per_l",
    "p50_mmhg",
    "vo2_ml_min",
    "hb_g_dl",
    "fio2",
    "temperature_c",
)
"""Readings of a solved plan: key -> units in the key; ``p50_mmhg`` is the arterial in-vivo
P50 (at the plan's pH, PCO2 and temperature), ``*_37_mmhg`` as read at 37 degC."""


@dataclass(frozen=True)
class Change:
    """One change of a plan: ``kind`` of :data:`CHANGE_KINDS`, its value in the kind's unit."""

    kind: str
    value: float
    stored_blood: bool = False
    """For ``"hb"``: donor cells low in 2,3-DPG."""


@dataclass(frozen=True)
class Plan:
    """A named stack of changes, applied in order."""

    name: str
    changes: tuple[Change, ...] = ()


@dataclass(frozen=True)
class Step:
    """One change as applied: the quantity before and after (in the kind's unit; pH as read
    at 37 degC), whether it changed anything, the inputs it set and the rule in words."""

    change: Change
    before: float
    after: float
    applied: bool
    inputs_changed: dict
    note: str


@dataclass(frozen=True)
class PlanOutcome:
    """A plan solved: its steps, the chain inputs after them, the result and its readings.

    ``values`` has the keys of :data:`READINGS` (NaN when the chain refused the plan, with
    the reason in ``error``); ``deltas`` the same keys, plan minus base.
    """

    plan: Plan
    steps: tuple[Step, ...]
    inputs: dict = field(repr=False)
    values: dict
    deltas: dict
    result: TransportResult | None = field(default=None, repr=False)
    error: str = ""


def check_plan_name(name) -> str:
    """A plan's name, stripped; ValueError unless 1-40 printable characters.

    Examples
    --------
    >>> check_plan_name("  Plan A: blood ")
    'Plan A: blood'
    """
    if not isinstance(name, str):
        raise ValueError(f"plan name = {name!r} must be text")  # noqa: TRY004
    text = " ".join(name.split())
    if not 1 <= len(text) <= PLAN_NAME_MAX_CHARS:
        raise ValueError(
            f"plan name must be 1-{PLAN_NAME_MAX_CHARS} characters long (it has {len(text)})"
        )
    if not text.isprintable():
        raise ValueError(f"plan name {text!r} contains control characters")
    return text


def check_change(change: Change) -> Change:
    """``change`` if its kind is known and its value in range, else ValueError saying why.

    Examples
    --------
    >>> check_change(Change("fio2", 1.5))
    Traceback (most recent call last):
    ...
    ValueError: FiO2 to = 1.5 is outside the allowed range 0.05-1 (plan change 'fio2')
    """
    if not isinstance(change.kind, str) or change.kind not in CHANGE_KINDS:
        raise ValueError(
            f"plan change {change.kind!r} is unknown; choose one of {', '.join(CHANGE_KINDS)}"
        )
    kind = CHANGE_KINDS[change.kind]
    value = change.value
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ValueError(
            f"{kind.label} = {value!r} must be a number ({kind.low:g}-{kind.high:g}"
            f"{' ' + kind.unit if kind.unit else ''})"
        )
    if not kind.low <= value <= kind.high:
        unit = f" {kind.unit}" if kind.unit else ""
        raise ValueError(
            f"{kind.label} = {value:g}{unit} is outside the allowed range "
            f"{kind.low:g}-{kind.high:g}{unit} (plan change {change.kind!r})"
        )
    if not isinstance(change.stored_blood, bool):
        raise ValueError(f"stored_blood = {change.stored_blood!r} must be true or false")  # noqa: TRY004
    return Change(change.kind, float(value), change.stored_blood)


def check_plan(plan: Plan) -> Plan:
    """``plan`` with its name and every change checked (ValueError naming the first fault)."""
    name = check_plan_name(plan.name)
    if len(plan.changes) > MAX_CHANGES:
        raise ValueError(f"plan {name!r} has {len(plan.changes)} changes; at most {MAX_CHANGES}")
    return Plan(name, tuple(check_change(c) for c in plan.changes))


def _now(inputs: Mapping, quantity: str) -> float:
    """The case's value of a chain input, else the solver's default (as levers reads it)."""
    if quantity in inputs and inputs[quantity] is not None:
        return float(inputs[quantity])
    return float(_SOLVER_DEFAULTS[quantity])


def _ph_37(inputs: Mapping) -> float:
    """Arterial pH of the case as a 37 degC analyser reads it."""
    ph = float(inputs["ph"]) if "ph" in inputs else float(solve_transport(**inputs).arterial.ph)
    return float(temperature_corrected_ph(ph, 74.0 - _now(inputs, "temperature_c")))


def _before(inputs: Mapping, change: Change) -> float:
    if change.kind == "ph":
        return _ph_37(inputs)
    return _now(inputs, CHANGE_KINDS[change.kind].quantity)


_LEVERS = {
    "fio2": "fio2",
    "hb": "transfusion",
    "cardiac_output": "cardiac_output",
    "temperature": "cooling",
    "ph": "ph",
    "shunt": "shunt",
}
"""Plan change kind -> the lever of :func:`model.levers.one_change` that carries its rule."""

_NOT_APPLIED = {
    "hb": "Hb is already at or above the target",
    "temperature": "the patient is not warmer than the target",
    "ph": "pH is already at the target",
}


def apply_change(inputs: Mapping, change: Change) -> tuple[dict, Step]:
    """Apply one change to a case; return the case after it and the step as applied.

    The rule is the ranked what-if's (:func:`model.levers.one_change`). A change that does
    not apply (Hb already at the target, not cooler, pH already there, a change of nothing)
    leaves the case as it was and says why in the step's note.

    Examples
    --------
    >>> case, step = apply_change({"hb_g_dl": 8.5, "fio2": 0.6}, Change("hb", 10.0))
    >>> case["hb_g_dl"], step.applied
    (10.0, True)
    """
    change = check_change(change)
    case = {k: v for k, v in dict(inputs).items() if v is not None}
    before = _before(case, change)
    try:
        done = one_change(
            case,
            _LEVERS[change.kind],
            change.value,
            stored_blood_dpg_depleted=change.stored_blood,
        )
    except ValueError as exc:
        if change.kind != "shunt":
            raise
        lo, hi = INPUT_LIMITS["shunt_fraction"][:2]
        raise ValueError(
            f"Shunt change by {change.value:+g} would take the shunt fraction from "
            f"{before:.3f} to {before + change.value:.3f}, outside the allowed range "
            f"{lo:g}-{hi:g}"
        ) from exc
    if done is None:
        reason = _NOT_APPLIED.get(change.kind, "no change")
        return case, Step(change, before, before, False, {}, f"Not applied: {reason}.")
    after_case = done.inputs
    step = Step(change, before, _before(after_case, change), True, dict(done.changes), done.note)
    return after_case, step


def readings(result: TransportResult) -> dict:
    """The :data:`READINGS` of a solved case, as floats."""
    t = float(result.temperature_c)
    pao2, pvo2 = float(result.arterial.po2_mmhg), float(result.venous.po2_mmhg)
    return {
        "pao2_mmhg": pao2,
        "pao2_37_mmhg": float(temperature_corrected_po2(pao2, 74.0 - t)),
        "sao2": float(result.arterial.so2),
        "cao2_ml_dl": float(result.arterial.o2_content_ml_dl),
        "do2_ml_min": float(result.do2_ml_min),
        "svo2": float(result.venous.so2),
        "pvo2_mmhg": pvo2,
        "pvo2_37_mmhg": float(temperature_corrected_po2(pvo2, 74.0 - t)),
        "extraction_ratio": float(result.extraction_ratio),
        "o2_extracted_ml_per_l": float(result.o2_extracted_ml_per_l),
        "p50_mmhg": float(result.arterial.p50_mmhg),
        "vo2_ml_min": float(result.vo2_ml_min),
        "hb_g_dl": float(result.hb_g_dl),
        "fio2": float(result.fio2),
        "temperature_c": t,
    }


_NAN_READINGS = dict.fromkeys(READINGS, math.nan)


def _solve(inputs: dict) -> tuple[TransportResult | None, dict, str]:
    try:
        result = solve_transport(**inputs)
    except ValueError as exc:
        return None, dict(_NAN_READINGS), str(exc)
    return result, readings(result), ""


def solve_plan(base_inputs: Mapping, plan: Plan, base: dict | None = None) -> PlanOutcome:
    """Apply a plan's changes in order to the base case and solve the chain once.

    Parameters
    ----------
    base_inputs : Mapping
        The base case, keywords of :func:`model.solve_transport` (``fit_case(...).inputs``).
    plan : Plan
        Name and changes (:func:`check_plan`).
    base : dict, optional
        :func:`readings` of the base case, when already solved (the deltas are against it).

    Returns
    -------
    PlanOutcome
        A plan the chain refuses (VO2 beyond what the delivery supplies, say) keeps its steps,
        NaN values and the reason in ``error``.

    Raises
    ------
    ValueError
        A bad name or change (field, value, range, unit), or a base case the chain refuses.

    Examples
    --------
    >>> base = {"fio2": 0.6, "hb_g_dl": 8.5, "shunt_fraction": 0.3}
    >>> out = solve_plan(base, Plan("A", (Change("hb", 10.0), Change("fio2", 0.8))))
    >>> [s.applied for s in out.steps], out.deltas["do2_ml_min"] > 0
    ([True, True], True)
    """
    plan = check_plan(plan)
    case = {k: v for k, v in dict(base_inputs).items() if v is not None}
    if base is None:
        result, base, error = _solve(case)
        if result is None:
            raise ValueError(f"the base case cannot be solved: {error}")
    steps = []
    error = ""
    for change in plan.changes:
        try:
            case, step = apply_change(case, change)
        except ValueError as exc:
            error = f"{CHANGE_KINDS[change.kind].label} {change.value:g}: {exc}"
            break
        steps.append(step)
    result, values, solve_error = _solve(case) if not error else (None, dict(_NAN_READINGS), "")
    error = error or solve_error
    deltas = {k: values[k] - base[k] for k in READINGS}
    return PlanOutcome(plan, tuple(steps), case, values, deltas, result, error)


def compare_plans(base_inputs: Mapping, plans: Iterable[Plan]) -> tuple[dict, list[PlanOutcome]]:
    """The base case's readings and each plan solved against it (at most :data:`MAX_PLANS`).

    Examples
    --------
    >>> base, outs = compare_plans({"fio2": 0.6}, [Plan("up", (Change("fio2", 0.8),))])
    >>> round(outs[0].values["fio2"], 2), outs[0].deltas["pao2_mmhg"] > 0
    (0.8, True)
    """
    plans = list(plans)
    if len(plans) > MAX_PLANS:
        raise ValueError(f"{len(plans)} plans given; at most {MAX_PLANS} are compared")
    case = {k: v for k, v in dict(base_inputs).items() if v is not None}
    result, base, error = _solve(case)
    if result is None:
        raise ValueError(f"the base case cannot be solved: {error}")
    return base, [solve_plan(case, plan, base) for plan in plans]


def change_from_lever(outcome: LeverOutcome, base_inputs: Mapping) -> Change:
    """The plan change that repeats a ranked what-if of :func:`model.levers.rank_levers`.

    Examples
    --------
    >>> from o2transit.model.levers import rank_levers
    >>> base = {"fio2": 0.4, "hb_g_dl": 8.0}
    >>> best = rank_levers(base, target_hb_g_dl=10.0)[0]
    >>> change_from_lever(best, base)
    Change(kind='hb', value=10.0, stored_blood=False)
    """
    c = outcome.changes
    if outcome.key.startswith("fio2"):
        return Change("fio2", float(c["fio2"]))
    if outcome.key == "transfusion":
        return Change("hb", float(c["hb_g_dl"]), "dpg_mmol_l" in c)
    if outcome.key == "cardiac_output":
        return Change("cardiac_output", round(float(c["cardiac_output_l_min"]), 2))
    if outcome.key == "cooling":
        return Change("temperature", float(c["temperature_c"]))
    if outcome.key == "ph":
        t = float(outcome.inputs.get("temperature_c", _SOLVER_DEFAULTS["temperature_c"]))
        return Change("ph", round(float(temperature_corrected_ph(c["ph"], 74.0 - t)), 3))
    if outcome.key == "shunt":
        before = _now(base_inputs, "shunt_fraction")
        return Change("shunt", round(float(c["shunt_fraction"]) - before, 4))
    raise ValueError(f"what-if {outcome.key!r} has no plan change")


def plan_table(plan: Plan) -> dict:
    """A plan as plain data for a file: name and a list of {kind, value, stored_blood}."""
    plan = check_plan(plan)
    return {
        "name": plan.name,
        "changes": [
            {"kind": c.kind, "value": c.value, "stored_blood": c.stored_blood} for c in plan.changes
        ],
    }


def plan_from_table(table: Mapping) -> Plan:
    """The plan of :func:`plan_table`'s data, checked (ValueError naming the fault)."""
    if not isinstance(table, Mapping):
        raise ValueError("a plan must be a table with a name and changes")  # noqa: TRY004
    changes = table.get("changes", [])
    if not isinstance(changes, Sequence) or isinstance(changes, str):
        raise ValueError("a plan's changes must be a list of tables")  # noqa: TRY004
    out = []
    for c in changes:
        if not isinstance(c, Mapping):
            raise ValueError("a plan's changes must be a list of tables")  # noqa: TRY004
        unknown = set(c) - {"kind", "value", "stored_blood"}
        if unknown:
            raise ValueError(f"plan change has unknown key(s) {', '.join(sorted(unknown))}")
        kind: Any = c.get("kind")
        value: Any = c.get("value")
        out.append(Change(kind, value, c.get("stored_blood", False)))
    name: Any = table.get("name")
    return check_plan(Plan(name, tuple(out)))


def _solver_defaults() -> dict:
    import inspect

    return {k: p.default for k, p in inspect.signature(solve_transport).parameters.items()}


_SOLVER_DEFAULTS = _solver_defaults()
