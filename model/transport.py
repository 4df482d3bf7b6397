"""The chain: inspired air to venous blood, solved arterial and venous sides together."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from .acid_base import (
    _base_excess,
    _blood_co2_content,
    _ph_from_base_excess,
    _ph_from_base_excess_scalar,
    base_excess,
)
from .air import PRESSURE_MODELS, barometric_pressure, inspired_po2, water_vapour_pressure
from .circulation import VO2_Q10_PER_C, oxygen_delivery, vo2_at_temperature
from .content import HUFNER_ML_G, O2_SOLUBILITY_ML_DL_MMHG, _oxygen_content, oxygen_content
from .dissociation import _canonical, p50, prepare_curve, prepare_scalar_curve, saturation
from .limits import INPUT_LIMITS, check_range
from .lungs import (
    _end_capillary_po2,
    _end_capillary_po2_scalar,
    _po2_from_content,
    _po2_from_content_scalar,
    aa_gradient,
    alveolar_po2,
    po2_from_content,
)


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
    arterial_conditions: dict = field(repr=False)
    venous_conditions: dict = field(repr=False)

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


def _curve_kw(ph, pco2, t, dpg, cohb, methb, p50_override, curve):
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


def _venous_co2(cvco2, be_ox, svo2, hb, t, p_start, ph):
    """PvCO2 and pHv such that Douglas content equals cvco2 on the venous buffer line
    (each pH solve starts from the last one, ``ph`` first)."""
    p = p_start.copy()
    for _ in range(30):
        ph = _ph_from_base_excess(be_ox, p, hb, svo2, ph)
        f = _blood_co2_content(p, ph, svo2, hb, t) - cvco2
        h = 1e-4 * p
        ph2 = _ph_from_base_excess(be_ox, p + h, hb, svo2, ph)
        df = (_blood_co2_content(p + h, ph2, svo2, hb, t) - cvco2 - f) / h
        step = np.minimum(np.maximum(f / df, -0.5 * p), 40.0)
        p = p - step
        if not (np.abs(step) > 1e-9).any():
            break
    return p, _ph_from_base_excess(be_ox, p, hb, svo2, ph)


def _aitken(x0, x1, x2):
    """Aitken's delta-squared extrapolation of x0, x1 = G(x0), x2 = G(x1) towards the fixed
    point of G, where the two steps shrink by a steady factor |r| < 0.9 (else x2).

    The mixed venous PO2 converges geometrically (r about 0.2-0.4, highest where diffusion
    limits uptake), so one extrapolation after every two passes halves the passes needed.
    """
    d1, d2 = x1 - x0, x2 - x1
    with np.errstate(divide="ignore", invalid="ignore"):
        r = d2 / d1
        y = x2 + d2 * r / (1.0 - r)
    return np.where((np.abs(r) < 0.9) & (y > 0.0), y, x2)


def _aitken_scalar(x0, x1, x2):
    """:func:`_aitken` for floats."""
    d1, d2 = x1 - x0, x2 - x1
    if d1 == 0.0:
        return x2
    r = d2 / d1
    if not abs(r) < 0.9:
        return x2
    y = x2 + d2 * r / (1.0 - r)
    return y if y > 0.0 else x2


def _iterate(f: dict, st: dict, *, curve: str, content_kw: dict) -> dict:
    """One pass of the coupled arterial-venous solution on the cases still moving."""
    hufner, sol = content_kw["hufner_ml_g"], content_kw["o2_solubility_ml_dl_mmhg"]
    hb, t, paco2 = f["hb"], f["t"], f["paco2"]
    ph_a = st["ph_a"]
    if "base_excess_mmol_l" in f:
        ph_a = _ph_from_base_excess(f["base_excess_mmol_l"], paco2, hb, st["sao2"], ph_a)
    art = prepare_curve(
        **_curve_kw(
            ph_a, paco2, t, f.get("dpg_mmol_l"), f["cohb"], f["methb"], f.get("p50_mmhg"), curve
        )
    )
    pc = _end_capillary_po2(
        f["pao2_alv"], st["pv_o2"], hb, f["carry"], f["k"], f["dt"], art, hufner, sol
    )
    sc = art.saturation(pc)
    cc = _oxygen_content(hb, sc, pc, f["cohb"], f["methb"], hufner, sol)
    cao2 = cc - f["admix"]
    cvo2 = cao2 - f["d_av"]
    if np.any(cvo2 <= 0.0):
        raise ValueError(
            "vo2_ml_min exceeds what the O2 delivery can supply at this cardiac "
            "output (venous O2 content would be below zero)"
        )
    pa_o2 = _po2_from_content(cao2, f["carry_ml"], sol, art, st.get("pa_o2"))
    sao2 = art.saturation(pa_o2)
    be_ox = _base_excess(ph_a, paco2, hb, sao2)  # referred to full oxygenation (Zander)
    caco2 = _blood_co2_content(paco2, ph_a, sao2, hb, t)
    cvco2 = caco2 + f["rq"] * f["d_av"]
    ven = prepare_curve(
        **_curve_kw(
            st["ph_v"],
            st["pv_co2"],
            t,
            f.get("dpg_mmol_l"),
            f["cohb"],
            f["methb"],
            f.get("p50_mmhg"),
            curve,
        )
    )
    warm = "pa_o2" in st  # Newton starts: none on the first pass, then the last pass's values
    pv_o2 = _po2_from_content(cvo2, f["carry_ml"], sol, ven, st["pv_o2"] if warm else None)
    svo2 = ven.saturation(pv_o2)
    pv_co2, ph_v = _venous_co2(cvco2, be_ox, svo2, hb, t, np.maximum(st["pv_co2"], 1.0), st["ph_v"])
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


# --- the 0-d path: the same chain on floats -------------------------------------------------
# Every step below mirrors one of the vectorised functions used by `_iterate` (same
# equations, same Newton steps, same stopping rules) with math on floats, because a single
# case through numpy costs far more in per-call overhead than in arithmetic.

_INPUT_NAMES = (
    "fio2",
    "paco2_mmhg",
    "rq",
    "shunt_fraction",
    "diffusing_capacity_ml_min_mmhg",
    "capillary_volume_ml",
    "hb_g_dl",
    "temperature_c",
    "cohb_fraction",
    "methb_fraction",
    "cardiac_output_l_min",
    "vo2_ml_min",
)
_OPTIONAL_NAMES = ("ph", "base_excess_mmol_l", "dpg_mmol_l", "p50_mmhg")
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


def _plain_float(v):
    """v as a finite float if it is one number (Python or numpy, or a 0-d array), else None."""
    if isinstance(v, np.ndarray):
        if v.ndim or v.dtype.kind not in "fiub":
            return None
        v = v.item()
    elif not isinstance(v, (float, int, np.floating, np.integer)):
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _scalar_inputs(kw: dict):
    """The chain inputs as floats, or None when any is an array, non-finite or out of range
    (the vectorised path then handles the case and words any refusal)."""
    out = {}
    for name in (
        (
            "barometric_pressure_mmhg"
            if kw["barometric_pressure_mmhg"] is not None
            else "altitude_m",
        )
        + _INPUT_NAMES
        + _OPTIONAL_NAMES
    ):
        raw = kw[name]
        if raw is None:
            out[name] = None
            continue
        v = _plain_float(raw)
        if v is None:
            return None
        lo, hi = INPUT_LIMITS[name][:2]
        if not lo <= v <= hi:
            return None
        out[name] = v
    for name in ("hufner_ml_g", "o2_solubility_ml_dl_mmhg", "tol"):
        v = _plain_float(kw[name])
        if v is None:
            return None
        out[name] = v
    if out["cohb_fraction"] + out["methb_fraction"] >= 0.9:
        return None
    return out


def _venous_co2_scalar(cvco2, be_ox, svo2, hb, t, p, ph):
    """:func:`_venous_co2` for floats."""
    for _ in range(30):
        ph = _ph_from_base_excess_scalar(be_ox, p, hb, svo2, ph)
        f = _blood_co2_content(p, ph, svo2, hb, t) - cvco2
        h = 1e-4 * p
        ph2 = _ph_from_base_excess_scalar(be_ox, p + h, hb, svo2, ph)
        df = (_blood_co2_content(p + h, ph2, svo2, hb, t) - cvco2 - f) / h
        step = min(max(f / df, -0.5 * p), 40.0)
        p = p - step
        if not abs(step) > 1e-9:
            break
    return p, _ph_from_base_excess_scalar(be_ox, p, hb, svo2, ph)


def _solve_scalar(x: dict, *, pressure_model, curve, vo2_temperature_scaling, max_iterations):
    """:func:`solve_transport` for one case of floats (``x`` from :func:`_scalar_inputs`)."""
    name = _canonical(curve)
    hufner, sol = x["hufner_ml_g"], x["o2_solubility_ml_dl_mmhg"]
    hb, t, q, qs = x["hb_g_dl"], x["temperature_c"], x["cardiac_output_l_min"], x["shunt_fraction"]
    paco2, cohb, methb, rq = x["paco2_mmhg"], x["cohb_fraction"], x["methb_fraction"], x["rq"]
    fio2, dpg, p50o = x["fio2"], x["dpg_mmol_l"], x["p50_mmhg"]
    be_given = x["base_excess_mmol_l"]
    if x.get("barometric_pressure_mmhg") is None:
        pb = float(barometric_pressure(x["altitude_m"], model=pressure_model))
    else:
        pb = x["barometric_pressure_mmhg"]
    vo2 = (
        x["vo2_ml_min"] * VO2_Q10_PER_C ** (t - 37.0)
        if vo2_temperature_scaling
        else x["vo2_ml_min"]
    )
    ph2o = float(water_vapour_pressure(t))
    pio2 = float(inspired_po2(fio2, pb, t))
    pao2_alv = float(alveolar_po2(fio2=fio2, pb_mmhg=pb, paco2_mmhg=paco2, rq=rq, temperature_c=t))
    if not pao2_alv > 1.0:
        return None
    transit = x["capillary_volume_ml"] / ((1.0 - qs) * q * 1000.0 / 60.0)
    d_av = vo2 / (10.0 * q)
    k = x["diffusing_capacity_ml_min_mmhg"] / 60.0 / x["capillary_volume_ml"]
    dt = transit / 24
    carrying = 1.0 - cohb - methb
    carrying_ml = hufner * hb * (1.0 - cohb - methb)
    admix = qs / (1.0 - qs) * d_av

    def curve_at(ph_, pco2_):
        return prepare_scalar_curve(name, ph_, pco2_, t, dpg, cohb, methb, p50o)

    ph_a = x["ph"] if x["ph"] is not None else 7.40
    pv_o2 = min(0.4 * pao2_alv, 40.0)
    pv_co2, sao2 = paco2 + 5.0, 0.97
    ph_v = ph_a - 0.03
    tol = x["tol"]
    prev_in = math.nan
    pa_o2 = None  # Newton starts: none on the first pass, then the last pass's values
    iterations = 0
    for iterations in range(1, max_iterations + 1):
        if be_given is not None:
            ph_a = _ph_from_base_excess_scalar(be_given, paco2, hb, sao2, ph_a)
        art = curve_at(ph_a, paco2)
        pc = _end_capillary_po2_scalar(pao2_alv, pv_o2, hb, carrying, k, dt, art, hufner, sol)
        sc = art.saturation(pc)
        cc = _oxygen_content(hb, sc, pc, cohb, methb, hufner, sol)
        cao2 = cc - admix
        cvo2 = cao2 - d_av
        if cvo2 <= 0.0:
            return None
        pa_o2 = _po2_from_content_scalar(cao2, carrying_ml, sol, art, pa_o2)
        sao2 = art.saturation(pa_o2)
        be_ox = _base_excess(ph_a, paco2, hb, sao2)
        caco2 = _blood_co2_content(paco2, ph_a, sao2, hb, t)
        cvco2 = caco2 + rq * d_av
        ven = curve_at(ph_v, pv_co2)
        new_pv_o2 = _po2_from_content_scalar(
            cvo2, carrying_ml, sol, ven, None if iterations == 1 else pv_o2
        )
        svo2 = ven.saturation(new_pv_o2)
        pv_co2, ph_v = _venous_co2_scalar(cvco2, be_ox, svo2, hb, t, max(pv_co2, 1.0), ph_v)
        change = abs(new_pv_o2 - pv_o2)
        if not change > tol:
            pv_o2 = new_pv_o2
            break
        if iterations >= 3 and iterations % 2:
            prev_in, pv_o2 = pv_o2, _aitken_scalar(prev_in, pv_o2, new_pv_o2)
        else:
            prev_in, pv_o2 = pv_o2, new_pv_o2
    ven = curve_at(ph_v, pv_co2)
    pv_o2 = _po2_from_content_scalar(cvo2, carrying_ml, sol, ven)
    svo2 = ven.saturation(pv_o2)
    art = curve_at(ph_a, paco2)
    c_art_curve = _oxygen_content(hb, art.saturation(pv_o2), pv_o2, cohb, methb, hufner, sol)

    def arr(v):
        return np.array(v, dtype=float)

    def cond(ph_, pco2_):
        return _curve_kw(
            arr(ph_),
            arr(pco2_),
            arr(t),
            None if dpg is None else arr(dpg),
            arr(cohb),
            arr(methb),
            None if p50o is None else arr(p50o),
            curve,
        )

    arterial = BloodState(
        arr(pa_o2),
        arr(sao2),
        arr(cao2),
        np.float64(art.inverse(0.5)),
        arr(ph_a),
        arr(paco2),
        arr(caco2),
        np.float64(_base_excess(ph_a, paco2, hb, sao2)),
    )
    venous = BloodState(
        arr(pv_o2),
        np.float64(svo2),
        arr(cvo2),
        np.float64(ven.inverse(0.5)),
        arr(ph_v),
        arr(pv_co2),
        arr(cvco2),
        np.float64(_base_excess(ph_v, pv_co2, hb, svo2)),
    )
    fields = {
        "barometric_pressure_mmhg": pb,
        "water_vapour_pressure_mmhg": ph2o,
        "inspired_po2_mmhg": pio2,
        "alveolar_po2_mmhg": pao2_alv,
        "end_capillary_po2_mmhg": pc,
        "end_capillary_so2": sc,
        "end_capillary_o2_content_ml_dl": cc,
        "capillary_transit_time_s": transit,
        "aa_gradient_mmhg": pao2_alv - pa_o2,
        "shunt_fraction": qs,
        "fio2": fio2,
        "cardiac_output_l_min": q,
        "hb_g_dl": hb,
        "temperature_c": t,
        "do2_ml_min": 10.0 * q * cao2,
        "vo2_ml_min": vo2,
        "extraction_ratio": (cao2 - cvo2) / cao2,
        "o2_extracted_ml_per_l": 10.0 * (cao2 - cvo2),
        "venous_shift_gain_ml_per_l": 10.0 * (c_art_curve - cvo2),
    }
    fields = {f: (np.float64(v) if f in _FLOAT64_FIELDS else arr(v)) for f, v in fields.items()}
    return TransportResult(
        **fields,
        arterial=arterial,
        venous=venous,
        iterations=iterations,
        arterial_conditions=cond(ph_a, paco2),
        venous_conditions=cond(ph_v, pv_co2),
    )


def solve_transport(
    *,
    altitude_m=0.0,
    barometric_pressure_mmhg=None,
    pressure_model="standard",
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

    Air: PB (ICAO standard atmosphere or West's mountain model), PH2O(T), PIO2.
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
    pressure_model : {"standard", "mountain"}
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
    One case of plain numbers runs the same steps on floats (about 1 ms instead of tens
    of ms through numpy); arrays, NaN and refusals take the vectorised path.

    Examples
    --------
    >>> r = solve_transport()
    >>> 950 < float(r.do2_ml_min) < 1050 and 0.70 < float(r.venous.so2) < 0.80
    True
    """
    if pressure_model not in PRESSURE_MODELS:
        raise ValueError(
            f"pressure_model {pressure_model!r} is unknown; choose one of {PRESSURE_MODELS}"
        )
    _canonical(curve)
    if ph is not None and base_excess_mmol_l is not None:
        raise ValueError("give either ph or base_excess_mmol_l, not both")
    given = locals()
    x = _scalar_inputs(given) if max_iterations >= 1 else None
    if x is not None:
        try:
            r = _solve_scalar(
                x,
                pressure_model=pressure_model,
                curve=curve,
                vo2_temperature_scaling=vo2_temperature_scaling,
                max_iterations=max_iterations,
            )
        except (ValueError, OverflowError, ZeroDivisionError):
            r = None  # refused or degenerate: the vectorised path words the message
        if r is not None:
            return r
    if barometric_pressure_mmhg is None:
        pb = barometric_pressure(check_range("altitude_m", altitude_m), model=pressure_model)
    else:
        pb = check_range("barometric_pressure_mmhg", barometric_pressure_mmhg)
    arrs = {n: check_range(n, given[n]) for n in _INPUT_NAMES}
    for n in _OPTIONAL_NAMES:
        if given[n] is not None:
            arrs[n] = check_range(n, given[n])
    keys = list(arrs)
    bcast = np.broadcast_arrays(pb, *arrs.values())
    pb = bcast[0]
    a = dict(zip(keys, bcast[1:]))
    if np.any(a["cohb_fraction"] + a["methb_fraction"] >= 0.9):
        raise ValueError("cohb_fraction + methb_fraction must stay below 0.9")
    dpg = a.get("dpg_mmol_l")
    p50o = a.get("p50_mmhg")
    hb, t, q, qs = a["hb_g_dl"], a["temperature_c"], a["cardiac_output_l_min"], a["shunt_fraction"]
    paco2, cohb, methb = a["paco2_mmhg"], a["cohb_fraction"], a["methb_fraction"]
    vo2 = vo2_at_temperature(a["vo2_ml_min"], t) if vo2_temperature_scaling else a["vo2_ml_min"]
    content_kw = {"hufner_ml_g": hufner_ml_g, "o2_solubility_ml_dl_mmhg": o2_solubility_ml_dl_mmhg}

    ph2o = water_vapour_pressure(t)
    pio2 = inspired_po2(a["fio2"], pb, t)
    pao2_alv = alveolar_po2(
        fio2=a["fio2"], pb_mmhg=pb, paco2_mmhg=paco2, rq=a["rq"], temperature_c=t
    )
    if np.any(pao2_alv <= 1.0):
        v = pao2_alv[pao2_alv <= 1.0].ravel()[0]
        raise ValueError(
            f"alveolar PO2 = {v:.1f} mmHg: the inspired PO2 leaves no alveolar O2 "
            "at this PaCO2 (raise FiO2 or pressure, or lower PaCO2)"
        )
    transit = a["capillary_volume_ml"] / ((1.0 - qs) * q * 1000.0 / 60.0)
    d_av = vo2 / (10.0 * q)  # arteriovenous O2 content difference [mL/dL]

    shape = pb.shape
    flat = {
        k: np.array(v, dtype=float).ravel()
        for k, v in {
            "pao2_alv": pao2_alv,
            "hb": hb,
            "t": t,
            "paco2": paco2,
            "cohb": cohb,
            "methb": methb,
            "qs": qs,
            "d_av": d_av,
            "transit": transit,
            "rq": a["rq"],
            "k": a["diffusing_capacity_ml_min_mmhg"] / 60.0 / a["capillary_volume_ml"],
            "dt": transit / 24,
            "carry": 1.0 - cohb - methb,
            "carry_ml": hufner_ml_g * hb * (1.0 - cohb - methb),
            "admix": qs / (1.0 - qs) * d_av,
            **{k: a[k] for k in ("ph", "base_excess_mmol_l", "dpg_mmol_l", "p50_mmhg") if k in a},
        }.items()
    }
    fixed = {"curve": curve, "content_kw": content_kw}
    st = {
        "ph_a": flat["ph"].copy() if "ph" in flat else np.full(flat["hb"].shape, 7.40),
        "pv_o2": np.minimum(0.4 * flat["pao2_alv"], 40.0),
        "pv_co2": flat["paco2"] + 5.0,
        "sao2": np.full(flat["hb"].shape, 0.97),
    }
    st["ph_v"] = st["ph_a"] - 0.03
    active = np.arange(flat["hb"].size)
    prev_in = np.full(flat["hb"].shape, np.nan)
    iterations = 0
    for iterations in range(1, max_iterations + 1):
        sub = {k: v[active] for k, v in flat.items()}
        new = _iterate(sub, {k: v[active] for k, v in st.items()}, **fixed)
        x_in = st["pv_o2"][active]
        change = np.abs(new["pv_o2"] - x_in)
        for k, v in new.items():
            st.setdefault(k, np.full(flat["hb"].shape, np.nan))[active] = v
        moving = change > tol
        if iterations >= 3 and iterations % 2:
            st["pv_o2"][active[moving]] = _aitken(prev_in[active], x_in, new["pv_o2"])[moving]
        prev_in[active] = x_in
        active = active[moving]
        if active.size == 0:
            break
    st = {k: v.reshape(shape) for k, v in st.items()}
    ph_a, pa_o2, sao2, cao2, cvo2 = st["ph_a"], st["pa_o2"], st["sao2"], st["cao2"], st["cvo2"]
    pc, sc, cc, caco2, cvco2 = st["pc"], st["sc"], st["cc"], st["caco2"], st["cvco2"]
    ph_v, pv_co2 = st["ph_v"], st["pv_co2"]
    ven = _curve_kw(ph_v, pv_co2, t, dpg, cohb, methb, p50o, curve)
    pv_o2 = po2_from_content(cvo2, hb, **content_kw, **ven)
    svo2 = saturation(pv_o2, **ven)
    art = _curve_kw(ph_a, paco2, t, dpg, cohb, methb, p50o, curve)
    c_art_curve = oxygen_content(
        hb, saturation(pv_o2, **art), pv_o2, cohb_fraction=cohb, methb_fraction=methb, **content_kw
    )

    arterial = BloodState(
        pa_o2, sao2, cao2, p50(**art), ph_a, paco2, caco2, base_excess(ph_a, paco2, hb, sao2)
    )
    venous = BloodState(
        pv_o2, svo2, cvo2, p50(**ven), ph_v, pv_co2, cvco2, base_excess(ph_v, pv_co2, hb, svo2)
    )
    return TransportResult(
        barometric_pressure_mmhg=pb,
        water_vapour_pressure_mmhg=ph2o,
        inspired_po2_mmhg=pio2,
        alveolar_po2_mmhg=pao2_alv,
        end_capillary_po2_mmhg=pc,
        end_capillary_so2=sc,
        end_capillary_o2_content_ml_dl=cc,
        capillary_transit_time_s=transit,
        arterial=arterial,
        venous=venous,
        aa_gradient_mmhg=aa_gradient(pao2_alv, pa_o2),
        shunt_fraction=qs,
        fio2=a["fio2"],
        cardiac_output_l_min=q,
        hb_g_dl=hb,
        temperature_c=t,
        do2_ml_min=oxygen_delivery(q, cao2),
        vo2_ml_min=vo2,
        extraction_ratio=(cao2 - cvo2) / cao2,
        o2_extracted_ml_per_l=10.0 * (cao2 - cvo2),
        venous_shift_gain_ml_per_l=10.0 * (c_art_curve - cvo2),
        iterations=iterations,
        arterial_conditions=art,
        venous_conditions=ven,
    )
