"""Stage 3c, blood: CO2 content and acid-base (Douglas 1988, Kelman 1967, Zander).

References
----------
1. Douglas AR, Jones NL, Reed JW. Calculation of whole blood CO2 content.
   J Appl Physiol 1988; 65:473-477.
2. Kelman GR. Digital computer procedure for the conversion of PCO2 into blood CO2
   content. Respir Physiol 1967; 3:111-115.
3. Lang W, Zander R. Prediction of dilutional acidosis based on the revised classical
   dilution concept for bicarbonate. / Zander R. Die korrekte Bestimmung des Base
   Excess (BE, mmol/l) im Blut. Anasthesiol Intensivmed Notfallmed Schmerzther 1995;
   30 Suppl 1:S36-S38; compared in Lang W, Zander R. Clin Chem Lab Med 2002; 40:404-410.
"""

from __future__ import annotations

import math

import numpy as np

_LN10 = math.log(10.0)


def co2_pk(ph, temperature_c=37.0):
    """Apparent pK' of carbonic acid in plasma (Kelman 1967) [-].

    ``pK' = 6.086 + 0.042 (7.4 - pH) + (38 - T)(0.00472 + 0.00139 (7.4 - pH))``

    Notes
    -----
    Temperature terms valid about 35-41 degC.

    Examples
    --------
    >>> round(float(co2_pk(7.40, 37.0)), 5)
    6.09072
    """
    return _co2_pk(np.asarray(ph, dtype=float), np.asarray(temperature_c, dtype=float))


def _co2_pk(ph, t):
    return 6.086 + 0.042 * (7.4 - ph) + (38.0 - t) * (0.00472 + 0.00139 * (7.4 - ph))


def co2_solubility(temperature_c=37.0):
    """Plasma CO2 solubility (Kelman 1967) [mmol/L/mmHg].

    ``s = 0.0307 + 0.00057 (37 - T) + 0.00002 (37 - T)^2``

    Examples
    --------
    >>> round(float(co2_solubility(40.0)), 5)
    0.02917
    """
    return _co2_solubility(np.asarray(temperature_c, dtype=float))


def _co2_solubility(t):
    d = 37.0 - t
    return 0.0307 + 0.00057 * d + 0.00002 * d**2


def blood_co2_content(pco2_mmhg, ph, so2, hb_g_dl, temperature_c=37.0):
    """Whole-blood CO2 content (Douglas, Jones & Reed 1988) [mL CO2/dL].

    Plasma ``Cp = 2.226 s PCO2 (1 + 10^(pH - pK'))``; blood
    ``Cb = Cp (1 - 0.0289 Hb / ((3.352 - 0.456 SO2)(8.142 - pH)))``.
    The SO2 term is the red-cell part of the Haldane effect.

    Parameters
    ----------
    pco2_mmhg : array_like
        [mmHg]
    ph : array_like
        Plasma pH [-]; the fit spans 7.31-7.51, the formula has a pole at 8.142.
    so2 : array_like
        Saturation [-].
    hb_g_dl : array_like
        [g/dL]
    temperature_c : array_like
        [degC]

    Returns
    -------
    ndarray
        [mL CO2/dL]

    Examples
    --------
    >>> round(float(blood_co2_content(40.0, 7.40, 0.97, 15.0)), 2)
    46.72
    """
    return _blood_co2_content(
        *(np.asarray(v, dtype=float) for v in (pco2_mmhg, ph, so2, hb_g_dl, temperature_c))
    )


def _blood_co2_content(pco2, ph, so2, hb, t):
    # plain arithmetic: the same code serves arrays and the floats of one case
    cp = 2.226 * _co2_solubility(t) * pco2 * (1.0 + 10.0 ** (ph - _co2_pk(ph, t)))
    return cp * (1.0 - 0.0289 * hb / ((3.352 - 0.456 * so2) * (8.142 - ph)))


def bicarbonate(ph, pco2_mmhg):
    """Plasma bicarbonate by Henderson-Hasselbalch, pK 6.1, s 0.0304 (Zander) [mmol/L].

    Examples
    --------
    >>> round(float(bicarbonate(7.40, 40.0)), 2)
    24.26
    """
    return _bicarbonate(np.asarray(ph, dtype=float), np.asarray(pco2_mmhg, dtype=float))


def _bicarbonate(ph, pco2):
    return 0.0304 * pco2 * 10.0 ** (ph - 6.1)


def base_excess(ph, pco2_mmhg, hb_g_dl, so2=1.0):
    """Actual base excess, Van Slyke equation in Zander's form [mmol/L].

    ``BE = (1 - 0.0143 Hb)((HCO3 - 24.26) + (1.63 Hb + 9.5)(pH - 7.4)) - 0.2 Hb (1 - SO2)``

    The last term refers BE to full oxygenation, so it stays constant across a capillary
    while deoxygenated haemoglobin takes up H+ (the pH part of the Haldane effect).

    Examples
    --------
    >>> round(float(base_excess(7.40, 40.0, 15.0)), 3)
    0.002
    """
    return _base_excess(*(np.asarray(v, dtype=float) for v in (ph, pco2_mmhg, hb_g_dl, so2)))


def _base_excess(ph, pco2, hb, so2):
    van_slyke = (1.0 - 0.0143 * hb) * (
        (_bicarbonate(ph, pco2) - 24.26) + (1.63 * hb + 9.5) * (ph - 7.4)
    )
    return van_slyke - 0.2 * hb * (1.0 - so2)


def ph_from_base_excess(base_excess_mmol_l, pco2_mmhg, hb_g_dl, so2=1.0):
    """pH on the buffer line of a given base excess and PCO2 [-].

    Inverse of :func:`base_excess` in pH by Newton's method (BE rises strictly with pH).

    Examples
    --------
    >>> round(float(ph_from_base_excess(-10.0, 40.0, 15.0)), 4)
    7.2424
    """
    be, pco2, hb, s = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (base_excess_mmol_l, pco2_mmhg, hb_g_dl, so2))
    )
    return _ph_from_base_excess(be, pco2, hb, s, np.full(be.shape, 7.4))


def _ph_from_base_excess(be, pco2, hb, s, ph, m=np):
    """Newton from the start ``ph``; ``m`` numpy for arrays or :mod:`model.floats` for one
    case of floats. Steps end below 1e-12, where the error left is far below rounding, so a
    start near the answer saves steps without changing it."""
    z = 1.0 - 0.0143 * hb
    w = 1.63 * hb + 9.5
    for _ in range(40):
        f = _base_excess(ph, pco2, hb, s) - be
        step = m.minimum(m.maximum(f / (z * (_LN10 * _bicarbonate(ph, pco2) + w)), -0.5), 0.5)
        ph = ph - step
        if not m.any(abs(step) > 1e-12):
            break
    return ph
