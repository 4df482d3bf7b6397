"""Stage 3b, blood: oxygen content."""

from __future__ import annotations

import numpy as np

HUFNER_ML_G = 1.34
"""O2 bound per gram of haemoglobin [mL O2/g] (the common clinical value; the theoretical
maximum is 1.39, Dijkhuizen et al. 1977 measured 1.368 on average)."""

O2_SOLUBILITY_ML_DL_MMHG = 0.003
"""O2 dissolved in blood [mL O2/dL/mmHg] (common practice; 0.0031 also appears)."""


def oxygen_content(
    hb_g_dl,
    so2,
    po2_mmhg,
    *,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    hufner_ml_g=HUFNER_ML_G,
    o2_solubility_ml_dl_mmhg=O2_SOLUBILITY_ML_DL_MMHG,
):
    """Blood O2 content, bound plus dissolved [mL O2/dL].

    ``C = k Hb (1 - FCOHb - FMetHb) SO2 + alpha PO2``

    Parameters
    ----------
    hb_g_dl : array_like
        Total haemoglobin [g/dL].
    so2 : array_like
        Functional saturation O2Hb / (O2Hb + HHb) [-].
    po2_mmhg : array_like
        O2 tension [mmHg].
    cohb_fraction, methb_fraction : array_like
        Fractions of total haemoglobin that cannot carry O2 [-].
    hufner_ml_g : float
        Hüfner factor [mL O2/g].
    o2_solubility_ml_dl_mmhg : float
        Solubility of O2 in blood [mL O2/dL/mmHg].

    Returns
    -------
    ndarray
        O2 content [mL O2/dL].

    References
    ----------
    1. Dijkhuizen P, Buursma A, Fongers TME, Gerding AM, Oeseburg B, Zijlstra WG. The
       oxygen binding capacity of human haemoglobin. Pflugers Arch 1977; 369:223-231.

    Examples
    --------
    >>> round(float(oxygen_content(15.0, 0.98, 100.0)), 3)
    19.998
    """
    hb, s, p, cohb, methb = (
        np.asarray(v, dtype=float) for v in (hb_g_dl, so2, po2_mmhg, cohb_fraction, methb_fraction)
    )
    return _oxygen_content(hb, s, p, cohb, methb, hufner_ml_g, o2_solubility_ml_dl_mmhg)


def _oxygen_content(hb, so2, po2, cohb, methb, hufner, solubility):
    # plain arithmetic: the same code serves arrays and the floats of one case
    return hufner * hb * (1.0 - cohb - methb) * so2 + solubility * po2
