"""The planner's comparison panels: the overlaid figures, the picked night as a case link,
the thresholds, the side-by-side summary, the flags and the export buttons. Thin views over
:class:`dashboard.ascent.state.AscentWorkspace`; actions reach it on the next tick
(:func:`dashboard.ascent.views.later`)."""

from __future__ import annotations

import html
import io
from functools import partial
from urllib.parse import urlencode

import panel as pn

from ..look import ACCENT, INK
from ..responsive import Deferred
from ..widgets import Upload
from .export import comparison_csv, comparison_html, comparison_table_csv
from .figures import (
    BAND_NOTE,
    LEGEND_CSS,
    PANELS,
    SUMMARY_CSS,
    ComparisonFigures,
    flags_html,
    legend_html,
    summary_html,
)
from .state import MAX_COMPARED, AscentWorkspace
from .views import PRINT_HIDDEN, later

_THRESHOLDS = ("threshold_high_pct", "threshold_low_pct")
_WATCHED = [
    "schedules",
    "results",
    "compared",
    "threshold_high_pct",
    "threshold_low_pct",
    "readings",
    "fits",
    "pressure_unit",
]


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
        # The figures follow the numbers (a second message); a threshold moves only its line.
        self._redraw, self._move = Deferred(self._draw), Deferred(self._thresholds)
        ws.param.watch(self._update, _WATCHED)
        self._draw()  # at once: the page goes out with its figures drawn
        self._show_legend()
        self._note = pn.pane.HTML(
            html.escape(BAND_NOTE),
            css_classes=["o2-asc-band-note"],
            sizing_mode="stretch_width",
            styles={
                "font-size": "13px",
                "color": INK,
                "background": "#f4f6f2",
                "border-left": "4px solid #8a9a5b",
                "padding": "4px 10px",
            },
        )
        self._layout = pn.Column(
            self._legend,
            pn.Row(self._panes["altitude"], self._panes["pao2"], sizing_mode="stretch_width"),
            pn.Row(self._panes["sao2"], self._panes["cao2"], sizing_mode="stretch_width"),
            self._note,
            css_classes=["o2-asc-plots"],
            sizing_mode="stretch_width",
        )

    def _tapped(self, panel, _attr, _old, new) -> None:
        if not new:
            return
        data = self.figures.point_sources[panel].data
        i = new[0]
        later(self._ws.pick, data["key"][i], int(data["x"][i]))

    def _update(self, *events) -> None:
        if events and all(e.name in _THRESHOLDS for e in events):
            self._move()
            return
        self._redraw()
        self._show_legend()

    def _show_legend(self) -> None:
        ws = self._ws
        names = [(ws.results[k].profile.name, ws.slots.get(k, 0)) for k in ws.compared]
        self._legend.object = (
            legend_html(names)
            if names
            else (
                "<b>Nothing compared yet.</b> Load the example schedules or open a file, then tick "
                f"2–{MAX_COMPARED} schedules to compare."
            )
        )

    def _draw(self) -> None:
        ws = self._ws
        compared = [(k, ws.series(k)) for k in ws.compared]
        self.figures.update(compared, (ws.threshold_high_pct, ws.threshold_low_pct))

    def _thresholds(self) -> None:
        self.figures.set_thresholds((self._ws.threshold_high_pct, self._ws.threshold_low_pct))

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


class _ComparisonHTML(pn.viewable.Viewer):
    """An HTML pane redrawn from the state whenever the comparison changes."""

    css_class = ""
    watched: tuple[str, ...] = tuple(_WATCHED)

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._pane = pn.pane.HTML(
            "",
            css_classes=[self.css_class],
            stylesheets=[SUMMARY_CSS],
            sizing_mode="stretch_width",
        )
        ws.param.watch(self._update, list(self.watched))
        self._update()

    def _html(self) -> str:
        raise NotImplementedError

    def _update(self, *_events) -> None:
        self._pane.object = self._html()

    def __panel__(self):
        return self._pane


class SummaryTable(_ComparisonHTML):
    """The compared schedules side by side."""

    css_class = "o2-asc-summary"

    def _html(self) -> str:
        ws = self._ws
        return summary_html(
            [ws.summary(k) for k in ws.compared], (ws.threshold_high_pct, ws.threshold_low_pct)
        )


class FlagList(_ComparisonHTML):
    """Each compared schedule's days that break the ascent-rate guidance, in words."""

    css_class = "o2-asc-flags"
    watched = tuple(name for name in _WATCHED if name not in _THRESHOLDS)

    def _html(self) -> str:
        return flags_html(self._ws.flag_list())


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
        exports = (  # (writer, file name, label, class suffix, width), in screen order
            (
                comparison_table_csv,
                "ascent-comparison-table.csv",
                "Table to read (CSV, % as shown)",
                "table",
                250,
            ),
            (
                comparison_html,
                "ascent-comparison.html",
                "Comparison as an offline HTML page",
                "html",
                300,
            ),
            (comparison_csv, "ascent-comparison.csv", "Full-precision CSV", "csv", 220),
        )
        self._buttons = [
            pn.widgets.FileDownload(
                callback=lambda write=write: io.StringIO(write(ws)),
                filename=filename,
                label=label,
                color="primary",
                css_classes=[f"o2-asc-export-{suffix}"],
                stylesheets=[DOWNLOAD_CSS],
                width=width,
            )
            for write, filename, label, suffix, width in exports
        ]
        ws.param.watch(self._update, ["compared"])
        self._update()
        self._layout = pn.Column(
            pn.Row(*self._buttons),
            pn.pane.HTML(
                "The table to read has SaO2 and predicted SpO2 in %, pressures in the chosen "
                "unit and values rounded as on screen; the CSV keeps full precision under the "
                "model's own names (fractions, mmHg), for further calculation. To print the "
                "comparison, use the browser's print: the page prints without its controls.",
                styles={"font-size": "12px", "color": "#5b6770"},
            ),
            stylesheets=[PRINT_HIDDEN],
        )

    def _update(self, *_events) -> None:
        for button in self._buttons:
            button.disabled = not self._ws.compared

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
        self._layout = pn.Row(self._hi, self._lo, stylesheets=[PRINT_HIDDEN])

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


class SharePanel(pn.viewable.Viewer):
    """The link that carries the whole comparison, and the workspace file (save, open)."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._link = pn.pane.HTML(
            "",
            css_classes=["o2-asc-share"],
            sizing_mode="stretch_width",
            styles={"font-size": "14px", "color": INK},
        )
        self._save = pn.widgets.FileDownload(
            callback=lambda: io.StringIO(ws.workspace_json()),
            filename="ascent-workspace.json",
            label="Save the workspace as a file",
            color="primary",
            css_classes=["o2-asc-ws-save"],
            stylesheets=[DOWNLOAD_CSS],
            width=260,
        )
        self._open = Upload(
            ws.open_workspace,
            kind="json",
            accept=".json",
            what="Workspace file (.json)",
            default_name="ascent-workspace.json",
            css_classes=["o2-asc-ws-open"],
            width=260,
        )
        ws.param.watch(self._update, ["compared", "schedules", "readings", "pressure_unit"])
        self._update()
        self._layout = pn.Column(
            self._link,
            pn.Row(
                self._save,
                pn.pane.HTML("Open a workspace file:", margin=(12, 4, 0, 16)),
                self._open,
            ),
            stylesheets=[PRINT_HIDDEN],
            sizing_mode="stretch_width",
        )

    def _update(self, *_events) -> None:
        ws = self._ws
        query = {k: v for k, v in ws.address_query().items() if v is not None}
        href = html.escape("?" + urlencode(query))
        note = ws.plan_note()
        self._link.object = (
            f"<a class='o2-asc-share-link' href='{href}'>Link to this comparison</a>: the "
            "page address carries every compared schedule exactly (edited and copied ones "
            "too) and the readings logged for them; copy it from the address bar to share. "
            "The workspace file holds every open schedule, at any size."
            + (f"<br><b>{html.escape(note)}</b>" if note else "")
        )

    def __panel__(self):
        return self._layout
