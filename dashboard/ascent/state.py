"""Session state of the ascent planner: open schedules, the one being edited, the ones
compared, their results, the readings logged for them and the day picked to open as a case.

No Panel import here. :class:`AscentWorkspace` holds every parameter the views watch and
composes five parts that act on them: :class:`~.schedules.OpenSchedules` (open, close,
copy, rename, compare), :class:`~.editing.DayTableEditor` (the day table),
:class:`~.readings.ReadingsLog` (a trekker's readings and the re-forecast from them),
:class:`~.comparison.Comparison` (the model's results under the chosen thresholds and
pressure unit, the picked night) and :class:`~.sharing.Sharing` (the page address and the
workspace file). Every action either applies completely, in one update of the parameters, or
refuses with :attr:`AscentWorkspace.error_message` naming the field, the value, the allowed
range and the unit, leaving every schedule as it was. Results come from :mod:`model.ascent`;
the views only format them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import param

from ...model.ascent import AscentProfile
from .comparison import Comparison
from .editing import DAY_FIELDS, DayTableEditor
from .readings import READING_FIELDS, ReadingsLog
from .schedules import EXAMPLE_DIR, MAX_COMPARED, QUERY_KEY, OpenSchedules
from .sharing import PLAN_KEY, UNIT_KEY, Sharing

__all__ = [
    "DAY_FIELDS",
    "EXAMPLE_DIR",
    "MAX_COMPARED",
    "PLAN_KEY",
    "QUERY_KEY",
    "READING_FIELDS",
    "UNIT_KEY",
    "AscentWorkspace",
]


class AscentWorkspace(param.Parameterized):
    """The planner's open schedules and what is compared, edited and picked.

    The methods hand each action to the part that holds it (``open_schedules``,
    ``day_editor``, ``comparison``); their docstrings say what each does.
    """

    schedules = param.Dict(default={}, doc="key -> AscentProfile, in the order opened.")
    results = param.Dict(
        default={},
        doc="key -> AscentResult of every open schedule (re-forecast for the person when the "
        "schedule has readings).",
    )
    readings = param.Dict(default={}, doc="key -> tuple of Reading logged on that schedule.")
    fits = param.Dict(default={}, doc="key -> PersonFit of the schedule's readings.")
    pressure_unit = param.Selector(
        default="mmHg", objects=["mmHg", "kPa"], label="Pressures in", doc="Display unit."
    )
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

    def __init__(self, **params):
        super().__init__(**params)
        self.open_schedules = OpenSchedules(self)
        self.day_editor = DayTableEditor(self)
        self.readings_log = ReadingsLog(self)
        self.comparison = Comparison(self)
        self.sharing = Sharing(self)

    def refuse(self, message: str) -> bool:
        """Say why an action was not applied (False, for ``return ws.refuse(...)``)."""
        self.param.update(error_message=message.replace("[[day]] ", "day "), status_message="")
        return False

    # ------------------------------------------------------------------ open schedules
    example_files = staticmethod(OpenSchedules.example_files)

    def add_profile(self, profile: AscentProfile, key_hint: str = "") -> str | None:
        return self.open_schedules.add_profile(profile, key_hint)

    def open_file(self, path: Path | str) -> str | None:
        return self.open_schedules.open_file(path)

    def open_text(self, text: str | bytes, filename: str = "uploaded.toml") -> str | None:
        return self.open_schedules.open_text(text, filename)

    def load_examples(self, directory: Path | str = EXAMPLE_DIR) -> bool:
        return self.open_schedules.load_examples(directory)

    def close(self, key: str) -> bool:
        return self.open_schedules.close(key)

    def duplicate(self) -> str | None:
        return self.open_schedules.duplicate()

    def rename(self, name: str) -> bool:
        return self.open_schedules.rename(name)

    def set_compared(self, keys) -> bool:
        return self.open_schedules.set_compared(keys)

    def selection_query(self) -> str:
        return self.open_schedules.selection_query()

    def restore_selection(self, text: str, directory: Path | str = EXAMPLE_DIR) -> list[str]:
        return self.open_schedules.restore_selection(text, directory)

    # ------------------------------------------------------------------ sharing
    def address_query(self) -> dict[str, str | None]:
        return self.sharing.query()

    def plan_note(self) -> str:
        return self.sharing.plan()[1]

    def restore_address(self, pairs: dict[str, str]) -> list[str]:
        return self.sharing.restore(pairs)

    def workspace_json(self) -> str:
        return self.sharing.workspace_json()

    def open_workspace(self, text: str | bytes, filename: str = "workspace.json") -> bool:
        return self.sharing.open_workspace(text, filename)

    def set_pressure_unit(self, unit: str) -> bool:
        if unit not in self.param.pressure_unit.objects:
            return self.refuse(f"pressure unit = {unit!r} is not one of mmHg, kPa")
        self.param.update(pressure_unit=unit, error_message="")
        return True

    # ------------------------------------------------------------------ readings
    def add_reading(self, fields: dict) -> bool:
        return self.readings_log.add_reading(fields)

    def edit_reading(self, row: int, field: str, value) -> bool:
        return self.readings_log.edit_reading(row, field, value)

    def remove_reading(self, row: int) -> bool:
        return self.readings_log.remove_reading(row)

    def clear_readings(self) -> bool:
        return self.readings_log.clear()

    def import_readings(self, text: str | bytes, filename: str = "readings.csv") -> bool:
        return self.readings_log.import_csv(text, filename)

    def export_readings(self) -> str:
        return self.readings_log.export_csv()

    def fit_text(self, key: str) -> str:
        return self.readings_log.fit_text(key)

    # ------------------------------------------------------------------ the day table
    def select_editing(self, key: str) -> bool:
        return self.day_editor.select_editing(key)

    def select_day(self, day: int | None) -> bool:
        return self.day_editor.select_day(day)

    def edit_cell(self, day: int, field: str, value) -> bool:
        return self.day_editor.edit_cell(day, field, value)

    def add_day(self, after: int | None = None) -> bool:
        return self.day_editor.add_day(after)

    def remove_day(self, day: int) -> bool:
        return self.day_editor.remove_day(day)

    def move_day(self, day: int, offset: int) -> bool:
        return self.day_editor.move_day(day, offset)

    def import_csv(self, text: str | bytes, filename: str = "days.csv") -> bool:
        return self.day_editor.import_csv(text, filename)

    def export_csv(self) -> str:
        return self.day_editor.export_csv()

    # ------------------------------------------------------------------ the comparison
    def set_threshold(self, name: str, value) -> bool:
        return self.comparison.set_threshold(name, value)

    @property
    def thresholds(self) -> tuple[float, float]:
        return self.comparison.thresholds

    def summary(self, key: str) -> dict:
        return self.comparison.summary(key)

    def series(self, key: str) -> dict[str, np.ndarray]:
        return self.comparison.series(key)

    def flag_list(self) -> list[tuple[str, list[tuple[int, float, str]], int]]:
        return self.comparison.flag_list()

    def case_inputs(self, key: str, day: int) -> dict:
        return self.comparison.case_inputs(key, day)

    def case_link(self, key: str, day: int, path: str = "/") -> str:
        return self.comparison.case_link(key, day, path)

    def pick(self, key: str, day: int) -> bool:
        return self.comparison.pick(key, day)

    def picked_text(self) -> str:
        return self.comparison.picked_text()
