"""Sharing the planner's workspace: every compared schedule, exactly, in the page address
(a compact ``plan`` value beside the ``schedules`` names), and every open schedule in a
workspace file.

No Panel import here. The address names unedited example schedules by their key, as before
(``?schedules=fast-to-5300m,slow-to-5300m``); an edited, copied or uploaded schedule, and
the readings logged for any schedule, travel in ``plan``: JSON of their name, description,
baseline, days and readings, compressed (zlib) and base64url-encoded, with a version prefix.
A plan longer than :data:`MAX_PLAN_CHARS` is not written: the page then says to save the
workspace as a file, which holds everything at any size. Whatever is read back is checked
by the model's own validation (:func:`model.ascent.ascent_from_mapping`,
:func:`model.ascent_report.check_reading`); a schedule that fails is named in a message and
left out, the others open.
"""

from __future__ import annotations

import base64
import binascii
import dataclasses
import json
import zlib
from typing import TYPE_CHECKING

from ...model.ascent import AscentError, AscentProfile, Baseline, ascent_from_mapping
from ...model.ascent_report import Reading, ReadingError, check_reading
from ..case.formatting import quoted
from .comparison import solve
from .schedules import MAX_COMPARED, QUERY_KEY, _profile_mapping, day_mapping

if TYPE_CHECKING:
    from .state import AscentWorkspace

PLAN_KEY = "plan"
"""Address key of the shared schedules' data (next to ``schedules``)."""
UNIT_KEY = "pressure_unit"
"""Address key of the pressure unit, as on the case screen (``mmHg`` or ``kPa``)."""
ADDRESS_KEYS = (QUERY_KEY, PLAN_KEY, UNIT_KEY)
"""Every key the planner reads from its address; any other gets the unknown-key notice."""
MAX_PLAN_CHARS = 6000
"""Longest ``plan`` written into the address [characters]; a larger workspace goes in a file."""
_VERSION = "1"
WORKSPACE_FORMAT = "o2transit-ascent-workspace"
WORKSPACE_VERSION = 1


class PlanError(ValueError):
    """A ``plan`` value or workspace file that cannot be read."""


def _days_text(days) -> str:
    out = []
    for d in days:
        text = f"{d.sleep_altitude_m:g}"
        if d.high_altitude_m is not None:
            text += f"/{d.high_altitude_m:g}"
        if d.fio2 != 0.21:
            text += f"@{d.fio2:g}"
        out.append(text)
    return ";".join(out)


def _days_from_text(text: str) -> list[dict]:
    days = []
    for i, part in enumerate(str(text).split(";")):
        entry: dict = {}
        rest, _, fio2 = part.partition("@")
        sleep, _, high = rest.partition("/")
        try:
            entry["sleep_altitude_m"] = float(sleep)
            if high:
                entry["high_altitude_m"] = float(high)
            if fio2:
                entry["fio2"] = float(fio2)
        except ValueError:
            raise PlanError(f"day {i + 1} = {part!r} is not 'sleep[/high][@fio2]'") from None
        days.append(entry)
    return days


def _readings_text(readings) -> str:
    def cell(v):
        return "" if v is None else f"{v:g}"

    return ";".join(
        f"{r.day},{r.altitude_m:g},{r.spo2_pct:g},{cell(r.heart_rate_min)},"
        f"{cell(r.lake_louise_score)}"
        for r in readings
    )


def _readings_from_text(text: str, n_days: int, where: str) -> tuple[Reading, ...]:
    out = []
    for i, part in enumerate(t for t in str(text).split(";") if t):
        cells = part.split(",") + [""] * 5
        entry = dict(
            zip(("day", "altitude_m", "spo2_pct", "heart_rate_min", "lake_louise_score"), cells)
        )
        out.append(check_reading(entry, n_days, f"{where} reading {i + 1}"))
    return tuple(out)


def _baseline_changes(profile: AscentProfile) -> dict:
    default = dataclasses.asdict(Baseline())
    return {k: v for k, v in dataclasses.asdict(profile.baseline).items() if v != default[k]}


def _profile_from(entry: dict, where: str) -> AscentProfile:
    data = {
        "name": entry.get("n", where),
        "description": entry.get("d", ""),
        "baseline": entry.get("b", {}),
        "day": _days_from_text(entry.get("t", "")),
    }
    return ascent_from_mapping(data, where)


def encode_plan(entries: list[dict]) -> str:
    """The ``plan`` text of entries ``{"k": key, "n", "d", "b", "t", "r"}`` (see module)."""
    raw = json.dumps({"s": entries}, separators=(",", ":"), ensure_ascii=False).encode()
    token = base64.urlsafe_b64encode(zlib.compress(raw, 9)).decode().rstrip("=")
    return f"{_VERSION}.{token}"


def decode_plan(text: str) -> list[dict]:
    """The entries of a ``plan`` text; PlanError when it is not one."""
    version, _, token = (text or "").strip().partition(".")
    if version != _VERSION or not token:
        raise PlanError(f"plan does not start with version '{_VERSION}.'")
    try:
        raw = zlib.decompress(base64.urlsafe_b64decode(token + "=" * (-len(token) % 4)))
        data = json.loads(raw.decode("utf-8"))
    except (binascii.Error, ValueError, zlib.error, UnicodeDecodeError):
        raise PlanError("plan is damaged (cut short when copied?)") from None
    entries = data.get("s") if isinstance(data, dict) else None
    if not isinstance(entries, list) or not all(
        isinstance(e, dict) and isinstance(e.get("k"), str) for e in entries
    ):
        raise PlanError("plan holds no list of schedules")
    return entries


class Sharing:
    """The address and the workspace file of an :class:`AscentWorkspace`."""

    def __init__(self, ws: AscentWorkspace):
        self._ws = ws

    # ------------------------------------------------------------------ the address
    def _entry(self, key: str) -> dict | None:
        ws = self._ws
        readings = ws.readings.get(key, ())
        entry: dict = {"k": key}
        if not ws.open_schedules.is_example(key):
            p = ws.schedules[key]
            entry.update(n=p.name, t=_days_text(p.days))
            if p.description:
                entry["d"] = p.description
            base = _baseline_changes(p)
            if base:
                entry["b"] = base
        elif not readings:
            return None
        if readings:
            entry["r"] = _readings_text(readings)
        return entry

    def plan(self) -> tuple[str | None, str]:
        """(``plan`` value or None when the names say it all, a note when it is too long)."""
        entries = [e for e in (self._entry(k) for k in self._ws.compared) if e]
        if not entries:
            return None, ""
        text = encode_plan(entries)
        if len(text) > MAX_PLAN_CHARS:
            return None, (
                f"These schedules need {len(text)} characters, more than a link should carry "
                f"({MAX_PLAN_CHARS}): the address names them only. Save the workspace as a "
                "file to share them."
            )
        return text, ""

    def query(self) -> dict[str, str | None]:
        """The planner's address pairs, ``schedules`` last (as the page has always ended)."""
        ws = self._ws
        plan, _note = self.plan()
        return {
            PLAN_KEY: plan,
            UNIT_KEY: None if ws.pressure_unit == "mmHg" else ws.pressure_unit,
            "schedules": ws.selection_query(),
        }

    def restore(self, pairs: dict[str, str]) -> list[str]:
        """Restore the compared schedules (and the unit) from address pairs; messages for
        what was not used."""
        ws = self._ws
        messages: list[str] = []
        unit = pairs.get(UNIT_KEY)
        if unit is not None:
            if unit in ws.param.pressure_unit.objects:
                ws.pressure_unit = unit
            else:
                messages.append(
                    f"pressure_unit = {quoted(unit)} is not one of mmHg, kPa; mmHg is used"
                )
        shared: dict = {}
        if pairs.get(PLAN_KEY):
            try:
                entries = decode_plan(pairs[PLAN_KEY])
            except PlanError as exc:
                entries = []
                messages.append(f"{exc}; only the example schedules named are opened")
            for e in entries:
                where = f"plan: {e['k']}"
                try:
                    profile = _profile_from(e, where) if "t" in e else None
                    n_days = len(profile.days) if profile else None
                    if n_days is None:
                        n_days = 400  # an example's length is checked when it is opened
                    readings = _readings_from_text(e.get("r", ""), n_days, where)
                except (AscentError, ReadingError, PlanError) as exc:
                    messages.append(f"{where}: {exc}" if isinstance(exc, PlanError) else str(exc))
                    shared[e["k"]] = ("refused", ())
                    continue
                shared[e["k"]] = (profile, readings)
        refused = [k for k, v in shared.items() if v[0] == "refused"]
        names = ",".join(
            k for k in (pairs.get("schedules") or "").split(",") if k.strip() not in refused
        )
        shared = {k: v for k, v in shared.items() if v[0] != "refused"}
        messages += ws.open_schedules.restore_selection(names, shared=shared)
        messages += [
            f"{quoted(key)} is not a setting of the ascent planner; ignored"
            for key in pairs
            if key not in ADDRESS_KEYS
        ]
        return messages

    # ------------------------------------------------------------------ the file
    def workspace_json(self) -> str:
        """Every open schedule, its readings, what is compared, the thresholds and the unit,
        as a workspace file (JSON)."""
        ws = self._ws
        schedules = []
        for key, p in ws.schedules.items():
            m = _profile_mapping(p, p.days)
            m["day"] = [day_mapping(d) for d in p.days]
            schedules.append(
                {
                    "key": key,
                    **m,
                    "readings": [
                        {k: v for k, v in dataclasses.asdict(r).items() if v is not None}
                        for r in ws.readings.get(key, ())
                    ],
                }
            )
        data = {
            "format": WORKSPACE_FORMAT,
            "version": WORKSPACE_VERSION,
            "compared": list(ws.compared),
            "editing": ws.editing,
            "thresholds_pct": [ws.threshold_high_pct, ws.threshold_low_pct],
            "pressure_unit": ws.pressure_unit,
            "schedules": schedules,
        }
        return json.dumps(data, indent=1, ensure_ascii=False) + "\n"

    def open_workspace(self, text: str | bytes, filename: str = "workspace.json") -> bool:
        """Replace the workspace with a workspace file: all of it, or (with a message
        naming the file, schedule and field) none of it."""
        ws = self._ws
        try:
            if isinstance(text, bytes):
                text = text.decode("utf-8-sig")
            data = json.loads(text)
        except UnicodeDecodeError:
            return ws.refuse(f"{filename}: not a text file (UTF-8 expected)")
        except json.JSONDecodeError as exc:
            return ws.refuse(
                f"{filename}: not a workspace file (JSON: {exc.msg}, line {exc.lineno})"
            )
        if not isinstance(data, dict) or data.get("format") != WORKSPACE_FORMAT:
            return ws.refuse(f"{filename}: not an o2transit ascent workspace file")
        if data.get("version") != WORKSPACE_VERSION:
            return ws.refuse(
                f"{filename}: version = {data.get('version')!r}; this planner reads version "
                f"{WORKSPACE_VERSION}"
            )
        entries = data.get("schedules")
        if not isinstance(entries, list) or not entries:
            return ws.refuse(f"{filename}: no schedules in the file")
        schedules, results, readings, fits = {}, {}, {}, {}
        for i, e in enumerate(entries):
            if not isinstance(e, dict) or not isinstance(e.get("key"), str):
                return ws.refuse(f"{filename}: schedule {i + 1} has no key")
            key = e["key"]
            where = f"{filename}: schedule {key!r}"
            if key in schedules:
                return ws.refuse(f"{where} appears twice")
            try:
                mapping = {k: v for k, v in e.items() if k not in ("key", "readings")}
                profile = ascent_from_mapping(mapping, where)
                raw = e.get("readings", [])
                if not isinstance(raw, list):
                    raise ReadingError(f"{where}: readings must be a list")
                rs = tuple(
                    check_reading(
                        r if isinstance(r, dict) else {},
                        len(profile.days),
                        f"{where} reading {j + 1}",
                    )
                    for j, r in enumerate(raw)
                )
                result, fit = solve(profile, rs)
            except (AscentError, ReadingError) as exc:
                return ws.refuse(str(exc))
            schedules[key], results[key] = profile, result
            if rs:
                readings[key], fits[key] = rs, fit
        compared = [k for k in data.get("compared", []) if k in schedules][:MAX_COMPARED]
        th = data.get("thresholds_pct", [90.0, 80.0])
        unit = data.get("pressure_unit", "mmHg")
        updates = {
            "schedules": schedules,
            "results": results,
            "readings": readings,
            "fits": fits,
            "compared": compared,
            "slots": {k: i for i, k in enumerate(compared)},
            "editing": data.get("editing")
            if data.get("editing") in schedules
            else next(iter(schedules)),
            "selected_day": None,
            "picked": None,
            "pressure_unit": unit if unit in ("mmHg", "kPa") else "mmHg",
            "error_message": "",
            "status_message": f"Opened the workspace {filename} ({len(schedules)} schedules).",
        }
        for name, value in zip(("threshold_high_pct", "threshold_low_pct"), th):
            lo, hi = ws.param[name].bounds
            if isinstance(value, (int, float)) and lo <= value <= hi:
                updates[name] = float(value)
        ws.open_schedules.forget_examples()
        ws.param.update(**updates)
        return True
