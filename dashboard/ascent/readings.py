"""The planner's readings log: the SpO2 readings (with heart rate and Lake Louise score) a
trekker takes on the way, per schedule, and the re-forecast from them.

No Panel import here. :class:`ReadingsLog` reads and writes the parameters of the
:class:`dashboard.ascent.state.AscentWorkspace` it belongs to. Every change of a schedule's
readings is checked field by field (:func:`model.ascent_report.check_reading`), the person's
offset is fitted again and the schedule re-forecast (:func:`dashboard.ascent.comparison.solve`),
and then readings, fit and result are replaced in one update; a refused change leaves all
three as they were.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ...model.ascent import AscentError
from ...model.ascent_report import (
    READING_COLUMNS,
    Reading,
    ReadingError,
    check_reading,
    readings_from_csv,
    readings_to_csv,
)
from .comparison import solve

if TYPE_CHECKING:
    from .state import AscentWorkspace

READING_FIELDS = {
    "day": "Day",
    "altitude_m": "Altitude (m)",
    "spo2_pct": "SpO2 (%)",
    "heart_rate_min": "Heart rate (/min)",
    "lake_louise_score": "Lake Louise score",
}
"""Columns of the readings table with their labels (the keys are the CSV header)."""
MAX_READINGS = 200


def _mapping(reading: Reading) -> dict:
    return {k: getattr(reading, k) for k in READING_COLUMNS}


class ReadingsLog:
    """Add, edit, remove, import and export the readings of the edited schedule."""

    def __init__(self, ws: AscentWorkspace):
        self._ws = ws

    def _key(self) -> str | None:
        return self._ws.editing if self._ws.open_schedules.edited() is not None else None

    def apply(self, key: str, readings, status: str) -> bool:
        """Make ``readings`` the readings of ``key``: fit, re-forecast, all or nothing."""
        ws = self._ws
        readings = tuple(sorted(readings, key=lambda r: r.day))
        if len(readings) > MAX_READINGS:
            return ws.refuse(
                f"{len(readings)} readings is outside the allowed range 0-{MAX_READINGS}"
            )
        profile = ws.schedules[key]
        try:
            result, fit = solve(profile, readings)
        except AscentError as exc:
            return ws.refuse(str(exc))
        fits = {k: v for k, v in ws.fits.items() if k != key}
        if fit is not None:
            fits[key] = fit
        kept = {k: v for k, v in ws.readings.items() if k != key}
        if readings:
            kept[key] = readings
        ws.param.update(
            readings=kept,
            fits=fits,
            results={**ws.results, key: result},
            error_message="",
            status_message=status,
        )
        return True

    def current(self) -> tuple[Reading, ...]:
        return self._ws.readings.get(self._ws.editing, ())

    def add_reading(self, fields: dict) -> bool:
        """Add one reading to the edited schedule; ``fields`` by :data:`READING_FIELDS` keys,
        text or numbers, the last two optional."""
        key = self._key()
        if key is None:
            return False
        n = len(self._ws.schedules[key].days)
        try:
            reading = check_reading(dict(fields), n, "reading")
        except ReadingError as exc:
            return self._ws.refuse(str(exc))
        return self.apply(key, (*self.current(), reading), f"Reading of day {reading.day} added.")

    def edit_reading(self, row: int, field: str, value) -> bool:
        """Change one field of reading ``row`` (1-based, in the table's order)."""
        key = self._key()
        if key is None:
            return False
        readings = list(self.current())
        if not 1 <= row <= len(readings):
            return self._ws.refuse(f"reading {row} is outside the allowed range 1-{len(readings)}")
        if field not in READING_FIELDS:
            return self._ws.refuse(
                f"{field!r} is not a reading field ({', '.join(READING_FIELDS)})"
            )
        entry = {**_mapping(readings[row - 1]), field: value}
        try:
            readings[row - 1] = check_reading(
                entry, len(self._ws.schedules[key].days), f"reading {row}"
            )
        except ReadingError as exc:
            return self._ws.refuse(str(exc))
        return self.apply(key, readings, f"Reading {row}: {field} changed.")

    def remove_reading(self, row: int) -> bool:
        key = self._key()
        if key is None:
            return False
        readings = list(self.current())
        if not 1 <= row <= len(readings):
            return self._ws.refuse(f"reading {row} is outside the allowed range 1-{len(readings)}")
        del readings[row - 1]
        return self.apply(key, readings, f"Reading {row} removed.")

    def clear(self) -> bool:
        key = self._key()
        if key is None:
            return False
        return self.apply(key, (), "Readings cleared: the forecast is for a typical lowlander.")

    def import_csv(self, text: str | bytes, filename: str = "readings.csv") -> bool:
        """Replace the edited schedule's readings with a CSV table (a file or pasted text)."""
        key = self._key()
        if key is None:
            return False
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            readings = readings_from_csv(text, len(self._ws.schedules[key].days), filename)
        except UnicodeDecodeError:
            return self._ws.refuse(f"{filename}: not a text file (UTF-8 expected)")
        except ReadingError as exc:
            return self._ws.refuse(str(exc))
        return self.apply(key, readings, f"{len(readings)} readings read from {filename}.")

    def export_csv(self) -> str:
        return readings_to_csv(self.current())

    def fit_text(self, key: str) -> str:
        """What the fit says, in words, for the readings panel."""
        ws = self._ws
        fit = ws.fits.get(key)
        if fit is None:
            return (
                "No readings yet: the forecast is for a typical lowlander. Enter the resting "
                "SpO2 readings taken on the way to fit this person's forecast."
            )
        worse = fit.offset_mmhg >= 0
        text = (
            f"Fitted to {fit.n} reading{'s' if fit.n != 1 else ''}: this person breathes "
            f"{'less' if worse else 'more'} than the typical lowlander (PaCO2 at altitude "
            f"{'+' if worse else '−'}{abs(fit.offset_mmhg):.1f} ± {fit.sd_mmhg:.1f} mmHg), so "
            f"their SpO2 runs {'below' if worse else 'above'} the typical forecast; every day "
            "of the schedule is re-forecast with it."
        )
        if fit.at_limit:
            text += (
                " The offset is at the model's limit: these readings are far from what the "
                "model gives anyone on this schedule; check the readings (rest, warm hands) and "
                "the schedule's days."
            )
        worst = max(range(fit.n), key=lambda i: abs(fit.residual_pct[i]))
        if abs(fit.residual_pct[worst]) > 3.0:
            r = self.current_of(key)[worst]
            text += (
                f" The reading of day {r.day} ({r.spo2_pct:.0f} %) is "
                f"{abs(fit.residual_pct[worst]):.0f} points off even this forecast."
            )
        return text

    def current_of(self, key: str) -> tuple[Reading, ...]:
        return self._ws.readings.get(key, ())
