"""Ranked what-ifs: which lever helps this case most — oxygen, blood, flow, temperature or pH?

:func:`rank_levers` takes a case (keywords of :func:`model.solve_transport`, typically
``fit_case(...).inputs``), changes one thing at a time, solves the chain for every
change and ranks the changes by their predicted effect on O2 delivery, PaO2, SvO2, PvO2
or the extraction ratio. Every what-if carries its full ``inputs``, so it can become the
live case (``CaseState.apply_inputs``) with the base case kept as the baseline.

:func:`one_change` is the rule of one lever on its own: it applies one change to a case and
returns the case after it, without solving the chain. :func:`rank_levers` builds every
what-if with it, and :mod:`model.plans` stacks plan steps with it, so that a plan step and
the ranked what-if it came from predict the same.

The levers and their rules:

* **FiO2 steps** — each step above the present FiO2, nothing else changed.
* **Transfusion to a target Hb** — Hb raised to the target, cardiac output and VO2
  unchanged. With ``stored_blood_dpg_depleted`` the donor cells carry
  :data:`STORED_BLOOD_DPG_MMOL_L` of 2,3-DPG and the red-cell DPG of the mixture is the
  haemoglobin-weighted mean, ``DPG = (Hb0 DPG0 + (Hbt - Hb0) DPGstored) / Hbt`` (red
  cells of the same haemoglobin concentration mix by volume; common practice). COHb,
  MetHb and a fitted P50 offset are kept for the mixture.
* **Cardiac output up** — cardiac output times ``cardiac_output_factor``, VO2 unchanged.
* **Cooling** — temperature to ``cooling_to_c`` with VO2 scaled by
  :data:`model.circulation.VO2_Q10_PER_C` per degC (common practice). Acid-base by the
  alpha-stat rule (default: the values a 37 degC analyser reads are kept, so in the
  cooled patient PCO2 falls by 10^(0.019 dT) and pH rises by 0.0147 per degC) or the
  pH-stat rule (PaCO2 and pH held at the patient's temperature).
* **pH correction** — arterial pH to ``ph_target`` with PaCO2 held (a metabolic
  correction). The target and the label are pH as a blood gas analyser reads it at
  37 degC (as entered at the bedside and as targets are set, alpha-stat); the chain gets
  the pH at the patient's temperature (``model.bedside.temperature_corrected_ph``).
* **Shunt change** — the shunt fraction changed by ``shunt_change`` (e.g. -0.1 after
  recruitment), entered by the user.

A lever that does not apply to the case (FiO2 already at or above a step, Hb at or above
the target, temperature at or below the cooling target, pH already at the target, no
shunt change given) is left out. A what-if the chain refuses is kept with its ``error``
and ranked last.

Ranking rule: by the change in the ``rank_by`` quantity, best first — a rise is better for
``"do2"``, ``"pao2"``, ``"svo2"`` and ``"pvo2"``, a fall for ``"extraction"``; equal changes
(within 1e-9) are ordered by the rise in PvO2, then by key.

References
----------
1. Valeri CR, Hirsch NM. Restoration in vivo of erythrocyte adenosine triphosphate,
   2,3-diphosphoglycerate, potassium ion, and sodium ion concentrations following the
   transfusion of acid-citrate-dextrose-stored human red blood cells. J Lab Clin Med
   1969; 73:722-733 (DPG of stored cells falls to a small fraction of normal; from memory).
2. Kelman GR. Digital computer subroutine for the conversion of oxygen tension into
   saturation. J Appl Physiol 1966; 21:1375-1376 (temperature and pH shifts of the curve).
"""

from __future__ import annotations

import dataclasses
import inspect
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from .bedside import temperature_corrected_pco2, temperature_corrected_ph
from .circulation import VO2_Q10_PER_C
from .dissociation import NORMAL_DPG_MMOL_L
from .limits import INPUT_LIMITS, check_range
from .transport import solve_transport

DEFAULT_FIO2_STEPS = (0.3, 0.4, 0.5, 0.6, 0.8, 1.0)
"""FiO2 values tried by default (those above the present FiO2) [-]."""

STORED_BLOOD_DPG_MMOL_L = 0.5
"""Red-cell 2,3-DPG of stored blood at the end of its usual storage [mmol/L]: a tenth of
normal (from memory: DPG falls to below 10 % within about two weeks of storage; Valeri &
Hirsch 1969)."""

RANK_QUANTITIES: dict[str, tuple[str, int, str]] = {
    "do2": ("do2_ml_min", 1, "O2 delivery"),
    "pao2": ("pao2_mmhg", 1, "PaO2"),
    "svo2": ("svo2", 1, "SvO2"),
    "pvo2": ("pvo2_mmhg", 1, "PvO2"),
    "extraction": ("extraction_ratio", -1, "O2 extraction ratio"),
}
"""rank_by -> (outcome field, +1 if a rise is better / -1 if a fall is, label)."""

COOLING_RULES = ("alpha_stat", "ph_stat")

_SOLVER_DEFAULTS = {k: p.default for k, p in inspect.signature(solve_transport).parameters.items()}
_PRESENT = (
    "fio2",
    "hb_g_dl",
    "cardiac_output_l_min",
    "temperature_c",
    "shunt_fraction",
    "vo2_ml_min",
    "paco2_mmhg",
)  # read from the case, else solve_transport's default

_OUTCOME_READERS = {
    "do2_ml_min": lambda r: r.do2_ml_min,
    "pao2_mmhg": lambda r: r.arterial.po2_mmhg,
    "sao2": lambda r: r.arterial.so2,
    "cao2_ml_dl": lambda r: r.arterial.o2_content_ml_dl,
    "svo2": lambda r: r.venous.so2,
    "pvo2_mmhg": lambda r: r.venous.po2_mmhg,
    "extraction_ratio": lambda r: r.extraction_ratio,
}
"""Outcome of a what-if -> how to read it from a :class:`model.transport.TransportResult`."""
_OUTCOMES = tuple(_OUTCOME_READERS)


@dataclass(frozen=True)
class LeverOutcome:
    """One what-if and its predicted effect; ``delta_*`` are what-if minus base.

    ``changes`` holds only the inputs the lever changed; ``inputs`` the whole what-if
    case (``solve_transport`` keywords, ready for ``CaseState.apply_inputs``). Values are
    NaN and ``error`` says why when the chain refused the what-if.
    """

    key: str
    label: str
    changes: dict
    note: str
    inputs: dict = field(repr=False)
    do2_ml_min: float
    pao2_mmhg: float
    sao2: float
    cao2_ml_dl: float
    svo2: float
    pvo2_mmhg: float
    extraction_ratio: float
    delta_do2_ml_min: float
    delta_pao2_mmhg: float
    delta_sao2: float
    delta_cao2_ml_dl: float
    delta_svo2: float
    delta_pvo2_mmhg: float
    delta_extraction_ratio: float
    error: str = ""


def _range_error(name: str, value, lo: float, hi: float, unit: str, label: str) -> ValueError:
    u = f" {unit}" if unit else ""
    return ValueError(f"{name} = {value!r} is outside the allowed range {lo:g}-{hi:g}{u} ({label})")


def _number(name: str, value, lo: float, hi: float, unit: str, label: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise ValueError(  # noqa: TRY004 - bad input is a ValueError throughout the model
            f"{name} = {value!r} must be a number ({label}, {lo:g}-{hi:g}"
            f"{' ' + unit if unit else ''})"
        )
    v = float(value)
    if not (lo <= v <= hi):
        raise _range_error(name, value, lo, hi, unit, label)
    return v


def _cardiac_output_factor(value) -> float:
    """The factor on cardiac output, 1 < factor <= 3 [-]."""
    label = "multiple of the present cardiac output"
    factor = _number("cardiac_output_factor", value, 1.0, 3.0, "", label)
    if factor == 1.0:
        raise _range_error("cardiac_output_factor", value, 1.0, 3.0, "", f"{label}, above 1")
    return factor


def _limit(name: str, lever: str, value) -> float:
    lo, hi, unit, label = INPUT_LIMITS[name]
    return _number(lever, value, lo, hi, unit, label)


def _outcome_values(result) -> dict:
    return {k: float(read(result)) for k, read in _OUTCOME_READERS.items()}


def _solve_one(case: dict) -> tuple[dict, str]:
    """(outcomes, error) of one what-if; one-case chain solves take the chain's float path,
    which is faster than a vectorised call over a handful of cases."""
    try:
        return _outcome_values(solve_transport(**case)), ""
    except ValueError as exc:
        return dict.fromkeys(_OUTCOMES, math.nan), str(exc)


def _check_base(inputs: Mapping) -> dict:
    base = {k: v for k, v in dict(inputs).items() if v is not None}
    try:
        solve_transport(**base)
    except TypeError as exc:
        raise ValueError(f"inputs: {exc}".replace("solve_transport() got an ", "")) from None
    return base


def _check_rank_by(rank_by: str) -> None:
    if rank_by not in RANK_QUANTITIES:
        raise ValueError(
            f"rank_by {rank_by!r} is unknown; choose one of {', '.join(RANK_QUANTITIES)}"
        )


LEVER_KINDS = ("fio2", "transfusion", "cardiac_output", "cooling", "ph", "shunt")
"""Levers :func:`one_change` applies, and what its ``value`` is for each: FiO2 to [-],
transfusion to a target Hb [g/dL], cardiac output to [L/min], cooling to [degC], pH
corrected to, as read at 37 degC [-], shunt fraction changed by [-]."""


@dataclass(frozen=True)
class LeverChange:
    """One lever applied to a case: what it changed and how it reads, and the case after.

    ``key`` names the what-if (``"transfusion"``, ``"fio2_0.80"``...), ``changes`` holds only
    the inputs it set, ``inputs`` the whole case after it (``solve_transport`` keywords).
    """

    key: str
    label: str
    changes: dict
    note: str
    inputs: dict = field(repr=False)


def _case_now(inputs: Mapping) -> tuple[dict, dict]:
    """(the case without None values, its present values of the levers' inputs)."""
    base = {k: v for k, v in dict(inputs).items() if v is not None}
    now = {k: float(base.get(k, _SOLVER_DEFAULTS[k])) for k in _PRESENT}
    return base, now


def _fio2_change(now: dict, fio2: float) -> tuple[str, str, dict, str] | None:
    """FiO2 to the value, nothing else changed; none when it is the present FiO2."""
    if abs(fio2 - now["fio2"]) < 1e-9:
        return None
    label = f"FiO2 {now['fio2']:.2f} → {fio2:.2f}"
    return f"fio2_{fio2:.2f}", label, {"fio2": fio2}, "Nothing else changed."


def _transfusion_change(base: dict, now: dict, hb_target: float, dpg_depleted: bool):
    """Hb to the target, Q and VO2 unchanged; with depleted donor cells the DPG of the
    mixture is the Hb-weighted mean (module docstring). None when Hb is at the target."""
    if not hb_target > now["hb_g_dl"] + 0.05:
        return None
    changes = {"hb_g_dl": hb_target}
    label = f"Transfuse: Hb {now['hb_g_dl']:.1f} → {hb_target:.1f} g/dL"
    note = "Cardiac output and VO2 unchanged." + (
        " The fitted P50 is kept for the mixed blood." if "p50_mmhg" in base else ""
    )
    if dpg_depleted:
        dpg0 = float(base.get("dpg_mmol_l", NORMAL_DPG_MMOL_L))
        share = now["hb_g_dl"] / hb_target
        dpg = share * dpg0 + (1.0 - share) * STORED_BLOOD_DPG_MMOL_L
        changes["dpg_mmol_l"] = dpg
        label += ", stored blood low in 2,3-DPG"
        note = (
            f"2,3-DPG {dpg0:.1f} → {dpg:.1f} mmol/L: donor cells at "
            f"{STORED_BLOOD_DPG_MMOL_L:g} mmol/L mixed by Hb. " + note
        )
    return "transfusion", label, changes, note


def _cardiac_output_change(now: dict, q_new: float):
    """Cardiac output to the value (in range), VO2 unchanged; none when it is the present."""
    check_range("cardiac_output_l_min", q_new)
    q_now = now["cardiac_output_l_min"]
    if abs(q_new - q_now) < 1e-9:
        return None
    label = f"Cardiac output {q_now:.1f} → {q_new:.1f} L/min"
    return "cardiac_output", label, {"cardiac_output_l_min": q_new}, "VO2 unchanged."


def _cooling_change(base: dict, now: dict, cool_to: float, rule: str):
    """Temperature to ``cool_to`` with VO2 by Q10, PaCO2 and pH by the alpha- or pH-stat
    rule; none unless cooler than the case."""
    if not cool_to < now["temperature_c"] - 0.05:
        return None
    dt = cool_to - now["temperature_c"]
    changes = {"temperature_c": cool_to}
    if base.get("vo2_temperature_scaling"):
        note = "VO2 follows temperature (the case scales VO2 with temperature)."
    else:
        changes["vo2_ml_min"] = now["vo2_ml_min"] * VO2_Q10_PER_C**dt
        note = (
            f"VO2 {now['vo2_ml_min']:.0f} → {changes['vo2_ml_min']:.0f} mL/min "
            f"({(VO2_Q10_PER_C - 1) * 100:.0f} % per °C)."
        )
    if rule == "alpha_stat":
        changes["paco2_mmhg"] = float(temperature_corrected_pco2(now["paco2_mmhg"], 37.0 + dt))
        if "ph" in base:
            changes["ph"] = float(temperature_corrected_ph(base["ph"], 37.0 + dt))
        note += " Alpha-stat: ventilation keeps the 37 °C readings, so PaCO2 falls."
    else:
        note += " pH-stat: PaCO2 and pH held at the patient's temperature."
    label = f"Cool: {now['temperature_c']:.1f} → {cool_to:.1f} °C"
    return "cooling", label, changes, note


def _ph_change(base: dict, now: dict, ph_to: float):
    """Arterial pH to ``ph_to`` as read at 37 degC, PaCO2 held; none within 0.005 of it."""
    if "ph" in base:
        ph_now = float(base["ph"])
    elif "base_excess_mmol_l" in base:
        ph_now = float(solve_transport(**base).arterial.ph)
    else:
        ph_now = 7.40  # solve_transport's pH when neither pH nor base excess is given
    t_case = now["temperature_c"]
    ph_now_37 = float(temperature_corrected_ph(ph_now, 74.0 - t_case))  # as read at 37 degC
    if not abs(ph_now_37 - ph_to) > 0.005:
        return None
    ph_chain = float(temperature_corrected_ph(ph_to, t_case))
    note = "Metabolic correction: PaCO2 held."
    if abs(t_case - 37.0) > 0.05:
        note += f" pH read at 37 °C; {ph_chain:.2f} at the patient's {t_case:.1f} °C."
    return "ph", f"Correct pH: {ph_now_37:.2f} → {ph_to:.2f}", {"ph": ph_chain}, note


def _shunt_change(now: dict, change: float):
    """The shunt fraction changed by the amount (the result in range); none for 0."""
    lo, hi = INPUT_LIMITS["shunt_fraction"][:2]
    new = now["shunt_fraction"] + change
    if not lo <= new <= hi:
        raise ValueError(
            f"shunt_change = {change:g} would take the shunt fraction from "
            f"{now['shunt_fraction']:.2f} to {new:.2f}, outside the allowed range "
            f"{lo:g}-{hi:g} (Shunt fraction)"
        )
    if change == 0.0:
        return None
    label = f"Shunt {now['shunt_fraction']:.3f} → {new:.3f}"
    return "shunt", label, {"shunt_fraction": new}, "Entered change (e.g. after recruitment)."


def one_change(
    inputs: Mapping,
    lever: str,
    value: float,
    *,
    stored_blood_dpg_depleted: bool = False,
    cooling_rule: str = "alpha_stat",
) -> LeverChange | None:
    """Apply one lever's rule to a case; the case after it, or None when it does not apply.

    The rules are those of the module docstring; ``value`` is what :data:`LEVER_KINDS` says
    for the lever. The chain is not solved: ``rank_levers`` and ``model.plans`` solve the
    cases they build.

    Parameters
    ----------
    inputs : Mapping
        The case, keywords of :func:`model.solve_transport`; ``None`` values are dropped.
    lever : {"fio2", "transfusion", "cardiac_output", "cooling", "ph", "shunt"}
        Which lever.
    value : float
        FiO2 to [-]; Hb to [g/dL]; cardiac output to [L/min]; cooling to [degC]; pH to, as
        read at 37 degC [-]; change in shunt fraction [-].
    stored_blood_dpg_depleted : bool
        For ``"transfusion"``: donor cells low in 2,3-DPG, mixed by Hb.
    cooling_rule : {"alpha_stat", "ph_stat"}
        For ``"cooling"``: how PaCO2 and pH follow the temperature.

    Returns
    -------
    LeverChange or None
        None when the lever changes nothing here (FiO2 or cardiac output already at the
        value, Hb at or above the target, not warmer than the target, pH within 0.005 of the
        target, a shunt change of 0).

    Raises
    ------
    ValueError
        An unknown lever or rule, a value out of its range or not a number (field, value,
        range, unit), or a change that takes the case out of range.

    Examples
    --------
    >>> step = one_change({"hb_g_dl": 8.5, "fio2": 0.6}, "transfusion", 10.0)
    >>> step.inputs["hb_g_dl"], step.inputs["fio2"], step.label
    (10.0, 0.6, 'Transfuse: Hb 8.5 → 10.0 g/dL')
    >>> one_change({"hb_g_dl": 12.0}, "transfusion", 10.0) is None
    True
    """
    if lever not in LEVER_KINDS:
        raise ValueError(f"lever {lever!r} is unknown; choose one of {', '.join(LEVER_KINDS)}")
    _check_cooling_rule(cooling_rule)
    _check_flag(stored_blood_dpg_depleted)
    base, now = _case_now(inputs)
    if lever == "fio2":
        made = _fio2_change(now, _limit("fio2", "fio2", value))
    elif lever == "transfusion":
        hb = _limit("hb_g_dl", "target_hb_g_dl", value)
        made = _transfusion_change(base, now, hb, bool(stored_blood_dpg_depleted))
    elif lever == "cardiac_output":
        made = _cardiac_output_change(now, _limit("cardiac_output_l_min", "cardiac_output", value))
    elif lever == "cooling":
        cool_to = _limit("temperature_c", "cooling_to_c", value)
        made = _cooling_change(base, now, cool_to, cooling_rule)
    elif lever == "ph":
        made = _ph_change(base, now, _limit("ph", "ph_target", value))
    else:
        change = _number("shunt_change", value, -0.8, 0.8, "", "change in shunt fraction")
        made = _shunt_change(now, change)
    if made is None:
        return None
    key, label, changes, note = made
    case = dict(base, **changes)
    if "ph" in changes:
        case.pop("base_excess_mmol_l", None)
    return LeverChange(key, label, changes, note, case)


def _check_cooling_rule(rule: str) -> None:
    if rule not in COOLING_RULES:
        raise ValueError(
            f"cooling_rule {rule!r} is unknown; choose one of {', '.join(COOLING_RULES)}"
        )


def _check_flag(stored_blood_dpg_depleted) -> None:
    if not isinstance(stored_blood_dpg_depleted, (bool, np.bool_)):
        raise ValueError(  # noqa: TRY004
            f"stored_blood_dpg_depleted = {stored_blood_dpg_depleted!r} must be true or false"
        )


def _outcomes(base: dict, levers: list[LeverChange]) -> list[LeverOutcome]:
    """Solve the base case and every what-if; each outcome against the base."""
    solved = [_solve_one(case) for case in [base, *(lever.inputs for lever in levers)]]
    ref, base_error = solved[0]
    if base_error:
        raise ValueError(f"inputs: the base case cannot be solved: {base_error}")
    table = []
    for lever, (values, error) in zip(levers, solved[1:]):
        deltas = {f"delta_{k}": values[k] - ref[k] for k in _OUTCOMES}
        table.append(
            LeverOutcome(
                key=lever.key,
                label=lever.label,
                changes=lever.changes,
                note=lever.note,
                inputs=lever.inputs,
                error=error,
                **values,
                **deltas,
            )
        )
    return table


def rank_levers(
    inputs: Mapping,
    *,
    fio2_steps=DEFAULT_FIO2_STEPS,
    target_hb_g_dl: float = 10.0,
    stored_blood_dpg_depleted: bool = False,
    cardiac_output_factor: float = 1.2,
    cooling_to_c: float = 36.0,
    cooling_rule: str = "alpha_stat",
    ph_target: float = 7.40,
    shunt_change: float | None = None,
    rank_by: str = "do2",
) -> list[LeverOutcome]:
    """Predict and rank one-at-a-time changes to a case.

    Parameters
    ----------
    inputs : Mapping
        The base case, keywords of :func:`model.solve_transport` (e.g.
        ``fit_case(...).inputs``); ``None`` values are dropped.
    fio2_steps : sequence of float
        FiO2 values to try [-]; those not above the present FiO2 are skipped.
    target_hb_g_dl : float
        Hb after transfusion [g/dL]; skipped when the case's Hb is at or above it.
    stored_blood_dpg_depleted : bool
        Donor cells low in 2,3-DPG (:data:`STORED_BLOOD_DPG_MMOL_L`), mixed by Hb.
    cardiac_output_factor : float
        Multiple of the present cardiac output, 1 < factor <= 3 [-].
    cooling_to_c : float
        Target temperature [degC]; skipped unless below the case's temperature.
    cooling_rule : {"alpha_stat", "ph_stat"}
        How PaCO2 and pH follow the cooling (module docstring).
    ph_target : float
        Arterial pH after correction, as read at 37 degC [-], PaCO2 held; skipped within
        0.005 of the case's pH read at 37 degC.
    shunt_change : float or None
        Change in shunt fraction [-], e.g. -0.1; None leaves this lever out.
    rank_by : {"do2", "pao2", "svo2", "pvo2", "extraction"}
        Quantity whose change orders the table (see the module docstring).

    Returns
    -------
    list of LeverOutcome
        Best first by the ranking rule; refused what-ifs last.

    Raises
    ------
    ValueError
        A lever setting out of range or of the wrong type (field, value, range, unit), an
        unknown ``rank_by`` or ``cooling_rule``, or a base case the chain refuses.

    Examples
    --------
    >>> table = rank_levers({"fio2": 0.3, "shunt_fraction": 0.2, "hb_g_dl": 8.0})
    >>> table[0].key
    'transfusion'
    >>> all(o.delta_pao2_mmhg > 0 for o in table if o.key.startswith("fio2"))
    True
    """
    _check_rank_by(rank_by)
    _check_cooling_rule(cooling_rule)
    _check_flag(stored_blood_dpg_depleted)
    steps = [_limit("fio2", "fio2_steps", s) for s in np.atleast_1d(fio2_steps).tolist()]
    hb_target = _limit("hb_g_dl", "target_hb_g_dl", target_hb_g_dl)
    factor = _cardiac_output_factor(cardiac_output_factor)
    cool_to = _limit("temperature_c", "cooling_to_c", cooling_to_c)
    ph_to = _limit("ph", "ph_target", ph_target)
    base = _check_base(inputs)
    _, now = _case_now(base)
    q_now = now["cardiac_output_l_min"]
    wanted: list[tuple[str, float, dict]] = [
        *(("fio2", step, {}) for step in sorted(set(steps)) if step > now["fio2"] + 0.005),
        ("transfusion", hb_target, {"stored_blood_dpg_depleted": bool(stored_blood_dpg_depleted)}),
        ("cardiac_output", q_now * factor, {}),
        ("cooling", cool_to, {"cooling_rule": cooling_rule}),
        ("ph", ph_to, {}),
    ]
    if shunt_change is not None:
        wanted.append(("shunt", shunt_change, {}))
    levers = []
    for lever, value, rule in wanted:
        change = one_change(base, lever, value, **rule)
        if change is None:
            continue
        if lever == "cardiac_output":  # the ranked what-if says by how much
            label = f"Cardiac output ×{factor:g}: {q_now:.1f} → {q_now * factor:.1f} L/min"
            change = dataclasses.replace(change, label=label)
        levers.append(change)
    return sort_outcomes(_outcomes(base, levers), rank_by)


def sort_outcomes(outcomes: list[LeverOutcome], rank_by: str = "do2") -> list[LeverOutcome]:
    """Order what-ifs by the ranking rule of the module docstring (refused ones last).

    Examples
    --------
    >>> [o.key for o in sort_outcomes(rank_levers({"hb_g_dl": 8.0}), "pao2")][:2]
    ['fio2_1.00', 'fio2_0.80']
    """
    _check_rank_by(rank_by)
    name, sign, _ = RANK_QUANTITIES[rank_by]

    def order(o: LeverOutcome):
        gain = sign * getattr(o, f"delta_{name}")
        if o.error or not math.isfinite(gain):
            return (1, 0.0, 0.0, o.key)
        return (0, -round(gain, 9), -round(o.delta_pvo2_mmhg, 9), o.key)

    return sorted(outcomes, key=order)
