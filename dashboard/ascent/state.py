"""Session state of the ascent planner: open schedules, the one being edited, the ones
compared, their results and the day picked to open as a case.

No Panel import here: every action is a method that either applies completely or refuses
with :attr:`AscentWorkspace.error_message` naming the field, the value, the allowed range and
the unit, leaving every schedule as it was. Results come from :mod:`model.ascent`; the views
only format them.
"""

from __future__ import annotations

import dataclasses
import math
import re
import tomllib
from pathlib import Path
from urllib.parse import urlencode

import numpy as np
import param

from ...model.ascent import (
    AscentDay,
    AscentError,
    AscentProfile,
    AscentResult,
    ascent_from_mapping,
    days_from_csv,
    days_to_csv,
    load_ascent,
    run_ascent,
)
from ...model.ascent_report import CASE_KEYS, hypoxic_burden, night_case_inputs, nights_below
from ...model.scenario import ASCENT_EXAMPLES_DIR

EXAMPLE_DIR = ASCENT_EXAMPLES_DIR
MAX_COMPARED = 4
QUERY_KEY = "schedules"
"""Address key of the planner screen: the compared schedules, e.g. ``fast-to-5300m,slow``."""

DAY_FIELDS = {
    "sleep_altitude_m": "Sleeping altitude (m)",
    "high_altitude_m": "High point (m)",
    "fio2": "FiO2 (fraction)",
}
"""Editable columns of a day, with their labels; the keys are the CSV and TOML key names."""


def _slug(text: str) -> str:
    s = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return s or "schedule"


def _day_mapping(day: AscentDay) -> dict:
    out: dict = {"sleep_altitude_m": day.sleep_altitude_m}
    if day.high_altitude_m is not None:
        out["high_altitude_m"] = day.high_altitude_m
    if day.fio2 != 0.21:
        out["fio2"] = day.fio2
    return out


def _profile_mapping(profile: AscentProfile, days) -> dict:
    base = {k: v for k, v in dataclasses.asdict(profile.baseline).items() if v is not None}
    return {
        "name": profile.name,
        "description": profile.description,
        "baseline": base,
        "day": [_day_mapping(d) for d in days],
    }


def _is_blank(value) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    return isinstance(value, float) and math.isnan(value)


class AscentWorkspace(param.Parameterized):
    """The planner's open schedules and what is compared, edited and picked."""

    schedules = param.Dict(default={}, doc="key -> AscentProfile, in the order opened.")
    results = param.Dict(default={}, doc="key -> AscentResult of every open schedule.")
    compared = param.List(default=[], item_type=str, doc="Keys of the compared schedules.")
    slots = param.Dict(
        default={},
        doc="Compared key -> drawing slot 0-3 (colour and dash); a schedule keeps its slot "
        "while it stays compared, so its colour does not jump when another is unticked.",
    )
    editing = param.String(default="", doc="Key of the schedule in the editor ('' = none).")
    selected_day = param.Integer(
        default=None, allow_None=True, bounds=(1, None), doc="1-based day picked in the editor."
    )
    threshold_high_pct = param.Number(
        default=90.0,
        bounds=(50.0, 100.0),
        step=1.0,
        label="Upper SaO2 threshold (%)",
        doc="Nights below it are counted and it is the hypoxic-burden threshold [%].",
    )
    threshold_low_pct = param.Number(
        default=80.0,
        bounds=(40.0, 100.0),
        step=1.0,
        label="Lower SaO2 threshold (%)",
        doc="Nights below it are counted too [%].",
    )
    picked = param.Tuple(
        default=None, allow_None=True, length=2, doc="(key, day) picked to open as a case."
    )
    error_message = param.String(default="", doc="Why the last action was not applied.")
    status_message = param.String(default="", doc="What the last action did.")

    # ------------------------------------------------------------------ opening
    @staticmethod
    def example_files(directory: Path | str = EXAMPLE_DIR) -> list[Path]:
        return sorted(Path(directory).glob("*.toml"))

    def _refuse(self, message: str) -> bool:
        self.param.update(error_message=message.replace("[[day]] ", "day "), status_message="")
        return False

    def _new_key(self, hint: str) -> str:
        base = _slug(hint)
        key, n = base, 2
        while key in self.schedules:
            key, n = f"{base}-{n}", n + 1
        return key

    def _solve(self, profile: AscentProfile) -> AscentResult:
        """Run the model; a chain that cannot be solved is an AscentError for the screen."""
        try:
            return run_ascent(profile)
        except AscentError:
            raise
        except ValueError as exc:
            raise AscentError(f"{profile.name}: the model cannot solve this schedule ({exc})")

    def add_profile(self, profile: AscentProfile, key_hint: str = "") -> str | None:
        """Open a schedule under a new key (returned); None and a message if unsolvable."""
        try:
            result = self._solve(profile)
        except AscentError as exc:
            self._refuse(str(exc))
            return None
        key = self._new_key(key_hint or profile.name)
        updates = {
            "schedules": {**self.schedules, key: profile},
            "results": {**self.results, key: result},
            "error_message": "",
            "status_message": f"Opened {profile.name}.",
        }
        if not self.editing:
            updates.update(editing=key, selected_day=None)
        if len(self.compared) < MAX_COMPARED:
            updates["compared"] = [*self.compared, key]
            updates["slots"] = self._slots_for(updates["compared"])
        self.param.update(**updates)
        return key

    def open_file(self, path: Path | str) -> str | None:
        """Open a schedule file (``*.toml``); its key is the file's stem."""
        try:
            profile = load_ascent(path)
        except AscentError as exc:
            self._refuse(str(exc))
            return None
        return self.add_profile(profile, Path(path).stem)

    def open_text(self, text: str | bytes, filename: str = "uploaded.toml") -> str | None:
        """Open a schedule from the text of a ``*.toml`` file (an upload)."""
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            data = tomllib.loads(text)
            profile = ascent_from_mapping(data, filename)
        except UnicodeDecodeError:
            return self._refuse(f"{filename}: not a text file (UTF-8 expected)") or None
        except tomllib.TOMLDecodeError as exc:
            return self._refuse(f"{filename}: not valid TOML ({exc})") or None
        except AscentError as exc:
            return self._refuse(str(exc)) or None
        return self.add_profile(profile, Path(filename).stem)

    def load_examples(self, directory: Path | str = EXAMPLE_DIR) -> bool:
        """Open every example schedule not open yet; compare the first ones opened."""
        open_paths = {p.path for p in self.schedules.values()}
        opened = []
        for path in self.example_files(directory):
            if str(path) in open_paths:
                continue
            key = self.open_file(path)
            if key is None:
                return False
            opened.append(key)
        self.status_message = (
            f"Opened {len(opened)} example schedule(s)." if opened else "Examples already open."
        )
        return True

    def close(self, key: str) -> bool:
        if key not in self.schedules:
            return self._refuse(f"no open schedule {key!r}")
        schedules = {k: v for k, v in self.schedules.items() if k != key}
        results = {k: v for k, v in self.results.items() if k != key}
        updates = {
            "schedules": schedules,
            "results": results,
            "compared": [k for k in self.compared if k != key],
            "slots": {k: v for k, v in self.slots.items() if k != key},
            "error_message": "",
            "status_message": f"Closed {self.schedules[key].name}.",
        }
        if self.editing == key:
            updates.update(editing=next(iter(schedules), ""), selected_day=None)
        if self.picked and self.picked[0] == key:
            updates["picked"] = None
        self.param.update(**updates)
        return True

    # ------------------------------------------------------------------ comparing
    def set_compared(self, keys) -> bool:
        """Compare these schedules (at most four, in the order given)."""
        keys = list(dict.fromkeys(keys))
        unknown = [k for k in keys if k not in self.schedules]
        if unknown:
            return self._refuse(f"no open schedule {unknown[0]!r}")
        if len(keys) > MAX_COMPARED:
            return self._refuse(f"{len(keys)} schedules chosen; compare 2-{MAX_COMPARED} at a time")
        self.param.update(slots=self._slots_for(keys), compared=keys, error_message="")
        return True

    def _slots_for(self, keys) -> dict[str, int]:
        kept = {k: v for k, v in self.slots.items() if k in keys}
        free = [i for i in range(MAX_COMPARED) if i not in kept.values()]
        for k in keys:
            if k not in kept:
                kept[k] = free.pop(0)
        return kept

    def selection_query(self) -> str:
        """The address value of the compared schedules: keys joined by commas."""
        return ",".join(self.compared)

    def restore_selection(self, text: str, directory: Path | str = EXAMPLE_DIR) -> list[str]:
        """Open and compare the schedules named in the address; messages for unknown names.

        A key that is not open yet is looked for as ``<key>.toml`` among the examples.
        """
        messages, keys = [], []
        for key in [k.strip() for k in (text or "").split(",") if k.strip()]:
            if key not in self.schedules:
                path = Path(directory) / f"{key}.toml"
                if not re.fullmatch(r"[A-Za-z0-9_.-]+", key) or not path.is_file():
                    messages.append(f"schedules: {key!r} is not an example schedule; ignored")
                    continue
                if self.open_file(path) is None:
                    messages.append(self.error_message)
                    continue
            keys.append(key)
        if len(keys) > MAX_COMPARED:
            messages.append(f"schedules: only the first {MAX_COMPARED} are compared")
            keys = keys[:MAX_COMPARED]
        if keys:
            self.set_compared(keys)
            if self.editing not in self.schedules:
                self.editing = keys[0]
        return messages

    # ------------------------------------------------------------------ editing
    def select_editing(self, key: str) -> bool:
        if key not in self.schedules:
            return self._refuse(f"no open schedule {key!r}")
        self.param.update(editing=key, selected_day=None, error_message="")
        return True

    def select_day(self, day: int | None) -> bool:
        """Pick a day of the edited schedule (for moving, removing and opening as a case)."""
        if day is None:
            self.selected_day = None
            return True
        profile = self.schedules.get(self.editing)
        if profile is None or not 1 <= day <= len(profile.days):
            n = 0 if profile is None else len(profile.days)
            return self._refuse(f"day = {day} is outside the allowed range 1-{n}")
        self.param.update(selected_day=day, picked=(self.editing, day))
        return True

    def _replace(self, key: str, days, name: str | None = None, status: str = "") -> bool:
        """Validate and solve the new days (and name) of ``key``; all or nothing."""
        old = self.schedules[key]
        name = old.name if name is None else name
        try:
            profile = ascent_from_mapping(
                _profile_mapping(dataclasses.replace(old, name=name), days), name
            )
            profile = dataclasses.replace(profile, path=old.path)
            result = self._solve(profile)
        except AscentError as exc:
            return self._refuse(str(exc))
        self.param.update(
            schedules={**self.schedules, key: profile},
            results={**self.results, key: result},
            error_message="",
            status_message=status,
        )
        return True

    def _edited(self) -> AscentProfile | None:
        return self.schedules.get(self.editing)

    def _day_index(self, day: int | None) -> int | None:
        profile = self._edited()
        if profile is None:
            self._refuse("no schedule open to edit: load the examples or open a file")
            return None
        if day is None:
            self._refuse("pick a day first: click a row of the day table")
            return None
        if not 1 <= int(day) <= len(profile.days):
            self._refuse(f"day = {day} is outside the allowed range 1-{len(profile.days)}")
            return None
        return int(day) - 1

    def edit_cell(self, day: int, field: str, value) -> bool:
        """Set one field of one day; a blank high point or FiO2 goes back to its default
        (the sleeping altitude, air)."""
        i = self._day_index(day)
        if i is None:
            return False
        if field not in DAY_FIELDS:
            return self._refuse(f"{field!r} is not an editable column ({', '.join(DAY_FIELDS)})")
        profile = self._edited()
        entry = _day_mapping(profile.days[i])
        if _is_blank(value):
            if field == "sleep_altitude_m":
                return self._refuse(
                    f"day {day} sleep_altitude_m is required (sleeping altitude, m)"
                )
            entry.pop(field, None)
        else:
            try:
                entry[field] = float(value)
            except (TypeError, ValueError):
                return self._refuse(f"day {day} {field} = {value!r} must be a number")
        days = list(profile.days)
        days[i] = AscentDay(**{"high_altitude_m": None, "fio2": 0.21, **entry})
        return self._replace(self.editing, days, status=f"Day {day}: {field} changed.")

    def add_day(self, after: int | None = None) -> bool:
        """Insert a day after ``after`` (the end when None): a rest day at that day's
        sleeping altitude."""
        profile = self._edited()
        if profile is None:
            return self._refuse("no schedule open to edit: load the examples or open a file")
        n = len(profile.days)
        after = n if after is None else after
        if self._day_index(max(after, 1)) is None:
            return False
        source = profile.days[after - 1] if after >= 1 else profile.days[0]
        new = AscentDay(source.sleep_altitude_m, None, source.fio2)
        days = [*profile.days[:after], new, *profile.days[after:]]
        if self._replace(self.editing, days, status=f"Day {after + 1} added (a rest day)."):
            self.param.update(selected_day=after + 1, picked=(self.editing, after + 1))
            return True
        return False

    def remove_day(self, day: int) -> bool:
        i = self._day_index(day)
        if i is None:
            return False
        profile = self._edited()
        if len(profile.days) == 1:
            return self._refuse("a schedule keeps at least 1 day; close it instead")
        days = [d for j, d in enumerate(profile.days) if j != i]
        if self._replace(self.editing, days, status=f"Day {day} removed."):
            keep = min(day, len(days))
            self.param.update(selected_day=keep, picked=(self.editing, keep))
            return True
        return False

    def move_day(self, day: int, offset: int) -> bool:
        """Move a day earlier (offset -1) or later (+1)."""
        i = self._day_index(day)
        if i is None:
            return False
        profile = self._edited()
        j = i + offset
        if not 0 <= j < len(profile.days):
            return self._refuse(
                f"day {day} cannot move {'up' if offset < 0 else 'down'}: it is already "
                f"{'the first' if offset < 0 else 'the last'}"
            )
        days = list(profile.days)
        days[i], days[j] = days[j], days[i]
        if self._replace(self.editing, days, status=f"Day {day} moved to day {j + 1}."):
            self.param.update(selected_day=j + 1, picked=(self.editing, j + 1))
            return True
        return False

    def rename(self, name: str) -> bool:
        profile = self._edited()
        if profile is None:
            return self._refuse("no schedule open to edit: load the examples or open a file")
        name = (name or "").strip()
        if not 1 <= len(name) <= 120:
            return self._refuse(f"name = {name!r} must be 1-120 characters of text")
        return self._replace(self.editing, profile.days, name=name, status=f"Renamed to {name}.")

    def duplicate(self) -> str | None:
        """Open a copy of the edited schedule (to try a variant beside the original)."""
        profile = self._edited()
        if profile is None:
            self._refuse("no schedule open to edit: load the examples or open a file")
            return None
        copy = dataclasses.replace(profile, name=f"{profile.name} (copy)", path="")
        key = self.add_profile(copy, f"{self.editing}-copy")
        if key is not None:
            self.param.update(editing=key, selected_day=None)
        return key

    def import_csv(self, text: str | bytes, filename: str = "days.csv") -> bool:
        """Replace the edited schedule's days with a CSV day table."""
        if self._edited() is None:
            return self._refuse("no schedule open to edit: load the examples or open a file")
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            days = days_from_csv(text, filename)
        except UnicodeDecodeError:
            return self._refuse(f"{filename}: not a text file (UTF-8 expected)")
        except AscentError as exc:
            return self._refuse(str(exc))
        ok = self._replace(self.editing, days, status=f"{len(days)} days read from {filename}.")
        if ok:
            self.selected_day = None
        return ok

    def export_csv(self) -> str:
        """The edited schedule's day table as CSV ('' when nothing is open)."""
        profile = self._edited()
        return days_to_csv(profile.days) if profile else ""

    def set_threshold(self, name: str, value) -> bool:
        """Set ``threshold_high_pct`` or ``threshold_low_pct``; refuse a value off its range."""
        p = self.param[name]
        lo, hi = p.bounds
        label = p.label.rsplit(" (", 1)[0]
        if value is None or not isinstance(value, (int, float)) or not lo <= value <= hi:
            return self._refuse(f"{label} = {value!r} is outside the allowed range {lo:g}-{hi:g} %")
        self.param.update({name: float(value), "error_message": ""})
        return True

    # ------------------------------------------------------------------ reading
    @property
    def thresholds(self) -> tuple[float, float]:
        """(upper, lower) SaO2 thresholds as fractions."""
        return self.threshold_high_pct / 100.0, self.threshold_low_pct / 100.0

    def summary(self, key: str) -> dict:
        """The model's summary of ``key`` with the chosen thresholds applied."""
        r = self.results[key]
        hi, lo = self.thresholds
        s = dict(r.summary)
        s.update(
            name=r.profile.name,
            days=int(r.sleep_altitude_m.size),
            nights_below_high=nights_below(r, hi),
            nights_below_low=nights_below(r, lo),
            hypoxic_burden=hypoxic_burden(r, hi),
            slot=self.slots.get(key, 0),
        )
        return s

    def series(self, key: str) -> dict[str, np.ndarray]:
        """Day-by-day arrays of ``key`` for plotting (SaO2 in %, pressures in mmHg)."""
        r = self.results[key]
        n, h = r.night, r.high
        given = np.array([d.high_altitude_m is not None for d in r.profile.days], dtype=bool) & (
            r.high_altitude_m > r.sleep_altitude_m
        )
        return {
            "day": np.arange(1, r.sleep_altitude_m.size + 1),
            "sleep_altitude_m": r.sleep_altitude_m,
            "high_altitude_m": r.high_altitude_m,
            "high_given": given,
            "fio2": r.fio2,
            "pao2_mmhg": np.asarray(n.arterial.po2_mmhg, dtype=float),
            "sao2_pct": 100.0 * np.asarray(n.arterial.so2, dtype=float),
            "cao2_ml_dl": np.asarray(n.arterial.o2_content_ml_dl, dtype=float),
            "high_pao2_mmhg": np.asarray(h.arterial.po2_mmhg, dtype=float),
            "high_sao2_pct": 100.0 * np.asarray(h.arterial.so2, dtype=float),
            "high_cao2_ml_dl": np.asarray(h.arterial.o2_content_ml_dl, dtype=float),
            "flagged": np.array([bool(f) for f in r.flags]),
            "flags": ["; ".join(f) for f in r.flags],
            "name": r.profile.name,
            "slot": self.slots.get(key, 0),
        }

    def case_inputs(self, key: str, day: int) -> dict:
        return night_case_inputs(self.results[key], day)

    def case_link(self, key: str, day: int, path: str = "/") -> str:
        """Address of the case screen showing night ``day`` of ``key``."""
        inputs = self.case_inputs(key, day)
        pairs = {
            k: (v if isinstance(v, str) else format(v, ".10g"))
            for k, v in inputs.items()
            if k in CASE_KEYS
        }
        return f"{path}?{urlencode(pairs)}"

    def pick(self, key: str, day: int) -> bool:
        """Pick night ``day`` of ``key`` (a click on a plot) to open as a case."""
        r = self.results.get(key)
        if r is None:
            return self._refuse(f"no open schedule {key!r}")
        if not 1 <= day <= r.sleep_altitude_m.size:
            return self._refuse(
                f"day = {day} is outside the allowed range 1-{r.sleep_altitude_m.size}"
            )
        self.param.update(picked=(key, int(day)), error_message="")
        return True

    def picked_text(self) -> str:
        if not self.picked or self.picked[0] not in self.results:
            return ""
        key, day = self.picked
        r = self.results[key]
        if day > r.sleep_altitude_m.size:
            return ""
        i = day - 1
        return (
            f"{r.profile.name}, night {day}: {r.sleep_altitude_m[i]:.0f} m, FiO2 "
            f"{r.fio2[i]:.2f}, PaO2 {float(r.night.arterial.po2_mmhg[i]):.1f} mmHg, SaO2 "
            f"{100 * float(r.night.arterial.so2[i]):.1f} %"
        )

    def flag_list(self) -> list[tuple[str, list[tuple[int, float, str]], int]]:
        """For each compared schedule: its name, its (day, sleeping altitude, flag text)
        and its drawing slot."""
        out = []
        for key in self.compared:
            r = self.results[key]
            days = [
                (i + 1, float(r.sleep_altitude_m[i]), "; ".join(f))
                for i, f in enumerate(r.flags)
                if f
            ]
            out.append((r.profile.name, days, self.slots[key]))
        return out
