"""Bedside: the derived oxygenation picture from measured blood gases.

Starts from what an intensivist measures (an arterial gas with co-oximetry, often a
central or mixed venous gas, Hb, temperature, FiO2, ventilator and flow values) and
derives, each by a published method: PAO2 and the A-a gradient beside an age-expected
value, P/F with its barometric correction and ARDS category, the oxygenation index,
Berggren's shunt fraction, DO2/DO2I, VO2 by Fick, the extraction ratio, the venous-arterial
PCO2 gap, the in-situ and standard P50 by the single-point Hill method, and the gases
corrected to the patient's temperature (alpha-stat and pH-stat).

The 37 degC frame. Blood gas analysers measure PO2, PCO2 and pH at 37 degC. Everything
here is computed from those 37 degC values (the alveolar gas equation with the water
vapour pressure at 37 degC, the curve at 37 degC), which is self-consistent because an
anaerobic sample keeps its O2 saturation and contents when warmed. Only the
temperature-corrected block (``ph_stat_*``) moves values to the patient's temperature.

Saturations are fractions. ``sao2`` and ``svo2`` are the co-oximeter's functional
saturation O2Hb / (O2Hb + HHb); COHb and MetHb are fractions of total haemoglobin and
are taken as 0 when not given.

References
----------
1. ARDS Definition Task Force (Ranieri VM et al.). Acute respiratory distress syndrome:
   the Berlin definition. JAMA 2012; 307:2526-2533.
2. Matthay MA, Arabi Y, Arroliga AC, et al. A new global definition of acute respiratory
   distress syndrome. Am J Respir Crit Care Med 2024; 209:37-47.
3. Fenn WO, Rahn H, Otis AB. Am J Physiol 1946; 146:637-653 (alveolar gas equation).
4. Mellemgaard K. The alveolar-arterial oxygen difference: its size and components in
   normal man. Acta Physiol Scand 1966; 67:10-20 (formula read in secondary sources).
5. Berggren SM. The oxygen deficit of arterial blood caused by non-ventilating parts of
   the lung. Acta Physiol Scand 1942; 4 Suppl 11:1-92.
6. Fick A. Sitzungsber Phys Med Ges Würzburg 1870 (the Fick principle).
7. Doyle DJ. A simple method to calculate P50 from a single blood sample. 1997,
   doi:10.1007/BF03356585 (single-point P50 from the Hill equation; read in the abstract).
8. Lykkeboe G, Johansen K. Respir Physiol 1978; 35:119-127 (human Hill n = 2.7 over
   S 0.36-0.98).
9. Kelman GR. J Appl Physiol 1966; 21:1375-1376 (pH, PCO2 and temperature factors).
10. Severinghaus JW. Simple, accurate equations for human blood O2 dissociation
    computations. J Appl Physiol 1979; 46:599-602 (Eq 3, PO2 temperature coefficient).
11. Bradley AF, Severinghaus JW, Stupfel M. J Appl Physiol 1956; 9:201-204 (temperature
    coefficients of PCO2 and PO2 in vitro; 0.019 log10 per degC is used here for PCO2).
12. Rosenthal TB. The effect of temperature on the pH of blood and plasma in vitro.
    J Biol Chem 1948; 173:25-30 (-0.0147 pH per degC; coefficient from memory).
13. Swan H. Surg Gynecol Obstet 1982; 155:897-912 (blood cooled anaerobically: pH up,
    PCO2 down, CO2 content unchanged; the basis of alpha-stat and pH-stat management).
14. Mosteller RD. Simplified calculation of body-surface area. N Engl J Med 1987; 317:1098.
15. Ospina-Tascón GA et al. Crit Care 2013; 17:R294 (PCO2 gap >= 6 mmHg "high").
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, SupportsFloat, SupportsIndex

import numpy as np

from .air import PRESSURE_MODEL_DEFAULT, PRESSURE_MODEL_NAMES, barometric_pressure
from .circulation import body_surface_area, extraction_ratio, oxygen_delivery
from .content import oxygen_content
from .dissociation import HILL_N, p50, po2_from_saturation, saturation
from .limits import INPUT_LIMITS
from .lungs import aa_gradient, alveolar_po2

MEASURED_LIMITS: dict[str, tuple[float, float, str, str]] = {
    "pao2_mmhg": (10.0, 750.0, "mmHg", "PaO2"),
    "paco2_mmhg": INPUT_LIMITS["paco2_mmhg"],
    "ph": (6.6, 7.9, "", "Arterial pH"),
    "sao2": (0.05, 1.0, "", "SaO2"),
    "hb_g_dl": INPUT_LIMITS["hb_g_dl"],
    "cohb_fraction": INPUT_LIMITS["cohb_fraction"],
    "methb_fraction": INPUT_LIMITS["methb_fraction"],
    "lactate_mmol_l": (0.0, 30.0, "mmol/L", "Lactate"),
    "temperature_c": INPUT_LIMITS["temperature_c"],
    "fio2": INPUT_LIMITS["fio2"],
    "barometric_pressure_mmhg": INPUT_LIMITS["barometric_pressure_mmhg"],
    "altitude_m": INPUT_LIMITS["altitude_m"],
    "mean_airway_pressure_cmh2o": (1.0, 60.0, "cmH2O", "Mean airway pressure"),
    "pvo2_mmhg": (5.0, 200.0, "mmHg", "PvO2"),
    "svo2": (0.05, 1.0, "", "SvO2"),
    "pvco2_mmhg": (5.0, 200.0, "mmHg", "PvCO2"),
    "cardiac_output_l_min": INPUT_LIMITS["cardiac_output_l_min"],
    "cardiac_index_l_min_m2": (0.3, 20.0, "L/min/m2", "Cardiac index"),
    "height_cm": (40.0, 250.0, "cm", "Height"),
    "weight_kg": (2.0, 350.0, "kg", "Weight"),
    "age_years": (0.0, 120.0, "years", "Age"),
}
"""Measured key -> (lowest, highest, unit, label). Ranges are common practice: wide enough
for any patient, narrow enough to keep the published equations near their data. Keys the
chain also takes share its :data:`model.limits.INPUT_LIMITS` entry, so the two cannot drift."""

REQUIRED_MEASURED = ("pao2_mmhg", "paco2_mmhg", "ph", "sao2", "hb_g_dl", "fio2", "temperature_c")
"""Keys without which nothing is derived; every other key is optional."""

DEFAULT_PB_MMHG = 760.0
"""Barometric pressure assumed when neither pressure nor altitude is given [mmHg]."""

PB_CORRECTION_ALTITUDE_M = 1000.0
"""Altitude above which the Berlin definition asks for P/F x PB/760 [m] ([1], Table 3)."""

PF_CATEGORIES = ("none", "mild", "moderate", "severe")
"""Codes of ``pf_category_*`` and ``sf_category_global2024``; "" where not computable."""

PF_CATEGORY_LABELS: dict[str, dict[str, str]] = {
    "berlin2012": {
        "none": "P/F above 300: outside the Berlin oxygenation range",
        "mild": "mild (200 < P/F <= 300, with PEEP/CPAP >= 5 cmH2O)",
        "moderate": "moderate (100 < P/F <= 200, with PEEP >= 5 cmH2O)",
        "severe": "severe (P/F <= 100, with PEEP >= 5 cmH2O)",
        "": "not computable",
    },
    "global2024": {
        "none": "P/F above 300: outside the global-definition oxygenation range",
        "mild": "mild (200 < P/F <= 300; intubated)",
        "moderate": "moderate (100 < P/F <= 200; intubated)",
        "severe": "severe (P/F <= 100; intubated)",
        "": "not computable",
    },
    "global2024_sf": {
        "none": "S/F above 315: outside the global-definition range",
        "mild": "mild (235 < S/F <= 315; intubated)",
        "moderate": "moderate (148 < S/F <= 235; intubated)",
        "severe": "severe (S/F <= 148; intubated)",
        "": "not computable (S/F needs saturation <= 97 %)",
    },
}
"""Definition -> category code -> label. Oxygenation only: the definitions also need
timing, imaging, origin of the oedema and a level of ventilatory support, which the tool
does not know (it never knows PEEP)."""

AA_EXPECTED_MODELS = ("mellemgaard1966", "age4")
"""Age-expected A-a gradient breathing air: ``"mellemgaard1966"`` 2.5 + 0.21 age [4];
``"age4"`` age/4 + 4, a clinical rule of thumb (common practice, origin not traced)."""

SHUNT_BELOW_ZERO = (
    "shunt < 0: measured content above the end-capillary estimate: the samples disagree "
    "(SaO2 above the curve's end-capillary saturation: the patient's curve left of the "
    "standard one, or a measurement error)"
)
"""The reason and flag of a negative Berggren shunt (CaO2 above the estimated CcO2)."""

DERIVED_BOUNDS: dict[str, tuple[float, float, str]] = {
    "shunt_fraction": (0.0, 1.0, "a fraction of the cardiac output"),
    "extraction_ratio": (0.0, 1.0, "a fraction of the arterial content"),
    "sao2_from_curve": (0.0, 1.0, "a saturation"),
    "cao2_ml_dl": (0.0, 40.0, "O2 content at Hb 25 g/dL, fully saturated, is below 36"),
    "cco2_ml_dl": (0.0, 40.0, "O2 content at Hb 25 g/dL, fully saturated, is below 36"),
    "cvo2_ml_dl": (0.0, 40.0, "O2 content at Hb 25 g/dL, fully saturated, is below 36"),
    "do2_ml_min": (0.0, 20000.0, "40 L/min x 40 mL/dL is 16,000"),
    "vo2_ml_min": (0.0, 20000.0, "an uptake above the delivery"),
    "pao2_fio2_ratio": (0.0, 15000.0, "PaO2 750 / FiO2 0.05"),
    "alveolar_po2_mmhg": (0.0, 1100.0, "the barometric pressure"),
    "p50_insitu_mmhg": (5.0, 150.0, "an oxygen dissociation curve"),
    "p50_standard_mmhg": (5.0, 150.0, "an oxygen dissociation curve"),
}
"""Derived key -> (lowest, highest, what bounds it): physical bounds. A value outside them
gets a flag naming the value, the bound and why (the fuzz suite checks every output)."""

PLAUSIBLE_P50_MMHG = (10.0, 80.0)
"""In-situ P50 accepted from the single-point method [mmHg]; outside it the PaO2/SaO2 pair
cannot be one point of a human curve (common practice, no source: reported P50s in disease
and with HbF or CO lie well inside 12-50 mmHg)."""

SINGLE_POINT_SO2_RANGE = (0.20, 0.97)
"""Saturations over which the single-point Hill P50 is accepted [-]. The IFCC
guideline allowed 0.40-0.80 (later 0.90) and studies go down to 0.20 (Burnett, Clin Chem
2002; 48:567-570); above 0.97, a co-oximeter's +/-0.01 in SO2 moves P50 by over 15 %."""

USUAL_RANGES: dict[str, tuple[float | None, float | None, str, str]] = {
    "ph": (7.35, 7.45, "pH", "common practice"),
    "paco2_mmhg": (35.0, 45.0, "PaCO2 [mmHg]", "common practice"),
    "pao2_mmhg": (60.0, None, "PaO2 [mmHg]", "common practice (hypoxaemia below 60)"),
    "sao2": (0.90, None, "SaO2", "common practice"),
    "hb_g_dl": (7.0, 18.0, "Hb [g/dL]", "7: restrictive threshold, Hebert et al. NEJM 1999"),
    "cohb_fraction": (None, 0.03, "COHb", "common practice (non-smokers; smokers up to 0.10)"),
    "methb_fraction": (None, 0.02, "MetHb", "common practice"),
    "lactate_mmol_l": (None, 2.0, "lactate [mmol/L]", "Singer et al. JAMA 2016 (Sepsis-3)"),
    "temperature_c": (36.0, 38.0, "temperature [degC]", "common practice"),
    "oxygenation_index": (None, 16.0, "OI", "PALICC 2015 'severe' (children), from memory"),
    "shunt_fraction": (None, 0.10, "shunt fraction", "common practice (normal below 0.05)"),
    "svo2": (0.65, None, "SvO2", "common practice (ScvO2 target 0.70)"),
    "extraction_ratio": (0.20, 0.30, "O2 extraction ratio", "common practice"),
    "pco2_gap_mmhg": (None, 6.0, "PCO2 gap [mmHg]", "Ospina-Tascon et al. Crit Care 2013"),
    "do2i_ml_min_m2": (
        330.0,
        None,
        "DO2I [mL/min/m2]",
        "critical DO2I, Shibutani et al. Crit Care Med 1983",
    ),
    "cardiac_index_l_min_m2": (2.2, None, "cardiac index [L/min/m2]", "common practice"),
    "p50_standard_mmhg": (24.0, 30.0, "standard P50 [mmHg]", "common practice (26.8 normal)"),
}
"""Key -> (low, high, label, source) for the ``flags`` output; None = no bound that side."""

DERIVED_FIELDS: dict[str, tuple[str, str, int]] = {
    "barometric_pressure_used_mmhg": ("mmHg", "Barometric pressure used", 1),
    "alveolar_po2_mmhg": ("mmHg", "Alveolar PO2 (PAO2)", 1),
    "aa_gradient_mmhg": ("mmHg", "A-a gradient", 1),
    "aa_gradient_expected_mmhg": ("mmHg", "A-a gradient expected for age (air)", 1),
    "pao2_fio2_ratio": ("mmHg", "PaO2/FiO2", 0),
    "pao2_fio2_ratio_pb_corrected": ("mmHg", "PaO2/FiO2 x PB/760", 0),
    "pf_category_berlin": ("", "P/F category, Berlin 2012", 0),
    "pf_category_global2024": ("", "P/F category, global 2024", 0),
    "sao2_fio2_ratio": ("%", "SaO2/FiO2 (stand-in for SpO2/FiO2)", 0),
    "sf_category_global2024": ("", "S/F category, global 2024", 0),
    "oxygenation_index": ("", "Oxygenation index", 1),
    "sao2_from_curve": ("", "SaO2 the standard curve predicts at PaO2", 4),
    "cao2_ml_dl": ("mL/dL", "Arterial O2 content (CaO2)", 2),
    "cco2_ml_dl": ("mL/dL", "End-capillary O2 content (CcO2)", 2),
    "cvo2_ml_dl": ("mL/dL", "Venous O2 content (CvO2)", 2),
    "shunt_fraction": ("", "Shunt fraction (Berggren)", 3),
    "bsa_m2": ("m2", "Body surface area (Mosteller)", 2),
    "cardiac_output_used_l_min": ("L/min", "Cardiac output used", 2),
    "cardiac_index_used_l_min_m2": ("L/min/m2", "Cardiac index used", 2),
    "do2_ml_min": ("mL/min", "O2 delivery (DO2)", 0),
    "do2i_ml_min_m2": ("mL/min/m2", "O2 delivery index (DO2I)", 0),
    "vo2_ml_min": ("mL/min", "O2 consumption by Fick (VO2)", 0),
    "vo2i_ml_min_m2": ("mL/min/m2", "VO2 index", 0),
    "extraction_ratio": ("", "O2 extraction ratio", 3),
    "pco2_gap_mmhg": ("mmHg", "Venous-arterial PCO2 gap", 1),
    "p50_insitu_mmhg": ("mmHg", "In-situ P50 (single point, Hill)", 1),
    "p50_standard_mmhg": ("mmHg", "Standard P50 (pH 7.40, PCO2 40 mmHg, 37 degC)", 1),
    "alpha_stat_pao2_mmhg": ("mmHg", "PaO2, alpha-stat (as measured at 37 degC)", 1),
    "alpha_stat_paco2_mmhg": ("mmHg", "PaCO2, alpha-stat (as measured at 37 degC)", 1),
    "alpha_stat_ph": ("", "pH, alpha-stat (as measured at 37 degC)", 3),
    "ph_stat_pao2_mmhg": ("mmHg", "PaO2 at patient temperature (pH-stat)", 1),
    "ph_stat_paco2_mmhg": ("mmHg", "PaCO2 at patient temperature (pH-stat)", 1),
    "ph_stat_ph": ("", "pH at patient temperature (pH-stat)", 3),
}
"""Numeric and category outputs of :func:`derive`: key -> (unit, label, decimals shown).
The string outputs ``notes``, ``reasons``, ``p50_insitu_reason`` and ``flags`` come on top."""

TEMPERATURE_STRATEGIES = {
    "alpha_stat": (
        "Alpha-stat: the 37 degC values as measured, uncorrected. Targets (PaCO2 "
        "40, pH 7.40) refer to 37 degC; in hypothermia the patient's true PCO2 is "
        "lower and pH higher, keeping the ionisation of histidine imidazole "
        "constant."
    ),
    "ph_stat": (
        "pH-stat: the values corrected to the patient's temperature (PO2 by "
        "Severinghaus 1979 Eq 3, PCO2 by 10^(0.019 dT), pH by -0.0147 dT). Targets "
        "(PaCO2 40, pH 7.40) refer to the patient's temperature, so in hypothermia "
        "CO2 is added. The corrected PO2 is the patient's true PO2 either way."
    ),
}
"""What each temperature strategy means for the displayed PO2, PCO2 and pH."""

_PCO2_TEMP_LOG10_PER_C = 0.019
_DYSHAEMOGLOBIN_MESSAGE = (
    "cohb_fraction + methb_fraction must stay below 1 (COHb and MetHb fractions of total "
    "haemoglobin)"
)
_PH_TEMP_PER_C = -0.0147
_LN_0243_PER_100 = math.log(0.243 / 100.0)


def _out_of_range_message(name: str, value: float) -> str:
    lo, hi, unit, label = MEASURED_LIMITS[name]
    u = f" {unit}" if unit else ""
    return f"{name} = {value:g}{u} is outside the allowed range {lo:g}-{hi:g}{u} ({label})"


def _not_a_number(name: str, raw: object) -> ValueError:
    lo, hi, unit, label = MEASURED_LIMITS[name]
    u = f" {unit}" if unit else ""
    return ValueError(f"{name} = {raw!r} is not a number ({label}; allowed range {lo:g}-{hi:g}{u})")


_FLOAT_LIKE = (str, bytes, bytearray, SupportsFloat, SupportsIndex)
"""What ``float()`` may read."""


def _missing_message(name: str) -> str:
    lo, hi, unit, label = MEASURED_LIMITS[name]
    u = f" {unit}" if unit else ""
    return f"{name} is required ({label}; allowed range {lo:g}-{hi:g}{u})"


def check_measured(mapping: Mapping[str, object]) -> dict[str, float | None]:
    """Validate one set of measured values; return every measured key as float or None.

    Parameters
    ----------
    mapping : Mapping
        Measured key -> number (or numeric string); None or NaN means "not given".
        Keys are those of ``MEASURED_LIMITS``.

    Returns
    -------
    dict
        All keys of ``MEASURED_LIMITS``: a float, or None where not given.

    Raises
    ------
    ValueError
        Naming the field, the value, the allowed range and the unit: an unknown key, a
        missing required key, a value that is not a number or is out of range, or
        COHb + MetHb >= 1.

    Examples
    --------
    >>> m = check_measured({"pao2_mmhg": 80, "paco2_mmhg": 40, "ph": 7.4, "sao2": 0.95,
    ...                     "hb_g_dl": 12, "fio2": 0.4, "temperature_c": 37})
    >>> m["pao2_mmhg"], m["svo2"]
    (80.0, None)
    >>> check_measured({**m, "fio2": 1.5})
    Traceback (most recent call last):
    ...
    ValueError: fio2 = 1.5 is outside the allowed range 0.05-1 (FiO2)
    """
    unknown = sorted(set(mapping) - set(MEASURED_LIMITS))
    if unknown:
        raise ValueError(
            f"unknown measured field {unknown[0]!r}; known fields: " + ", ".join(MEASURED_LIMITS)
        )
    out: dict[str, float | None] = {}
    for name, (lo, hi, unit, label) in MEASURED_LIMITS.items():
        raw = mapping.get(name)
        if raw is None or (isinstance(raw, str) and not raw.strip()):
            value = None
        elif isinstance(raw, bool) or not isinstance(raw, _FLOAT_LIKE):
            raise _not_a_number(name, raw)
        else:
            try:
                value = float(raw)
            except (TypeError, ValueError):
                raise _not_a_number(name, raw) from None
            if math.isnan(value):
                value = None
        if value is None:
            if name in REQUIRED_MEASURED:
                raise ValueError(_missing_message(name))
        elif not lo <= value <= hi:
            raise ValueError(_out_of_range_message(name, value))
        out[name] = value
    if (out["cohb_fraction"] or 0.0) + (out["methb_fraction"] or 0.0) >= 1.0:
        raise ValueError(_DYSHAEMOGLOBIN_MESSAGE)
    return out


def temperature_corrected_po2(po2_37_mmhg, temperature_c, *, steps: int = 8):
    """PO2 of an anaerobic sample moved from 37 degC to the patient's temperature [mmHg].

    Severinghaus 1979 Eq 3, ``dlnPO2/dT = 0.058 / ((0.243 PO2/100)^3.88 + 1) + 0.013``,
    integrated from 37 degC to T by fourth-order Runge-Kutta (the coefficient falls as PO2
    rises, so a fixed coefficient overstates the change at high PO2).

    Parameters
    ----------
    po2_37_mmhg : array_like
        PO2 measured at 37 degC [mmHg].
    temperature_c : array_like
        Patient temperature [degC].

    Returns
    -------
    ndarray
        PO2 at the patient's temperature [mmHg].

    References
    ----------
    1. Severinghaus JW. J Appl Physiol 1979; 46:599-602, Eq 3.

    Examples
    --------
    >>> round(float(temperature_corrected_po2(95.0, 32.0)), 2)
    66.65
    """
    lnp = np.log(np.asarray(po2_37_mmhg, dtype=float))
    h = (np.asarray(temperature_c, dtype=float) - 37.0) / steps

    def rate(lp):
        # (0.243 PO2/100)^3.88 written as one exponential of ln PO2
        return 0.058 / (np.exp(3.88 * (lp + _LN_0243_PER_100)) + 1.0) + 0.013

    for _ in range(steps):
        k1 = rate(lnp)
        k2 = rate(lnp + 0.5 * h * k1)
        k3 = rate(lnp + 0.5 * h * k2)
        k4 = rate(lnp + h * k3)
        lnp = lnp + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
    return np.exp(lnp)


def temperature_corrected_pco2(pco2_37_mmhg, temperature_c):
    """PCO2 of an anaerobic sample at the patient's temperature [mmHg].

    ``PCO2_T = PCO2_37 10^(0.019 (T - 37))`` (Bradley, Severinghaus & Stupfel 1956 computed
    0.0185 per degC; 0.019 is the in-vitro coefficient in use).

    Examples
    --------
    >>> round(float(temperature_corrected_pco2(40.0, 32.0)), 2)
    32.14
    """
    return np.asarray(pco2_37_mmhg, dtype=float) * 10.0 ** (
        _PCO2_TEMP_LOG10_PER_C * (np.asarray(temperature_c, dtype=float) - 37.0)
    )


def temperature_corrected_ph(ph_37, temperature_c):
    """pH of an anaerobic sample at the patient's temperature [-].

    ``pH_T = pH_37 - 0.0147 (T - 37)`` (Rosenthal 1948; coefficient from memory).

    Examples
    --------
    >>> round(float(temperature_corrected_ph(7.40, 32.0)), 4)
    7.4735
    """
    return np.asarray(ph_37, dtype=float) + _PH_TEMP_PER_C * (
        np.asarray(temperature_c, dtype=float) - 37.0
    )


def single_point_p50(po2_mmhg, so2, *, hill_n: float = HILL_N):
    """P50 from one measured PO2/SO2 pair by the Hill equation [mmHg].

    ``P50 = PO2 ((1 - S) / S)^(1/n)``, n = 2.7 (Lykkeboe & Johansen 1978). No range check
    here: :func:`derive` refuses saturations outside ``SINGLE_POINT_SO2_RANGE``.

    References
    ----------
    1. Doyle DJ. A simple method to calculate P50 from a single blood sample. 1997,
       doi:10.1007/BF03356585.

    Examples
    --------
    >>> round(float(single_point_p50(40.0, 0.75)), 3)
    26.629
    """
    s = np.asarray(so2, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(po2_mmhg, dtype=float) * ((1.0 - s) / s) ** (1.0 / hill_n)


def expected_aa_gradient(age_years, *, model: str = "mellemgaard1966"):
    """A-a gradient expected for age in healthy people breathing air [mmHg].

    ``"mellemgaard1966"``: ``2.5 + 0.21 age`` (Mellemgaard 1966, Acta Physiol Scand
    67:10-20); ``"age4"``: ``age/4 + 4`` (clinical rule of thumb, common practice).

    Notes
    -----
    Both describe room air. Breathing more oxygen widens the normal gradient, so at high
    FiO2 the expected value is a floor, not a norm.

    Examples
    --------
    >>> float(expected_aa_gradient(40.0)), float(expected_aa_gradient(40.0, model="age4"))
    (10.9, 14.0)
    """
    age = np.asarray(age_years, dtype=float)
    if model == "mellemgaard1966":
        return 2.5 + 0.21 * age
    if model == "age4":
        return age / 4.0 + 4.0
    raise ValueError(f"A-a model {model!r} is unknown; choose one of {AA_EXPECTED_MODELS}")


_CATEGORY_TEXT = ("",) + PF_CATEGORIES


def _category(ratio, cuts) -> _Text:
    """Code by (mild, moderate, severe) upper bounds: ratio <= cut falls into the class."""
    mild, moderate, severe = cuts
    code = np.zeros(ratio.shape, dtype=np.int64)
    code[ratio > mild] = 1
    code[(ratio > moderate) & (ratio <= mild)] = 2
    code[(ratio > severe) & (ratio <= moderate)] = 3
    code[ratio <= severe] = 4
    return _Text(code, _CATEGORY_TEXT)


@dataclass(frozen=True)
class _Text:
    """A text output as codes into a tuple of its distinct strings (``strings[0] == ""``)."""

    codes: np.ndarray
    strings: tuple[str, ...]

    def blanked(self, keep) -> _Text:
        return _Text(np.where(keep, self.codes, 0), self.strings)

    def objects(self) -> np.ndarray:
        table = np.empty(len(self.strings), dtype=object)
        table[:] = self.strings
        return table[self.codes]


class Derived(dict):
    """What :func:`derive` returns: a dict of arrays, plus ``text``, the same text outputs
    as codes (flat int arrays) into tuples of their distinct strings, for writers that
    turn a few distinct strings into millions of cells (the batch)."""

    text: dict[str, tuple[np.ndarray, tuple[str, ...]]]


_JOINED: dict[tuple[str, ...], dict[int, str]] = {}
_JOINED_SIZE = [0]


def _joined(messages: tuple[str, ...], combos: list[int]) -> tuple[str, ...]:
    """For each combination, the messages whose bits are set in it, joined by "; "
    (remembered per tuple of messages, up to about 200,000 strings in all)."""
    if _JOINED_SIZE[0] > 200_000:
        _JOINED.clear()
        _JOINED_SIZE[0] = 0
    known = _JOINED.setdefault(messages, {})
    texts: list[str] = []
    for c in combos:
        text = known.get(c)
        if text is None:
            high = c.bit_length() - 1  # the last message; the others are mostly known
            rest = c ^ (1 << high) if c else 0
            if not rest:
                text = messages[high] if c else ""
            else:
                head = known.get(rest)
                if head is None:
                    head = "; ".join(m for b, m in enumerate(messages) if rest >> b & 1)
                text = f"{head}; {messages[high]}"
            known[c] = text
            _JOINED_SIZE[0] += 1
        texts.append(text)
    return tuple(texts)


class _Messages:
    """Per-element messages, joined by "; " in the order added.

    Stored as one bit per message, so building the strings costs one pass over the
    distinct combinations rather than one string operation per element and message.
    """

    def __init__(self, n: int):
        self.bits = np.zeros(n, dtype=np.int64)
        self.messages: list[str] = []

    def add(self, mask, message: str) -> None:
        mask = np.asarray(mask, dtype=bool)
        if mask.any():
            if message not in self.messages:
                if len(self.messages) == 63:
                    raise RuntimeError("more than 63 distinct messages")
                self.messages.append(message)
            self.bits |= mask.astype(np.int64) << self.messages.index(message)

    def mask(self) -> np.ndarray:
        return self.bits != 0

    def text(self, keep=True) -> _Text:
        """The joined messages per element ("" where ``keep`` is False), as codes."""
        bits = np.where(keep, self.bits, 0).ravel()
        if len(self.messages) <= 12:  # a lookup table (4096 entries at most) instead of a sort
            present = np.zeros(1 << len(self.messages), dtype=bool)
            present[bits] = True
            present[0] = True
            combos = np.flatnonzero(present)
            index = np.cumsum(present) - 1
            inverse = index[bits]
        else:
            combos, inverse = np.unique(np.append(bits, 0), return_inverse=True)
            inverse = inverse.ravel()[:-1]
        key = tuple(self.messages)
        strings = _joined(key, combos.tolist())
        return _Text(inverse, strings)


def _given(x):
    return np.isfinite(x)


@dataclass
class _Work:
    """One :func:`derive` call in progress: the measured values as flat arrays (NaN where
    not given), the messages gathered so far and the outputs made so far."""

    m: dict[str, np.ndarray]
    cohb: np.ndarray
    """COHb fraction, 0 where not given [-]."""
    methb: np.ndarray
    """MetHb fraction, 0 where not given [-]."""
    notes: _Messages
    reasons: _Messages
    out: dict[str, Any] = field(default_factory=dict)
    """Outputs made so far: float arrays, and :class:`_Text` for the categories."""


def _measured(given: dict) -> tuple[_Work, tuple[int, ...]]:
    """The measured values broadcast and flattened, checked against ``MEASURED_LIMITS``
    (ValueError naming field, value, range and unit); and the broadcast shape."""
    arrays = {k: np.asarray(np.nan if v is None else v, dtype=float) for k, v in given.items()}
    shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    m = {k: np.broadcast_to(a, shape).ravel() for k, a in arrays.items()}
    for name, v in m.items():
        lo, hi, _, _ = MEASURED_LIMITS[name]
        bad = (v < lo) | (v > hi)
        if bad.any():
            raise ValueError(_out_of_range_message(name, float(v[bad][0])))
    cohb = np.where(_given(m["cohb_fraction"]), m["cohb_fraction"], 0.0)
    methb = np.where(_given(m["methb_fraction"]), m["methb_fraction"], 0.0)
    if np.any(cohb + methb >= 1.0):
        raise ValueError(_DYSHAEMOGLOBIN_MESSAGE)
    n = cohb.size
    return _Work(m, cohb, methb, _Messages(n), _Messages(n)), shape


def _barometric_pressure(w: _Work) -> None:
    """PB: measured, else the default pressure model at the altitude (West 1996's mountain
    model, as in :func:`model.transport.solve_transport`), else 760 (noted)."""
    m = w.m
    pb_given, alt_given = _given(m["barometric_pressure_mmhg"]), _given(m["altitude_m"])
    pb_alt = barometric_pressure(
        np.where(alt_given, m["altitude_m"], 0.0), model=PRESSURE_MODEL_DEFAULT
    )
    pb = np.where(
        pb_given, m["barometric_pressure_mmhg"], np.where(alt_given, pb_alt, DEFAULT_PB_MMHG)
    )
    w.notes.add(
        ~pb_given & ~alt_given,
        f"barometric pressure not given: {DEFAULT_PB_MMHG:g} mmHg assumed",
    )
    w.notes.add(
        ~pb_given & alt_given,
        f"barometric pressure from altitude ({PRESSURE_MODEL_NAMES[PRESSURE_MODEL_DEFAULT]})",
    )
    w.out["barometric_pressure_used_mmhg"] = pb


def _alveolar_gas(w: _Work, rq: float, aa_expected_model: str) -> None:
    """PAO2 by the alveolar gas equation at 37 degC (NaN where <= 0, with the reason), the
    A-a gradient and its age-expected value."""
    m, out = w.m, w.out
    pa_o2 = alveolar_po2(
        fio2=m["fio2"],
        pb_mmhg=out["barometric_pressure_used_mmhg"],
        paco2_mmhg=m["paco2_mmhg"],
        rq=rq,
        temperature_c=37.0,
    )
    pa_bad = pa_o2 <= 0
    w.reasons.add(pa_bad, "PAO2 <= 0: FiO2 and PB cannot hold this PaCO2")
    pa_o2 = np.where(pa_bad, np.nan, pa_o2)
    out["alveolar_po2_mmhg"] = pa_o2
    out["aa_gradient_mmhg"] = aa_gradient(pa_o2, m["pao2_mmhg"])
    out["aa_gradient_expected_mmhg"] = expected_aa_gradient(m["age_years"], model=aa_expected_model)


def _oxygenation_ratios(w: _Work) -> None:
    """P/F (plain and x PB/760), S/F, their ARDS categories and the oxygenation index."""
    m, out = w.m, w.out
    pao2, sa, fio2 = m["pao2_mmhg"], m["sao2"], m["fio2"]
    pb = out["barometric_pressure_used_mmhg"]
    pf = pao2 / fio2
    pf_corr = pf * pb / 760.0
    use_corr = pb < float(
        barometric_pressure(PB_CORRECTION_ALTITUDE_M, model=PRESSURE_MODEL_DEFAULT)
    )
    pf_cat_input = np.where(use_corr, pf_corr, pf)
    w.notes.add(
        use_corr & np.isfinite(pf),
        "P/F category from P/F x PB/760 (above 1000 m: Berlin definition)",
    )
    out["pao2_fio2_ratio"] = pf
    out["pao2_fio2_ratio_pb_corrected"] = pf_corr
    out["pf_category_berlin"] = _category(pf_cat_input, (300.0, 200.0, 100.0))
    out["pf_category_global2024"] = _category(pf_cat_input, (300.0, 200.0, 100.0))
    sf = np.where(sa <= 0.97, 100.0 * sa / fio2, np.nan)
    out["sao2_fio2_ratio"] = sf
    out["sf_category_global2024"] = _category(sf, (315.0, 235.0, 148.0))
    out["oxygenation_index"] = fio2 * m["mean_airway_pressure_cmh2o"] * 100.0 / pao2


def _venous_point(w: _Work, venous_kw: dict) -> tuple[np.ndarray, np.ndarray]:
    """SvO2 and PvO2, the missing one of the two from the standard curve (noted)."""
    m = w.m
    sv_given, pv_given = _given(m["svo2"]), _given(m["pvo2_mmhg"])
    sv, pv = m["svo2"], m["pvo2_mmhg"]
    if np.any(sv_given & ~pv_given):
        pv = np.where(
            pv_given,
            pv,
            po2_from_saturation(np.where(sv_given, np.minimum(sv, 0.999), np.nan), **venous_kw),
        )
        w.notes.add(
            sv_given & ~pv_given,
            "PvO2 not given: taken from SvO2 by the standard curve (dissolved O2 only)",
        )
    if np.any(pv_given & ~sv_given):
        sv = np.where(sv_given, sv, saturation(np.where(pv_given, pv, np.nan), **venous_kw))
        w.notes.add(
            pv_given & ~sv_given,
            "SvO2 not given: taken from PvO2 by the standard curve at the arterial pH",
        )
    return sv, pv


def _contents_and_shunt(w: _Work, capillary_saturation: str) -> np.ndarray:
    """CaO2, CcO2, CvO2 and Berggren's shunt fraction (NaN with the reason where the venous
    sample cannot be right). Returns where the venous content is not below the arterial."""
    m, out = w.m, w.out
    pao2, paco2, sa, hb = m["pao2_mmhg"], m["paco2_mmhg"], m["sao2"], m["hb_g_dl"]
    dyshb = {"cohb_fraction": w.cohb, "methb_fraction": w.methb}
    curve_kw = {"ph": m["ph"], "pco2_mmhg": paco2, "temperature_c": 37.0, **dyshb}
    pa_o2 = out["alveolar_po2_mmhg"]
    out["sao2_from_curve"] = saturation(pao2, **curve_kw)
    cao2 = oxygen_content(hb, sa, pao2, **dyshb)
    full = np.ones(pao2.size)
    sc = saturation(pa_o2, **curve_kw) if capillary_saturation == "curve" else full
    cco2 = oxygen_content(hb, sc, pa_o2, **dyshb)
    pvco2 = np.where(_given(m["pvco2_mmhg"]), m["pvco2_mmhg"], paco2)
    sv, pv = _venous_point(w, {**curve_kw, "pco2_mmhg": pvco2})
    cvo2 = oxygen_content(hb, sv, pv, **dyshb)
    out["cao2_ml_dl"], out["cco2_ml_dl"], out["cvo2_ml_dl"] = cao2, cco2, cvo2
    with np.errstate(divide="ignore", invalid="ignore"):
        shunt = (cco2 - cao2) / (cco2 - cvo2)
    venous_high = np.isfinite(cvo2) & (cvo2 >= cao2)
    w.reasons.add(
        venous_high,
        "CvO2 >= CaO2: the venous sample holds as much O2 as the arterial one (sample "
        "mix-up or arterialised venous sample?); shunt, VO2 and extraction not computed",
    )
    no_gap = np.isfinite(cvo2) & np.isfinite(cco2) & (cco2 <= cvo2) & ~venous_high
    w.reasons.add(no_gap, "shunt: CcO2 <= CvO2 (the venous sample cannot be right)")
    shunt = np.where(no_gap | venous_high, np.nan, shunt)
    w.reasons.add(np.isfinite(shunt) & (shunt < 0), SHUNT_BELOW_ZERO)
    out["shunt_fraction"] = shunt
    return venous_high


def _flow_and_uptake(w: _Work, venous_high: np.ndarray) -> None:
    """Cardiac output (measured, else index x BSA), DO2, DO2I, Fick VO2, O2ER, PCO2 gap."""
    m, out = w.m, w.out
    bsa = body_surface_area(m["height_cm"], m["weight_kg"])
    co_given, ci_given = _given(m["cardiac_output_l_min"]), _given(m["cardiac_index_l_min_m2"])
    co = np.where(co_given, m["cardiac_output_l_min"], m["cardiac_index_l_min_m2"] * bsa)
    w.notes.add(
        ~co_given & ci_given & np.isfinite(bsa),
        "cardiac output from cardiac index x BSA (Mosteller)",
    )
    w.notes.add(
        ~co_given & ci_given & ~np.isfinite(bsa),
        "cardiac index without height and weight: DO2I only, no DO2",
    )
    ci = np.where(ci_given & ~(co_given & np.isfinite(bsa)), m["cardiac_index_l_min_m2"], co / bsa)
    w.notes.add(
        co_given & ci_given,
        "cardiac output and cardiac index both given: cardiac output used",
    )
    cao2, cvo2 = out["cao2_ml_dl"], out["cvo2_ml_dl"]
    out["bsa_m2"], out["cardiac_output_used_l_min"] = bsa, co
    out["cardiac_index_used_l_min_m2"] = ci
    out["do2_ml_min"] = oxygen_delivery(co, cao2)
    out["do2i_ml_min_m2"] = oxygen_delivery(ci, cao2)
    av_diff = np.where(venous_high, np.nan, cao2 - cvo2)
    out["vo2_ml_min"] = 10.0 * co * av_diff
    out["vo2i_ml_min_m2"] = 10.0 * ci * av_diff
    out["extraction_ratio"] = extraction_ratio(cao2, cao2 - av_diff)
    out["pco2_gap_mmhg"] = m["pvco2_mmhg"] - m["paco2_mmhg"]


def _p50(w: _Work, hill_n: float) -> _Messages:
    """In-situ P50 by the single-point Hill method and the standard P50; returns why each
    element was refused (outside ``SINGLE_POINT_SO2_RANGE``, or COHb above 0.10)."""
    m, out = w.m, w.out
    pao2, sa = m["pao2_mmhg"], m["sao2"]
    lo_s, hi_s = SINGLE_POINT_SO2_RANGE
    p50_reason = _Messages(pao2.size)
    p50_reason.add(
        sa > hi_s,
        f"SaO2 above {hi_s:g}: the single-point method is unreliable near full saturation",
    )
    p50_reason.add(
        sa < lo_s,
        f"SaO2 below {lo_s:g}: outside the single-point method's validated range",
    )
    p50_reason.add(w.cohb > 0.10, "COHb above 0.10: the curve is no longer Hill-shaped")
    raw = single_point_p50(pao2, sa, hill_n=hill_n)
    lo_p, hi_p = PLAUSIBLE_P50_MMHG
    with np.errstate(invalid="ignore"):
        implausible = ~p50_reason.mask() & np.isfinite(raw) & ((raw < lo_p) | (raw > hi_p))
    p50_reason.add(
        implausible,
        f"in-situ P50 outside the plausible {lo_p:g}-{hi_p:g} mmHg: PaO2 and SaO2 disagree "
        "(not one point of a human curve: a venous sample, a pulse-oximeter SaO2, or a "
        "transcription error?)",
    )
    refused = p50_reason.mask()
    p50_insitu = np.where(refused, np.nan, raw)
    factor = p50(ph=m["ph"], pco2_mmhg=m["paco2_mmhg"], temperature_c=37.0) / p50()
    out["p50_insitu_mmhg"] = p50_insitu
    out["p50_standard_mmhg"] = p50_insitu / factor
    w.reasons.add(refused & np.isfinite(pao2), "P50 refused (see p50_insitu_reason)")
    return p50_reason


def _temperature_frames(w: _Work) -> None:
    """The gases as measured at 37 degC (alpha-stat) and at the patient's (pH-stat)."""
    m, out = w.m, w.out
    t = m["temperature_c"]
    out["alpha_stat_pao2_mmhg"] = m["pao2_mmhg"].copy()
    out["alpha_stat_paco2_mmhg"] = m["paco2_mmhg"].copy()
    out["alpha_stat_ph"] = m["ph"].copy()
    out["ph_stat_pao2_mmhg"] = temperature_corrected_po2(m["pao2_mmhg"], t)
    out["ph_stat_paco2_mmhg"] = temperature_corrected_pco2(m["paco2_mmhg"], t)
    out["ph_stat_ph"] = temperature_corrected_ph(m["ph"], t)


def _flags(w: _Work) -> _Messages:
    """Values outside ``USUAL_RANGES``, P/F in the ARDS range, and A-a gradient checks."""
    m, out = w.m, w.out
    flags = _Messages(m["pao2_mmhg"].size)
    for key, (low, high, label, _source) in USUAL_RANGES.items():
        v = (
            out["cardiac_index_used_l_min_m2"]
            if key == "cardiac_index_l_min_m2"
            else (m[key] if key in m else out[key])
        )
        if low is not None:
            flags.add(v < low, f"{label} below {low:g}")
        if high is not None:
            flags.add(v > high, f"{label} above {high:g}")
    flags.add(
        out["pf_category_berlin"].codes >= 2,  # mild, moderate or severe
        "P/F in the ARDS oxygenation range (<= 300 by Berlin 2012)",
    )
    flags.add(
        out["aa_gradient_mmhg"] < 0,
        "A-a gradient negative: PaO2 above the alveolar PO2 (check FiO2 and barometric "
        "pressure; an air bubble in the sample raises PaO2 toward room air)",
    )
    flags.add(
        out["aa_gradient_mmhg"] > out["aa_gradient_expected_mmhg"],
        "A-a gradient above the age-expected value (room-air norm)",
    )
    flags.add(out["shunt_fraction"] < 0, SHUNT_BELOW_ZERO)
    for key, (low, high, why) in DERIVED_BOUNDS.items():
        v = out[key]
        with np.errstate(invalid="ignore"):
            below = (v < low) if key != "shunt_fraction" else np.zeros(v.shape, dtype=bool)
            flags.add(
                below | (v > high),
                f"{key} outside its physical bounds {low:g}-{high:g} ({why}): not a valid "
                "value; check the inputs",
            )
    return flags


def _finish(w: _Work, shape, p50_reason: _Messages, flags: _Messages) -> Derived:
    """Outputs in the input shape, blank (NaN or "") wherever a required input is missing."""
    complete = np.all([np.isfinite(w.m[k]) for k in REQUIRED_MEASURED], axis=0)
    every = bool(complete.all())
    result = Derived()
    result.text = {}
    texts: dict[str, _Text] = {}
    for k, v in w.out.items():
        if isinstance(v, _Text):
            texts[k] = v if every else v.blanked(complete)
        else:
            result[k] = np.reshape(v if every else np.where(complete, v, np.nan), shape)
    texts["notes"] = w.notes.text(complete)
    texts["reasons"] = w.reasons.text(complete)
    texts["p50_insitu_reason"] = p50_reason.text(complete)
    texts["flags"] = flags.text(complete)
    for k, t in texts.items():
        result[k] = t.objects().reshape(shape)
        result.text[k] = (t.codes, t.strings)
    return result


def derive(
    *,
    pao2_mmhg,
    paco2_mmhg,
    ph,
    sao2,
    hb_g_dl,
    fio2,
    temperature_c,
    cohb_fraction=None,
    methb_fraction=None,
    lactate_mmol_l=None,
    barometric_pressure_mmhg=None,
    altitude_m=None,
    mean_airway_pressure_cmh2o=None,
    pvo2_mmhg=None,
    svo2=None,
    pvco2_mmhg=None,
    cardiac_output_l_min=None,
    cardiac_index_l_min_m2=None,
    height_cm=None,
    weight_kg=None,
    age_years=None,
    rq: float = 0.8,
    hill_n: float = HILL_N,
    aa_expected_model: str = "mellemgaard1966",
    capillary_saturation: str = "curve",
) -> Derived:
    """The derived oxygenation picture of measured blood gases, vectorised.

    Every argument broadcasts; optional ones are None or NaN where not given, and every
    output that needs them is then NaN. Values are validated against ``MEASURED_LIMITS``
    (NaN passes as "not given"; a NaN in a required input gives NaN outputs and empty
    messages).

    Equations (all in the 37 degC frame of the analyser, see the module docstring):

    * PB: measured, else ICAO standard atmosphere at ``altitude_m``, else 760 (noted).
    * ``PAO2 = FiO2 (PB - PH2O(37)) - PaCO2 (FiO2 + (1 - FiO2)/R)`` (Fenn, Rahn & Otis);
      ``A-a = PAO2 - PaO2`` beside :func:`expected_aa_gradient`.
    * ``P/F = PaO2 / FiO2``; ``P/F x PB/760`` (Berlin definition's altitude correction).
      Categories use the corrected ratio when PB is below the standard pressure at 1000 m
      (the Berlin rule), else the plain ratio. Berlin 2012 and global 2024 share the P/F
      cut-offs for intubated patients (mild 200 < P/F <= 300, moderate 100-200, severe
      <= 100); the global definition also accepts SpO2/FiO2 (mild 235-315, moderate
      148-235, severe <= 148, only when SpO2 <= 97 %), drops the PEEP requirement outside
      intubation (HFNO >= 30 L/min or NIV/CPAP >= 5 qualifies, without severity). The
      Berlin altitude rule is applied to the global category too (whether the global
      definition restates it was not confirmed). Here S/F is formed from the co-oximetry
      SaO2 as a stand-in for SpO2 (``sao2_fio2_ratio``, in %); the two differ, most in
      dark skin and at low saturation.
    * ``OI = FiO2 MAP 100 / PaO2`` (MAP in cmH2O).
    * ``CaO2 = 1.34 Hb (1 - COHb - MetHb) SaO2 + 0.003 PaO2``; CcO2 the same at PAO2 with
      the saturation of the standard curve at PAO2 (``capillary_saturation="curve"``,
      Severinghaus 1979 with Kelman's factors at the arterial pH, PaCO2, COHb and MetHb)
      or 1 (``"full"``); CvO2 from SvO2 and PvO2. If only one of SvO2/PvO2 is given, the
      other comes from the curve at the arterial pH and the venous (else arterial) PCO2.
    * Berggren: ``Qs/Qt = (CcO2 - CaO2) / (CcO2 - CvO2)``.
    * Cardiac output: measured, else cardiac index x BSA (Mosteller). ``DO2 = 10 CO CaO2``,
      ``DO2I = DO2 / BSA`` (or ``10 CI CaO2``); Fick ``VO2 = 10 CO (CaO2 - CvO2)``;
      ``O2ER = (CaO2 - CvO2) / CaO2``; ``PCO2 gap = PvCO2 - PaCO2``.
    * In-situ P50 by :func:`single_point_p50` on (PaO2, SaO2), refused (NaN, with the
      reason in ``p50_insitu_reason``) outside ``SINGLE_POINT_SO2_RANGE`` or with COHb
      above 0.10 (the COHb left shift is not a Hill curve). The standard P50 removes the
      pH and PCO2 effects with Kelman's factors as the model's curve uses them,
      ``P50std = P50 10^(0.40 (pH - 7.40) + 0.06 log10(40 / PCO2))`` (37 degC frame, so no
      temperature term); the DPG, COHb and MetHb effects stay in it.
    * Temperature block: ``alpha_stat_*`` are the 37 degC values; ``ph_stat_*`` are
      corrected to the patient's temperature (:func:`temperature_corrected_po2`,
      :func:`temperature_corrected_pco2`, :func:`temperature_corrected_ph`). See
      ``TEMPERATURE_STRATEGIES``.

    Parameters
    ----------
    pao2_mmhg, paco2_mmhg, ph, sao2, hb_g_dl, fio2, temperature_c : array_like
        Required measurements; units in the names, saturations and FiO2 as fractions.
    cohb_fraction ... age_years : array_like or None
        Optional measurements, keys and units as in ``MEASURED_LIMITS``.
    rq : float
        Respiratory exchange ratio for the alveolar gas equation [-].
    hill_n : float
        Hill coefficient of the single-point P50 [-].
    aa_expected_model : str
        One of ``AA_EXPECTED_MODELS``.
    capillary_saturation : {"curve", "full"}
        End-capillary saturation for CcO2.

    Returns
    -------
    dict of ndarray
        The keys of ``DERIVED_FIELDS`` (float arrays; the category keys are object arrays
        of codes in ``PF_CATEGORIES`` or ""), plus object arrays of str: ``notes``
        (assumptions made), ``reasons`` (why an output is NaN although its inputs were
        given), ``p50_insitu_reason`` and ``flags`` (values outside ``USUAL_RANGES``).
        Multiple entries in one string are joined by "; ".

    Examples
    --------
    >>> d = derive(pao2_mmhg=60.0, paco2_mmhg=40.0, ph=7.40, sao2=0.90, hb_g_dl=15.0,
    ...            fio2=0.5, temperature_c=37.0)
    >>> float(d["pao2_fio2_ratio"]), str(d["pf_category_berlin"])
    (120.0, 'moderate')
    >>> round(float(d["aa_gradient_mmhg"]), 1)
    251.4
    >>> str(d["notes"])
    'barometric pressure not given: 760 mmHg assumed'
    """
    arguments = dict(locals())
    if capillary_saturation not in ("curve", "full"):
        raise ValueError(
            f"capillary_saturation {capillary_saturation!r} is unknown; choose 'curve' or 'full'"
        )
    expected_aa_gradient(0.0, model=aa_expected_model)  # rejects an unknown model early
    w, shape = _measured({k: v for k, v in arguments.items() if k in MEASURED_LIMITS})
    _barometric_pressure(w)
    _alveolar_gas(w, rq, aa_expected_model)
    _oxygenation_ratios(w)
    venous_high = _contents_and_shunt(w, capillary_saturation)
    _flow_and_uptake(w, venous_high)
    p50_reason = _p50(w, hill_n)
    _temperature_frames(w)
    flags = _flags(w)
    return _finish(w, shape, p50_reason, flags)
