"""Fit the chain to one patient: measured blood gases -> model inputs and free parameters.

A bedside case starts from measurements, not from textbook inputs. :func:`fit_case` maps
the measured values onto the inputs of :func:`model.solve_transport` and then fits the
model's free parameters so that the chain reproduces what was measured:

1. **P50 offset** (standard-state P50, ``p50_mmhg``) when a co-oximetry SaO2 disagrees
   with the dissociation curve at the measured PaO2, pH, PaCO2, temperature, COHb and
   MetHb by more than ``sao2_tolerance``: a one-dimensional root (Brent's method) of
   ``S(PaO2; P50std) = SaO2``. Not above SaO2 0.97, where the curve is too flat.
2. **Shunt fraction** (venous admixture Qs/Qt) to the measured PaO2 (PaO2 falls
   monotonically with shunt: Brent's method on the whole range); and, when a venous
   SvO2 and/or PvO2 is given,
3. **VO2** together with the shunt: bounded least squares on
   ``[(PaO2_model - PaO2) / 2 mmHg, (SvO2_model - SvO2) / 0.01, (PvO2_model - PvO2) / 1 mmHg]``
   (the weights are typical analyser and co-oximeter uncertainties, common practice).
   Shunt and VO2 are coupled through the mixed venous content that the shunted blood
   carries, so they are fitted together.

Bounds are those of :data:`model.limits.INPUT_LIMITS`. Measurements that no parameter
within range can reproduce, or that contradict each other (venous saturation above
arterial, venous PCO2 below arterial, PaO2 above what an unshunted lung could give), are
reported in plain words and make :attr:`FitResult.consistent` false.

Assumptions: PO2, PCO2 and pH are entered as a blood gas analyser reports them, at 37 degC
(the frame of :mod:`model.bedside`); the chain works at the patient's temperature, so they
are moved there first (``model.bedside.temperature_corrected_*``: Severinghaus 1979 Eq 3 for
PO2) and the model's values are moved back to 37 degC for the residuals. SaO2 and SvO2 are
functional saturations, O2Hb/(O2Hb + HHb), as co-oximeters report sO2; a venous sample
stands for mixed venous blood; without a measured cardiac output the model's 5.0 L/min is
assumed, and then the fitted VO2 is only as good as that assumption (VO2 and flow are not
separable from contents alone, Fick 1870). The fit uses the model's default diffusing
capacity, capillary volume and RQ: whatever limits O2 uptake shows up as shunt.

References
----------
1. Berggren SM. The oxygen deficit of arterial blood caused by non-ventilating parts of
   the lung. Acta Physiol Scand 1942; 4 Suppl 11:1-92 (the shunt equation used for the
   starting value).
2. Fick A. Über die Messung des Blutquantums in den Herzventrikeln. Sitzungsber Phys Med
   Ges Würzburg 1870; 16 (VO2 = Q (CaO2 - CvO2), the starting value of VO2).
3. Mosteller RD. Simplified calculation of body-surface area. N Engl J Med 1987; 317:1098
   (cardiac output from cardiac index).
4. Severinghaus JW. Simple, accurate equations for human blood O2 dissociation
   computations. J Appl Physiol 1979; 46:599-602 (Eq 3, PO2 against temperature).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from .air import PRESSURE_MODEL_DEFAULT, barometric_pressure
from .bedside import (
    SINGLE_POINT_SO2_RANGE,
    check_measured,
    temperature_corrected_pco2,
    temperature_corrected_ph,
    temperature_corrected_po2,
)
from .circulation import body_surface_area
from .content import oxygen_content
from .dissociation import STANDARD_P50_MMHG, canonical_curve, po2_from_saturation, saturation
from .limits import INPUT_LIMITS, check_range
from .lungs import alveolar_po2
from .transport import TransportResult, solve_transport

SAO2_TOLERANCE = 0.01
"""Disagreement of co-oximetry SaO2 with the curve below which no P50 offset is fitted [-]
(about the stated accuracy of co-oximeters, 1 % saturation; common practice)."""

RESIDUAL_TOLERANCE: dict[str, float] = {
    "pao2_mmhg": 3.0,
    "sao2": 0.01,
    "svo2": 0.02,
    "pvo2_mmhg": 3.0,
    "pvco2_mmhg": 5.0,
}
"""Largest model-minus-measured difference still called a match, per quantity (units as in
the key; PaO2 also passes within 3 % of its value). Common practice: a few times the
repeatability of blood gas analysers (PO2 about 1 mmHg) and co-oximeters (SO2 about 0.5 %).
PvCO2 is compared, never fitted: its row is flagged, not counted against consistency."""

DEFAULT_CARDIAC_OUTPUT_L_MIN = 5.0
DEFAULT_VO2_ML_MIN = 250.0

_WEIGHTS = {"pao2_mmhg": 2.0, "svo2": 0.01, "pvo2_mmhg": 1.0}

# measured key -> solve_transport keyword, taken over unchanged (patient frame)
_DIRECT = (
    "fio2",
    "paco2_mmhg",
    "ph",
    "hb_g_dl",
    "temperature_c",
    "cohb_fraction",
    "methb_fraction",
)

FLAT_SAO2 = SINGLE_POINT_SO2_RANGE[1]
"""SaO2 above which no P50 offset is fitted [-]: the curve is so flat there that a
co-oximeter's +/-0.01 moves P50 by over 15 % (as for model.bedside's single-point P50)."""

PLAUSIBLE_P50_MMHG = (15.0, 40.0)
"""Standard P50 outside which a fitted offset is reported as implausible [mmHg]. From
memory: adult standard P50 in disease and after transfusion of stored blood stays within
about 18-36 mmHg; only rare high- or low-affinity haemoglobins lie beyond."""


@dataclass(frozen=True)
class Residual:
    """One measured quantity beside the fitted model's value, both as at 37 degC.

    ``key`` is the measured key, ``quantity`` its display name, ``unit`` "" for fractions;
    ``difference`` is model minus measured; ``fitted`` says whether the fit aimed at it;
    ``within_tolerance`` compares it with :data:`RESIDUAL_TOLERANCE`.
    """

    key: str
    quantity: str
    measured: float
    model: float
    difference: float
    unit: str
    fitted: bool
    within_tolerance: bool


@dataclass(frozen=True)
class FitResult:
    """The patient's case as fitted by :func:`fit_case`.

    Attributes
    ----------
    inputs : dict
        Keywords for :func:`model.solve_transport`; every key is also a
        ``dashboard.case.state.CaseState`` input, so the dict can be given to
        ``CaseState.apply_inputs`` as it is. ``paco2_mmhg`` and ``ph`` are at the
        patient's temperature (the chain's frame), so they differ from the 37 degC
        readings when the patient is not at 37 degC.
    fitted : dict
        Fitted parameters by name: ``shunt_fraction`` [-] always; ``vo2_ml_min``
        [mL/min] when venous values were used; ``p50_mmhg`` (standard-state) and
        ``p50_offset_mmhg`` (against the curve's own standard P50) [mmHg] when SaO2
        disagreed with the curve.
    residuals : list of Residual
        Measured against model, one row per measured quantity the model also predicts.
    consistent : bool
        False when a message says the measurements contradict each other or no
        parameter in range reproduces them.
    messages : list of str
        Plain-language problems with the measurements (empty when consistent).
    assumptions : list of str
        What was assumed or left out (values not measured, parameters not fitted).
    result : TransportResult
        The chain solved at ``inputs``.
    body_size : dict
        ``height_cm`` and ``weight_kg`` when measured (for DO2I; not solver inputs).
    """

    inputs: dict
    fitted: dict
    residuals: list
    consistent: bool
    messages: list
    assumptions: list
    result: TransportResult = field(repr=False)
    body_size: dict = field(default_factory=dict)


def _validate(measured: Mapping) -> dict:
    """Measured mapping -> dict of floats without the entries not given."""
    return {k: v for k, v in check_measured(measured).items() if v is not None}


def _patient_frame(m: dict) -> dict:
    """Gas tensions and pH moved from the analyser's 37 degC to the patient's temperature."""
    t = m["temperature_c"]
    out = dict(m)
    for key in ("pao2_mmhg", "pvo2_mmhg"):
        if key in m:
            out[key] = float(temperature_corrected_po2(m[key], t))
    for key in ("paco2_mmhg", "pvco2_mmhg"):
        if key in m:
            out[key] = float(temperature_corrected_pco2(m[key], t))
    out["ph"] = float(temperature_corrected_ph(m["ph"], t))
    return out


def _to_37(key: str, value: float, t: float) -> float:
    """A model value at the patient's temperature t, as a 37 degC analyser would report it."""
    back = 74.0 - t  # the corrections depend on the temperature step only, so this inverts them
    if key in ("pao2_mmhg", "pvo2_mmhg"):
        return float(temperature_corrected_po2(value, back))
    if key in ("paco2_mmhg", "pvco2_mmhg"):
        return float(temperature_corrected_pco2(value, back))
    if key == "ph":
        return float(temperature_corrected_ph(value, back))
    return value


def _base_inputs(m: dict, curve: str, assumptions: list[str], messages: list[str]) -> dict:
    """solve_transport inputs from patient-frame measurements (no free parameter yet)."""
    inputs: dict = {"curve": curve}
    if "barometric_pressure_mmhg" in m:
        inputs["barometric_pressure_mmhg"] = m["barometric_pressure_mmhg"]
        if "altitude_m" in m:
            assumptions.append("Barometric pressure is measured: altitude not used.")
    elif "altitude_m" in m:
        inputs["altitude_m"] = m["altitude_m"]
    else:
        inputs["altitude_m"] = 0.0
        assumptions.append("Neither barometric pressure nor altitude given: sea level assumed.")
    for key in _DIRECT:
        if key in m:
            inputs[key] = m[key]
    if m["temperature_c"] != 37.0:
        assumptions.append(
            f"PO2, PCO2 and pH, measured at 37 °C, were moved to the patient's "
            f"{m['temperature_c']:.1f} °C for the model (Severinghaus 1979 Eq 3, PCO2 "
            "10^(0.019 dT), pH -0.0147 per °C); residuals are shown at 37 °C, as measured."
        )
    q, source = _cardiac_output(m, messages)
    if q is None:
        q = DEFAULT_CARDIAC_OUTPUT_L_MIN
        assumptions.append(f"Cardiac output not measured: {q:g} L/min assumed.")
    elif source:
        assumptions.append(source)
    inputs["cardiac_output_l_min"] = q
    for key, value in inputs.items():
        if key in INPUT_LIMITS:
            check_range(key, value)
    return inputs


def _cardiac_output(m: dict, messages: list[str]) -> tuple[float | None, str]:
    """Measured cardiac output, else cardiac index x BSA (Mosteller); and a note."""
    ci = m.get("cardiac_index_l_min_m2")
    h, w = m.get("height_cm"), m.get("weight_kg")
    from_index = None
    if ci is not None and h is not None and w is not None:
        from_index = ci * float(body_surface_area(h, w))
    if "cardiac_output_l_min" in m:
        q = m["cardiac_output_l_min"]
        if from_index is not None and abs(from_index - q) > 0.1 * q:
            messages.append(
                f"Cardiac output {q:.1f} L/min and cardiac index {ci:.2f} L/min/m² "
                f"(= {from_index:.1f} L/min for this height and weight) disagree by more than "
                "10 %; the cardiac output was used."
            )
        return q, ""
    if ci is not None:
        if from_index is None:
            raise ValueError(
                "cardiac_index_l_min_m2 needs height_cm and weight_kg to give a cardiac "
                "output (body surface area, Mosteller 1987)"
            )
        return from_index, (
            f"Cardiac output {from_index:.2f} L/min from cardiac index {ci:.2f} L/min/m² × "
            "body surface area (Mosteller)."
        )
    return None, ""


def _arterial_conditions(inputs: dict) -> dict:
    return {
        "ph": inputs["ph"],
        "pco2_mmhg": inputs["paco2_mmhg"],
        "temperature_c": inputs["temperature_c"],
        "cohb_fraction": inputs.get("cohb_fraction", 0.0),
        "methb_fraction": inputs.get("methb_fraction", 0.0),
        "p50_mmhg": inputs.get("p50_mmhg"),
        "curve": inputs["curve"],
    }


def _fit_p50(
    m37: dict,
    mt: dict,
    inputs: dict,
    tolerance: float,
    fitted: dict,
    messages: list[str],
    assumptions: list[str],
) -> None:
    """Standard-state P50 putting the measured (PaO2, SaO2) pair on the arterial curve."""
    # Imported here: scipy.optimize takes ~0.7 s to load and most callers never fit.
    from scipy.optimize import brentq

    pao2, sao2 = mt["pao2_mmhg"], mt["sao2"]
    shown = m37["pao2_mmhg"]
    cond = _arterial_conditions(inputs)
    standard = STANDARD_P50_MMHG[canonical_curve(inputs["curve"])]

    def gap(p50_std):
        return float(saturation(pao2, **{**cond, "p50_mmhg": p50_std})) - sao2

    off = gap(standard)
    if abs(off) <= tolerance:
        assumptions.append(
            f"SaO2 {sao2:.3f} agrees with the curve at PaO2 {shown:.0f} mmHg within "
            f"{tolerance:g}: no P50 offset fitted."
        )
        return
    if sao2 > FLAT_SAO2:
        assumptions.append(
            f"SaO2 {sao2:.3f} differs from the curve's {sao2 + off:.3f} at PaO2 {shown:.0f} "
            f"mmHg, but above {FLAT_SAO2:g} the curve is too flat to read a P50 from one "
            "sample: no P50 offset fitted."
        )
        if abs(off) > 3.0 * tolerance:
            messages.append(
                f"Measured SaO2 {sao2:.3f} is {abs(off):.3f} off the curve's {sao2 + off:.3f} "
                f"at PaO2 {shown:.0f} mmHg, more than co-oximetry error explains — check that "
                "PaO2 and SaO2 come from the same sample."
            )
        return
    lo, hi = INPUT_LIMITS["p50_mmhg"][:2]
    g_lo, g_hi = gap(lo), gap(hi)
    if g_lo < 0.0 or g_hi > 0.0:
        too = "high" if g_lo < 0.0 else "low"
        messages.append(
            f"Measured SaO2 {sao2:.3f} at PaO2 {shown:.0f} mmHg is impossible for any standard "
            f"P50 in {lo:g}-{hi:g} mmHg (SaO2 too {too} for that PaO2) — check the sample "
            "(air bubble, venous blood), the co-oximeter, and that both values come from the "
            "same syringe."
        )
        p50_std = lo if g_lo < 0.0 else hi
    else:
        p50_std = float(brentq(gap, lo, hi, xtol=1e-6))
        p_lo, p_hi = PLAUSIBLE_P50_MMHG
        if not p_lo <= p50_std <= p_hi:
            messages.append(
                f"Measured SaO2 {sao2:.3f} at PaO2 {shown:.0f} mmHg needs a standard P50 of "
                f"{p50_std:.1f} mmHg (the curve's own is {standard:.1f}); outside "
                f"{p_lo:g}-{p_hi:g} mmHg only rare haemoglobin variants do that — check the "
                "sample and the co-oximeter first."
            )
    inputs["p50_mmhg"] = p50_std
    fitted["p50_mmhg"] = p50_std
    fitted["p50_offset_mmhg"] = p50_std - standard


def _venous_checks(m: dict, messages: list[str]) -> bool:
    """Physiological order of arterial and venous values; False if the venous O2 is unusable."""
    ok = True
    if "svo2" in m and m["svo2"] >= m["sao2"]:
        messages.append(
            f"Venous SvO2 {m['svo2']:.3f} is not below arterial SaO2 {m['sao2']:.3f}: tissues "
            "cannot add O2 — the venous sample may be arterial, mislabelled or mixed with flush."
        )
        ok = False
    if "pvo2_mmhg" in m and m["pvo2_mmhg"] >= m["pao2_mmhg"]:
        messages.append(
            f"Venous PvO2 {m['pvo2_mmhg']:.0f} mmHg is not below arterial PaO2 "
            f"{m['pao2_mmhg']:.0f} mmHg — check which syringe is which."
        )
        ok = False
    if "pvco2_mmhg" in m and m["pvco2_mmhg"] < m["paco2_mmhg"]:
        messages.append(
            f"Venous PCO2 {m['pvco2_mmhg']:.0f} mmHg is below arterial PaCO2 "
            f"{m['paco2_mmhg']:.0f} mmHg: tissues add CO2, so venous PCO2 should be higher "
            "— check the samples."
        )
    return ok


def _content(inputs: dict, so2: float, po2: float) -> float:
    return float(
        oxygen_content(
            inputs["hb_g_dl"],
            so2,
            po2,
            cohb_fraction=inputs.get("cohb_fraction", 0.0),
            methb_fraction=inputs.get("methb_fraction", 0.0),
        )
    )


def _ideal_capillary_content(inputs: dict) -> float:
    """O2 content of blood equilibrated with alveolar gas (Berggren's ideal capillary)."""
    pb = inputs.get("barometric_pressure_mmhg")
    if pb is None:
        pb = float(barometric_pressure(inputs["altitude_m"], model=PRESSURE_MODEL_DEFAULT))
    pao2_alv = float(
        alveolar_po2(
            fio2=inputs["fio2"],
            pb_mmhg=pb,
            paco2_mmhg=inputs["paco2_mmhg"],
            temperature_c=inputs["temperature_c"],
        )
    )
    pao2_alv = max(pao2_alv, 1.0)
    sc = float(saturation(pao2_alv, **_arterial_conditions(inputs)))
    return _content(inputs, sc, pao2_alv)


def _start_values(mt: dict, inputs: dict) -> tuple[float, float]:
    """Shunt by Berggren 1942 and VO2 by Fick on the measured contents (starting values)."""
    cao2 = _content(inputs, mt["sao2"], mt["pao2_mmhg"])
    cond = _arterial_conditions(inputs)
    if "svo2" in mt:
        svo2 = mt["svo2"]
        pvo2 = mt.get("pvo2_mmhg", float(po2_from_saturation(svo2, **cond)))
    else:
        pvo2 = mt["pvo2_mmhg"]
        svo2 = float(saturation(pvo2, **cond))
    cvo2 = _content(inputs, svo2, pvo2)
    cco2 = _ideal_capillary_content(inputs)
    shunt = (cco2 - cao2) / (cco2 - cvo2) if cco2 > cvo2 else 0.1
    vo2 = 10.0 * inputs["cardiac_output_l_min"] * (cao2 - cvo2)
    return shunt, vo2


def _chain(inputs: dict, shunt: float, vo2: float | None = None) -> TransportResult | None:
    """The chain at one (shunt, VO2) in floats (its fast one-case path); None if refused.

    Refused means the shunted delivery cannot supply the VO2 at all (venous content
    below zero): past that shunt the measured PaO2 cannot be reached either.
    """
    kw = dict(inputs, shunt_fraction=float(shunt))
    if vo2 is not None:
        kw["vo2_ml_min"] = float(vo2)
    try:
        return solve_transport(**kw)
    except ValueError:
        return None


def _pao2_at(inputs: dict, shunt: float) -> float:
    """Model PaO2 at one shunt [mmHg]; 0 where the chain refuses the case."""
    r = _chain(inputs, shunt)
    return 0.0 if r is None else float(r.arterial.po2_mmhg)


def _fit_shunt(mt: dict, m37: dict, inputs: dict, messages: list[str]) -> float:
    """Shunt fraction reproducing the measured PaO2, VO2 held (Brent's method).

    PaO2 falls monotonically with shunt, so the root is bracketed by the ends of the range
    (the upper end lowered to where the venous content would reach zero).
    """
    # Imported here: scipy.optimize takes ~0.7 s to load and most callers never fit.
    from scipy.optimize import brentq

    lo, hi = INPUT_LIMITS["shunt_fraction"][:2]
    # Highest shunt at which the venous content stays positive: Qs < 1 - (VO2/10Q)/CcO2.
    d_av = inputs["vo2_ml_min"] / (10.0 * inputs["cardiac_output_l_min"])
    hi = min(hi, max(lo + 0.05, 0.99 * (1.0 - d_av / _ideal_capillary_content(inputs))))
    pao2 = mt["pao2_mmhg"]
    at_lo = _pao2_at(inputs, lo)
    if at_lo == 0.0:  # the chain refused even an unshunted lung
        raise ValueError(
            f"the case cannot be fitted: Hb {inputs['hb_g_dl']:g} g/dL at a cardiac output "
            f"of {inputs['cardiac_output_l_min']:g} L/min cannot deliver a VO2 of "
            f"{inputs['vo2_ml_min']:g} mL/min even with no shunt"
        )
    if at_lo < pao2:
        messages.append(_too_high_message(m37, inputs, at_lo, mt))
        return lo
    if _pao2_at(inputs, hi) > pao2:
        messages.append(
            f"Measured PaO2 {m37['pao2_mmhg']:.0f} mmHg would need a shunt above {hi:.2f} "
            "of the cardiac output at this FiO2, Hb and VO2 — check FiO2 and the sample."
        )
        return hi
    return float(brentq(lambda s: _pao2_at(inputs, s) - pao2, lo, hi, xtol=1e-7))


def _too_high_message(m37: dict, inputs: dict, pao2_no_shunt_t: float, mt: dict) -> str:
    shown = _to_37("pao2_mmhg", pao2_no_shunt_t, mt["temperature_c"])
    return (
        f"Measured PaO2 {m37['pao2_mmhg']:.0f} mmHg is above what the lungs can give at FiO2 "
        f"{inputs['fio2']:.2f}, PaCO2 {m37['paco2_mmhg']:.0f} mmHg and this pressure even with "
        f"no shunt ({shown:.0f} mmHg) — check the FiO2 entered, the barometric pressure, and "
        "the sample for an air bubble."
    )


def _fit_shunt_vo2(mt: dict, inputs: dict, start: tuple[float, float]) -> tuple[float, float]:
    """Bounded least squares in (shunt, VO2) on PaO2 and the venous values given.

    The Jacobian is a forward difference (0.001 in shunt, 1 mL/min in VO2) computed with
    the residuals and kept, so an iteration costs three one-case chain solves.
    """
    # Imported here: scipy.optimize takes ~0.7 s to load and most callers never fit.
    from scipy.optimize import least_squares

    s_lo, s_hi = INPUT_LIMITS["shunt_fraction"][:2]
    v_lo, v_hi = INPUT_LIMITS["vo2_ml_min"][:2]
    targets = [k for k in ("pao2_mmhg", "svo2", "pvo2_mmhg") if k in mt]
    meas = np.array([mt[k] for k in targets])
    weight = np.array([_WEIGHTS[k] for k in targets])
    cache: dict = {}

    def values(shunt, vo2):
        r = _chain(inputs, shunt, vo2)
        if r is None:  # VO2 beyond what the delivery can supply at this point
            return None
        model = {
            "pao2_mmhg": r.arterial.po2_mmhg,
            "svo2": r.venous.so2,
            "pvo2_mmhg": r.venous.po2_mmhg,
        }
        return np.array([float(model[k]) for k in targets])

    def evaluate(x):
        key = (float(x[0]), float(x[1]))
        if key not in cache:
            hs = -1e-3 if key[0] + 1e-3 > s_hi else 1e-3
            hv = -1.0 if key[1] + 1.0 > v_hi else 1.0
            v0 = values(*key)
            v1 = None if v0 is None else values(key[0] + hs, key[1])
            v2 = None if v1 is None else values(key[0], key[1] + hv)
            if v2 is None:
                cache[key] = (np.full(len(targets), 1e3), np.full((len(targets), 2), -1e3))
            else:
                jac = np.column_stack([(v1 - v0) / hs, (v2 - v0) / hv]) / weight[:, None]
                cache[key] = ((v0 - meas) / weight, jac)
        return cache[key]

    x0 = np.array([min(max(start[0], s_lo), s_hi - 1e-3), min(max(start[1], v_lo), v_hi)])
    sol = least_squares(
        lambda x: evaluate(x)[0],
        x0,
        jac=lambda x: evaluate(x)[1],
        bounds=([s_lo, v_lo], [s_hi, v_hi]),
        x_scale=np.array([0.01, 10.0]),
        xtol=1e-9,
        ftol=1e-9,
        gtol=1e-9,
        max_nfev=40,
    )
    return float(sol.x[0]), float(sol.x[1])


_RESIDUAL_ROWS = (
    ("pao2_mmhg", "PaO2", "arterial", "po2_mmhg", "mmHg"),
    ("sao2", "SaO2", "arterial", "so2", ""),
    ("svo2", "SvO2", "venous", "so2", ""),
    ("pvo2_mmhg", "PvO2", "venous", "po2_mmhg", "mmHg"),
    ("pvco2_mmhg", "PvCO2", "venous", "pco2_mmhg", "mmHg"),
)


def _residuals(m37: dict, result: TransportResult, fitted_keys: set[str]) -> list[Residual]:
    """Model against measured, both as a 37 degC analyser would report them."""
    t = m37["temperature_c"]
    out = []
    for key, label, side, attr, unit in _RESIDUAL_ROWS:
        if key not in m37:
            continue
        model_value = _to_37(key, float(getattr(getattr(result, side), attr)), t)
        diff = model_value - m37[key]
        tol = RESIDUAL_TOLERANCE.get(key)
        if key == "pao2_mmhg":
            tol = max(tol, 0.03 * m37[key])
        within = True if tol is None else abs(diff) <= tol
        out.append(
            Residual(key, label, m37[key], model_value, diff, unit, key in fitted_keys, within)
        )
    return out


def _residual_messages(residuals: list[Residual], fitted: dict, messages: list[str]) -> None:
    """Say plainly which fitted quantities the model still misses, unless already said."""
    misses = [r for r in residuals if r.fitted and not r.within_tolerance]
    if messages or not misses:
        return
    s_lo, s_hi = INPUT_LIMITS["shunt_fraction"][:2]
    v_lo, v_hi = INPUT_LIMITS["vo2_ml_min"][:2]
    where = []
    shunt = fitted.get("shunt_fraction", -1.0)
    if math.isclose(shunt, s_lo, abs_tol=1e-4):
        where.append("the shunt is at zero")
    elif math.isclose(shunt, s_hi, abs_tol=1e-4):
        where.append(f"the shunt is at its limit {s_hi:g}")
    vo2 = fitted.get("vo2_ml_min")
    if vo2 is not None and (
        math.isclose(vo2, v_lo, rel_tol=1e-3) or math.isclose(vo2, v_hi, rel_tol=1e-3)
    ):
        where.append("VO2 is at a limit of its range")
    listed = "; ".join(
        f"{r.quantity} measured {r.measured:.3g}, model {r.model:.3g}" for r in misses
    )
    reason = f" ({', '.join(where)})" if where else ""
    messages.append(
        f"No shunt and VO2 in range reproduce these measurements together{reason}: {listed}. "
        "The arterial and venous samples may not be from the same moment, the venous sample "
        "may not be mixed venous, or SvO2 and PvO2 disagree with each other."
    )


def fit_case(
    measured: Mapping, *, curve: str = "severinghaus", sao2_tolerance: float = SAO2_TOLERANCE
) -> FitResult:
    """Fit shunt, VO2 and a P50 offset so the chain reproduces a patient's measurements.

    Maps the measured values onto :func:`model.solve_transport` inputs (gas tensions and
    pH moved from the analyser's 37 degC to the patient's temperature, as the chain takes
    them), then fits, in this order: the standard-state P50 when co-oximetry SaO2
    disagrees with the curve at the measured PaO2 by more than ``sao2_tolerance``
    (Brent root of ``S(PaO2; P50std) = SaO2``); the shunt fraction to PaO2 (Brent root),
    or, when SvO2 and/or PvO2 are given, shunt and VO2 together
    (bounded least squares; residuals weighted by 2 mmHg for PaO2, 0.01 for SvO2, 1 mmHg
    for PvO2), started from the Berggren shunt and the Fick VO2 of the measured contents.

    Parameters
    ----------
    measured : Mapping
        Measured values by key, as validated by :func:`model.bedside.check_measured`
        (``None`` = not given). Used: ``pao2_mmhg``, ``paco2_mmhg``, ``ph`` (at 37 degC,
        as analysers report them), ``sao2``, ``hb_g_dl``, ``fio2``, ``temperature_c``
        (required); ``cohb_fraction``, ``methb_fraction``; ``barometric_pressure_mmhg``
        or ``altitude_m`` (sea level otherwise); ``pvo2_mmhg``, ``svo2``, ``pvco2_mmhg``;
        ``cardiac_output_l_min``, or ``cardiac_index_l_min_m2`` with ``height_cm`` and
        ``weight_kg``. ``lactate_mmol_l``, ``mean_airway_pressure_cmh2o`` and
        ``age_years`` are accepted and not used.
    curve : str
        Dissociation curve (one of ``model.CURVES``).
    sao2_tolerance : float
        SaO2 disagreement [-] up to which no P50 offset is fitted (default 0.01).

    Returns
    -------
    FitResult
        ``inputs`` ready for ``solve_transport`` and ``CaseState.apply_inputs``; residual
        rows as a 37 degC analyser would report them.

    Raises
    ------
    ValueError
        From ``check_measured`` (field, value, range, unit), a cardiac index without
        height and weight, an unknown curve, or an inspired PO2 that leaves no alveolar O2.

    Notes
    -----
    A fit is a statement about the model, not the patient: the fitted shunt lumps true
    shunt, low V/Q and diffusion limitation together (venous admixture), and a P50 offset
    lumps 2,3-DPG, haemoglobin variants and measurement error. PvCO2 is compared, not
    fitted. Without a measured cardiac output, 5 L/min is assumed and the fitted VO2
    scales with that assumption.

    Examples
    --------
    >>> fit = fit_case({"pao2_mmhg": 70.0, "paco2_mmhg": 40.0, "ph": 7.40, "sao2": 0.94,
    ...                 "hb_g_dl": 12.0, "fio2": 0.4, "temperature_c": 37.0})
    >>> 0.1 < fit.fitted["shunt_fraction"] < 0.4 and fit.consistent
    True
    >>> abs(float(fit.result.arterial.po2_mmhg) - 70.0) < 0.01
    True
    """
    canonical_curve(curve)
    if not 0.0 < sao2_tolerance < 0.2:
        raise ValueError(
            f"sao2_tolerance = {sao2_tolerance:g} is outside the allowed range 0-0.2 (fraction)"
        )
    m37 = _validate(measured)
    mt = _patient_frame(m37)
    messages: list[str] = []
    assumptions: list[str] = []
    fitted: dict = {}
    inputs = _base_inputs(mt, curve, assumptions, messages)
    inputs["vo2_ml_min"] = DEFAULT_VO2_ML_MIN
    _fit_p50(m37, mt, inputs, sao2_tolerance, fitted, messages, assumptions)

    venous = [k for k in ("svo2", "pvo2_mmhg") if k in mt]
    venous_ok = _venous_checks(m37, messages)
    fitted_keys = {"pao2_mmhg"} | ({"sao2"} if "p50_mmhg" in fitted else set())
    if venous and venous_ok:
        shunt, vo2 = _fit_shunt_vo2(mt, inputs, _start_values(mt, inputs))
        if shunt < 1e-4:
            no_shunt = solve_transport(**{**inputs, "shunt_fraction": 0.0, "vo2_ml_min": vo2})
            pao2_no_shunt = float(no_shunt.arterial.po2_mmhg)
            if mt["pao2_mmhg"] - pao2_no_shunt > RESIDUAL_TOLERANCE["pao2_mmhg"]:
                messages.append(_too_high_message(m37, inputs, pao2_no_shunt, mt))
        fitted_keys |= set(venous)
        inputs["vo2_ml_min"] = fitted["vo2_ml_min"] = vo2
        if "cardiac_output_l_min" not in mt and "cardiac_index_l_min_m2" not in mt:
            assumptions.append(
                "The fitted VO2 rests on the assumed cardiac output and scales with it."
            )
    else:
        assumptions.append(
            "VO2 not fitted: the venous values contradict the arterial ones; "
            if venous
            else "No venous SvO2 or PvO2: VO2 not fitted; "
        )
        assumptions[-1] += f"{DEFAULT_VO2_ML_MIN:g} mL/min assumed."
        shunt = _fit_shunt(mt, m37, inputs, messages)
    inputs["shunt_fraction"] = fitted["shunt_fraction"] = shunt
    try:
        result = solve_transport(**inputs)
    except ValueError as exc:
        raise ValueError(f"the case cannot be fitted: {exc}") from None
    residuals = _residuals(m37, result, fitted_keys)
    _residual_messages(residuals, fitted, messages)
    body = {k: m37[k] for k in ("height_cm", "weight_kg") if k in m37}
    return FitResult(
        inputs=inputs,
        fitted=fitted,
        residuals=residuals,
        consistent=not messages,
        messages=messages,
        assumptions=assumptions,
        result=result,
        body_size=body,
    )
