"""Factors combined: the case inputs of several factors at once, and each one's share.

No Panel import. A stack is a mapping of factor key -> value (model units) of
:data:`.factors.FACTORS`; a factor at its reference value is not part of it.

How the shares of the P50 shift are apportioned: each factor's **share** is the P50 shift
it gives when moved *alone* from the reference case (one at a time, all else at rest), each
solved by :func:`model.solve_transport`; the **total** is the shift of the case with all of
them together. What is left, total minus the sum of the shares, is their **interaction**:
the shifts act on the PO2 scale (Kelman's virtual PO2 multiplies the PO2 by one factor per
cause), so shifts moved one at a time do not add up exactly.

One rule keeps the shares honest when pH and PCO2 are stacked: alone, PCO2 moves at the
resting base excess (so the pH follows it); with a pH of its own in the stack, PCO2 moves at
that pH, and its share is read at the reference pH, so the pH effect is counted once, in the
pH's share.
"""

from __future__ import annotations

import dataclasses

from ... import model
from .factors import FACTORS


@dataclasses.dataclass(frozen=True)
class Share:
    """One factor's P50 shift moved alone from the reference [mmHg]."""

    key: str
    label: str
    value: float
    p50_shift_mmhg: float


def active(values: dict[str, float]) -> dict[str, float]:
    """The factors of ``values`` that are away from their reference, in FACTORS order."""
    return {
        k: float(values[k])
        for k in FACTORS
        if k in values and abs(float(values[k]) - FACTORS[k].reference) > 1e-12
    }


def combined_inputs(values: dict[str, float], base_excess_mmol_l: float = 0.0) -> dict:
    """Case inputs (scenario key names) of every factor of ``values`` moved together.

    Examples
    --------
    >>> combined_inputs({"temperature_c": 39.5, "ph": 7.2})
    {'ph': 7.2, 'temperature_c': 39.5}
    >>> combined_inputs({"paco2_mmhg": 60.0, "ph": 7.2})
    {'ph': 7.2, 'paco2_mmhg': 60.0}
    """
    out: dict = {}
    with_ph = "ph" in active(values)
    for key, value in active(values).items():
        if key == "paco2_mmhg" and with_ph:
            out["paco2_mmhg"] = value  # at the stack's own pH, not at constant base excess
        else:
            out.update(FACTORS[key].inputs(value, base_excess_mmol_l))
    return out


def alone_inputs(key: str, values: dict[str, float], base_excess_mmol_l: float = 0.0) -> dict:
    """Inputs of factor ``key`` moved alone, as it acts inside the stack ``values``."""
    alone = {key: values[key]}
    if key == "paco2_mmhg" and "ph" in active(values):
        return {"paco2_mmhg": float(values[key]), "ph": FACTORS["ph"].reference}
    return combined_inputs(alone, base_excess_mmol_l)


def _p50(inputs: dict) -> float:
    return float(model.solve_transport(**inputs).arterial.p50_mmhg)


def p50_shares(
    values: dict[str, float], reference_p50_mmhg: float, base_excess_mmol_l: float = 0.0
) -> list[Share]:
    """Each factor's P50 shift moved alone from the reference [mmHg], in FACTORS order.

    Examples
    --------
    >>> ref = float(model.solve_transport().arterial.p50_mmhg)
    >>> [(s.key, round(s.p50_shift_mmhg, 1))
    ...  for s in p50_shares({"ph": 7.2, "temperature_c": 39.5}, ref)]
    [('ph', 5.4), ('temperature_c', 4.0)]
    """
    return [
        Share(
            key,
            FACTORS[key].label,
            value,
            _p50(alone_inputs(key, values, base_excess_mmol_l)) - reference_p50_mmhg,
        )
        for key, value in active(values).items()
    ]
