"""Reading an ascent result for a planner: one day as a case, chosen saturation thresholds,
and the rows of a comparison table.

Pure functions over :class:`model.ascent.AscentResult`; no I/O, no Panel or param.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from typing import cast

import numpy as np

from .ascent import AscentResult
from .dissociation import NORMAL_DPG_MMOL_L

_NIGHT_INPUTS = {
    "altitude_m": lambda r, i: float(r.sleep_altitude_m[i]),
    "pressure_model": lambda r, i: r.profile.baseline.pressure_model,
    "fio2": lambda r, i: float(r.fio2[i]),
    "paco2_mmhg": lambda r, i: float(r.night.arterial.pco2_mmhg[i]),
    "rq": lambda r, i: float(r.rq[i]),
    "ph": lambda r, i: float(r.night.arterial.ph[i]),
    "hb_g_dl": lambda r, i: float(r.night.hb_g_dl[i]),
    "dpg_mmol_l": lambda r, i: NORMAL_DPG_MMOL_L,
    "p50_mmhg": lambda r, i: float(r.standard_p50_mmhg[i]),
    "cardiac_output_l_min": lambda r, i: float(r.night.cardiac_output_l_min[i]),
    "vo2_ml_min": lambda r, i: float(np.broadcast_to(r.night.vo2_ml_min, r.fio2.shape)[i]),
}
"""Input of a night's solve -> how to read it from an :class:`AscentResult` and day index."""

CASE_KEYS = tuple(_NIGHT_INPUTS)
"""Scenario-file key names of a night's solve, in the order written into a case link (a
subset of :data:`model.transport.CASE_INPUTS`)."""


def night_case_inputs(result: AscentResult, day: int) -> dict:
    """The inputs of night ``day`` (1-based) under the scenario files' key names.

    :func:`model.solve_transport` with these keywords (and its defaults for the rest:
    shunt, diffusing capacity, curve, temperature) gives that night's chain again: the
    sleeping altitude and pressure model, FiO2, and the acclimatization state of that
    night (PaCO2 [mmHg], exchange ratio ``rq`` [-], pH [-], Hb [g/dL], cardiac output
    [L/min]), with VO2 [mL/min] at the baseline value. The night's 2,3-DPG acts through
    its standard P50 (``p50_mmhg``, :func:`model.acclimatization.dpg_p50_ratio`), so
    ``dpg_mmol_l`` is the normal value the curve's own DPG term leaves neutral; the night's
    DPG itself is ``result.dpg_mmol_l``.

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
    return {key: read(result, i) for key, read in _NIGHT_INPUTS.items()}


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
    "sao2_low",
    "sao2_high",
    "standard_p50_mmhg",
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


# ---------------------------------------------------------------------- a trekker's readings
READING_COLUMNS = ("day", "altitude_m", "spo2_pct", "heart_rate_min", "lake_louise_score")
"""Columns of a readings table (CSV header): day of the schedule, altitude where the reading
was taken, SpO2, and optionally heart rate and the 2018 Lake Louise AMS score."""

READING_LIMITS = {
    "altitude_m": (-500.0, 9000.0, "m"),
    "spo2_pct": (50.0, 100.0, "%"),
    "heart_rate_min": (25.0, 220.0, "/min"),
    "lake_louise_score": (0.0, 12.0, "points"),
}
"""Allowed range and unit of each reading field; ``day`` runs 1 to the schedule's length.
SpO2 below 50 % is outside what finger oximeters are validated for; the 2018 Lake Louise
score has four items of 0-3 points (Roach et al., High Alt Med Biol 2018; 19:4-6, from
memory)."""

READING_SD_PCT = 1.0
"""SD of one resting oximeter reading about the person's own value [SpO2 points]: our
choice, at most the 1.5-point between-person SD after 12 days at 3810 m (Sato et al. 1994),
which contains it."""


class ReadingError(ValueError):
    """A reading that cannot be used; the message names the row, field, value and range."""


@dataclass(frozen=True)
class Reading:
    """One logged reading: the day of the schedule (1-based), where it was taken, SpO2 [%]
    at rest on air, and optionally heart rate [/min] and the Lake Louise score [points]."""

    day: int
    altitude_m: float
    spo2_pct: float
    heart_rate_min: float | None = None
    lake_louise_score: int | None = None


def _reading_number(label: str, key: str, raw, lo: float, hi: float, unit: str) -> float:
    if isinstance(raw, str):
        text = raw.strip()
        try:
            value = float(text)
        except ValueError:
            raise ReadingError(f"{label} {key} = {raw!r} must be a number") from None
    elif isinstance(raw, bool) or not isinstance(raw, (int, float)):
        raise ReadingError(f"{label} {key} = {raw!r} must be a number")
    else:
        value = float(raw)
    if not math.isfinite(value) or not lo <= value <= hi:
        raise ReadingError(
            f"{label} {key} = {raw!r} is outside the allowed range {lo:g}-{hi:g} {unit}".rstrip()
        )
    return value


def _blank(raw) -> bool:
    if raw is None:
        return True
    if isinstance(raw, str):
        return raw.strip() == ""
    return isinstance(raw, float) and math.isnan(raw)


def check_reading(entry: dict, n_days: int, label: str = "reading") -> Reading:
    """One reading from a mapping with the keys of :data:`READING_COLUMNS` (text or numbers).

    Raises
    ------
    ReadingError
        A missing or unknown field, or a value that is not a number or is out of range; the
        message names ``label``, the field, the value, the allowed range and the unit.

    Examples
    --------
    >>> check_reading({"day": "3", "altitude_m": 3440, "spo2_pct": "88"}, 10)
    Reading(day=3, altitude_m=3440.0, spo2_pct=88.0, heart_rate_min=None, lake_louise_score=None)
    >>> try:
    ...     check_reading({"day": 3, "altitude_m": 3440, "spo2_pct": 120}, 10)
    ... except ReadingError as exc:
    ...     print(exc)
    reading spo2_pct = 120 is outside the allowed range 50-100 %
    """
    for key in entry:
        if key not in READING_COLUMNS:
            raise ReadingError(
                f"{label}: unknown field {key!r}; allowed: {', '.join(READING_COLUMNS)}"
            )
    for key in READING_COLUMNS[:3]:
        if _blank(entry.get(key)):
            raise ReadingError(f"{label} {key} is missing")
    day = _reading_number(label, "day", entry["day"], 1, n_days, "(days of the schedule)")
    if day != int(day):
        raise ReadingError(f"{label} day = {entry['day']!r} must be a whole day 1-{n_days}")
    values: dict[str, float | None] = {}
    for key in READING_COLUMNS[1:]:
        raw = entry.get(key)
        if _blank(raw):
            values[key] = None
            continue
        values[key] = _reading_number(label, key, raw, *READING_LIMITS[key])
    lls = values["lake_louise_score"]
    if lls is not None and lls != int(lls):
        raise ReadingError(
            f"{label} lake_louise_score = {entry['lake_louise_score']!r} must be a whole "
            "number of points 0-12"
        )
    return Reading(
        day=int(day),
        altitude_m=cast(float, values["altitude_m"]),  # required: refused above when blank
        spo2_pct=cast(float, values["spo2_pct"]),
        heart_rate_min=values["heart_rate_min"],
        lake_louise_score=None if lls is None else int(lls),
    )


def readings_from_csv(text: str, n_days: int, where: str = "<csv>") -> tuple[Reading, ...]:
    """Readings from CSV text with the header of :data:`READING_COLUMNS` (the last two
    columns may be left out or empty). All rows or none: the first bad row is refused.

    Examples
    --------
    >>> readings_from_csv("day,altitude_m,spo2_pct\\n2,3440,89\\n", 8)[0].spo2_pct
    89.0
    """
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    header = tuple((c or "").strip() for c in (reader.fieldnames or ()))
    if header[:3] != READING_COLUMNS[:3] or not set(header) <= set(READING_COLUMNS):
        raise ReadingError(
            f"{where}: the header must be {','.join(READING_COLUMNS)} (the last two optional), "
            f"found {','.join(header) or 'nothing'}"
        )
    out = []
    for i, row in enumerate(reader):
        if None in row:
            raise ReadingError(f"{where}: row {i + 1} has more cells than the header")
        entry = {k.strip(): v for k, v in row.items() if k is not None}
        if all(_blank(v) for v in entry.values()):
            continue
        out.append(check_reading(entry, n_days, f"{where}: row {i + 1}"))
    if not out:
        raise ReadingError(f"{where}: no readings after the header")
    return tuple(out)


def readings_to_csv(readings) -> str:
    """CSV text of readings with the header of :data:`READING_COLUMNS`.

    Examples
    --------
    >>> print(readings_to_csv([Reading(2, 3440.0, 89.0, 96.0, 2)]).strip())
    day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score
    2,3440,89,96,2
    """
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(READING_COLUMNS)
    for r in readings:
        hr = "" if r.heart_rate_min is None else f"{r.heart_rate_min:g}"
        lls = "" if r.lake_louise_score is None else str(r.lake_louise_score)
        w.writerow([r.day, f"{r.altitude_m:g}", f"{r.spo2_pct:g}", hr, lls])
    return out.getvalue()


@dataclass(frozen=True)
class PersonFit:
    """A person's ventilatory offset fitted to their readings (:func:`fit_person_offset`).

    ``offset_mmhg`` their PaCO2 at altitude above the typical lowlander's (negative: they
    breathe more and saturate better), ``sd_mmhg`` its SD after the fit, ``n`` the readings
    used, ``typical_pct`` and ``fitted_pct`` the forecasts at the readings for the typical
    person and with the offset [%], ``residual_pct`` reading minus fitted forecast [points],
    ``at_limit`` True when the offset reached its bound (the readings are far from anyone
    this model describes: check them and the schedule).
    """

    offset_mmhg: float
    sd_mmhg: float
    n: int
    typical_pct: tuple
    fitted_pct: tuple
    residual_pct: tuple
    at_limit: bool


def fit_person_offset(
    profile,
    readings,
    *,
    prior_sd_mmhg: float | None = None,
    reading_sd_pct: float = READING_SD_PCT,
    limit_sds: float = 4.0,
    **transport_kw,
) -> PersonFit:
    """The ventilatory offset that best explains a person's SpO2 readings on a schedule.

    Minimises ``sum(((y_i - S_i(d)) / s_r)^2) + (d / s_p)^2`` over the offset ``d`` [mmHg]
    (:func:`scipy.optimize.minimize_scalar`, bounded to ``+- limit_sds`` prior SDs), where
    ``y_i`` are the readings [%], ``S_i(d)`` the forecast at each reading's day and altitude
    (:func:`model.ascent.forecast_points`), ``s_r`` the scatter of one reading
    (:data:`READING_SD_PCT`) and ``s_p`` the between-person SD
    (:data:`model.acclimatization.VENTILATION_SD_MMHG`): the most probable offset given the
    readings and the spread between people. Its SD is ``sqrt(2 / J'')`` at the minimum.

    Parameters
    ----------
    profile : AscentProfile
    readings : sequence of Reading
        At least one; days within the schedule.
    prior_sd_mmhg, reading_sd_pct, limit_sds : float
        [mmHg], [SpO2 points], [-].
    **transport_kw
        As for :func:`model.ascent.run_ascent`.

    Returns
    -------
    PersonFit

    Raises
    ------
    ReadingError
        No readings, or a reading outside the schedule's days.

    Notes
    -----
    One number per person, on ventilation, because the between-person spread of SpO2 at
    altitude follows the spread of the ventilatory response (Sato et al. 1994; our
    :data:`model.acclimatization.VENTILATION_SD_MMHG` stands for all of it). A reading taken
    asleep, after exertion or with cold fingers reads lower than a resting one and pulls the
    offset up. Re-forecast with ``run_ascent(profile, person_offset_mmhg=fit.offset_mmhg,
    offset_sd_mmhg=fit.sd_mmhg, reading_sd_pct=READING_SD_PCT)``.

    Examples
    --------
    >>> from o2transit.model.ascent import AscentDay, AscentProfile
    >>> p = AscentProfile("x", tuple(AscentDay(h) for h in (2800.0, 3400.0, 3400.0, 3900.0)))
    >>> low = fit_person_offset(p, [Reading(3, 3400.0, 84.0), Reading(4, 3900.0, 80.0)])
    >>> low.offset_mmhg > 0.0, low.sd_mmhg < 1.5
    (True, True)
    """
    from scipy.optimize import minimize_scalar

    from .acclimatization import VENTILATION_SD_MMHG
    from .ascent import forecast_points

    readings = tuple(readings)
    if not readings:
        raise ReadingError("no readings to fit: enter at least one (day, altitude, SpO2)")
    n_days = len(profile.days)
    for i, r in enumerate(readings):
        if not 1 <= r.day <= n_days:
            raise ReadingError(
                f"reading {i + 1} day = {r.day} is outside the allowed range 1-{n_days} "
                "(days of the schedule)"
            )
    prior = VENTILATION_SD_MMHG if prior_sd_mmhg is None else float(prior_sd_mmhg)
    days = [r.day for r in readings]
    alts = [r.altitude_m for r in readings]
    y = np.array([r.spo2_pct for r in readings], dtype=float)

    def forecast(offsets):
        """Forecasts [%], one row per offset; a row the chain cannot solve is NaN (an offset
        that far from typical breaks the chain's limits at the readings' altitudes)."""
        offsets = np.atleast_1d(np.asarray(offsets, dtype=float))
        try:
            return 100.0 * forecast_points(profile, days, alts, offsets, **transport_kw)
        except ValueError:
            if offsets.size == 1:
                return np.full((1, len(days)), np.nan)
            return np.vstack([forecast([d]) for d in offsets])

    def cost(d):
        s = forecast([d])[0]
        j = float(np.sum(((y - s) / reading_sd_pct) ** 2) + (d / prior) ** 2)
        return j if np.isfinite(j) else 1e300

    bound = limit_sds * prior
    # a coarse grid in one vectorised forecast brackets the minimum; scipy refines it
    grid = np.linspace(-bound, bound, 33)
    s_grid = forecast(grid)
    j_grid = np.sum(((y - s_grid) / reading_sd_pct) ** 2, axis=1) + (grid / prior) ** 2
    if not np.any(np.isfinite(j_grid)):
        raise ReadingError(
            "the readings cannot be compared with the forecast: the model cannot solve the "
            "schedule at their days and altitudes"
        )
    j_grid = np.where(np.isfinite(j_grid), j_grid, np.inf)
    k = int(np.argmin(j_grid))
    lo, hi = grid[max(0, k - 1)], grid[min(grid.size - 1, k + 1)]
    best = minimize_scalar(cost, bounds=(lo, hi), method="bounded", options={"xatol": 1e-3})
    d = float(best.x)
    h = 0.05 * prior
    s3 = forecast([d - h, d, d + h])
    j = [
        float(np.sum(((y - s) / reading_sd_pct) ** 2) + (v / prior) ** 2)
        for v, s in zip((d - h, d, d + h), s3)
    ]
    curvature = (j[0] - 2.0 * j[1] + j[2]) / h**2
    sd = math.sqrt(2.0 / curvature) if np.isfinite(curvature) and curvature > 0 else prior
    typical = forecast([0.0])[0]
    return PersonFit(
        offset_mmhg=d,
        sd_mmhg=min(sd, prior),
        n=len(readings),
        typical_pct=tuple(float(v) for v in typical),
        fitted_pct=tuple(float(v) for v in s3[1]),
        residual_pct=tuple(float(v) for v in y - s3[1]),
        at_limit=abs(d) > bound - 0.01 * prior,
    )
