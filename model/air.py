"""Stage 1, air: barometric pressure, water vapour and inspired PO2."""

from __future__ import annotations

import numpy as np

from .units import MMHG_PER_KPA

PRESSURE_MODELS = ("standard", "mountain")

PRESSURE_MODEL_DEFAULT = "mountain"
"""The pressure model the chain (:func:`model.solve_transport`) and the ascent schedules use
for a place given by its altitude: West's fit to pressures measured on high mountains, since
a case at altitude is a place on a mountain (at the 5400 m Everest base camp the ICAO
atmosphere gives 384.2 mmHg, West's fit 398.9, and 400.4 was measured: West et al., J Appl
Physiol 1983; 54:1188-1194). :func:`barometric_pressure` itself keeps the standard atmosphere as its default."""

PRESSURE_MODEL_NAMES = {
    "mountain": "West 1996 mountain model",
    "standard": "ICAO standard atmosphere",
    "given": "as entered",
}
"""How every screen, report and note names the source of PB (a result's ``pressure_model``:
one of :data:`PRESSURE_MODELS`, or ``"given"`` for a measured pressure)."""

_R0_M = 6356766.0  # Earth radius used by ICAO to convert geometric to geopotential height [m]


def barometric_pressure(altitude_m, *, model: str = "standard"):
    """Barometric pressure at an altitude [mmHg].

    ``"standard"``: ICAO standard atmosphere, troposphere,
    ``P = 101325 (1 - 0.0065 H / 288.15)^5.255876`` Pa with geopotential height
    ``H = r0 h / (r0 + h)``.  ``"mountain"``: West's fit to pressures measured on
    high mountains, ``PB = exp(6.63268 - 0.1112 h - 0.00149 h^2)`` with h in km.

    Parameters
    ----------
    altitude_m : array_like
        Geometric altitude above sea level [m].
    model : {"standard", "mountain"}

    Returns
    -------
    ndarray
        Barometric pressure [mmHg].

    Notes
    -----
    The standard atmosphere is valid to 11 km (troposphere). The mountain model
    reproduces measured Himalayan pressures within about 2 mmHg; it gives higher
    pressures than the standard atmosphere at altitude (latitude and season).

    References
    ----------
    1. ICAO. Manual of the ICAO Standard Atmosphere, Doc 7488/3, 1993.
    2. West JB. Prediction of barometric pressures at high altitudes with the use of
       model atmospheres. J Appl Physiol 1996; 81:1850-1854.

    Examples
    --------
    >>> round(float(barometric_pressure(0.0)), 2)
    760.0
    >>> round(float(barometric_pressure(5000.0, model="mountain")), 1)
    419.7
    """
    h = np.asarray(altitude_m, dtype=float)
    if model == "standard":
        geo = _R0_M * h / (_R0_M + h)
        kpa = 101.325 * (1.0 - 0.0065 * geo / 288.15) ** 5.255876
        return kpa * MMHG_PER_KPA
    if model == "mountain":
        km = h / 1000.0
        return np.exp(6.63268 - 0.1112 * km - 0.00149 * km**2)
    raise ValueError(f"pressure model {model!r} is unknown; choose one of {PRESSURE_MODELS}")


def water_vapour_pressure(temperature_c):
    """Saturated water vapour pressure at body temperature [mmHg].

    Buck's equation over water, ``e = 0.61121 exp(17.502 T / (240.97 + T))`` kPa.

    Parameters
    ----------
    temperature_c : array_like
        Temperature [degC].

    Returns
    -------
    ndarray
        Saturated vapour pressure [mmHg].

    Notes
    -----
    Within 0.1 % of IAPWS-IF97 over 30-42 degC (0.03 % at 37 degC).

    References
    ----------
    1. Buck AL. New equations for computing vapor pressure and enhancement factor.
       J Appl Meteorol 1981; 20:1527-1532.

    Examples
    --------
    >>> round(float(water_vapour_pressure(37.0)), 2)
    47.1
    """
    t = np.asarray(temperature_c, dtype=float)
    return 0.61121 * np.exp(17.502 * t / (240.97 + t)) * MMHG_PER_KPA


def inspired_po2(fio2, pb_mmhg, temperature_c=37.0):
    """Inspired PO2 of air warmed and saturated at body temperature [mmHg].

    ``PIO2 = FiO2 (PB - PH2O(T))``.

    Parameters
    ----------
    fio2 : array_like
        Inspired O2 fraction [-].
    pb_mmhg : array_like
        Barometric pressure [mmHg].
    temperature_c : array_like
        Body temperature [degC].

    Returns
    -------
    ndarray
        Inspired PO2 [mmHg].

    Examples
    --------
    >>> round(float(inspired_po2(0.21, 760.0)), 1)
    149.7
    """
    fio2 = np.asarray(fio2, dtype=float)
    return fio2 * (np.asarray(pb_mmhg, dtype=float) - water_vapour_pressure(temperature_c))
