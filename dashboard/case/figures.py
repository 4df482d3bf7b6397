"""The case screen's figures: the dissociation curves with their points, the PO2 cascade.

Thin views: each Bokeh figure is built once on ``ColumnDataSource``s whose changed columns
are sent when the state's result, baseline or pressure unit changes (after the numbers, in a
second message: :class:`dashboard.responsive.Deferred`); every number drawn is read from
:class:`~dashboard.case.state.CaseState`, already in display units.
"""

from __future__ import annotations

import panel as pn
from bokeh.core.properties import value as fixed_value
from bokeh.models import ColumnDataSource, FactorRange, LabelSet, Range1d
from bokeh.plotting import figure

from ..look import ARTERIAL, INK, REFERENCE, VENOUS
from ..responsive import Deferred, set_data
from ..widgets import saturation_figure
from .formatting import fmt
from .state import CaseState


class CurvePlot(pn.viewable.Viewer):
    """Dissociation curves with loading and unloading points and the extraction."""

    def __init__(self, state: CaseState, **params):
        super().__init__(**params)
        self._state = state
        self._now = ColumnDataSource(data={"x": [], "arterial": [], "venous": [], "standard": []})
        self._base = ColumnDataSource(data={"x": [], "arterial": [], "venous": []})
        self._points = ColumnDataSource(data={"x": [], "y": [], "color": [], "label": []})
        self._base_points = ColumnDataSource(data={"x": [], "y": []})
        self._p50 = ColumnDataSource(
            data={
                "x": [],
                "y": [],
                "color": [],
                "label": [],
                "dx": [],
                "dy": [],
                "align": [],
                "label_y": [],
            }
        )
        self._segment = ColumnDataSource(data={"x0": [], "y0": [], "x1": [], "y1": []})
        self._bridge = ColumnDataSource(data={"x0": [], "y0": [], "x1": [], "y1": []})
        self._note = ColumnDataSource(data={"x": [], "y": [], "text": []})

        fig = saturation_figure(430, "Where blood loads and unloads O2", "15px")
        self._standard_line = fig.line(
            "x",
            "standard",
            source=self._now,
            color=REFERENCE,
            line_width=1.5,
            line_dash="dotted",
            legend_label="standard state",
        )
        fig.line("x", "arterial", source=self._base, color=ARTERIAL, line_width=2, alpha=0.25)
        fig.line("x", "venous", source=self._base, color=VENOUS, line_width=2, alpha=0.25)
        fig.scatter(
            "x",
            "y",
            source=self._base_points,
            size=10,
            color=INK,
            alpha=0.25,
            legend_label="baseline",
        )
        for blood, color in (("arterial", ARTERIAL), ("venous", VENOUS)):
            fig.line(
                "x",
                blood,
                source=self._now,
                color=color,
                line_width=3,
                legend_label=f"{blood} conditions",
            )
        fig.segment(
            "x0", "y0", "x1", "y1", source=self._bridge, color=INK, line_dash="dashed", line_width=1
        )
        fig.segment("x0", "y0", "x1", "y1", source=self._segment, color=INK, line_width=4)
        fig.segment(
            "x", "y", "x", 0, source=self._p50, color="color", line_dash="dotted", line_width=1.5
        )
        fig.scatter(
            "x", "y", source=self._p50, marker="diamond", size=13, color="color", line_color="white"
        )
        fig.scatter(
            "x", "y", source=self._points, size=14, color="color", line_color="white", line_width=2
        )
        fig.add_layout(
            LabelSet(
                x="x",
                y="y",
                text="label",
                source=self._points,
                x_offset=10,
                y_offset=-18,
                text_font_size="13px",
                text_color=INK,
            )
        )
        fig.add_layout(
            LabelSet(
                x="x",
                y="label_y",
                text="label",
                source=self._p50,
                x_offset="dx",
                y_offset="dy",
                text_align="align",
                text_font_size="12px",
                text_color="color",
                text_font_style="bold",
            )
        )
        fig.add_layout(
            LabelSet(
                x="x",
                y="y",
                text="text",
                source=self._note,
                x_offset=8,
                text_align="left",
                text_baseline="middle",
                text_font_size="14px",
                text_font_style="bold",
                text_color=INK,
                background_fill_color="white",
                background_fill_alpha=0.85,
            )
        )
        fig.legend.location = "bottom_right"
        fig.legend.background_fill_alpha = 0.8
        fig.legend.label_text_font_size = "12px"
        self._fig = fig
        self._caption = pn.pane.HTML(
            "", css_classes=["o2-curve-caption"], styles={"font-size": "13px", "color": "#46545c"}
        )
        self._layout = pn.Column(
            pn.pane.Bokeh(fig, sizing_mode="stretch_width"),
            self._caption,
            css_classes=["o2-curve"],
            sizing_mode="stretch_width",
        )
        state.param.watch(Deferred(self._update), ["result", "baseline", "pressure_unit"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        view = st.curve_view()
        if view is None:
            return
        unit = st.pressure_unit
        t = float(st.result.temperature_c)
        at = f" at the case's {t:.1f} °C (not as read at 37 °C)" if abs(t - 37.0) > 0.05 else ""
        self._fig.xaxis.axis_label = f"PO2 ({unit}){at}"
        for item in self._fig.legend.items:
            if self._standard_line in item.renderers:
                item.label = fixed_value(f"standard ({st.standard_conditions_text()})")
        self._fig.x_range.end = st.x_max_display()
        set_data(self._now, {k: view[k] for k in ("x", "arterial", "venous", "standard")})
        (xa, ya), (xv, yv) = view["loading"], view["unloading"]
        set_data(
            self._points,
            {
                "x": [xa, xv],
                "y": [ya, yv],
                "color": [ARTERIAL, VENOUS],
                "label": ["loading (arterial)", "unloading (venous)"],
            },
        )
        d = st.pressure_digits
        set_data(
            self._p50,
            {
                "x": [view["arterial_p50"][0], view["venous_p50"][0]],
                "y": [view["arterial_p50"][1], view["venous_p50"][1]],
                "color": [ARTERIAL, VENOUS],
                "dx": [-5, 5],
                "dy": [0, 0],
                "align": ["right", "left"],
                "label_y": [9, 3],
                "label": [
                    f"P50 {fmt(view['arterial_p50'][0], d + 1)}",
                    f"P50 {fmt(view['venous_p50'][0], d + 1)}",
                ],
            },
        )
        set_data(self._segment, {"x0": [xv], "y0": [yv], "x1": [xv], "y1": [ya]})
        set_data(self._bridge, {"x0": [xv], "y0": [ya], "x1": [xa], "y1": [ya]})
        set_data(
            self._note,
            {
                "x": [xv],
                "y": [(ya + yv) / 2],
                "text": [f"{view['extracted_ml_per_l']:.0f} mL O2 extracted per L"],
            },
        )
        base = st.curve_view(baseline=True)
        if base is None:
            set_data(self._base, {"x": [], "arterial": [], "venous": []})
            set_data(self._base_points, {"x": [], "y": []})
        else:
            set_data(self._base, {k: base[k] for k in ("x", "arterial", "venous")})
            set_data(
                self._base_points,
                {
                    "x": [base["loading"][0], base["unloading"][0]],
                    "y": [base["loading"][1], base["unloading"][1]],
                },
            )
        self._caption.object = (
            f"Black bar: O2 given up per litre of blood between arterial and venous points. "
            f"The venous curve's shift frees {view['shift_gain_ml_per_l']:.1f} mL O2/L more than "
            f"the arterial curve would at the same venous PO2."
        )

    def __panel__(self):
        return self._layout


class CascadePlot(pn.viewable.Viewer):
    """PO2 at each stop from inspired gas to venous blood."""

    def __init__(self, state: CaseState, **params):
        super().__init__(**params)
        self._state = state
        stages = state.cascade()["stage"]
        self._source = ColumnDataSource(
            data={
                "stage": stages,
                "po2": [0.0] * len(stages),
                "label": [""] * len(stages),
                "color": ["#7fa7a3"] * 2 + ["#5c8f8a", ARTERIAL, VENOUS],
            }
        )
        fig = figure(
            x_range=FactorRange(*stages),
            y_range=Range1d(0, 170),
            height=300,
            sizing_mode="stretch_width",
            toolbar_location=None,
            tools="pan",  # the only tool active without a toolbar
            title="PO2 cascade: the drop at each step",
        )
        fig.title.text_font_size = "15px"
        fig.title.text_color = INK
        fig.vbar(x="stage", top="po2", width=0.62, source=self._source, color="color")
        fig.add_layout(
            LabelSet(
                x="stage",
                y="po2",
                text="label",
                source=self._source,
                text_align="center",
                y_offset=4,
                text_font_size="14px",
                text_font_style="bold",
                text_color=INK,
            )
        )
        fig.background_fill_color = "#fbfaf7"
        fig.xgrid.grid_line_color = None
        fig.xaxis.major_label_text_font_size = "13px"
        self._fig = fig
        self._layout = pn.Column(
            pn.pane.Bokeh(fig, sizing_mode="stretch_width"),
            css_classes=["o2-cascade"],
            sizing_mode="stretch_width",
        )
        state.param.watch(Deferred(self._update), ["result", "pressure_unit"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        data = st.cascade()
        d = st.pressure_digits
        self._fig.yaxis.axis_label = f"PO2 ({st.pressure_unit})"
        self._fig.y_range.end = max(max(data["po2"]) * 1.15, 1.0)
        set_data(
            self._source,
            dict(self._source.data, po2=data["po2"], label=[fmt(v, d) for v in data["po2"]]),
        )

    def __panel__(self):
        return self._layout
