"""Stage 2, lungs: alveolar gas, diffusion along the capillary, venous admixture."""

from __future__ import annotations

import numpy as np

from .air import inspired_po2
from .content import HUFNER_ML_G, O2_SOLUBILITY_ML_DL_MMHG
from .dissociation import prepare_curve


def alveolar_po2(*, fio2, pb_mmhg, paco2_mmhg, rq=0.8, temperature_c=37.0):
    """Alveolar PO2 by the alveolar gas equation, full form [mmHg].

    ``PAO2 = FiO2 (PB - PH2O) - PaCO2 (FiO2 + (1 - FiO2) / R)``

    Parameters
    ----------
    fio2 : array_like
        Inspired O2 fraction [-].
    pb_mmhg : array_like
        Barometric pressure [mmHg].
    paco2_mmhg : array_like
        Arterial (taken as alveolar) PCO2 [mmHg].
    rq : array_like
        Respiratory exchange ratio [-].
    temperature_c : array_like
        Body temperature, for the water vapour pressure [degC].

    Returns
    -------
    ndarray
        [mmHg]; may be negative for impossible inputs (the caller must check).

    References
    ----------
    1. Fenn WO, Rahn H, Otis AB. A theoretical study of the composition of the alveolar
       air at altitude. Am J Physiol 1946; 146:637-653.

    Examples
    --------
    >>> round(float(alveolar_po2(fio2=0.21, pb_mmhg=760.0, paco2_mmhg=40.0, temperature_c=37.0)), 1)
    101.8
    """
    fio2 = np.asarray(fio2, dtype=float)
    rq = np.asarray(rq, dtype=float)
    pio2 = inspired_po2(fio2, pb_mmhg, temperature_c)
    return pio2 - np.asarray(paco2_mmhg, dtype=float) * (fio2 + (1.0 - fio2) / rq)


def end_capillary_po2(
    alveolar_po2_mmhg,
    mixed_venous_po2_mmhg,
    hb_g_dl,
    *,
    diffusing_capacity_ml_min_mmhg=30.0,
    capillary_volume_ml=75.0,
    transit_time_s=0.75,
    hufner_ml_g=HUFNER_ML_G,
    o2_solubility_ml_dl_mmhg=O2_SOLUBILITY_ML_DL_MMHG,
    steps=24,
    **curve_conditions,
):
    """PO2 at the end of the lung capillary by Bohr integration [mmHg].

    ``dPc/dt = DLO2 (PA - Pc) / (beta(Pc) Vc)``, ``beta = (k Hb' dS/dP + alpha) / 100``
    [mL O2 per mL blood per mmHg], from the mixed venous PO2 at t = 0 to the transit time.

    Each step uses the exact solution with beta frozen at the step's midpoint
    (exponential integrator), which stays stable when beta is small at high PO2.

    Parameters
    ----------
    alveolar_po2_mmhg, mixed_venous_po2_mmhg : array_like
        [mmHg]
    hb_g_dl : array_like
        [g/dL]
    diffusing_capacity_ml_min_mmhg : array_like
        Lung O2 diffusing capacity DLO2 [mL O2/min/mmHg].
    capillary_volume_ml : array_like
        Pulmonary capillary blood volume Vc [mL].
    transit_time_s : array_like
        Capillary transit time [s].
    **curve_conditions
        Keywords of :func:`model.dissociation.saturation` (capillary = arterial conditions).

    Returns
    -------
    ndarray
        End-capillary PO2 [mmHg].

    References
    ----------
    1. Bohr C. Ueber die spezifische Tätigkeit der Lungen bei der respiratorischen
       Gasaufnahme. Skand Arch Physiol 1909; 22:221-280.
    2. Roughton FJW, Forster RE. J Appl Physiol 1957; 11:290-302 (DL and Vc).

    Examples
    --------
    >>> round(float(end_capillary_po2(35.0, 21.0, 15.0, transit_time_s=0.75)), 1)
    29.8
    """
    pa = np.asarray(alveolar_po2_mmhg, dtype=float)
    pv = np.asarray(mixed_venous_po2_mmhg, dtype=float)
    hb = np.asarray(hb_g_dl, dtype=float)
    carrying = (
        1.0
        - np.asarray(curve_conditions.get("cohb_fraction", 0.0))
        - np.asarray(curve_conditions.get("methb_fraction", 0.0))
    )
    k = (
        np.asarray(diffusing_capacity_ml_min_mmhg, dtype=float)
        / 60.0
        / np.asarray(capillary_volume_ml, dtype=float)
    )
    dt = np.asarray(transit_time_s, dtype=float) / steps
    curve = prepare_curve(**curve_conditions)
    return _end_capillary_po2(
        pa, pv, hb, carrying, k, dt, curve, hufner_ml_g, o2_solubility_ml_dl_mmhg, steps
    )


def _end_capillary_po2(pa, pv, hb, carrying, k, dt, curve, hufner, solubility, steps=24):
    """:func:`end_capillary_po2` on prepared values: ``k = DLO2 / 60 / Vc``, ``dt`` one step
    [s], ``carrying`` = 1 - FCOHb - FMetHb, ``curve`` a
    :class:`model.dissociation.PreparedCurve` (on arrays or on the floats of one case)."""
    m = curve.m
    p = m.minimum(pv, pa)
    kh = hufner * hb * carrying
    mkdt = -k * dt
    with m.errstate(divide="ignore", invalid="ignore", over="ignore"):
        b = (kh * curve._slope(p) + solubility) / 100.0
        for _ in range(steps):
            # predictor with the previous midpoint's beta, corrector at the new midpoint
            trial = pa - (pa - p) * m.exp(mkdt / b)
            b = (kh * curve._slope(0.5 * (p + trial)) + solubility) / 100.0
            p = pa - (pa - p) * m.exp(mkdt / b)
    return p


def mix_by_content(end_capillary_content_ml_dl, venous_content_ml_dl, shunt_fraction):
    """Arterial O2 content after venous admixture [mL O2/dL].

    ``CaO2 = (1 - Qs/Qt) CcO2 + Qs/Qt CvO2`` (Berggren's shunt equation rearranged).
    Blood mixes by content, never by pressure.

    Examples
    --------
    >>> round(float(mix_by_content(20.3, 15.3, 0.1)), 2)
    19.8
    """
    qs = np.asarray(shunt_fraction, dtype=float)
    return (1.0 - qs) * np.asarray(end_capillary_content_ml_dl, dtype=float) + qs * np.asarray(
        venous_content_ml_dl, dtype=float
    )


def aa_gradient(alveolar_po2_mmhg, arterial_po2_mmhg):
    """Alveolar-arterial PO2 difference [mmHg].

    Examples
    --------
    >>> round(float(aa_gradient(101.8, 90.0)), 1)
    11.8
    """
    return np.asarray(alveolar_po2_mmhg, dtype=float) - np.asarray(arterial_po2_mmhg, dtype=float)


def po2_from_content(
    content_ml_dl,
    hb_g_dl,
    *,
    hufner_ml_g=HUFNER_ML_G,
    o2_solubility_ml_dl_mmhg=O2_SOLUBILITY_ML_DL_MMHG,
    **curve_conditions,
):
    """PO2 at which blood of given Hb holds a given O2 content [mmHg].

    Solves ``k Hb' S(P) + alpha P = C`` by Newton's method safeguarded by bisection
    (the left side rises strictly with P).

    Examples
    --------
    >>> round(float(po2_from_content(19.998, 15.0)), 2)
    103.32
    """
    c = np.asarray(content_ml_dl, dtype=float)
    c, hb = np.broadcast_arrays(c, np.asarray(hb_g_dl, dtype=float))
    carrying = (
        hufner_ml_g
        * hb
        * (
            1.0
            - np.asarray(curve_conditions.get("cohb_fraction", 0.0))
            - np.asarray(curve_conditions.get("methb_fraction", 0.0))
        )
    )
    curve = prepare_curve(**curve_conditions)
    return _po2_from_content(c, carrying, o2_solubility_ml_dl_mmhg, curve)


def _po2_from_content(c, carrying, solubility, curve, p0=None):
    """:func:`po2_from_content` on prepared values; ``carrying`` = k Hb (1 - FCOHb - FMetHb)
    [mL O2/dL], ``curve`` a :class:`model.dissociation.PreparedCurve` (on arrays or on the
    floats of one case); ``p0`` an optional start near the answer (the chain's previous
    pass), which saves steps: Newton ends where the error left is below 1e-10 of PO2 either
    way."""
    m = curve.m
    lo = m.zeros_like(c)
    hi = m.maximum(c / solubility, 1e-9)
    if p0 is not None:
        p = m.where(m.isnan(p0), 0.5 * hi, m.minimum(m.maximum(p0, lo), hi))
    else:
        p = m.zeros_like(c)
        for _ in range(3):  # fixed-point start: contracts fast where the curve is steep
            s0 = m.clip((c - solubility * p) / m.maximum(carrying, 1e-9), 1e-6, 0.9995)
            p = m.clip(curve.inverse(s0), lo, hi)
    with m.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for _ in range(80):
            f = carrying * curve._saturation(p) + solubility * p - c
            hi = m.where(f > 0, p, hi)
            lo = m.where(f > 0, lo, p)
            df = carrying * curve._slope(p) + solubility
            new = p - f / df
            inside = (new >= lo) & (new <= hi)  # False for NaN too
            new = m.where(inside, new, 0.5 * (lo + hi))
            hit = abs(f) <= 1e-12 * m.maximum(c, 1e-3)
            done = hit | (inside & (abs(new - p) <= 1e-10 * m.maximum(p, 1.0)))
            p = m.where(hit, p, new)
            if m.all(done | m.isnan(c)):
                break
    return p
