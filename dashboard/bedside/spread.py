"""How sure: the analyser tolerances carried through, and the curve models' spread.

No Panel import here. :class:`MeasurementDoubt` follows the accepted gas of
:class:`dashboard.bedside.entry.GasEntry` and the fit of
:class:`dashboard.bedside.fit.PatientFit`: the shunt, VO2 and in-situ P50 over every gas
within the chosen analyser tolerances (``model.spread.tolerance_ranges``, one vectorised
derivation), and SaO2, in-vivo P50 and O2 extracted per litre as each of the four curve
models reads the fitted case (``model.spread.reading_spread``). Rows are in display units.
"""

from __future__ import annotations

import dataclasses
import math

import param

from ...model import spread
from ..case.state import CaseState
from .entry import GasEntry
from .fit import PatientFit
from .wording import in_display_units, number, unit_of

TOLERANCE_ROWS = (
    # derive output, label, kind, source of the value
    ("shunt_fraction", "Shunt (Berggren)", "percent", "from the measured contents"),
    ("vo2_ml_min", "VO2 (Fick)", "flow", "cardiac output taken as given"),
    ("p50_insitu_mmhg", "In-situ P50 (single point)", "p50", "from PaO2 and SaO2"),
)
CURVE_ROWS = (
    # reading_spread key, label, kind
    ("sao2", "SaO2 at the fitted PaO2", "percent"),
    ("p50_mmhg", "P50 in vivo (arterial)", "p50"),
    ("o2_extracted_ml_per_l", "O2 extracted per litre", "per_litre"),
)
CURVE_NAMES = {
    "severinghaus1979": "Severinghaus 1979",
    "dash2016": "Dash 2016",
    "siggaard_andersen1990": "Siggaard-Andersen 1990",
    "hill1910": "Hill 1910",
}


@dataclasses.dataclass(frozen=True)
class DoubtRow:
    """A value, its lowest and highest, the unit, and what the range rests on."""

    key: str
    label: str
    value: str
    low: str
    high: str
    unit: str
    note: str


class MeasurementDoubt(param.Parameterized):
    """How far the bedside numbers move within the analyser tolerances and between curves."""

    case = param.ClassSelector(class_=CaseState, doc="The session's live case (units).")
    entry = param.ClassSelector(class_=GasEntry, doc="The accepted gas.")
    fitting = param.ClassSelector(class_=PatientFit, doc="The fitted case.")
    tolerance_set = param.Selector(
        default=spread.DEFAULT_TOLERANCES,
        objects={v["label"]: k for k, v in spread.TOLERANCE_SETS.items()},
        label="Analyser tolerances",
        doc="A named set of model.spread.TOLERANCE_SETS.",
    )
    tolerance = param.Dict(default={}, doc="model.spread.Range per TOLERANCE_ROWS output.")
    curve_spread = param.Dict(default=None, allow_None=True, doc="reading_spread of the fit.")

    def __init__(self, **params):
        super().__init__(**params)
        self.entry.param.watch(lambda _e: self._follow_gas(), "measured", onlychanged=False)
        self.fitting.param.watch(lambda _e: self._follow_fit(), "fit", onlychanged=False)
        self.case.param.watch(
            lambda _e: self.param.trigger("tolerance"), ["pressure_unit", "hb_unit"]
        )
        self._follow_gas()
        self._follow_fit()

    @param.depends("tolerance_set", watch=True)
    def _follow_gas(self) -> None:
        m = self.entry.measured
        self.tolerance = spread.tolerance_ranges(m, self.tolerance_set) if m else {}

    def _follow_fit(self) -> None:
        fit = self.fitting.fit
        if fit is None:
            self.curve_spread = None
            return
        r = fit.result
        self.curve_spread = spread.reading_spread(
            float(r.arterial.po2_mmhg),
            float(r.venous.po2_mmhg),
            float(r.hb_g_dl),
            r.arterial_conditions,
            r.venous_conditions,
        )

    # ------------------------------------------------------------------ for views
    def source(self) -> str:
        table = spread.TOLERANCE_SETS[self.tolerance_set]
        return in_display_units(self.case, f"{table['label']}: {table['source']}.")

    def _format(self, kind: str, value: float) -> str:
        return number(self.case, kind, value)

    def _unit(self, kind: str) -> str:
        return unit_of(self.case, kind)

    def tolerance_rows(self) -> list[DoubtRow]:
        rows = []
        for key, label, kind, note in TOLERANCE_ROWS:
            r = self.tolerance.get(key)
            if r is None or not math.isfinite(r.low):
                continue
            if r.refused:
                note += f"; {r.refused} of {r.cases} combinations refused"
            rows.append(
                DoubtRow(
                    key,
                    label,
                    self._format(kind, r.value),
                    self._format(kind, r.low),
                    self._format(kind, r.high),
                    self._unit(kind),
                    note,
                )
            )
        return rows

    def curve_rows(self) -> list[DoubtRow]:
        s = self.curve_spread
        if s is None:
            return []
        fit = self.fitting.fit
        r = fit.result
        values = {
            "sao2": float(r.arterial.so2),
            "p50_mmhg": float(r.arterial.p50_mmhg),
            "o2_extracted_ml_per_l": float(r.o2_extracted_ml_per_l),
        }
        rows = []
        for key, label, kind in CURVE_ROWS:
            part = s[key]
            by = part["by_curve"]
            lowest = min(by, key=by.get)
            highest = max(by, key=by.get)
            rows.append(
                DoubtRow(
                    key,
                    label,
                    self._format(kind, values[key]),
                    self._format(kind, part["low"]),
                    self._format(kind, part["high"]),
                    self._unit(kind),
                    f"lowest {CURVE_NAMES.get(lowest, lowest)}, highest "
                    f"{CURVE_NAMES.get(highest, highest)}",
                )
            )
        return rows
