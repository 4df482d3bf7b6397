"""The planner's day-table editor: one schedule's days in an editable table, with the day
and CSV actions. A thin view over :class:`dashboard.ascent.state.AscentWorkspace`."""

from __future__ import annotations

import html
import io

import pandas as pd
import panel as pn
from bokeh.models.widgets.tables import NumberFormatter

from ..widgets import Upload
from .state import AscentWorkspace
from .views import later, schedule_options


def _table_frame(ws: AscentWorkspace) -> pd.DataFrame:
    """The edited schedule's days, with the night SaO2 and a mark per guidance flag."""
    profile = ws.schedules.get(ws.editing)
    result = ws.results.get(ws.editing)
    days = profile.days if profile else ()
    sao2 = 100.0 * result.night.arterial.so2 if result is not None else []
    flags = result.flags if result is not None else []
    return pd.DataFrame(
        {
            "day": pd.Series(range(1, len(days) + 1), dtype="int64"),
            "sleep_altitude_m": pd.Series([d.sleep_altitude_m for d in days], dtype="float64"),
            "high_altitude_m": pd.Series([d.high_altitude_m for d in days], dtype="float64"),
            "fio2": pd.Series([d.fio2 for d in days], dtype="float64"),
            "sao2_pct": pd.Series([float(v) for v in sao2], dtype="float64"),
            "guidance": pd.Series(["⚠" * len(f) for f in flags], dtype="object"),
        }
    )


class ScheduleEditor(pn.viewable.Viewer):
    """One schedule as an editable day table, with day and CSV actions."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._syncing = False
        self._picker = pn.widgets.Select(
            label="Schedule to edit",
            options={},
            css_classes=["o2-asc-edit-select"],
            sizing_mode="stretch_width",
        )
        self._picker.param.watch(self._picked, "value")
        self._name = pn.widgets.TextInput(
            label="Name", css_classes=["o2-asc-name"], sizing_mode="stretch_width"
        )
        rename = pn.widgets.Button(label="Rename", css_classes=["o2-asc-rename"], align="end")
        rename.on_click(lambda _e: later(ws.rename, self._name.value))
        dup = pn.widgets.Button(label="Duplicate", css_classes=["o2-asc-duplicate"])
        dup.on_click(lambda _e: later(ws.duplicate))
        close = pn.widgets.Button(label="Close", css_classes=["o2-asc-close"])
        close.on_click(lambda _e: ws.editing and later(ws.close, ws.editing))
        self._table = pn.widgets.Tabulator(
            _table_frame(ws),
            show_index=False,
            selectable=1,
            disabled=False,
            editors={
                "day": None,
                "sleep_altitude_m": {"type": "number", "step": 50},
                "high_altitude_m": {"type": "number", "step": 50},
                "fio2": {"type": "number", "step": 0.01},
                "sao2_pct": None,
                "guidance": None,
            },
            titles={
                "day": "Day",
                "sleep_altitude_m": "Sleep",
                "high_altitude_m": "High",
                "fio2": "FiO2",
                "sao2_pct": "SaO2",
                "guidance": "Flags",
            },
            formatters={
                "day": NumberFormatter(format="0"),
                "sleep_altitude_m": NumberFormatter(format="0", nan_format=""),
                "high_altitude_m": NumberFormatter(format="0", nan_format=""),
                "fio2": NumberFormatter(format="0.00", nan_format=""),
                "sao2_pct": NumberFormatter(format="0.0", nan_format=""),
            },
            widths={
                "day": 50,
                "sleep_altitude_m": 78,
                "high_altitude_m": 72,
                "fio2": 62,
                "sao2_pct": 70,
                "guidance": 80,
            },
            configuration={"columnDefaults": {"headerSort": False}},
            layout="fit_columns",
            height=330,
            sizing_mode="stretch_width",
            css_classes=["o2-asc-table"],
        )
        self._table.on_edit(self._cell_edited)
        self._table.param.watch(self._row_selected, "selection")
        self._add = pn.widgets.Button(label="Add day", css_classes=["o2-asc-add"], width=90)
        self._remove = pn.widgets.Button(
            label="Remove day", css_classes=["o2-asc-remove"], width=105
        )
        self._up = pn.widgets.Button(label="▲ Up", css_classes=["o2-asc-up"], width=70)
        self._down = pn.widgets.Button(label="▼ Down", css_classes=["o2-asc-down"], width=80)
        self._add.on_click(lambda _e: later(ws.add_day, ws.selected_day))
        self._remove.on_click(lambda _e: later(self._on_selected, ws.remove_day))
        self._up.on_click(lambda _e: later(self._on_selected, ws.move_day, -1))
        self._down.on_click(lambda _e: later(self._on_selected, ws.move_day, 1))
        self._csv_in = Upload(
            ws.import_csv,
            kind="csv",
            accept=".csv",
            what="Day table (.csv)",
            default_name="days.csv",
            css_classes=["o2-asc-csv-in"],
            sizing_mode="stretch_width",
        )
        self._csv_out = pn.widgets.FileDownload(
            callback=self._csv_text,
            filename="days.csv",
            label="Save day table as CSV",
            css_classes=["o2-asc-csv-out"],
            color="default",
            sizing_mode="stretch_width",
        )
        self._hint = pn.pane.HTML(
            "",
            css_classes=["o2-asc-edit-hint"],
            styles={"font-size": "13px", "color": "#46545c"},
            margin=(0, 10),
        )
        ws.param.watch(self._refresh, ["schedules", "results", "editing"])
        ws.param.watch(self._follow_day, ["selected_day"])
        self._refresh()
        self._layout = pn.Column(
            self._picker,
            pn.Row(self._name, rename, sizing_mode="stretch_width"),
            pn.Row(dup, close),
            pn.pane.HTML(
                "Sleep: sleeping altitude, m · High: the day's high point, m (blank: none) · "
                "FiO2: fraction (blank: air) · SaO2: at night, % · Flags: ⚠ per guidance note",
                margin=(0, 10),
                styles={"font-size": "12px", "color": "#5b6770"},
            ),
            self._table,
            pn.Row(self._add, self._remove, self._up, self._down),
            self._hint,
            pn.pane.HTML(
                "Replace the days from a CSV file (<code>day,sleep_altitude_m,high_altitude_m,"
                "fio2</code>):",
                margin=(6, 10, 0, 10),
                styles={"font-size": "13px"},
            ),
            self._csv_in,
            self._csv_out,
            sizing_mode="stretch_width",
            css_classes=["o2-asc-editor"],
        )

    # -- actions (already on the next tick when they reach the state)
    def _on_selected(self, action, *args) -> None:
        action(self._ws.selected_day, *args)

    def _picked(self, event) -> None:
        if not self._syncing and event.new:
            later(self._ws.select_editing, event.new)

    def _cell_edited(self, event) -> None:
        day = int(event.row) + 1
        later(self._apply_edit, day, event.column, event.value)

    def _apply_edit(self, day, column, value) -> None:
        if not self._ws.edit_cell(day, column, value):
            self._refresh()  # the table shows the schedule as it still is

    def _row_selected(self, event) -> None:
        if self._syncing:
            return
        rows = list(event.new or [])
        later(self._ws.select_day, rows[0] + 1 if rows else None)

    def _csv_text(self):
        return io.StringIO(self._ws.export_csv())

    # -- refresh from the state
    def _refresh(self, *_events) -> None:
        ws = self._ws
        self._syncing = True
        try:
            self._picker.options = schedule_options(ws)
            self._picker.value = ws.editing or None
            profile = ws.schedules.get(ws.editing)
            self._name.value = profile.name if profile else ""
            self._table.value = _table_frame(ws)
            self._table.selection = [ws.selected_day - 1] if ws.selected_day else []
            self._csv_out.filename = f"{ws.editing or 'days'}-days.csv"
            self._csv_out.disabled = profile is None
            for b in (self._add, self._remove, self._up, self._down):
                b.disabled = profile is None
        finally:
            self._syncing = False
        self._follow_day()

    def _follow_day(self, *_events) -> None:
        ws = self._ws
        self._syncing = True
        try:
            want = [ws.selected_day - 1] if ws.selected_day else []
            if list(self._table.selection) != want:
                self._table.selection = want
        finally:
            self._syncing = False
        if ws.editing not in ws.schedules:
            self._hint.object = "No schedule open: load the examples or open a file."
        elif ws.selected_day and ws.selected_day <= len(ws.results[ws.editing].flags):
            flags = ws.results[ws.editing].flags[ws.selected_day - 1]
            note = "".join(f"<br>⚠ {html.escape(f)}" for f in flags)
            self._hint.object = (
                f"<b>Day {ws.selected_day}</b> picked: add a rest day after it, remove it or "
                f"move it.{note}"
            )
        else:
            self._hint.object = (
                "Click a cell to edit it (Enter applies, Esc cancels); click a day number to pick "
                "that day."
            )

    def __panel__(self):
        return self._layout
