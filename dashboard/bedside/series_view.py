"""The shift panel of the bedside screen: gases added one after another or pasted, their
trend in a table and four small plots, and the points moving on the curve
(watches ``state.series``)."""

from __future__ import annotations

import html

import panel as pn
from bokeh.models import ColumnDataSource, FixedTicker, LabelSet, Range1d
from bokeh.plotting import figure

from ..look import ACCENT, ARTERIAL, INK, VENOUS
from ..responsive import Deferred, Gate, set_data
from ..widgets import saturation_figure
from .panes import NOTE_STYLE, BedsidePanel, action_button, heading, message_pane, show, table_pane
from .state import BedsideState

TREND_PLOTS = (
    # key of GasSeries.trend_data, title (unit filled in), colour
    ("pf", "P/F ({p})", ACCENT),
    ("shunt", "Shunt, fitted (%)", ARTERIAL),
    ("do2", "DO2 (mL/min)", INK),
    ("p50", "P50 in vivo ({p})", VENOUS),
)

PASTE_HINT = (
    "time,pao2_kpa,paco2_kpa,ph,sao2_percent,hb_g_l,fio2,temperature_c,pvo2_kpa,svo2_percent,"
    "cardiac_output_l_min\n10:00,9.8,5.3,7.28,92,84,0.6,38.6,4.9,60,6.8"
)


class SeriesPanel(BedsidePanel):
    """One patient's gases over the shift, each fitted in turn; trend and points on the curve.

    ``gate``: whether the tab is on screen; the figures are redrawn only while it is.
    """

    def __init__(self, state: BedsideState, gate: Gate | None = None, **params):
        super().__init__(state, **params)
        series = state.series
        s = series.param
        self._time = pn.widgets.TextInput.from_param(
            s.gas_time, css_classes=["o2-bs-gas-time"], width=160, placeholder="06:00"
        )
        self._add = action_button(
            "Add this gas to the shift",
            "o2-bs-gas-add",
            series.add_current,
            color="primary",
            width=210,
            align="end",
        )
        self._remove = action_button(
            "Remove last gas",
            "o2-bs-gas-remove",
            lambda: series.remove_gas(len(series.gases) - 1),
            width=140,
            align="end",
        )
        self._clear = action_button(
            "Clear shift", "o2-bs-gas-clear", series.clear_series, width=110, align="end"
        )
        self._paste = pn.widgets.TextAreaInput.from_param(
            s.pasted,
            css_classes=["o2-bs-gas-paste"],
            placeholder=PASTE_HINT,
            sizing_mode="stretch_width",
            height=110,
        )
        self._read = action_button(
            "Read pasted gases", "o2-bs-gas-read", series.read_pasted, width=160
        )
        self._message = message_pane("o2-bs-gas-msg")
        self._table = table_pane("o2-bs-trend")
        self._build_figures()
        self._layout = pn.Column(
            heading("6 · Gases through the shift"),
            pn.pane.HTML(
                "Add the gas on the form at the time it was drawn, or paste several as CSV "
                "(columns named as for <code>o2transit batch</code>, plus <code>time</code>). "
                "Each gas is fitted in turn; points on the curve are at the patient's "
                "temperature.",
                styles=NOTE_STYLE,
                margin=(0, 10),
                sizing_mode="stretch_width",
            ),
            pn.Row(self._time, self._add, self._remove, self._clear),
            pn.Card(
                self._paste,
                self._read,
                title="Paste gases as CSV",
                collapsed=True,
                sizing_mode="stretch_width",
                header_background="#e6efee",
                css_classes=["o2-bs-gas-paste-card"],
                margin=(3, 10),
            ),
            self._message,
            self._table,
            pn.Row(
                pn.GridBox(*self._trend_panes, ncols=2, sizing_mode="stretch_width"),
                pn.Column(
                    pn.pane.Bokeh(self._curve, sizing_mode="stretch_width"),
                    sizing_mode="stretch_width",
                ),
                css_classes=["o2-bs-trend-plots"],
                sizing_mode="stretch_width",
            ),
            css_classes=["o2-bs-series"],
            sizing_mode="stretch_width",
        )
        series.param.watch(self._update, ["trend", "series_message"])
        state.case.param.watch(self._update, ["pressure_unit"])
        later = Deferred(self._draw, gate)
        series.param.watch(later, ["trend"])
        state.case.param.watch(later, ["pressure_unit"])
        self._update()
        self._draw()

    # ------------------------------------------------------------------ figures
    def _build_figures(self) -> None:
        self._trend_sources, self._trend_figs, self._trend_panes = [], [], []
        for _key, _title, color in TREND_PLOTS:
            src = ColumnDataSource(data={"x": [], "y": [], "label": []})
            fig = figure(
                height=170,
                sizing_mode="stretch_width",
                toolbar_location=None,
                title="",
                x_range=Range1d(-0.5, 8.5),
            )
            fig.title.text_font_size = "13px"
            fig.title.text_color = INK
            fig.background_fill_color = "#fbfaf7"
            fig.grid.grid_line_color = "#ebe7df"
            # Ticks at the gases, named by the time each was drawn; spaced by elapsed hours.
            fig.xaxis.ticker = FixedTicker(ticks=[])
            fig.xaxis.axis_label = "time drawn"
            fig.y_range.range_padding = 0.2
            fig.line("x", "y", source=src, color=color, line_width=2.5)
            fig.scatter("x", "y", source=src, size=9, color=color, line_color="white")
            self._trend_sources.append(src)
            self._trend_figs.append(fig)
            self._trend_panes.append(pn.pane.Bokeh(fig, sizing_mode="stretch_width"))
        curve = saturation_figure(350, "", "13px")
        self._last_curve = ColumnDataSource(data={"x": [], "y": []})
        self._art = ColumnDataSource(data={"x": [], "y": [], "label": [], "first": []})
        self._ven = ColumnDataSource(data={"x": [], "y": [], "label": [], "first": []})
        curve.line(
            "x",
            "y",
            source=self._last_curve,
            color=ARTERIAL,
            line_width=2,
            line_alpha=0.6,
            legend_label="latest gas, fitted curve",
        )
        for src, color, marker, name in (
            (self._art, ARTERIAL, "circle", "arterial"),
            (self._ven, VENOUS, "square", "venous"),
        ):
            curve.line("x", "y", source=src, color=color, line_width=1.5, line_dash="dashed")
            curve.scatter(
                "x",
                "y",
                source=src,
                marker=marker,
                size=10,
                color=color,
                line_color="white",
                legend_label=f"{name}, in time order",
            )
        for src in (self._art, self._ven):
            # The first gas is named left of its point, the last right of it.
            y_offset = 6 if src is self._art else -5  # arterial names above, venous beside
            for text, x_offset, align in (("first", -8, "right"), ("label", 8, "left")):
                curve.add_layout(
                    LabelSet(
                        x="x",
                        y="y",
                        text=text,
                        source=src,
                        x_offset=x_offset,
                        y_offset=y_offset,
                        text_align=align,
                        text_font_size="11px",
                        text_color=INK,
                    )
                )
        curve.legend.location = "bottom_right"
        curve.legend.label_text_font_size = "11px"
        curve.legend.background_fill_alpha = 0.85
        self._curve = curve

    def _draw(self, *_events) -> None:
        series = self._state.series
        unit = self._state.case.pressure_unit
        data = series.trend_data()
        hours = list(data["hours"])
        span = max(hours) if hours else 8.0
        for (key, title, _c), src, fig in zip(TREND_PLOTS, self._trend_sources, self._trend_figs):
            fig.title.text = title.format(p=unit)
            fig.x_range.start, fig.x_range.end = -0.06 * max(span, 1.0), 1.22 * max(span, 1.0)
            set_data(src, {"x": hours, "y": list(data[key]), "label": list(data["time"])})
            fig.xaxis.ticker.ticks = hours
            fig.xaxis.major_label_overrides = dict(zip(hours, data["time"], strict=True))
        pts = series.points_data()
        self._curve.title.text = (
            "Measured points through the shift, at the patient's temperature"
            if hours
            else "Add gases to see the points move on the curve"
        )
        self._curve.xaxis.axis_label = f"PO2 ({unit})"
        if pts["x_max"]:
            self._curve.x_range.end = pts["x_max"]
        for src, (xs, ys, labels) in ((self._art, pts["arterial"]), (self._ven, pts["venous"])):
            # Points of a shift lie close together: only the first and the last are named,
            # the dashed line between them shows the way they went.
            last = [t if i == len(labels) - 1 and i else "" for i, t in enumerate(labels)]
            first = [t if i == 0 else "" for i, t in enumerate(labels)]
            set_data(src, {"x": list(xs), "y": list(ys), "label": last, "first": first})
        if pts["curve"] is not None:
            set_data(self._last_curve, {"x": pts["curve"][0], "y": pts["curve"][1]})
        else:
            set_data(self._last_curve, {"x": [], "y": []})

    # ------------------------------------------------------------------ numbers
    def _update(self, *_events) -> None:
        series = self._state.series
        bad = series.series_message.startswith(("Not ", "Calculate", "Time drawn"))
        show(self._message, series.series_message, error=bad)
        self._remove.disabled = not series.gases
        rows = series.trend_rows()
        if not rows:
            self._table.object = "<p style='color:#46545c'>No gases in the shift yet.</p>"
            return
        head = series.trend_head()
        th = "".join(
            f"<th style='text-align:{'right' if 1 <= i < len(head) - 2 else 'left'}'>"
            f"{html.escape(h)}</th>"
            for i, h in enumerate(head)
        )
        body = "".join(
            f"<tr data-time='{html.escape(r.time)}'><td>{html.escape(r.time)}</td>"
            f"<td class='delta'>{html.escape(r.hours)}</td>"
            + "".join(f"<td class='val'>{html.escape(v)}</td>" for v in r.values)
            + f"<td class='range'>{html.escape(r.points)}</td>"
            f"<td class='range'>{html.escape(r.verdict)}</td></tr>"
            for r in rows
        )
        self._table.object = f"<table class='o2t o2-bs-trend-t'><tr>{th}</tr>{body}</table>"
