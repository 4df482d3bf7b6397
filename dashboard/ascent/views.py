"""Thin Panel views over :class:`dashboard.ascent.state.AscentWorkspace`.

Every user action is handed to the state on the next tick under the document lock
(``pn.state.execute(..., schedule=True)``), as the case screen's buttons do: the figures'
sources are then replaced safely. Views format; the state decides. Each element carries a
stable ``o2-asc-*`` CSS class for tests.
"""

from __future__ import annotations

import html
import io
from functools import partial

import pandas as pd
import panel as pn
from bokeh.models.widgets.tables import NumberFormatter

from ..look import ACCENT, INK
from .export import comparison_csv, comparison_html
from .figures import (
    LEGEND_CSS,
    PANELS,
    SUMMARY_CSS,
    ComparisonFigures,
    flags_html,
    legend_html,
    summary_html,
)
from .state import MAX_COMPARED, AscentWorkspace

_WATCHED = ["schedules", "results", "compared", "threshold_high_pct", "threshold_low_pct"]
MESSAGE_STYLE = {
    "background": "#fdecea",
    "color": "#7a1414",
    "padding": "4px 10px",
    "border-radius": "4px",
    "font-size": "14px",
}


def later(fn, *args) -> None:
    """Run ``fn(*args)`` on the next tick with the document lock (at once without a server)."""
    pn.state.execute(partial(fn, *args), schedule=True)


def _options(ws: AscentWorkspace) -> dict[str, str]:
    """Schedule name -> key for pickers; a repeated name gets its key beside it."""
    out: dict[str, str] = {}
    for key, profile in ws.schedules.items():
        label = profile.name if profile.name not in out else f"{profile.name} ({key})"
        out[label] = key
    return out


class StatusLine(pn.viewable.Viewer):
    """What the last action did, or why it was refused."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._status = pn.pane.HTML(
            "",
            css_classes=["o2-asc-status"],
            sizing_mode="stretch_width",
            styles={"font-size": "14px", "color": "#46545c"},
            margin=(0, 10),
        )
        self._error = pn.pane.HTML(
            "",
            css_classes=["o2-asc-error"],
            visible=False,
            sizing_mode="stretch_width",
            styles=MESSAGE_STYLE,
        )
        ws.param.watch(self._update, ["status_message", "error_message"])
        self._update()
        self._layout = pn.Column(self._error, self._status, sizing_mode="stretch_width")

    def _update(self, *_events) -> None:
        ws = self._ws
        self._error.object = f"Not applied: {html.escape(ws.error_message)}"
        self._error.visible = bool(ws.error_message)
        self._status.object = html.escape(ws.status_message)

    def __panel__(self):
        return self._layout


class ScheduleLibrary(pn.viewable.Viewer):
    """Open schedules (the examples or a file) and choose which to compare."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._examples = pn.widgets.Button(
            label="Load the example schedules",
            color="primary",
            css_classes=["o2-asc-examples"],
            sizing_mode="stretch_width",
        )
        self._examples.on_click(lambda _e: later(ws.load_examples))
        self._upload = pn.widgets.FileInput(
            accept=".toml",
            multiple=False,
            css_classes=["o2-asc-open"],
            sizing_mode="stretch_width",
        )
        self._upload.param.watch(self._uploaded, "value")
        self._compare = pn.widgets.CheckBoxGroup(
            label="Compare",
            options={},
            value=[],
            inline=False,
            css_classes=["o2-asc-compare"],
        )
        self._compare.param.watch(self._chosen, "value")
        self._syncing = False
        ws.param.watch(self._refresh, ["schedules", "compared"])
        self._refresh()
        caption = pn.pane.HTML(
            f"<b>Compare</b> (tick 2–{MAX_COMPARED})",
            margin=(6, 10, 0, 10),
            styles={"font-size": "14px"},
        )
        self._layout = pn.Column(
            self._examples,
            pn.pane.HTML(
                "Open a schedule file (.toml, schema in scenarios/ascents/README.md):",
                margin=(6, 10, 0, 10),
                styles={"font-size": "13px"},
            ),
            self._upload,
            caption,
            self._compare,
            sizing_mode="stretch_width",
        )

    def _uploaded(self, event) -> None:
        if event.new:
            # the file name may arrive after the content: read it on the tick
            later(lambda: self._ws.open_text(event.new, self._upload.filename or "uploaded.toml"))

    def _chosen(self, event) -> None:
        if self._syncing:
            return
        later(self._apply_choice, list(event.new))

    def _apply_choice(self, keys) -> None:
        if not self._ws.set_compared(keys):
            self._refresh()

    def _refresh(self, *_events) -> None:
        self._syncing = True
        try:
            self._compare.options = _options(self._ws)
            self._compare.value = list(self._ws.compared)
        finally:
            self._syncing = False

    def __panel__(self):
        return self._layout


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
        self._csv_in = pn.widgets.FileInput(
            accept=".csv", css_classes=["o2-asc-csv-in"], sizing_mode="stretch_width"
        )
        self._csv_in.param.watch(self._csv_uploaded, "value")
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

    def _csv_uploaded(self, event) -> None:
        if event.new:
            later(lambda: self._ws.import_csv(event.new, self._csv_in.filename or "days.csv"))

    def _csv_text(self):
        return io.StringIO(self._ws.export_csv())

    # -- refresh from the state
    def _refresh(self, *_events) -> None:
        ws = self._ws
        self._syncing = True
        try:
            self._picker.options = _options(ws)
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


class ComparisonPlots(pn.viewable.Viewer):
    """The four overlaid day-by-day figures; a click on a night picks it as a case."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self.figures = ComparisonFigures(height=255)
        for key, src in self.figures.point_sources.items():
            src.selected.on_change("indices", partial(self._tapped, key))
        self._legend = pn.pane.HTML(
            "",
            css_classes=["o2-asc-legend"],
            stylesheets=[LEGEND_CSS],
            sizing_mode="stretch_width",
        )
        f = self.figures.figures
        self._panes = {k: pn.pane.Bokeh(f[k], sizing_mode="stretch_width") for k, *_ in PANELS}
        ws.param.watch(self._update, _WATCHED)
        self._update()
        self._layout = pn.Column(
            self._legend,
            pn.Row(self._panes["altitude"], self._panes["pao2"], sizing_mode="stretch_width"),
            pn.Row(self._panes["sao2"], self._panes["cao2"], sizing_mode="stretch_width"),
            css_classes=["o2-asc-plots"],
            sizing_mode="stretch_width",
        )

    def _tapped(self, panel, _attr, _old, new) -> None:
        if not new:
            return
        data = self.figures.point_sources[panel].data
        i = new[0]
        later(self._ws.pick, data["key"][i], int(data["x"][i]))

    def _update(self, *_events) -> None:
        ws = self._ws
        compared = [(k, ws.series(k)) for k in ws.compared]
        self.figures.update(compared, (ws.threshold_high_pct, ws.threshold_low_pct))
        names = [(s["name"], s["slot"]) for _k, s in compared]
        self._legend.object = (
            legend_html(names)
            if names
            else (
                "<b>Nothing compared yet.</b> Load the example schedules or open a file, then tick "
                f"2–{MAX_COMPARED} schedules to compare."
            )
        )

    def __panel__(self):
        return self._layout


class CaseLink(pn.viewable.Viewer):
    """The night picked (on a plot or in the table), as a link to the case screen."""

    def __init__(self, ws: AscentWorkspace, case_path: str = "/", **params):
        super().__init__(**params)
        self._ws, self._path = ws, case_path
        self._pane = pn.pane.HTML(
            "",
            css_classes=["o2-asc-case"],
            sizing_mode="stretch_width",
            styles={
                "font-size": "14px",
                "background": "#eef4f3",
                "padding": "6px 12px",
                "border-left": f"5px solid {ACCENT}",
                "color": INK,
            },
        )
        ws.param.watch(self._update, ["picked", "results"])
        self._update()

    def _update(self, *_events) -> None:
        ws = self._ws
        text = ws.picked_text()
        if not text:
            self._pane.object = (
                "Click a night on a plot (or a row of the table) to open it as a case on the "
                "case screen."
            )
            return
        key, day = ws.picked
        href = html.escape(ws.case_link(key, day, self._path))
        self._pane.object = (
            f"<b>{html.escape(text)}</b> &nbsp; <a class='o2-asc-case-link' href='{href}' "
            f"target='_blank' rel='noopener'>Open this night as a case ↗</a>"
        )

    def __panel__(self):
        return self._pane


class SummaryTable(pn.viewable.Viewer):
    """The compared schedules side by side."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._pane = pn.pane.HTML(
            "",
            css_classes=["o2-asc-summary"],
            stylesheets=[SUMMARY_CSS],
            sizing_mode="stretch_width",
        )
        ws.param.watch(self._update, _WATCHED)
        self._update()

    def _update(self, *_events) -> None:
        ws = self._ws
        self._pane.object = summary_html(
            [ws.summary(k) for k in ws.compared], (ws.threshold_high_pct, ws.threshold_low_pct)
        )

    def __panel__(self):
        return self._pane


class FlagList(pn.viewable.Viewer):
    """Each compared schedule's days that break the ascent-rate guidance, in words."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._pane = pn.pane.HTML(
            "",
            css_classes=["o2-asc-flags"],
            stylesheets=[SUMMARY_CSS],
            sizing_mode="stretch_width",
        )
        ws.param.watch(self._update, _WATCHED)
        self._update()

    def _update(self, *_events) -> None:
        self._pane.object = flags_html(self._ws.flag_list())

    def __panel__(self):
        return self._pane


# FileDownload draws its button as "default" whatever its colour: our own look for exports.
DOWNLOAD_CSS = f"""
.bk-btn {{ background: {ACCENT} !important; color: #ffffff !important;
  border-color: {ACCENT} !important; font-weight: 600; }}
.bk-btn:hover {{ background: #0b3d41 !important; }}
.bk-btn:disabled {{ background: #9fb3b4 !important; border-color: #9fb3b4 !important; }}
"""


class ExportButtons(pn.viewable.Viewer):
    """Download the comparison as CSV or as a standalone HTML page."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._csv = pn.widgets.FileDownload(
            callback=lambda: io.StringIO(comparison_csv(ws)),
            filename="ascent-comparison.csv",
            label="Comparison as CSV",
            color="primary",
            css_classes=["o2-asc-export-csv"],
            stylesheets=[DOWNLOAD_CSS],
            width=220,
        )
        self._html = pn.widgets.FileDownload(
            callback=lambda: io.StringIO(comparison_html(ws)),
            filename="ascent-comparison.html",
            label="Comparison as an offline HTML page",
            color="primary",
            css_classes=["o2-asc-export-html"],
            stylesheets=[DOWNLOAD_CSS],
            width=300,
        )
        ws.param.watch(self._update, ["compared"])
        self._update()
        self._layout = pn.Row(self._csv, self._html)

    def _update(self, *_events) -> None:
        off = not self._ws.compared
        self._csv.disabled = self._html.disabled = off

    def __panel__(self):
        return self._layout


class Thresholds(pn.viewable.Viewer):
    """The two night-SaO2 thresholds of the summary (and the lines on the SaO2 plot)."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._hi = pn.widgets.FloatInput(
            label=ws.param.threshold_high_pct.label,
            value=ws.threshold_high_pct,
            step=1,
            css_classes=["o2-asc-th-high"],
            width=200,
        )
        self._lo = pn.widgets.FloatInput(
            label=ws.param.threshold_low_pct.label,
            value=ws.threshold_low_pct,
            step=1,
            css_classes=["o2-asc-th-low"],
            width=200,
        )
        self._hi.param.watch(partial(self._typed, "threshold_high_pct"), "value")
        self._lo.param.watch(partial(self._typed, "threshold_low_pct"), "value")
        ws.param.watch(self._refresh, ["threshold_high_pct", "threshold_low_pct"])
        self._layout = pn.Row(self._hi, self._lo)

    def _typed(self, name, event) -> None:
        if event.new != getattr(self._ws, name):
            later(self._apply, name, event.new)

    def _apply(self, name, value) -> None:
        if not self._ws.set_threshold(name, value):
            self._refresh()

    def _refresh(self, *_events) -> None:
        self._hi.value = self._ws.threshold_high_pct
        self._lo.value = self._ws.threshold_low_pct

    def __panel__(self):
        return self._layout
