"""The patient's gases through a shift: entered one after another, pasted, or opened.

No Panel import here. :class:`GasSeries` keeps the gases of one patient
(``model.series.Gas``: the time drawn and the measured values), derives and fits each with
``model.series.trend`` and words the trend in display units: P/F, shunt, DO2, in-vivo P50
and the arterial and venous points on the curve over the shift. A gas is fitted once: fits
are kept by gas, and the fit of the gas on the form is taken over when it is the same gas.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import param

from ... import model
from ...model import series as model_series
from ...model.series import Gas
from ..case.state import PO2_GRID_MMHG, CaseState
from .entry import GasEntry
from .fit import PatientFit
from .wording import number

TREND_HEAD_KINDS = (
    # trend key, label, kind of number
    ("pao2_fio2_ratio", "P/F", "pressure"),
    ("shunt_fitted", "Shunt (fitted)", "percent"),
    ("shunt_berggren", "Shunt (Berggren)", "percent"),
    ("do2_ml_min", "DO2", "flow"),
    ("p50_invivo_mmhg", "P50 in vivo", "p50"),
    ("vo2_ml_min", "VO2", "flow"),
)
"""Numeric columns of the trend table after time, in reading order."""


@dataclasses.dataclass(frozen=True)
class TrendRow:
    """One gas of the shift as shown: time, hours from the first, values, fit verdict."""

    time: str
    hours: str
    values: tuple[str, ...]
    points: str
    verdict: str


def _key(measured: dict, curve: str) -> tuple:
    return (curve, tuple(sorted(measured.items())))


class GasSeries(param.Parameterized):
    """One patient's gases over time, each derived and fitted in turn."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (units, curve).")
    entry = param.ClassSelector(class_=GasEntry, doc="The form a gas is added from.")
    fitting = param.ClassSelector(class_=PatientFit, doc="The fit of the gas on the form.")
    gases = param.List(default=[], doc="model.series.Gas, in the order drawn.")
    trend = param.Parameter(default=None, doc="model.series.Trend of the gases, or None.")
    gas_time = param.String(default="", label="Time drawn (HH:MM)")
    pasted = param.String(default="", label="Gases pasted as CSV (time, pao2_kpa, ...)")
    series_message = param.String(default="")

    def __init__(self, **params):
        super().__init__(**params)
        self._fits: dict[tuple, object] = {}
        self.case.param.watch(lambda _e: self._retrend(), "curve")
        self.case.param.watch(lambda _e: self.param.trigger("trend"), ["pressure_unit", "hb_unit"])

    # ------------------------------------------------------------------ fitting
    def _known_fit(self, gas: Gas):
        curve = self.case.curve
        key = _key(gas.measured, curve)
        if key in self._fits:
            return self._fits[key]
        fit = self.fitting.fit
        if fit is not None and self.entry.measured == gas.measured:
            self._fits[key] = fit
            return fit
        return None

    def _retrend(self) -> None:
        if not self.gases:
            self.trend = None
            return
        curve = self.case.curve
        known = [self._known_fit(g) for g in self.gases]
        trend = model_series.trend(self.gases, curve=curve, fits=known)
        for gas, fit in zip(trend.gases, trend.fits):
            if fit is not None:
                self._fits[_key(gas.measured, curve)] = fit
        self.trend = trend

    def _set_gases(self, gases: list[Gas], message: str) -> bool:
        try:
            checked = list(model_series.check_series(gases))
        except ValueError as exc:
            self.series_message = f"Not added: {exc}."
            return False
        self.gases = checked
        self._retrend()
        fit_errors = self.trend.fit_errors if self.trend is not None else ()
        errors = [f"{g.time}: {e}" for g, e in zip(checked, fit_errors) if e]
        if errors:
            message += " Not fitted: " + "; ".join(errors) + "."
        self.series_message = message
        return True

    # ------------------------------------------------------------------ actions
    def add_current(self) -> bool:
        """Add the accepted gas on the form at the time typed (a gas at the same time is
        replaced)."""
        if not self.entry.measured:
            self.series_message = "Calculate a measured gas first, then add it to the shift."
            return False
        if not self.gas_time.strip():
            self.series_message = "Time drawn: a value is required (the clock time, HH:MM)."
            return False
        try:
            time = model_series.check_time(self.gas_time)
        except ValueError as exc:
            self.series_message = f"Not added: {exc}."
            return False
        gas = Gas(time, dict(self.entry.measured))
        gases = list(self.gases)
        same = next((i for i, g in enumerate(gases) if g.time == time), None)
        if same is None:
            gases.append(gas)
            word = "added"
        else:
            gases[same] = gas
            word = "replaced"
        return self._set_gases(gases, f"Gas at {time} {word}: {len(gases)} gas(es) in the shift.")

    def read_pasted(self) -> bool:
        """Add the gases pasted as CSV text, after those already in the shift."""
        try:
            read = model_series.read_gas_csv(self.pasted)
        except ValueError as exc:
            self.series_message = f"Not read: {exc}."
            return False
        times = {g.time for g in read}
        kept = [g for g in self.gases if g.time not in times]
        ok = self._set_gases(
            kept + read, f"{len(read)} pasted gas(es) read: {len(kept) + len(read)} in the shift."
        )
        if ok:
            self.pasted = ""
        return ok

    def remove_gas(self, index: int) -> bool:
        if not 0 <= index < len(self.gases):
            return False
        gone = self.gases[index].time
        return self._set_gases(
            [g for i, g in enumerate(self.gases) if i != index], f"Gas at {gone} removed."
        )

    def clear_series(self) -> None:
        self.gases = []
        self.trend = None
        self.series_message = "Shift cleared."

    def restore(self, gases) -> None:
        """Replace the gases with those of an opened case (each fitted again)."""
        self._fits = {}
        if not gases:
            self.gases, self.trend, self.series_message = [], None, ""
            return
        self._set_gases(list(gases), f"{len(gases)} gas(es) of the shift opened.")

    def saved(self) -> list[Gas]:
        return list(self.gases)

    # ------------------------------------------------------------------ for views
    def _format(self, kind: str, value: float) -> str:
        return number(self.case, kind, value)

    def trend_head(self) -> list[str]:
        p = self.case.pressure_unit
        units = {"pressure": p, "p50": p, "percent": "%", "flow": "mL/min"}
        head = ["Time", "h"]
        head += [f"{label} ({units[kind]})" for _, label, kind in TREND_HEAD_KINDS]
        head += [f"PaO2, SaO2 · PvO2, SvO2 as measured ({p}, %; °C)", "Fit"]
        return head

    def trend_rows(self) -> list[TrendRow]:
        t = self.trend
        if t is None:
            return []
        rows = []
        v = t.values
        for i, gas in enumerate(t.gases):
            # As the analyser reported them (37 °C), like the gas report and the form.
            m = gas.measured
            art = f"{self._format('pressure', m['pao2_mmhg'])}, {100.0 * m['sao2']:.1f}"
            ven = ""
            if "pvo2_mmhg" in m and "svo2" in m:
                ven = f" · {self._format('pressure', m['pvo2_mmhg'])}, {100.0 * m['svo2']:.1f}"
            fit = t.fits[i]
            verdict = (
                "not fitted: " + t.fit_errors[i]
                if fit is None
                else "consistent"
                if fit.consistent
                else "does not fit together"
            )
            temp = f" ({v['temperature_c'][i]:.1f} °C)"
            rows.append(
                TrendRow(
                    gas.time,
                    f"{t.hours[i]:.1f}",
                    tuple(self._format(kind, v[key][i]) for key, _, kind in TREND_HEAD_KINDS),
                    art + ven + temp,
                    verdict,
                )
            )
        return rows

    def trend_data(self) -> dict:
        """Hours and each trend in display units (NaN where not computed), for the figures."""
        t = self.trend
        empty = np.zeros(0)
        if t is None:
            return {k: empty for k in ("hours", "pf", "shunt", "do2", "p50")} | {"time": []}
        v = t.values
        to_p = self.case.pressure_array
        return {
            "hours": np.asarray(t.hours, dtype=float),
            "time": [g.time for g in t.gases],
            "pf": to_p(v["pao2_fio2_ratio"]),
            "shunt": 100.0 * v["shunt_fitted"],
            "do2": np.asarray(v["do2_ml_min"], dtype=float),
            "p50": to_p(v["p50_invivo_mmhg"]),
        }

    def points_data(self) -> dict:
        """The measured points of every gas on the curve (display units, at the patient's
        temperature), in time order, and the latest fitted curve."""
        t = self.trend
        out = {"arterial": ([], [], []), "venous": ([], [], []), "curve": None, "x_max": None}
        if t is None:
            return out
        v = t.values
        to_p = self.case.pressure_array
        times = [g.time for g in t.gases]
        out["arterial"] = (list(to_p(v["arterial_po2_mmhg"])), list(100 * v["arterial_so2"]), times)
        ok = np.isfinite(v["venous_po2_mmhg"])
        out["venous"] = (
            list(to_p(v["venous_po2_mmhg"][ok])),
            list(100 * v["venous_so2"][ok]),
            [s for s, keep in zip(times, ok) if keep],
        )
        last = next((f for f in reversed(t.fits) if f is not None), None)
        if last is not None:
            so2 = model.saturation(PO2_GRID_MMHG, **last.result.arterial_conditions)
            out["curve"] = (to_p(PO2_GRID_MMHG), 100.0 * np.asarray(so2, dtype=float))
        top = np.nanmax(to_p(v["arterial_po2_mmhg"])) if len(times) else 0.0
        out["x_max"] = max(float(to_p(PO2_GRID_MMHG[-1])), 1.08 * float(top))
        return out
