"""The planner's day-table editor: which schedule and day are picked, one cell changed, a day
added, removed or moved, the days read from or written to CSV.

No Panel import here. Every edit either applies completely or is refused with a message that
names the day, the field, the value and the allowed range (the model's own check, through
:meth:`dashboard.ascent.schedules.OpenSchedules.replace`), leaving the schedule as it was.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ...model.ascent import AscentDay, AscentError, days_from_csv, days_to_csv
from .schedules import day_mapping

if TYPE_CHECKING:
    from .state import AscentWorkspace

DAY_FIELDS = {
    "sleep_altitude_m": "Sleeping altitude (m)",
    "high_altitude_m": "High point (m)",
    "fio2": "FiO2 (fraction)",
}
"""Editable columns of a day, with their labels; the keys are the CSV and TOML key names."""


def _is_blank(value) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    return isinstance(value, float) and math.isnan(value)


class DayTableEditor:
    """Edits of the day table of the schedule in the editor (``AscentWorkspace.editing``)."""

    def __init__(self, ws: AscentWorkspace):
        self._ws = ws

    def select_editing(self, key: str) -> bool:
        ws = self._ws
        if key not in ws.schedules:
            return ws.refuse(f"no open schedule {key!r}")
        ws.param.update(editing=key, selected_day=None, error_message="")
        return True

    def select_day(self, day: int | None) -> bool:
        """Pick a day of the edited schedule (for moving, removing and opening as a case)."""
        ws = self._ws
        if day is None:
            ws.selected_day = None
            return True
        profile = ws.schedules.get(ws.editing)
        if profile is None or not 1 <= day <= len(profile.days):
            n = 0 if profile is None else len(profile.days)
            return ws.refuse(f"day = {day} is outside the allowed range 1-{n}")
        ws.param.update(selected_day=day, picked=(ws.editing, day))
        return True

    def _day_index(self, day: int | None) -> int | None:
        profile = self._ws.open_schedules.edited()
        if profile is None:
            return None
        if day is None:
            self._ws.refuse("pick a day first: click a row of the day table")
            return None
        if not 1 <= int(day) <= len(profile.days):
            self._ws.refuse(f"day = {day} is outside the allowed range 1-{len(profile.days)}")
            return None
        return int(day) - 1

    def _apply(self, days, status: str, pick: int | None = None) -> bool:
        """Replace the edited schedule's days (all or nothing); then pick day ``pick``."""
        ws = self._ws
        if not ws.open_schedules.replace(ws.editing, days, status=status):
            return False
        if pick is not None:
            ws.param.update(selected_day=pick, picked=(ws.editing, pick))
        return True

    def edit_cell(self, day: int, field: str, value) -> bool:
        """Set one field of one day; a blank high point or FiO2 goes back to its default
        (the sleeping altitude, air)."""
        i = self._day_index(day)
        if i is None:
            return False
        ws = self._ws
        if field not in DAY_FIELDS:
            return ws.refuse(f"{field!r} is not an editable column ({', '.join(DAY_FIELDS)})")
        profile = ws.schedules[ws.editing]
        entry = day_mapping(profile.days[i])
        if _is_blank(value):
            if field == "sleep_altitude_m":
                return ws.refuse(f"day {day} sleep_altitude_m is required (sleeping altitude, m)")
            entry.pop(field, None)
        else:
            try:
                entry[field] = float(value)
            except (TypeError, ValueError):
                return ws.refuse(f"day {day} {field} = {value!r} must be a number")
        days = list(profile.days)
        days[i] = AscentDay(**{"high_altitude_m": None, "fio2": 0.21, **entry})
        return self._apply(days, f"Day {day}: {field} changed.")

    def add_day(self, after: int | None = None) -> bool:
        """Insert a day after ``after`` (the end when None): a rest day at that day's
        sleeping altitude."""
        profile = self._ws.open_schedules.edited()
        if profile is None:
            return False
        n = len(profile.days)
        after = n if after is None else after
        if self._day_index(max(after, 1)) is None:
            return False
        source = profile.days[after - 1] if after >= 1 else profile.days[0]
        new = AscentDay(source.sleep_altitude_m, None, source.fio2)
        days = [*profile.days[:after], new, *profile.days[after:]]
        return self._apply(days, f"Day {after + 1} added (a rest day).", pick=after + 1)

    def remove_day(self, day: int) -> bool:
        i = self._day_index(day)
        if i is None:
            return False
        profile = self._ws.schedules[self._ws.editing]
        if len(profile.days) == 1:
            return self._ws.refuse("a schedule keeps at least 1 day; close it instead")
        days = [d for j, d in enumerate(profile.days) if j != i]
        return self._apply(days, f"Day {day} removed.", pick=min(day, len(days)))

    def move_day(self, day: int, offset: int) -> bool:
        """Move a day earlier (offset -1) or later (+1)."""
        i = self._day_index(day)
        if i is None:
            return False
        profile = self._ws.schedules[self._ws.editing]
        j = i + offset
        if not 0 <= j < len(profile.days):
            return self._ws.refuse(
                f"day {day} cannot move {'up' if offset < 0 else 'down'}: it is already "
                f"{'the first' if offset < 0 else 'the last'}"
            )
        days = list(profile.days)
        days[i], days[j] = days[j], days[i]
        return self._apply(days, f"Day {day} moved to day {j + 1}.", pick=j + 1)

    # ------------------------------------------------------------------ CSV
    def import_csv(self, text: str | bytes, filename: str = "days.csv") -> bool:
        """Replace the edited schedule's days with a CSV day table."""
        ws = self._ws
        if ws.open_schedules.edited() is None:
            return False
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            days = days_from_csv(text, filename)
        except UnicodeDecodeError:
            return ws.refuse(f"{filename}: not a text file (UTF-8 expected)")
        except AscentError as exc:
            return ws.refuse(str(exc))
        ok = self._apply(days, f"{len(days)} days read from {filename}.")
        if ok:
            ws.selected_day = None
        return ok

    def export_csv(self) -> str:
        """The edited schedule's day table as CSV ('' when nothing is open)."""
        profile = self._ws.schedules.get(self._ws.editing)
        return days_to_csv(profile.days) if profile else ""
