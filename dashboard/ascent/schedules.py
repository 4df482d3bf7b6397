"""The planner's open schedules: opening (examples, files, uploads), closing, duplicating,
renaming, which are compared and in which drawing slot, and the page address that names them.

No Panel import here. :class:`OpenSchedules` reads and writes the parameters of the
:class:`dashboard.ascent.state.AscentWorkspace` it belongs to; a schedule is read and checked
by :mod:`model.ascent` and solved by :func:`dashboard.ascent.comparison.solve`.
"""

from __future__ import annotations

import dataclasses
import re
import tomllib
from pathlib import Path
from typing import TYPE_CHECKING

from ...model.ascent import AscentDay, AscentError, AscentProfile, ascent_from_mapping, load_ascent
from ...model.scenario import ASCENT_EXAMPLES_DIR
from .comparison import solve

if TYPE_CHECKING:
    from .state import AscentWorkspace

EXAMPLE_DIR = ASCENT_EXAMPLES_DIR
MAX_COMPARED = 4
QUERY_KEY = "schedules"
"""Address key of the planner screen: the compared schedules, e.g. ``fast-to-5300m,slow``."""
NOTHING_TO_EDIT = "no schedule open to edit: load the examples or open a file"


def _slug(text: str) -> str:
    s = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return s or "schedule"


def day_mapping(day: AscentDay) -> dict:
    """A day as its TOML table: the keys a schedule file would hold for it."""
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
        "day": [day_mapping(d) for d in days],
    }


class OpenSchedules:
    """Open, close, copy and rename schedules; choose the compared ones and their slots."""

    def __init__(self, ws: AscentWorkspace):
        self._ws = ws
        self._originals: dict[str, AscentProfile] = {}

    def forget_examples(self) -> None:
        """No schedule counts as an untouched example any more (a workspace file replaced
        them; their days then travel in full)."""
        self._originals.clear()

    def is_example(self, key: str) -> bool:
        """True while ``key`` is an example file exactly as it was opened (no edit, no
        rename), so the page address can name it instead of carrying its days."""
        profile = self._ws.schedules.get(key)
        return profile is not None and self._originals.get(key) == profile

    @staticmethod
    def example_files(directory: Path | str = EXAMPLE_DIR) -> list[Path]:
        return sorted(Path(directory).glob("*.toml"))

    def _new_key(self, hint: str) -> str:
        base = _slug(hint)
        key, n = base, 2
        while key in self._ws.schedules:
            key, n = f"{base}-{n}", n + 1
        return key

    def edited(self) -> AscentProfile | None:
        """The schedule in the editor; None, with a refusal, when none is open."""
        profile = self._ws.schedules.get(self._ws.editing)
        if profile is None:
            self._ws.refuse(NOTHING_TO_EDIT)
        return profile

    # ------------------------------------------------------------------ opening
    def add_profile(
        self, profile: AscentProfile, key_hint: str = "", readings=(), compare: bool = True
    ) -> str | None:
        """Open a schedule under a new key (returned), with any readings logged for it;
        None and a message if unsolvable."""
        ws = self._ws
        readings = tuple(sorted(readings, key=lambda r: r.day))
        try:
            result, fit = solve(profile, readings)
        except AscentError as exc:
            ws.refuse(str(exc))
            return None
        key = self._new_key(key_hint or profile.name)
        updates = {
            "schedules": {**ws.schedules, key: profile},
            "results": {**ws.results, key: result},
            "error_message": "",
            "status_message": f"Opened {profile.name}.",
        }
        if readings:
            updates["readings"] = {**ws.readings, key: readings}
            updates["fits"] = {**ws.fits, key: fit}
        if not ws.editing:
            updates.update(editing=key, selected_day=None)
        if compare and len(ws.compared) < MAX_COMPARED:
            updates["compared"] = [*ws.compared, key]
            updates["slots"] = self._slots_for(updates["compared"])
        ws.param.update(**updates)
        return key

    def open_file(self, path: Path | str, readings=()) -> str | None:
        """Open a schedule file (``*.toml``); its key is the file's stem."""
        try:
            profile = load_ascent(path)
        except AscentError as exc:
            self._ws.refuse(str(exc))
            return None
        key = self.add_profile(profile, Path(path).stem, readings)
        in_examples = Path(path).resolve().parent == Path(EXAMPLE_DIR).resolve()
        if key is not None and in_examples and key == Path(path).stem:
            self._originals[key] = profile
        return key

    def open_text(self, text: str | bytes, filename: str = "uploaded.toml") -> str | None:
        """Open a schedule from the text of a ``*.toml`` file (an upload)."""
        refuse = self._ws.refuse
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            data = tomllib.loads(text)
            profile = ascent_from_mapping(data, filename)
        except UnicodeDecodeError:
            return refuse(f"{filename}: not a text file (UTF-8 expected)") or None
        except tomllib.TOMLDecodeError as exc:
            return refuse(f"{filename}: not valid TOML ({exc})") or None
        except AscentError as exc:
            return refuse(str(exc)) or None
        return self.add_profile(profile, Path(filename).stem)

    def load_examples(self, directory: Path | str = EXAMPLE_DIR) -> bool:
        """Open every example schedule not open yet; compare the first ones opened."""
        open_paths = {p.path for p in self._ws.schedules.values()}
        opened = []
        for path in self.example_files(directory):
            if str(path) in open_paths:
                continue
            key = self.open_file(path)
            if key is None:
                return False
            opened.append(key)
        self._ws.status_message = (
            f"Opened {len(opened)} example schedule(s)." if opened else "Examples already open."
        )
        return True

    # ------------------------------------------------------------------ closing, copying
    def close(self, key: str) -> bool:
        ws = self._ws
        if key not in ws.schedules:
            return ws.refuse(f"no open schedule {key!r}")
        schedules = {k: v for k, v in ws.schedules.items() if k != key}
        updates = {
            "schedules": schedules,
            "results": {k: v for k, v in ws.results.items() if k != key},
            "readings": {k: v for k, v in ws.readings.items() if k != key},
            "fits": {k: v for k, v in ws.fits.items() if k != key},
            "compared": [k for k in ws.compared if k != key],
            "slots": {k: v for k, v in ws.slots.items() if k != key},
            "error_message": "",
            "status_message": f"Closed {ws.schedules[key].name}.",
        }
        self._originals.pop(key, None)
        if ws.editing == key:
            updates.update(editing=next(iter(schedules), ""), selected_day=None)
        if ws.picked and ws.picked[0] == key:
            updates["picked"] = None
        ws.param.update(**updates)
        return True

    def duplicate(self) -> str | None:
        """Open a copy of the edited schedule (to try a variant beside the original)."""
        profile = self.edited()
        if profile is None:
            return None
        copy = dataclasses.replace(profile, name=f"{profile.name} (copy)", path="")
        readings = self._ws.readings.get(self._ws.editing, ())
        key = self.add_profile(copy, f"{self._ws.editing}-copy", readings)
        if key is not None:
            self._ws.param.update(editing=key, selected_day=None)
        return key

    def rename(self, name: str) -> bool:
        profile = self.edited()
        if profile is None:
            return False
        name = (name or "").strip()
        if not 1 <= len(name) <= 120:
            return self._ws.refuse(f"name = {name!r} must be 1-120 characters of text")
        return self.replace(self._ws.editing, profile.days, name=name, status=f"Renamed to {name}.")

    def replace(self, key: str, days, name: str | None = None, status: str = "") -> bool:
        """Validate and solve the new days (and name) of ``key``; all or nothing."""
        ws = self._ws
        old = ws.schedules[key]
        name = old.name if name is None else name
        readings = ws.readings.get(key, ())
        late = [r.day for r in readings if r.day > len(days)]
        if late:
            return ws.refuse(
                f"the schedule would keep {len(days)} days, but there is a reading on day "
                f"{late[0]}: remove or move the readings after day {len(days)} first"
            )
        try:
            profile = ascent_from_mapping(
                _profile_mapping(dataclasses.replace(old, name=name), days), name
            )
            profile = dataclasses.replace(profile, path=old.path)
            result, fit = solve(profile, readings)
        except AscentError as exc:
            return ws.refuse(str(exc))
        fits = {k: v for k, v in ws.fits.items() if k != key}
        if fit is not None:
            fits[key] = fit
        ws.param.update(
            schedules={**ws.schedules, key: profile},
            results={**ws.results, key: result},
            fits=fits,
            error_message="",
            status_message=status,
        )
        return True

    # ------------------------------------------------------------------ compared, address
    def set_compared(self, keys) -> bool:
        """Compare these schedules (at most four, in the order given)."""
        ws = self._ws
        keys = list(dict.fromkeys(keys))
        unknown = [k for k in keys if k not in ws.schedules]
        if unknown:
            return ws.refuse(f"no open schedule {unknown[0]!r}")
        if len(keys) > MAX_COMPARED:
            return ws.refuse(f"{len(keys)} schedules chosen; compare 2-{MAX_COMPARED} at a time")
        ws.param.update(slots=self._slots_for(keys), compared=keys, error_message="")
        return True

    def _slots_for(self, keys) -> dict[str, int]:
        kept = {k: v for k, v in self._ws.slots.items() if k in keys}
        free = [i for i in range(MAX_COMPARED) if i not in kept.values()]
        for k in keys:
            if k not in kept:
                kept[k] = free.pop(0)
        return kept

    def selection_query(self) -> str:
        """The address value of the compared schedules: keys joined by commas."""
        return ",".join(self._ws.compared)

    def restore_selection(
        self, text: str, directory: Path | str = EXAMPLE_DIR, shared: dict | None = None
    ) -> list[str]:
        """Open and compare the schedules named in the address; messages for unknown names.

        A key that is not open yet is taken from ``shared`` (key -> (profile or None,
        readings), what the address's ``plan`` carries; see :mod:`dashboard.ascent.sharing`)
        when it has a profile there, else looked for as ``<key>.toml`` among the examples.
        """
        ws = self._ws
        shared = shared or {}
        messages, keys = [], []
        for key in [k.strip() for k in (text or "").split(",") if k.strip()]:
            if key not in ws.schedules:
                profile, readings = shared.get(key, (None, ()))
                if profile is not None:
                    new = self.add_profile(profile, key, readings)
                    if new is None:
                        messages.append(ws.error_message)
                        continue
                    keys.append(new)
                    continue
                path = Path(directory) / f"{key}.toml"
                if not re.fullmatch(r"[A-Za-z0-9_.-]+", key) or not path.is_file():
                    messages.append(f"schedules: {key!r} is not an example schedule; ignored")
                    continue
                if self.open_file(path, readings) is None:
                    messages.append(ws.error_message)
                    continue
            keys.append(key)
        if len(keys) > MAX_COMPARED:
            messages.append(f"schedules: only the first {MAX_COMPARED} are compared")
            keys = keys[:MAX_COMPARED]
        if keys:
            self.set_compared(keys)
            if ws.editing not in ws.schedules:
                ws.editing = keys[0]
        return messages
