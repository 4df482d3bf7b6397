"""The planner's comparison: running the model on a schedule, the chosen SaO2 thresholds,
the summary rows and day-by-day series of the compared schedules, their flags and the night
picked to open as a case.

No Panel import here. :class:`Comparison` reads and writes the parameters of the
:class:`dashboard.ascent.state.AscentWorkspace` it belongs to; the numbers come from
:mod:`model.ascent` and :mod:`model.ascent_report`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING
from urllib.parse import urlencode

import numpy as np

from ...model.air import PRESSURE_MODEL_NAMES as AIR_NAMES
from ...model.ascent import AscentError, AscentProfile, AscentResult, run_ascent
from ...model.ascent_report import (
    CASE_KEYS,
    READING_SD_PCT,
    PersonFit,
    ReadingError,
    fit_person_offset,
    hypoxic_burden,
    night_case_inputs,
    nights_below,
)
from ...model.units import MMHG_PER_KPA

if TYPE_CHECKING:
    from .state import AscentWorkspace

PRESSURE_MODEL_NAMES = {k: v for k, v in AIR_NAMES.items() if k != "given"}
"""How the screen names each pressure model of :data:`model.PRESSURE_MODELS`."""


def solve(profile: AscentProfile, readings=()) -> tuple[AscentResult, PersonFit | None]:
    """Run the model, re-forecast with the person's offset fitted to ``readings`` when there
    are any; a schedule that cannot be solved is an AscentError for the screen."""
    try:
        if not readings:
            return run_ascent(profile), None
        fit = fit_person_offset(profile, readings)
        result = run_ascent(
            profile,
            person_offset_mmhg=fit.offset_mmhg,
            offset_sd_mmhg=fit.sd_mmhg,
            reading_sd_pct=READING_SD_PCT,
        )
        return result, fit
    except AscentError:
        raise
    except ReadingError as exc:
        raise AscentError(str(exc)) from None
    except ValueError as exc:
        reason = str(exc).removeprefix(f"{profile.name}: ")  # the model names it already
        raise AscentError(f"{profile.name}: the model cannot solve this schedule ({reason})")


class Comparison:
    """Thresholds, summaries, series, flags and the picked night of the compared schedules."""

    def __init__(self, ws: AscentWorkspace):
        self._ws = ws

    def set_threshold(self, name: str, value) -> bool:
        """Set ``threshold_high_pct`` or ``threshold_low_pct``; refuse a value off its range."""
        ws = self._ws
        p = ws.param[name]
        lo, hi = p.bounds
        label = p.label.rsplit(" (", 1)[0]
        if value is None or not isinstance(value, (int, float)) or not lo <= value <= hi:
            return ws.refuse(f"{label} = {value!r} is outside the allowed range {lo:g}-{hi:g} %")
        ws.param.update({name: float(value), "error_message": ""})
        return True

    @property
    def thresholds(self) -> tuple[float, float]:
        """(upper, lower) SaO2 thresholds as fractions."""
        return self._ws.threshold_high_pct / 100.0, self._ws.threshold_low_pct / 100.0

    def summary(self, key: str) -> dict:
        """The model's summary of ``key`` with the chosen thresholds applied."""
        r = self._ws.results[key]
        hi, lo = self.thresholds
        s = dict(r.summary)
        fit = self._ws.fits.get(key)
        low_night = int(np.argmin(r.night.arterial.so2))
        s.update(
            name=r.profile.name,
            pressure_model=PRESSURE_MODEL_NAMES.get(
                r.profile.baseline.pressure_model, r.profile.baseline.pressure_model
            ),
            fit=fit,
            lowest_night_band=(float(r.sao2_low[low_night]), float(r.sao2_high[low_night])),
            days=int(r.sleep_altitude_m.size),
            nights_below_high=nights_below(r, hi),
            nights_below_low=nights_below(r, lo),
            hypoxic_burden=hypoxic_burden(r, hi),
            slot=self._ws.slots.get(key, 0),
        )
        return s

    def pressure_factor(self) -> float:
        """Divide mmHg by this for the chosen pressure unit (1 for mmHg)."""
        return MMHG_PER_KPA if self._ws.pressure_unit == "kPa" else 1.0

    def series(self, key: str) -> dict[str, np.ndarray]:
        """Day-by-day arrays of ``key`` for plotting (SaO2 and the SpO2 band in %, pressures
        in the chosen unit, ``pressure_unit``), and the schedule's readings beside the
        forecast at each (``readings_*``)."""
        ws = self._ws
        r = ws.results[key]
        n, h = r.night, r.high
        k = self.pressure_factor()
        readings = ws.readings.get(key, ())
        fit = ws.fits.get(key)
        given = np.array([d.high_altitude_m is not None for d in r.profile.days], dtype=bool) & (
            r.high_altitude_m > r.sleep_altitude_m
        )
        return {
            "day": np.arange(1, r.sleep_altitude_m.size + 1),
            "sleep_altitude_m": r.sleep_altitude_m,
            "high_altitude_m": r.high_altitude_m,
            "high_given": given,
            "fio2": r.fio2,
            "pao2": np.asarray(n.arterial.po2_mmhg, dtype=float) / k,
            "pressure_unit": ws.pressure_unit,
            "sao2_pct": 100.0 * np.asarray(n.arterial.so2, dtype=float),
            "spo2_low_pct": 100.0 * np.asarray(r.sao2_low, dtype=float),
            "spo2_high_pct": 100.0 * np.asarray(r.sao2_high, dtype=float),
            "cao2_ml_dl": np.asarray(n.arterial.o2_content_ml_dl, dtype=float),
            "high_pao2": np.asarray(h.arterial.po2_mmhg, dtype=float) / k,
            "high_sao2_pct": 100.0 * np.asarray(h.arterial.so2, dtype=float),
            "high_cao2_ml_dl": np.asarray(h.arterial.o2_content_ml_dl, dtype=float),
            "flagged": np.array([bool(f) for f in r.flags]),
            "flags": ["; ".join(f) for f in r.flags],
            "name": r.profile.name,
            "slot": ws.slots.get(key, 0),
            "readings_day": np.array([x.day for x in readings], dtype=int),
            "readings_altitude_m": np.array([x.altitude_m for x in readings], dtype=float),
            "readings_spo2_pct": np.array([x.spo2_pct for x in readings], dtype=float),
            "readings_forecast_pct": np.array(fit.fitted_pct if fit else [], dtype=float),
            "readings_typical_pct": np.array(fit.typical_pct if fit else [], dtype=float),
            "readings_heart_rate": [x.heart_rate_min for x in readings],
            "readings_lake_louise": [x.lake_louise_score for x in readings],
            "fitted": fit is not None,
        }

    def flag_list(self) -> list[tuple[str, list[tuple[int, float, str]], int]]:
        """For each compared schedule: its name, its (day, sleeping altitude, flag text)
        and its drawing slot."""
        ws = self._ws
        out = []
        for key in ws.compared:
            r = ws.results[key]
            days = [
                (i + 1, float(r.sleep_altitude_m[i]), "; ".join(f))
                for i, f in enumerate(r.flags)
                if f
            ]
            out.append((r.profile.name, days, ws.slots[key]))
        return out

    # ------------------------------------------------------------------ a night as a case
    def case_inputs(self, key: str, day: int) -> dict:
        return night_case_inputs(self._ws.results[key], day)

    def case_link(self, key: str, day: int, path: str = "/") -> str:
        """Address of the case screen showing night ``day`` of ``key`` (in the chosen
        pressure unit)."""
        inputs = self.case_inputs(key, day)
        pairs = {
            k: (v if isinstance(v, str) else format(v, ".10g"))
            for k, v in inputs.items()
            if k in CASE_KEYS
        }
        if self._ws.pressure_unit != "mmHg":
            pairs["pressure_unit"] = self._ws.pressure_unit
        return f"{path}?{urlencode(pairs)}"

    def pick(self, key: str, day: int) -> bool:
        """Pick night ``day`` of ``key`` (a click on a plot) to open as a case."""
        ws = self._ws
        r = ws.results.get(key)
        if r is None:
            return ws.refuse(f"no open schedule {key!r}")
        if not 1 <= day <= r.sleep_altitude_m.size:
            return ws.refuse(
                f"day = {day} is outside the allowed range 1-{r.sleep_altitude_m.size}"
            )
        ws.param.update(picked=(key, int(day)), error_message="")
        return True

    def picked_text(self) -> str:
        ws = self._ws
        if not ws.picked or ws.picked[0] not in ws.results:
            return ""
        key, day = ws.picked
        r = ws.results[key]
        if day > r.sleep_altitude_m.size:
            return ""
        i = day - 1
        k, unit = self.pressure_factor(), ws.pressure_unit
        digits = 2 if unit == "kPa" else 1
        return (
            f"{r.profile.name}, night {day}: {r.sleep_altitude_m[i]:.0f} m, FiO2 "
            f"{r.fio2[i]:.2f}, PaO2 {float(r.night.arterial.po2_mmhg[i]) / k:.{digits}f} "
            f"{unit}, SaO2 {100 * float(r.night.arterial.so2[i]):.1f} %, predicted SpO2 "
            f"{100 * float(r.sao2_low[i]):.0f}-{100 * float(r.sao2_high[i]):.0f} %"
        )
