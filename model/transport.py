"""The chain: inspired air to venous blood, solved arterial and venous sides together."""

from __future__ import annotations

import inspect
import math
from dataclasses import asdict, dataclass, field, replace
from typing import Any

import numpy as np

from . import floats
from .acid_base import _base_excess, _blood_co2_content, _ph_from_base_excess
from .air import (
    PRESSURE_MODEL_DEFAULT,
    PRESSURE_MODELS,
    barometric_pressure,
    inspired_po2,
    water_vapour_pressure,
)
from .circulation import extraction_ratio, oxygen_delivery, vo2_at_temperature
from .content import HUFNER_ML_G, O2_SOLUBILITY_ML_DL_MMHG, _oxygen_content
from .dissociation import _prepare_curve, canonical_curve
from .limits import INPUT_CHOICES, INPUT_LIMITS, MAX_COHB_PLUS_METHB, check_range
from .lungs import _end_capillary_po2, _po2_from_content, aa_gradient, alveolar_po2


@dataclass(frozen=True)
class BloodState:
    """One blood sample of the chain (arterial or mixed venous)."""

    po2_mmhg: np.ndarray
    so2: np.ndarray
    o2_content_ml_dl: np.ndarray
    p50_mmhg: np.ndarray
    ph: np.ndarray
    pco2_mmhg: np.ndarray
    co2_content_ml_dl: np.ndarray
    base_excess_mmol_l: np.ndarray


@dataclass(frozen=True)
class TransportResult:
    """Every intermediate value of :func:`solve_transport`; units are in the names.

    Arrays are 0-d for scalar inputs. ``arterial_conditions`` and ``venous_conditions``
    hold the keywords that draw each curve with :func:`model.saturation`.
    """

    barometric_pressure_mmhg: np.ndarray
    water_vapour_pressure_mmhg: np.ndarray
    inspired_po2_mmhg: np.ndarray
    alveolar_po2_mmhg: np.ndarray
    end_capillary_po2_mmhg: np.ndarray
    end_capillary_so2: np.ndarray
    end_capillary_o2_content_ml_dl: np.ndarray
    capillary_transit_time_s: np.ndarray
    arterial: BloodState
    venous: BloodState
    aa_gradient_mmhg: np.ndarray
    shunt_fraction: np.ndarray
    fio2: np.ndarray
    cardiac_output_l_min: np.ndarray
    hb_g_dl: np.ndarray
    temperature_c: np.ndarray
    do2_ml_min: np.ndarray
    vo2_ml_min: np.ndarray
    extraction_ratio: np.ndarray
    o2_extracted_ml_per_l: np.ndarray
    venous_shift_gain_ml_per_l: np.ndarray
    iterations: int
    converged: np.ndarray
    """True where the mixed venous PO2 settled within ``tol`` in ``max_iterations`` passes;
    False where the passes ran out first (the values are then the last pass's, not a
    solution: raise ``max_iterations`` or treat them as unknown)."""
    arterial_conditions: dict = field(repr=False)
    venous_conditions: dict = field(repr=False)
    pressure_model: str = PRESSURE_MODEL_DEFAULT
    """Where ``barometric_pressure_mmhg`` came from: ``"mountain"`` (West 1996) or
    ``"standard"`` (ICAO) when computed from ``altitude_m``, ``"given"`` when it was an
    input."""

    def to_dict(self) -> dict:
        """Plain nested dict of floats (or lists for array input), JSON-ready."""

        def plain(v):
            if isinstance(v, dict):
                return {k: plain(x) for k, x in v.items()}
            if isinstance(v, str) or v is None:
                return v
            a = np.asarray(v)
            return a.item() if a.ndim == 0 else a.tolist()

        d = asdict(self)
        d.pop("arterial_conditions")
        d.pop("venous_conditions")
        return plain(d)


def _curve_kw(ph, pco2, t, dpg, cohb, methb, p50_override, curve) -> dict:
    return {
        "ph": ph,
        "pco2_mmhg": pco2,
        "temperature_c": t,
        "dpg_mmol_l": dpg,
        "cohb_fraction": cohb,
        "methb_fraction": methb,
        "p50_mmhg": p50_override,
        "curve": curve,
    }


def _venous_co2(cvco2, be_ox, svo2, hb, t, p, ph, m):
    """PvCO2 and pHv such that Douglas content equals cvco2 on the venous buffer line
    (each pH solve starts from the last one, ``ph`` first)."""
    for _ in range(30):
        ph = _ph_from_base_excess(be_ox, p, hb, svo2, ph, m)
        f = _blood_co2_content(p, ph, svo2, hb, t) - cvco2
        h = 1e-4 * p
        ph2 = _ph_from_base_excess(be_ox, p + h, hb, svo2, ph, m)
        df = (_blood_co2_content(p + h, ph2, svo2, hb, t) - cvco2 - f) / h
        step = m.minimum(m.maximum(f / df, -0.5 * p), 40.0)
        p = p - step
        if not m.any(abs(step) > 1e-9):
            break
    return p, _ph_from_base_excess(be_ox, p, hb, svo2, ph, m)


def _aitken(x0, x1, x2, m):
    """Aitken's delta-squared extrapolation of x0, x1 = G(x0), x2 = G(x1) towards the fixed
    point of G, where the two steps shrink by a steady factor |r| < 0.9 (else x2).

    The mixed venous PO2 converges geometrically (r about 0.2-0.4, highest where diffusion
    limits uptake), so one extrapolation after every two passes halves the passes needed.
    """
    d1, d2 = x1 - x0, x2 - x1
    r = d2 / m.where(d1 == 0.0, m.inf, d1)  # no first step: r = 0, y = x2
    steady = abs(r) < 0.9
    y = x2 + d2 * r / (1.0 - m.where(steady, r, 0.0))
    return m.where(steady & (y > 0.0), y, x2)


def _iterate(f: dict, st: dict, *, curve: str, content_kw: dict, m) -> dict:
    """One pass of the coupled arterial-venous solution (on the cases still moving)."""
    hufner, sol = content_kw["hufner_ml_g"], content_kw["o2_solubility_ml_dl_mmhg"]
    hb, t, paco2 = f["hb"], f["t"], f["paco2"]
    ph_a = st["ph_a"]
    if "base_excess_mmol_l" in f:
        ph_a = _ph_from_base_excess(f["base_excess_mmol_l"], paco2, hb, st["sao2"], ph_a, m)
    art = _prepare_curve(
        m,
        **_curve_kw(
            ph_a, paco2, t, f.get("dpg_mmol_l"), f["cohb"], f["methb"], f.get("p50_mmhg"), curve
        ),
    )
    pc = _end_capillary_po2(
        f["pao2_alv"], st["pv_o2"], hb, f["carry"], f["k"], f["dt"], art, hufner, sol
    )
    sc = art.saturation(pc)
    cc = _oxygen_content(hb, sc, pc, f["cohb"], f["methb"], hufner, sol)
    cao2 = cc - f["admix"]
    cvo2 = cao2 - f["d_av"]
    if m.any(cvo2 <= 0.0):
        raise ValueError(
            "vo2_ml_min exceeds what the O2 delivery can supply at this cardiac "
            "output (venous O2 content would be below zero)"
        )
    pa_o2 = _po2_from_content(cao2, f["carry_ml"], sol, art, st.get("pa_o2"))
    sao2 = art.saturation(pa_o2)
    be_ox = _base_excess(ph_a, paco2, hb, sao2)  # referred to full oxygenation (Zander)
    caco2 = _blood_co2_content(paco2, ph_a, sao2, hb, t)
    cvco2 = caco2 + f["rq"] * f["d_av"]
    ven = _prepare_curve(
        m,
        **_curve_kw(
            st["ph_v"],
            st["pv_co2"],
            t,
            f.get("dpg_mmol_l"),
            f["cohb"],
            f["methb"],
            f.get("p50_mmhg"),
            curve,
        ),
    )
    warm = "pa_o2" in st  # Newton starts: none on the first pass, then the last pass's values
    pv_o2 = _po2_from_content(cvo2, f["carry_ml"], sol, ven, st["pv_o2"] if warm else None)
    svo2 = ven.saturation(pv_o2)
    pv_co2, ph_v = _venous_co2(
        cvco2, be_ox, svo2, hb, t, m.maximum(st["pv_co2"], 1.0), st["ph_v"], m
    )
    return {
        "ph_a": ph_a,
        "pv_o2": pv_o2,
        "pv_co2": pv_co2,
        "ph_v": ph_v,
        "sao2": sao2,
        "pc": pc,
        "sc": sc,
        "cc": cc,
        "cao2": cao2,
        "cvo2": cvo2,
        "pa_o2": pa_o2,
        "caco2": caco2,
        "cvco2": cvco2,
    }


# --- the steps of solve_transport ------------------------------------------------------------
# A case is a dict of the chain's inputs (only those given), either plain floats (``m`` is
# model.floats) or 1-d arrays of one length (``m`` is numpy; the result takes the input
# shape back at the end). Every step below serves both.

_FLOAT64_FIELDS = frozenset(
    (
        "water_vapour_pressure_mmhg",
        "inspired_po2_mmhg",
        "alveolar_po2_mmhg",
        "capillary_transit_time_s",
        "aa_gradient_mmhg",
        "do2_ml_min",
        "extraction_ratio",
        "o2_extracted_ml_per_l",
        "venous_shift_gain_ml_per_l",
    )
)
_FLOAT64_BLOOD = {
    "arterial": frozenset(("p50_mmhg", "base_excess_mmol_l")),
    "venous": frozenset(("so2", "p50_mmhg", "base_excess_mmol_l")),
}
"""Fields a case of floats returns as numpy float64 rather than 0-d arrays (as the
vectorised chain gave them for 0-d input before the float path)."""
_CONTENT_CONSTANTS = ("hufner_ml_g", "o2_solubility_ml_dl_mmhg")
_CONSTANTS = (*_CONTENT_CONSTANTS, "tol")


def _check_options(pressure_model, curve, ph, base_excess_mmol_l) -> None:
    """Refuse an unknown pressure model or curve, and pH given with base excess."""
    if pressure_model not in PRESSURE_MODELS:
        raise ValueError(
            f"pressure_model {pressure_model!r} is unknown; choose one of {PRESSURE_MODELS}"
        )
    canonical_curve(curve)
    if ph is not None and base_excess_mmol_l is not None:
        raise ValueError("give either ph or base_excess_mmol_l, not both")


def _plain_float(v) -> float | None:
    """v as a finite float if it is one number (Python or numpy, or a 0-d array), else None."""
    if isinstance(v, np.ndarray):
        if v.ndim or v.dtype.kind not in "fiub":
            return None
        v = v.item()
    elif not isinstance(v, (float, int, np.floating, np.integer)):
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _pressure_input(given: dict) -> str:
    """The input that gives the barometric pressure: the pressure itself, else the altitude."""
    given_pb = given["barometric_pressure_mmhg"] is not None
    return "barometric_pressure_mmhg" if given_pb else "altitude_m"


def _float_case(given: dict) -> dict | None:
    """The case and the constants as floats, or None when any input is an array, non-finite
    or out of range (the vectorised path then handles the case and words any refusal)."""
    case = {}
    for name in (_pressure_input(given), *_INPUT_NAMES, *_OPTIONAL_NAMES, *_CONSTANTS):
        if given[name] is None:
            continue
        v = _plain_float(given[name])
        if v is None or (name in INPUT_LIMITS and not _inside(name, v)):
            return None
        case[name] = v
    if case["cohb_fraction"] + case["methb_fraction"] >= MAX_COHB_PLUS_METHB:
        return None
    return case


def _inside(name: str, v: float) -> bool:
    lo, hi = INPUT_LIMITS[name][:2]
    return lo <= v <= hi


def _case_arrays(given: dict) -> tuple[dict, tuple[int, ...]]:
    """The case validated (ValueError naming field, value, range and unit), broadcast and
    flattened to 1-d arrays of one length, and the broadcast shape."""
    names = [_pressure_input(given), *_INPUT_NAMES]
    names += [n for n in _OPTIONAL_NAMES if given[n] is not None]
    checked = [check_range(n, given[n]) for n in names]
    for n, arr in zip(names, checked):
        # A NaN element of an array marks a case left out (NaN results for it); a NaN given
        # as the only value is a number that is not one, and is refused.
        bad = ~np.isfinite(arr)
        if np.all(bad):
            lo, hi, unit, label = INPUT_LIMITS[n]
            u = f" {unit}" if unit else ""
            raise ValueError(
                f"{n} = {arr[bad].ravel()[0]} is not a number ({label}; allowed range "
                f"{lo:g}-{hi:g}{u}; leave it out, or None, for the default)"
            )
    joint = np.broadcast_arrays(*checked)
    case = {n: np.array(v, dtype=float).ravel() for n, v in zip(names, joint)}
    if np.any(case["cohb_fraction"] + case["methb_fraction"] >= MAX_COHB_PLUS_METHB):
        raise ValueError(f"cohb_fraction + methb_fraction must stay below {MAX_COHB_PLUS_METHB:g}")
    return case, joint[0].shape


def _fixed_terms(
    x: dict, *, pressure_model: str, vo2_temperature_scaling: bool, hufner_ml_g, m
) -> dict:
    """What stays the same in every pass: air, alveolar gas, capillary transit, Fick.

    Raises ValueError when the inspired PO2 leaves no alveolar O2.
    """
    value = float if m is floats else np.asarray  # the air functions return numpy values
    t, q, qs, hb = x["temperature_c"], x["cardiac_output_l_min"], x["shunt_fraction"], x["hb_g_dl"]
    paco2, cohb, methb = x["paco2_mmhg"], x["cohb_fraction"], x["methb_fraction"]
    if "barometric_pressure_mmhg" in x:
        pb = x["barometric_pressure_mmhg"]
    else:
        pb = value(barometric_pressure(x["altitude_m"], model=pressure_model))
    vo2 = (
        value(vo2_at_temperature(x["vo2_ml_min"], t))
        if vo2_temperature_scaling
        else x["vo2_ml_min"]
    )
    pao2_alv = value(
        alveolar_po2(fio2=x["fio2"], pb_mmhg=pb, paco2_mmhg=paco2, rq=x["rq"], temperature_c=t)
    )
    if m.any(pao2_alv <= 1.0):
        v = np.asarray(pao2_alv)[np.asarray(pao2_alv <= 1.0)].ravel()[0]
        raise ValueError(
            f"alveolar PO2 = {v:.1f} mmHg: the inspired PO2 leaves no alveolar O2 "
            "at this PaCO2 (raise FiO2 or pressure, or lower PaCO2)"
        )
    transit = x["capillary_volume_ml"] / ((1.0 - qs) * q * 1000.0 / 60.0)
    d_av = vo2 / (10.0 * q)  # arteriovenous O2 content difference [mL/dL]
    return {
        "pb": pb,
        "ph2o": value(water_vapour_pressure(t)),
        "pio2": value(inspired_po2(x["fio2"], pb, t)),
        "vo2": vo2,
        "pao2_alv": pao2_alv,
        "fio2": x["fio2"],
        "q": q,
        "hb": hb,
        "t": t,
        "paco2": paco2,
        "cohb": cohb,
        "methb": methb,
        "qs": qs,
        "d_av": d_av,
        "transit": transit,
        "rq": x["rq"],
        "k": x["diffusing_capacity_ml_min_mmhg"] / 60.0 / x["capillary_volume_ml"],
        "dt": transit / 24,
        "carry": 1.0 - cohb - methb,
        "carry_ml": hufner_ml_g * hb * (1.0 - cohb - methb),
        "admix": qs / (1.0 - qs) * d_av,
        **{k: x[k] for k in _OPTIONAL_NAMES if k in x},
    }


def _first_guess(f: dict, m) -> dict:
    """Where the passes start: pH 7.40 unless given, PvO2 from the alveolar PO2, SaO2 0.97."""
    one = m.ones_like(f["hb"])  # a new array per start value: the passes write into them
    ph_a = one * f.get("ph", 7.40)
    return {
        "ph_a": ph_a,
        "pv_o2": m.minimum(0.4 * f["pao2_alv"], 40.0),
        "pv_co2": f["paco2"] + 5.0,
        "sao2": one * 0.97,
        "ph_v": ph_a - 0.03,
    }


def _take(d: dict, active) -> dict:
    """The cases still moving (all of them for one case of floats, ``active`` None)."""
    return d if active is None else {k: v[active] for k, v in d.items()}


def _store(st: dict, active, new: dict) -> None:
    """Write a pass's values back for the cases it moved."""
    if active is None:
        st.update(new)
        return
    n = st["pv_o2"].size
    for k, v in new.items():
        st.setdefault(k, np.full(n, np.nan))[active] = v


def _converge(f: dict, *, curve: str, content_kw: dict, tol: float, max_iterations: int, m):
    """Passes of :func:`_iterate` until the mixed venous PO2 moves by less than ``tol``
    [mmHg], each case frozen once it settles; Aitken every second pass from the third.

    Returns the state (values of the last pass), the number of passes and whether each case
    settled (a bool, or a bool array over the cases).
    """
    st = _first_guess(f, m)
    active = None if m is floats else np.arange(f["hb"].size)
    settled: Any = True if m is floats else np.ones(f["hb"].size, dtype=bool)
    iterations = 0
    for iterations in range(1, max_iterations + 1):
        now = _take(st, active)
        new = _iterate(_take(f, active), now, curve=curve, content_kw=content_kw, m=m)
        x_in = now["pv_o2"]
        moving = abs(new["pv_o2"] - x_in) > tol
        if iterations >= 3 and iterations % 2:
            extrapolated = _aitken(now["pv_o2_before"], x_in, new["pv_o2"], m)
            new["pv_o2"] = m.where(moving, extrapolated, new["pv_o2"])
        new["pv_o2_before"] = x_in
        _store(st, active, new)
        if not m.any(moving):
            break
        if iterations == max_iterations:  # passes used up, some cases still moving
            if active is None:
                settled = False
            else:
                settled[active[moving]] = False
            break
        if active is not None:
            active = active[moving]
    return st, iterations, settled


def _blood(f: dict, st: dict, *, curve: str, content_kw: dict, m) -> dict:
    """Arterial and mixed venous blood at the converged state; the venous PO2 solved once
    more from its content on the final venous curve."""
    hufner, sol = content_kw["hufner_ml_g"], content_kw["o2_solubility_ml_dl_mmhg"]
    hb, t, paco2, cohb, methb = f["hb"], f["t"], f["paco2"], f["cohb"], f["methb"]
    dpg, p50o = f.get("dpg_mmol_l"), f.get("p50_mmhg")
    ph_a, ph_v, pv_co2, sao2 = st["ph_a"], st["ph_v"], st["pv_co2"], st["sao2"]
    art_kw = _curve_kw(ph_a, paco2, t, dpg, cohb, methb, p50o, curve)
    ven_kw = _curve_kw(ph_v, pv_co2, t, dpg, cohb, methb, p50o, curve)
    art, ven = _prepare_curve(m, **art_kw), _prepare_curve(m, **ven_kw)
    pv_o2 = _po2_from_content(st["cvo2"], f["carry_ml"], sol, ven)
    svo2 = ven.saturation(pv_o2)
    return {
        "arterial": {
            "po2_mmhg": st["pa_o2"],
            "so2": sao2,
            "o2_content_ml_dl": st["cao2"],
            "p50_mmhg": art.inverse(0.5),
            "ph": ph_a,
            "pco2_mmhg": paco2,
            "co2_content_ml_dl": st["caco2"],
            "base_excess_mmol_l": _base_excess(ph_a, paco2, hb, sao2),
        },
        "venous": {
            "po2_mmhg": pv_o2,
            "so2": svo2,
            "o2_content_ml_dl": st["cvo2"],
            "p50_mmhg": ven.inverse(0.5),
            "ph": ph_v,
            "pco2_mmhg": pv_co2,
            "co2_content_ml_dl": st["cvco2"],
            "base_excess_mmol_l": _base_excess(ph_v, pv_co2, hb, svo2),
        },
        # O2 the venous blood would hold at its PO2 on the arterial curve
        "c_art_curve": _oxygen_content(hb, art.saturation(pv_o2), pv_o2, cohb, methb, hufner, sol),
        "arterial_conditions": art_kw,
        "venous_conditions": ven_kw,
    }


def _result(f: dict, st: dict, blood: dict, iterations: int, settled, out) -> TransportResult:
    """The :class:`TransportResult`, every value passed through ``out`` (float or array ->
    the returned numpy type and shape)."""
    cao2, cvo2 = st["cao2"], st["cvo2"]
    fields = {
        "barometric_pressure_mmhg": f["pb"],
        "water_vapour_pressure_mmhg": f["ph2o"],
        "inspired_po2_mmhg": f["pio2"],
        "alveolar_po2_mmhg": f["pao2_alv"],
        "end_capillary_po2_mmhg": st["pc"],
        "end_capillary_so2": st["sc"],
        "end_capillary_o2_content_ml_dl": st["cc"],
        "capillary_transit_time_s": f["transit"],
        "aa_gradient_mmhg": aa_gradient(f["pao2_alv"], st["pa_o2"]),
        "shunt_fraction": f["qs"],
        "fio2": f["fio2"],
        "cardiac_output_l_min": f["q"],
        "hb_g_dl": f["hb"],
        "temperature_c": f["t"],
        "do2_ml_min": oxygen_delivery(f["q"], cao2),
        "vo2_ml_min": f["vo2"],
        "extraction_ratio": extraction_ratio(cao2, cvo2),
        "o2_extracted_ml_per_l": 10.0 * (cao2 - cvo2),
        "venous_shift_gain_ml_per_l": 10.0 * (blood["c_art_curve"] - cvo2),
    }

    def conditions(kw: dict) -> dict:
        return {k: v if v is None or isinstance(v, str) else out(k, v) for k, v in kw.items()}

    return TransportResult(
        **{k: out(k, v) for k, v in fields.items()},
        arterial=BloodState(**{k: out(("arterial", k), v) for k, v in blood["arterial"].items()}),
        venous=BloodState(**{k: out(("venous", k), v) for k, v in blood["venous"].items()}),
        iterations=iterations,
        converged=np.asarray(
            settled if isinstance(settled, bool) else out("converged", settled), dtype=bool
        ),
        arterial_conditions=conditions(blood["arterial_conditions"]),
        venous_conditions=conditions(blood["venous_conditions"]),
    )


def _float_out(name, v):
    """A value of one case of floats as :class:`TransportResult` holds it."""
    if name in _FLOAT64_FIELDS or (isinstance(name, tuple) and name[1] in _FLOAT64_BLOOD[name[0]]):
        return np.float64(v)
    return np.array(v, dtype=float)


def _solve(
    x: dict,
    *,
    m,
    out,
    pressure_model,
    curve,
    vo2_temperature_scaling,
    content_kw,
    tol,
    max_iterations,
) -> TransportResult:
    """The chain on one case of floats or on 1-d arrays: its steps in order."""
    f = _fixed_terms(
        x,
        pressure_model=pressure_model,
        vo2_temperature_scaling=vo2_temperature_scaling,
        hufner_ml_g=content_kw["hufner_ml_g"],
        m=m,
    )
    st, iterations, settled = _converge(
        f, curve=curve, content_kw=content_kw, tol=tol, max_iterations=max_iterations, m=m
    )
    blood = _blood(f, st, curve=curve, content_kw=content_kw, m=m)
    return _result(f, st, blood, iterations, settled, out)


def _on_floats(given: dict, options: dict) -> TransportResult | None:
    """The chain on one case of plain numbers (``m`` = :mod:`model.floats`), or None where
    that does not serve: an input that is an array, NaN or out of range, a refusal, or
    arithmetic that numpy would take to inf or NaN (the array path then words the message)."""
    case = _float_case(given)
    if case is None:
        return None
    content_kw = {k: case[k] for k in _CONTENT_CONSTANTS}
    try:
        return _solve(
            case, m=floats, out=_float_out, content_kw=content_kw, tol=case["tol"], **options
        )
    except (ValueError, OverflowError, ZeroDivisionError):
        return None


def _on_arrays(given: dict, options: dict) -> TransportResult:
    """The chain vectorised over the broadcast inputs; every result has their shape."""
    case, shape = _case_arrays(given)
    n = case["fio2"].size

    def shaped(_name, v):
        return np.array(np.broadcast_to(v, (n,)), dtype=float).reshape(shape)

    content_kw = {k: given[k] for k in _CONTENT_CONSTANTS}
    return _solve(case, m=np, out=shaped, content_kw=content_kw, tol=given["tol"], **options)


def solve_transport(
    *,
    altitude_m=0.0,
    barometric_pressure_mmhg=None,
    pressure_model=PRESSURE_MODEL_DEFAULT,
    fio2=0.21,
    paco2_mmhg=40.0,
    rq=0.8,
    shunt_fraction=0.02,
    diffusing_capacity_ml_min_mmhg=30.0,
    capillary_volume_ml=75.0,
    hb_g_dl=15.0,
    temperature_c=37.0,
    ph=None,
    base_excess_mmol_l=None,
    dpg_mmol_l=None,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    p50_mmhg=None,
    curve="severinghaus",
    cardiac_output_l_min=5.0,
    vo2_ml_min=250.0,
    vo2_temperature_scaling=False,
    hufner_ml_g=HUFNER_ML_G,
    o2_solubility_ml_dl_mmhg=O2_SOLUBILITY_ML_DL_MMHG,
    tol=1e-6,
    max_iterations=60,
) -> TransportResult:
    """Solve the O2 chain from inspired air to mixed venous blood.

    Air: PB (West's mountain model by default, or the ICAO standard atmosphere), PH2O(T),
    PIO2.
    Lungs: alveolar gas equation (full form); end-capillary PO2 by Bohr integration over
    the transit time ``Vc / ((1 - Qs) Q)``; venous admixture mixed by content,
    ``CaO2 = CcO2 - Qs/(1 - Qs) VO2/(10 Q)``. Blood: the chosen dissociation curve at
    arterial pH and PCO2. Tissue: Fick, ``CvO2 = CaO2 - VO2/(10 Q)``; CO2 added by mass
    balance, ``CvCO2 = CaCO2 + RQ VO2 / (10 Q)`` (Douglas 1988 content), with the base
    excess at full oxygenation held constant (Zander), so venous PCO2 and pH, hence the
    venous right shift, follow from the physiology. The capillary start (mixed venous
    PO2) couples the sides: they are iterated until the mixed venous PO2 moves by less
    than ``tol`` [mmHg] in a pass, its sequence extrapolated (Aitken) every second pass.

    Parameters
    ----------
    altitude_m : array_like
        [m]; ignored when ``barometric_pressure_mmhg`` is given.
    barometric_pressure_mmhg : array_like or None
        [mmHg]
    pressure_model : {"mountain", "standard"}
        How PB follows from ``altitude_m``: ``"mountain"`` (default), West's 1996 fit to
        pressures measured on high mountains, for a place on a mountain; ``"standard"``, the
        ICAO standard atmosphere (aviation, chambers set by standard altitude). At 5400 m
        they give 398.9 and 384.2 mmHg; 400.4 +- 2.7 was measured at the Everest base camp
        there (West et al., J Appl Physiol 1983; 54:1188-1194). The result's ``pressure_model`` says which gave PB
        (``"given"`` when ``barometric_pressure_mmhg`` is an input).
    fio2 : array_like
        [-]
    paco2_mmhg : array_like
        Arterial PCO2 [mmHg].
    rq : array_like
        Respiratory quotient [-].
    shunt_fraction : array_like
        Venous admixture Qs/Qt [-].
    diffusing_capacity_ml_min_mmhg, capillary_volume_ml : array_like
        DLO2 [mL/min/mmHg], pulmonary capillary blood volume [mL].
    hb_g_dl, temperature_c : array_like
        [g/dL], [degC].
    ph, base_excess_mmol_l : array_like or None
        Arterial pH at body temperature, or actual base excess [mmol/L]; not both
        (pH 7.40 when neither).
    dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve
        As for :func:`model.saturation`.
    cardiac_output_l_min : array_like
        [L/min]
    vo2_ml_min : array_like
        O2 consumption [mL/min]; the value at 37 degC when ``vo2_temperature_scaling``.
    vo2_temperature_scaling : bool
        Scale VO2 by 1.10 per degC (common practice).
    hufner_ml_g, o2_solubility_ml_dl_mmhg : float
        See :func:`model.oxygen_content`.

    Returns
    -------
    TransportResult

    Raises
    ------
    ValueError
        An input outside its range (message names field, value, range and unit), both
        pH and base excess, an unknown model name, an inspired PO2 too low to leave any
        alveolar O2, or a VO2 that the delivery cannot supply.

    Notes
    -----
    pH and PCO2 are taken as measured at body temperature. Resting check (Hb 15, Q 5,
    VO2 250, sea level): DO2 about 1000 mL/min, SvO2 about 0.75, PvO2 about 40 mmHg.
    One case of plain numbers runs the same stage functions on floats (``m`` =
    :mod:`model.floats` instead of numpy: about 1 ms instead of tens of ms through numpy);
    arrays, NaN and refusals take the vectorised path. A scalar NaN input (or an array of
    NaN only) is refused with a ValueError naming field, value, range and unit; a NaN element
    of an array leaves that case out (NaN results). ``converged`` says, per case, whether
    the passes settled; False means the values are the last pass's, not a solution.

    Examples
    --------
    >>> r = solve_transport()
    >>> 950 < float(r.do2_ml_min) < 1050 and 0.70 < float(r.venous.so2) < 0.80
    True
    >>> r = solve_transport(altitude_m=5400)
    >>> r.pressure_model, round(float(r.barometric_pressure_mmhg), 1)
    ('mountain', 398.9)
    """
    given = dict(locals())
    _check_options(pressure_model, curve, ph, base_excess_mmol_l)
    options = {
        "pressure_model": pressure_model,
        "curve": curve,
        "vo2_temperature_scaling": vo2_temperature_scaling,
        "max_iterations": max_iterations,
    }
    result = _on_floats(given, options) if max_iterations >= 1 else None
    result = _on_arrays(given, options) if result is None else result
    source = pressure_model if barometric_pressure_mmhg is None else "given"
    return result if source == PRESSURE_MODEL_DEFAULT else replace(result, pressure_model=source)


_PARAMETERS = inspect.signature(solve_transport).parameters
CASE_INPUTS: tuple[str, ...] = tuple(
    name for name in _PARAMETERS if name in INPUT_LIMITS or name in INPUT_CHOICES
)
"""The keywords of :func:`solve_transport` that describe a case, in its order: the numbers of
:data:`model.limits.INPUT_LIMITS` and the choices of :data:`model.limits.INPUT_CHOICES`. The
other keywords (``hufner_ml_g``, ``o2_solubility_ml_dl_mmhg``, ``tol``, ``max_iterations``)
are settings of the equations and of the solver."""
_PRESSURE_INPUTS = ("altitude_m", "barometric_pressure_mmhg")  # one of the two gives PB
_NUMBER_INPUTS = tuple(n for n in CASE_INPUTS if n in INPUT_LIMITS and n not in _PRESSURE_INPUTS)
_INPUT_NAMES = tuple(n for n in _NUMBER_INPUTS if _PARAMETERS[n].default is not None)
_OPTIONAL_NAMES = tuple(n for n in _NUMBER_INPUTS if _PARAMETERS[n].default is None)
