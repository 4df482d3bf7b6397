"""Reading an ascent result for a planner: one day as a case, chosen saturation thresholds,
and the rows of a comparison table.

Pure functions over :class:`model.ascent.AscentResult`; no I/O, no Panel or param.
"""

from __future__ import annotations

import numpy as np

from .ascent import AscentResult

CASE_KEYS = (
    "altitude_m",
    "pressure_model",
    "fio2",
    "paco2_mmhg",
    "ph",
    "hb_g_dl",
    "dpg_mmol_l",
    "cardiac_output_l_min",
    "vo2_ml_min",
)
"""Scenario-file key names of a night's solve, in the order written into a case link."""


def night_case_inputs(result: AscentResult, day: int) -> dict:
    """The inputs of night ``day`` (1-based) under the scenario files' key names.

    :func:`model.solve_transport` with these keywords (and its defaults for the rest:
    shunt, diffusing capacity, curve, temperature) gives that night's chain again: the
    sleeping altitude and pressure model, FiO2, and the acclimatization state of that
    night (PaCO2 [mmHg], pH [-], Hb [g/dL], 2,3-DPG [mmol/L], cardiac output [L/min]),
    with VO2 [mL/min] at the baseline value.

    Raises
    ------
    ValueError
        When ``day`` is not a day of the schedule.

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
    >>> r = run_ascent(AscentProfile("x", (AscentDay(0.0), AscentDay(3000.0))))
    >>> case = night_case_inputs(r, 2)
    >>> case["altitude_m"], case["pressure_model"], case["paco2_mmhg"] < 40.0
    (3000.0, 'mountain', True)
    """
    n = int(result.sleep_altitude_m.size)
    if not 1 <= int(day) <= n:
        raise ValueError(f"day = {day} is outside the allowed range 1-{n} (days of the schedule)")
    i = int(day) - 1
    night = result.night
    return {
        "altitude_m": float(result.sleep_altitude_m[i]),
        "pressure_model": result.profile.baseline.pressure_model,
        "fio2": float(result.fio2[i]),
        "paco2_mmhg": float(night.arterial.pco2_mmhg[i]),
        "ph": float(night.arterial.ph[i]),
        "hb_g_dl": float(night.hb_g_dl[i]),
        "dpg_mmol_l": float(result.dpg_mmol_l[i]),
        "cardiac_output_l_min": float(night.cardiac_output_l_min[i]),
        "vo2_ml_min": float(np.broadcast_to(night.vo2_ml_min, result.fio2.shape)[i]),
    }


def nights_below(result: AscentResult, threshold: float) -> int:
    """Number of nights whose SaO2 is below ``threshold`` [-] (a fraction, e.g. 0.85).

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
    >>> r = run_ascent(AscentProfile("x", (AscentDay(0.0), AscentDay(5000.0))))
    >>> nights_below(r, 0.90), nights_below(r, 0.50)
    (1, 0)
    """
    return int(np.sum(np.asarray(result.night.arterial.so2) < threshold))


def hypoxic_burden(result: AscentResult, threshold: float = 0.90) -> float:
    """Sum over nights of ``max(0, threshold - SaO2)`` times one day [saturation-days].

    The definition of the model's summary (``hypoxic_burden_saturation_days``, threshold
    0.90) with the threshold left to the reader: two nights at 0.85 give 0.10 below 0.90.

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
    >>> r = run_ascent(AscentProfile("x", (AscentDay(0.0),) * 2))
    >>> hypoxic_burden(r, 0.90)
    0.0
    """
    sao2 = np.asarray(result.night.arterial.so2, dtype=float)
    return float(np.sum(np.maximum(0.0, threshold - sao2)))


def flagged_days(result: AscentResult) -> list[int]:
    """The 1-based days with at least one guidance flag.

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
    >>> flagged_days(run_ascent(AscentProfile("x", (AscentDay(2800.0), AscentDay(3400.0)))))
    [2]
    """
    return [i + 1 for i, f in enumerate(result.flags) if f]


DAY_COLUMNS = (
    "day",
    "sleep_altitude_m",
    "high_altitude_m",
    "fio2",
    "equivalent_altitude_m",
    "barometric_pressure_mmhg",
    "inspired_po2_mmhg",
    "paco2_mmhg",
    "ph",
    "alveolar_po2_mmhg",
    "pao2_mmhg",
    "sao2",
    "hb_g_dl",
    "cao2_ml_dl",
    "do2_ml_min",
    "pvo2_mmhg",
    "svo2",
    "dpg_mmol_l",
    "high_pao2_mmhg",
    "high_sao2",
    "high_cao2_ml_dl",
)
"""Columns of one night (and the day's high point, ``high_*``) in a comparison table."""


def day_rows(result: AscentResult) -> list[dict]:
    """One flat dict per day with :data:`DAY_COLUMNS` and ``flags`` (text joined by "; ").

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
    >>> rows = day_rows(run_ascent(AscentProfile("x", (AscentDay(0.0, 400.0),))))
    >>> rows[0]["day"], rows[0]["high_altitude_m"], rows[0]["flags"]
    (1, 400.0, '')
    """
    rows = []
    for d in result.to_dict()["days"]:
        row = {k: d[k] for k in DAY_COLUMNS if k in d}
        hp = d["high_point"]
        row["high_pao2_mmhg"] = hp["pao2_mmhg"]
        row["high_sao2"] = hp["sao2"]
        row["high_cao2_ml_dl"] = hp["cao2_ml_dl"]
        row["flags"] = "; ".join(d["flags"])
        rows.append({k: row[k] for k in (*DAY_COLUMNS, "flags")})
    return rows
