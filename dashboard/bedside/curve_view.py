"""The patient's curve on the bedside screen, with the measured points on it."""

from __future__ import annotations

import panel as pn
from bokeh.models import ColumnDataSource, LabelSet

from ..look import ARTERIAL, INK, REFERENCE, VENOUS
from ..responsive import Deferred, Gate, set_data
from ..widgets import saturation_figure
from .panes import BedsidePanel
from .state import BedsideState


class PatientCurve(BedsidePanel):
    """The fitted (else live) curve with the measured arterial and venous points on it.

    Redrawn after the numbers of a change, and only while ``gate`` (the tab) is shown.
    """

    def __init__(self, state: BedsideState, gate: Gate | None = None, **params):
        super().__init__(state, **params)
        self._lines = ColumnDataSource(data={"x": [], "arterial": [], "venous": [], "standard": []})
        self._points = ColumnDataSource(
            data={"x": [], "y": [], "color": [], "label": [], "align": [], "dx": []}
        )
        fig = saturation_figure(330, "", "14px")
        fig.line(
            "x",
            "standard",
            source=self._lines,
            color=REFERENCE,
            line_dash="dotted",
            line_width=1.5,
            legend_label="standard state",
        )
        fig.line(
            "x",
            "arterial",
            source=self._lines,
            color=ARTERIAL,
            line_width=3,
            legend_label="arterial",
        )
        fig.line(
            "x", "venous", source=self._lines, color=VENOUS, line_width=2, legend_label="venous"
        )
        fig.scatter(
            "x",
            "y",
            source=self._points,
            marker="square",
            size=13,
            color="color",
            line_color="white",
            line_width=2,
            legend_label="measured",
        )
        fig.add_layout(
            LabelSet(
                x="x",
                y="y",
                text="label",
                source=self._points,
                x_offset="dx",
                y_offset=-16,
                text_align="align",
                text_font_size="12px",
                text_color=INK,
            )
        )
        fig.legend.location = "bottom_right"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.8
        self._fig = fig
        self._layout = pn.Column(
            pn.pane.Bokeh(fig, sizing_mode="stretch_width"),
            css_classes=["o2-bs-curve"],
            sizing_mode="stretch_width",
        )
        # The fit is set anew (to None at least) on every accepted measurement: watching
        # it, even when set to an equal value, follows both with one redraw.
        later = Deferred(self._update, gate)
        state.fitting.param.watch(later, ["fit"], onlychanged=False)
        state.case.param.watch(later, ["pressure_unit", "result"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        view = st.patient_curve()
        self._fig.title.text = view["title"]
        moved = view["moved"]
        self._fig.xaxis.axis_label = view["x_label"]
        self._fig.x_range.end = view["x_max"]
        set_data(self._lines, {k: view[k] for k in ("x", "arterial", "venous", "standard")})
        xs, ys, colors, labels = [], [], [], []
        for key, color, text in (
            ("measured_arterial", ARTERIAL, "measured PaO2, SaO2"),
            ("measured_venous", VENOUS, "measured PvO2, SvO2"),
        ):
            x, y = view[key]
            if x is not None:
                xs.append(x)
                ys.append(y)
                colors.append(color)
                labels.append(text + moved)
        # The arterial point sits on the plateau, near the right edge: its words go left.
        aligns = ["right" if c == ARTERIAL else "left" for c in colors]
        dxs = [-10 if a == "right" else 10 for a in aligns]
        data = {"x": xs, "y": ys, "color": colors, "label": labels, "align": aligns, "dx": dxs}
        set_data(self._points, data)
