"""Allowed ranges of every input of the transport chain (validation and screen bounds)."""

from __future__ import annotations

import numpy as np

from .air import PRESSURE_MODELS
from .dissociation import CURVES

INPUT_LIMITS: dict[str, tuple[float, float, str, str]] = {
    "altitude_m": (-500.0, 9000.0, "m", "Altitude"),
    "barometric_pressure_mmhg": (150.0, 1100.0, "mmHg", "Barometric pressure"),
    "fio2": (0.05, 1.0, "", "FiO2"),
    "paco2_mmhg": (5.0, 150.0, "mmHg", "PaCO2"),
    "rq": (0.6, 1.3, "", "Respiratory quotient"),
    "shunt_fraction": (0.0, 0.8, "", "Shunt fraction"),
    "diffusing_capacity_ml_min_mmhg": (1.0, 150.0, "mL/min/mmHg", "O2 diffusing capacity"),
    "capillary_volume_ml": (10.0, 300.0, "mL", "Capillary blood volume"),
    "hb_g_dl": (2.0, 25.0, "g/dL", "Haemoglobin"),
    "temperature_c": (25.0, 43.0, "degC", "Temperature"),
    "ph": (6.6, 7.9, "", "pH"),
    "base_excess_mmol_l": (-35.0, 35.0, "mmol/L", "Base excess"),
    "dpg_mmol_l": (0.0, 15.0, "mmol/L", "2,3-DPG"),
    "cohb_fraction": (0.0, 0.7, "", "COHb fraction"),
    "methb_fraction": (0.0, 0.7, "", "MetHb fraction"),
    "p50_mmhg": (8.0, 60.0, "mmHg", "Standard P50 override"),
    "cardiac_output_l_min": (0.5, 40.0, "L/min", "Cardiac output"),
    "vo2_ml_min": (50.0, 6000.0, "mL/min", "VO2"),
}
"""name -> (lowest, highest, unit, label). Ranges are common practice: wide enough for
any patient or climber, narrow enough to keep every published equation near its data."""

MAX_COHB_PLUS_METHB = 0.9
"""cohb_fraction + methb_fraction must stay below this in the chain [-] (a bound of the model;
common practice, no source)."""

INPUT_CHOICES: dict[str, tuple] = {
    "pressure_model": PRESSURE_MODELS,
    "curve": CURVES,
    "vo2_temperature_scaling": (False, True),
}
"""name -> allowed values, for the inputs of the chain that are not numbers."""


def check_range(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array, or raise ValueError naming field, range and unit.

    Examples
    --------
    >>> check_range("fio2", 1.5)
    Traceback (most recent call last):
    ...
    ValueError: fio2 = 1.5 is outside the allowed range 0.05-1 (FiO2)
    """
    lo, hi, unit, label = INPUT_LIMITS[name]
    arr = np.asarray(value, dtype=float)
    bad = (arr < lo) | (arr > hi)
    if np.any(bad):
        v = arr[bad].ravel()[0]
        unit_txt = f" {unit}" if unit else ""
        raise ValueError(
            f"{name} = {v:g} is outside the allowed range {lo:g}-{hi:g}{unit_txt} ({label})"
        )
    return arr
