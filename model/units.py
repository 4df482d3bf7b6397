"""Unit conversions: the only place where values cross into kPa, g/L or mmol/L.

Inside ``model/`` pressures are mmHg, haemoglobin g/dL and contents mL O2/dL.
"""

from __future__ import annotations

import numpy as np

MMHG_PER_KPA = 760.0 / 101.325
"""mmHg in one kPa [mmHg/kPa]; clinical mmHg taken equal to the torr (101325/760 Pa)."""

HB_MMOL_L_PER_G_DL = 0.62056
"""Haemoglobin monomer mmol/L per g/dL [-]: 10 / 16.1145 (tetramer 64 458 g/mol)."""


def mmhg_to_kpa(p_mmhg):
    """Pressure [mmHg] -> [kPa].

    >>> round(float(mmhg_to_kpa(760.0)), 3)
    101.325
    """
    return np.asarray(p_mmhg, dtype=float) / MMHG_PER_KPA


def kpa_to_mmhg(p_kpa):
    """Pressure [kPa] -> [mmHg].

    >>> round(float(kpa_to_mmhg(13.3)), 2)
    99.76
    """
    return np.asarray(p_kpa, dtype=float) * MMHG_PER_KPA


def hb_g_dl_to_g_l(hb_g_dl):
    """Haemoglobin [g/dL] -> [g/L].

    >>> float(hb_g_dl_to_g_l(15.0))
    150.0
    """
    return np.asarray(hb_g_dl, dtype=float) * 10.0


def hb_g_l_to_g_dl(hb_g_l):
    """Haemoglobin [g/L] -> [g/dL].

    >>> float(hb_g_l_to_g_dl(150.0))
    15.0
    """
    return np.asarray(hb_g_l, dtype=float) / 10.0


def hb_g_dl_to_mmol_l(hb_g_dl):
    """Haemoglobin [g/dL] -> monomer [mmol/L].

    >>> round(float(hb_g_dl_to_mmol_l(15.0)), 3)
    9.308
    """
    return np.asarray(hb_g_dl, dtype=float) * HB_MMOL_L_PER_G_DL


def hb_mmol_l_to_g_dl(hb_mmol_l):
    """Haemoglobin monomer [mmol/L] -> [g/dL].

    >>> round(float(hb_mmol_l_to_g_dl(9.308)), 2)
    15.0
    """
    return np.asarray(hb_mmol_l, dtype=float) / HB_MMOL_L_PER_G_DL
