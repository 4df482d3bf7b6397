"""Stage 4, circulation and tissue: delivery, Fick, extraction."""

from __future__ import annotations

import numpy as np

VO2_Q10_PER_C = 1.10
"""Rise of resting VO2 per degC of body temperature [-] (common practice: the classic
figure of 10-13 % per degC is quoted from memory, after DuBois)."""


def oxygen_delivery(cardiac_output_l_min, cao2_ml_dl):
    """O2 delivery DO2 = 10 Q CaO2 [mL O2/min].

    Examples
    --------
    >>> float(oxygen_delivery(5.0, 20.0))
    1000.0
    """
    return (
        10.0 * np.asarray(cardiac_output_l_min, dtype=float) * np.asarray(cao2_ml_dl, dtype=float)
    )


def venous_content_fick(cao2_ml_dl, vo2_ml_min, cardiac_output_l_min):
    """Mixed venous O2 content by the Fick principle, CvO2 = CaO2 - VO2 / (10 Q) [mL O2/dL].

    References
    ----------
    1. Fick A. Über die Messung des Blutquantums in den Herzventrikeln. Sitzungsber
       Phys Med Ges Würzburg 1870; 16.

    Examples
    --------
    >>> round(float(venous_content_fick(19.98, 250.0, 5.0)), 2)
    14.98
    """
    return np.asarray(cao2_ml_dl, dtype=float) - np.asarray(vo2_ml_min, dtype=float) / (
        10.0 * np.asarray(cardiac_output_l_min, dtype=float)
    )


def extraction_ratio(cao2_ml_dl, cvo2_ml_dl):
    """O2 extraction ratio (CaO2 - CvO2) / CaO2 [-].

    Examples
    --------
    >>> round(float(extraction_ratio(19.98, 14.98)), 4)
    0.2503
    """
    ca = np.asarray(cao2_ml_dl, dtype=float)
    return (ca - np.asarray(cvo2_ml_dl, dtype=float)) / ca


def vo2_at_temperature(vo2_37_ml_min, temperature_c):
    """Resting VO2 scaled with body temperature, VO2_37 * 1.10^(T - 37) [mL O2/min].

    Common practice (see ``VO2_Q10_PER_C``); not a measurement.

    Examples
    --------
    >>> round(float(vo2_at_temperature(250.0, 39.0)), 1)
    302.5
    """
    return np.asarray(vo2_37_ml_min, dtype=float) * VO2_Q10_PER_C ** (
        np.asarray(temperature_c, dtype=float) - 37.0
    )


def body_surface_area(height_cm, weight_kg):
    """Body surface area, Mosteller NEJM 1987; 317:1098: sqrt(H W / 3600) [m2].

    Examples
    --------
    >>> round(float(body_surface_area(170.0, 70.0)), 4)
    1.8181
    """
    return np.sqrt(np.asarray(height_cm, dtype=float) * np.asarray(weight_kg, dtype=float) / 3600.0)
