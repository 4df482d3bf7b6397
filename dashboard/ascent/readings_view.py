"""The planner's readings panel: the SpO2 readings a trekker logs on the way for the edited
schedule, entered in a small table, read from a CSV file or pasted as CSV text, and what the
fit made of them. A thin view over :class:`dashboard.ascent.state.AscentWorkspace`; actions
reach it on the next tick (:func:`dashboard.ascent.views.later`)."""

from __future__ import annotations

import html
import io

import pandas as pd
import panel as pn
from bokeh.models.widgets.tables import NumberFormatter

from ...model.ascent_report import READING_COLUMNS
from ..widgets import Upload
from .state import READING_FIELDS, AscentWorkspace
from .views import PRINT_HIDDEN, later

_HINT_STYLE = {"font-size": "12px", "color": "#5b6770"}


def _frame(ws: AscentWorkspace) -> pd.DataFrame:
    readings = ws.readings.get(ws.editing, ())
    fit = ws.fits.get(ws.editing)
    return pd.DataFrame(
        {
            "day": pd.Series([r.day for r in readings], dtype="int64"),
            "altitude_m": pd.Series([r.altitude_m for r in readings], dtype="float64"),
            "spo2_pct": pd.Series([r.spo2_pct for r in readings], dtype="float64"),
            "heart_rate_min": pd.Series([r.heart_rate_min for r in readings], dtype="float64"),
            "lake_louise_score": pd.Series(
                [r.lake_louise_score for r in readings], dtype="float64"
            ),
            "forecast_pct": pd.Series(list(fit.fitted_pct) if fit else [], dtype="float64"),
        }
    )


class ReadingsPanel(pn.viewable.Viewer):
    """Readings of the edited schedule: table, one-reading form, CSV file and paste."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._syncing = False
        self._title = pn.pane.HTML("", margin=(0, 10), styles={"font-size": "13px"})
        self._fit = pn.pane.HTML(
            "",
            css_classes=["o2-asc-fit"],
            sizing_mode="stretch_width",
            margin=(2, 10),
            styles={
                "font-size": "13px",
                "background": "#eef4f3",
                "padding": "4px 8px",
                "border-radius": "4px",
            },
        )
        self._table = pn.widgets.Tabulator(
            _frame(ws),
            show_index=False,
            selectable=1,
            disabled=False,
            editors={
                "day": {"type": "number", "step": 1},
                "altitude_m": {"type": "number", "step": 10},
                "spo2_pct": {"type": "number", "step": 1},
                "heart_rate_min": {"type": "number", "step": 1},
                "lake_louise_score": {"type": "number", "step": 1},
                "forecast_pct": None,
            },
            titles={
                "day": "Day",
                "altitude_m": "Alt",
                "spo2_pct": "SpO2",
                "heart_rate_min": "HR",
                "lake_louise_score": "LLS",
                "forecast_pct": "Forecast",
            },
            widths={
                "day": 52,
                "altitude_m": 66,
                "spo2_pct": 66,
                "heart_rate_min": 56,
                "lake_louise_score": 52,
                "forecast_pct": 86,
            },
            formatters={
                "day": NumberFormatter(format="0"),
                "altitude_m": NumberFormatter(format="0", nan_format=""),
                "spo2_pct": NumberFormatter(format="0", nan_format=""),
                "heart_rate_min": NumberFormatter(format="0", nan_format=""),
                "lake_louise_score": NumberFormatter(format="0", nan_format=""),
                "forecast_pct": NumberFormatter(format="0", nan_format=""),
            },
            configuration={"columnDefaults": {"headerSort": False}},
            layout="fit_columns",
            height=150,
            sizing_mode="stretch_width",
            css_classes=["o2-asc-readings"],
        )
        self._table.on_edit(self._cell_edited)
        self._inputs = {
            name: pn.widgets.TextInput(
                label=label, css_classes=[f"o2-asc-rd-{name}"], width=82, margin=(0, 3)
            )
            for name, label in (
                ("day", "Day"),
                ("altitude_m", "Altitude m"),
                ("spo2_pct", "SpO2 %"),
                ("heart_rate_min", "HR /min"),
                ("lake_louise_score", "LLS 0-12"),
            )
        }
        add = pn.widgets.Button(label="Add reading", css_classes=["o2-asc-rd-add"], width=110)
        add.on_click(lambda _e: later(self._add))
        remove = pn.widgets.Button(
            label="Remove picked", css_classes=["o2-asc-rd-remove"], width=120
        )
        remove.on_click(lambda _e: later(self._remove))
        clear = pn.widgets.Button(label="Clear all", css_classes=["o2-asc-rd-clear"], width=90)
        clear.on_click(lambda _e: later(ws.clear_readings))
        self._file = Upload(
            ws.import_readings,
            kind="csv",
            accept=".csv",
            what="Readings file (.csv)",
            default_name="readings.csv",
            css_classes=["o2-asc-rd-file"],
            sizing_mode="stretch_width",
        )
        self._paste = pn.widgets.TextAreaInput(
            placeholder=",".join(READING_COLUMNS) + "\n3,3440,89,92,1",
            css_classes=["o2-asc-rd-paste"],
            height=70,
            sizing_mode="stretch_width",
        )
        paste = pn.widgets.Button(
            label="Read pasted CSV", css_classes=["o2-asc-rd-paste-apply"], width=140
        )
        paste.on_click(lambda _e: later(self._pasted))
        self._save = pn.widgets.FileDownload(
            callback=lambda: io.StringIO(ws.export_readings()),
            filename="readings.csv",
            label="Save readings as CSV",
            css_classes=["o2-asc-rd-save"],
            sizing_mode="stretch_width",
        )
        ws.param.watch(self._refresh, ["readings", "fits", "editing", "schedules"])
        self._refresh()
        self._layout = pn.Column(
            self._title,
            self._fit,
            self._table,
            pn.pane.HTML(
                "Alt: where it was taken, m · SpO2: %, at rest · HR: heart rate, /min · LLS: "
                "2018 Lake Louise score, 0-12 · Forecast: this person's forecast for that "
                "reading, %",
                margin=(0, 10),
                styles=_HINT_STYLE,
            ),
            pn.pane.HTML(
                "One reading: the day of the schedule, where it was taken, SpO2 at rest "
                "(awake, after a few minutes still); heart rate and the 2018 Lake Louise "
                "score are kept beside it, not fitted.",
                margin=(4, 10, 0, 10),
                styles=_HINT_STYLE,
            ),
            pn.Row(*self._inputs.values(), margin=(0, 5)),
            pn.Row(add, remove, clear),
            pn.pane.HTML(
                f"Or all readings at once, as a CSV file or pasted text (<code>"
                f"{','.join(READING_COLUMNS)}</code>; the last two may be empty):",
                margin=(6, 10, 0, 10),
                styles={"font-size": "13px"},
            ),
            self._file,
            self._paste,
            paste,
            self._save,
            sizing_mode="stretch_width",
            css_classes=["o2-asc-readings-panel"],
            stylesheets=[PRINT_HIDDEN],
        )

    # -- actions (already on the next tick when they reach the state)
    def _add(self) -> None:
        fields = {k: w.value for k, w in self._inputs.items()}
        if self._ws.add_reading(fields):
            for name in ("spo2_pct", "heart_rate_min", "lake_louise_score"):
                self._inputs[name].value = ""

    def _remove(self) -> None:
        rows = list(self._table.selection or [])
        if not rows:
            self._ws.refuse("pick a reading first: click a row of the readings table")
            return
        self._ws.remove_reading(rows[0] + 1)

    def _cell_edited(self, event) -> None:
        later(self._apply_edit, int(event.row) + 1, event.column, event.value)

    def _apply_edit(self, row, column, value) -> None:
        if not self._ws.edit_reading(row, column, value):
            self._refresh()

    def _pasted(self) -> None:
        if self._ws.import_readings(self._paste.value or "", "pasted text"):
            self._paste.value = ""

    # -- refresh from the state
    def _refresh(self, *_events) -> None:
        ws = self._ws
        self._syncing = True
        try:
            profile = ws.schedules.get(ws.editing)
            self._title.object = (
                f"For <b>{html.escape(profile.name)}</b> (the schedule in the editor)."
                if profile
                else "Open a schedule to log readings for it."
            )
            self._fit.object = html.escape(ws.fit_text(ws.editing)) if profile else ""
            self._table.value = _frame(ws)
            self._table.selection = []
            self._save.filename = f"{ws.editing or 'schedule'}-readings.csv"
            self._save.disabled = not ws.readings.get(ws.editing)
            day = ws.selected_day or (1 if profile else None)
            if profile and day and not self._inputs["day"].value:
                self._inputs["day"].value = str(day)
                self._inputs["altitude_m"].value = f"{profile.days[day - 1].sleep_altitude_m:g}"
        finally:
            self._syncing = False

    def __panel__(self):
        return self._layout


__all__ = ["READING_FIELDS", "ReadingsPanel"]
