"""Thin views of lecture mode over :class:`dashboard.lecture.state.LectureState`.

Built for a projector: large type, thick lines, white ground and near-black ink. The two
series that matter differ in colour *and* in line or marker (the reference is a thin grey
dotted line, the case a thick solid vermilion line; the arterial point a blue circle, the
tissue point a vermilion square), so they stay apart for colour-blind viewers and in
greyscale.

Smooth motion: the server writes each new state, computed by the model, into a *target*
``ColumnDataSource`` that no glyph draws; a ``CustomJS`` on the target's ``data`` tweens the
drawn source in the browser from the arrays on screen to the target arrays over
:data:`GLIDE_MS` (cubic ease in-out, ``requestAnimationFrame``, arrays changed in place and
``change.emit()``, so nothing is sent back to the server). Only numbers the model computed
are interpolated; text changes at once.
"""

from __future__ import annotations

import html
import io
from typing import ClassVar

import panel as pn
import param
from bokeh.core.properties import value
from bokeh.layouts import column
from bokeh.models import (
    CDSView,
    ColumnDataSource,
    CustomJS,
    Div,
    IndexFilter,
    LabelSet,
    Legend,
    LegendItem,
    Range1d,
    Title,
)
from bokeh.plotting import figure

from ..look import CAUTION
from ..offline import offline_file_html
from .state import FACTORS, LectureState

GLIDE_MS = 350

INK = "#111111"
PAPER = "#ffffff"
CASE = "#c2410c"  # vermilion: the case's curve and its tissue point
REFERENCE = "#8d8d8d"  # mid grey, dotted, thinner: the standard curve
POINT = "#1d4e89"  # deep blue: the arterial point and the tissue PO2 line
FONT = "'Liberation Sans', Arial, sans-serif"

_TWEEN_JS = (
    """
const dur = GLIDE_MS;
const to = target.data;
const keys = Object.keys(to);
const now = shown.data;
if (shown._o2_raf) { cancelAnimationFrame(shown._o2_raf); shown._o2_raf = null; }
const fits = keys.every((k) => now[k] !== undefined && now[k].length === to[k].length);
if (!fits) { shown.data = Object.fromEntries(keys.map((k) => [k, Array.from(to[k])])); return; }
const start = {};
for (const k of keys) {
  start[k] = Array.from(now[k]);
  if (to[k].length && typeof to[k][0] !== "number") {
    for (let i = 0; i < to[k].length; i++) now[k][i] = to[k][i];
  }
}
const t0 = performance.now();
function tick(t) {
  const u = Math.max(0, Math.min(1, (t - t0) / dur));  // a frame may be stamped before t0
  const e = u < 0.5 ? 4 * u * u * u : 1 - Math.pow(-2 * u + 2, 3) / 2;
  for (const k of keys) {
    const a = start[k], b = to[k], out = now[k];
    if (!b.length || typeof b[0] !== "number") continue;
    for (let i = 0; i < b.length; i++) out[i] = u >= 1 ? b[i] : a[i] + (b[i] - a[i]) * e;
  }
  shown.change.emit();
  shown._o2_raf = u < 1 ? requestAnimationFrame(tick) : null;
}
shown._o2_raf = requestAnimationFrame(tick);
"""
).replace("GLIDE_MS", str(GLIDE_MS))

_PNG_JS = """
// The plot as drawn, with the step's caption (the caption source) wrapped
// underneath, so the image says what the lecturer said.
const view = Bokeh.index.find_one(fig);
if (view === null) { return; }
const plot = view.export("png").canvas;
const scale = plot.width / view.bbox.width;
const text = caption.data.text.length ? String(caption.data.text[0]) : "";
const size = Math.round(24 * scale), line = Math.round(32 * scale), pad = Math.round(24 * scale);
const probe = document.createElement("canvas").getContext("2d");
probe.font = size + "px " + FONT_CSS;
const lines = [];
let current = "";
for (const word of text.split(/\\s+/).filter((w) => w.length)) {
  const trial = current ? current + " " + word : word;
  if (current && probe.measureText(trial).width > plot.width - 2 * pad) {
    lines.push(current);
    current = word;
  } else {
    current = trial;
  }
}
if (current) { lines.push(current); }
const out = document.createElement("canvas");
out.width = plot.width;
out.height = plot.height + (lines.length ? lines.length * line + pad : 0);
const ctx = out.getContext("2d");
ctx.fillStyle = "#ffffff";
ctx.fillRect(0, 0, out.width, out.height);
ctx.drawImage(plot, 0, 0);
ctx.fillStyle = INK_CSS;
ctx.font = size + "px " + FONT_CSS;
ctx.textBaseline = "top";
lines.forEach((text, i) => ctx.fillText(text, pad, plot.height + i * line + pad / 2));
out.toBlob((blob) => {
  const a = document.createElement("a");
  a.href = URL.createObjectURL(blob);
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(a.href), 10000);
}, "image/png");
"""


SOURCE_NAMES = ("curves", "arterial", "tissue", "tissue_line", "p50", "readout")


def _num(value: float, digits: int, signed: bool = False) -> str:
    if round(value, digits) == 0:
        value, signed = 0.0, False
    text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
    return text.replace("-", "−")


def frame_data(frame: dict) -> dict[str, dict]:
    """Column data of each plot source from a state frame (formatting only)."""
    unit, d = frame["unit"], frame["digits"] + 1
    xt, yt, yt_ref = frame["tissue_po2"], frame["tissue_so2"], frame["reference_tissue_so2"]
    x_right = 0.975 * frame["x_max"]
    readout = [
        (
            f"P50 {_num(frame['p50'], d)} {unit}:  {_num(frame['p50_shift'], d, True)} {unit}"
            "  vs reference"
        ),
        (
            f"O2 unloaded at {_num(xt, d - 1)} {unit}:  "
            f"{_num(frame['unloaded_ml_per_l'], 0)} mL/L,  "
            f"{_num(frame['unloaded_change_ml_per_l'], 1, True)} vs reference"
        ),
    ]
    return {
        "curves": {
            "x": frame["x"],
            "reference": frame["reference"],
            "current": frame["current"],
        },
        "arterial": {"x": [frame["loading"][0]], "y": [frame["loading"][1]]},
        "tissue": {"x": [xt, xt], "y": [yt_ref, yt]},
        "tissue_line": {
            "x0": [xt],
            "y0": [0.0],
            "x1": [xt],
            "y1": [100.0],
            "label": [f"tissue PO2 {_num(xt, d - 1)}"],
        },
        "p50": {
            "x": [frame["p50"]],
            "y": [50.0],
            "x0": [frame["reference_p50"]],
            "label": [f"P50 {_num(frame['p50'], d)}"],
        },
        "readout": {"x": [x_right, x_right], "y": [0.0, 0.0], "dy": [58, 14], "text": readout},
    }


def figure_title(frame: dict) -> str:
    return f"{frame['tag']} · {frame['heading']}" if frame["tag"] else frame["heading"]


def build_figure(sources: dict[str, ColumnDataSource], frame: dict, **kwargs):
    """The lecture plot drawn from ``sources`` (one per name in :data:`SOURCE_NAMES`)."""
    fig = figure(
        x_range=Range1d(0, frame["x_max"]),
        y_range=Range1d(0, 102),
        toolbar_location=None,
        title=figure_title(frame),
        background_fill_color=PAPER,
        border_fill_color=PAPER,
        outline_line_color=None,
        min_border_left=90,
        min_border_bottom=80,
        **kwargs,
    )
    fig.title.text_font_size = "40px"
    fig.title.text_color = INK
    fig.title.text_font = FONT
    fig.xaxis.axis_label = f"PO2 ({frame['unit']})"
    fig.yaxis.axis_label = "SO2 (%)"
    for axis in (fig.xaxis, fig.yaxis):
        axis.axis_label_text_font_size = "28px"
        axis.axis_label_text_font_style = "bold"
        axis.axis_label_text_color = INK
        axis.axis_label_text_font = FONT
        axis.major_label_text_font_size = "24px"
        axis.major_label_text_color = INK
        axis.axis_line_width = 2
        axis.major_tick_line_width = 2
        axis.axis_line_color = INK
        axis.major_tick_line_color = INK
        axis.minor_tick_line_color = None
    fig.grid.grid_line_color = "#e4e4e4"
    fig.grid.grid_line_width = 1.5
    fig.yaxis.ticker = [0, 25, 50, 75, 100]

    c, t, p = sources["curves"], sources["tissue"], sources["p50"]
    ref_line = fig.line("x", "reference", source=c, color=REFERENCE, line_width=4, line_dash=[3, 7])
    fig.segment(
        "x0",
        "y0",
        "x1",
        "y1",
        source=sources["tissue_line"],
        color=POINT,
        line_width=3,
        line_dash=[14, 8],
        alpha=0.8,
    )
    case_line = fig.line("x", "current", source=c, color=CASE, line_width=7)
    fig.segment("x0", "y", "x", "y", source=p, color=INK, line_width=3)
    fig.scatter("x", "y", source=p, marker="diamond", size=26, color=INK, line_color=PAPER)
    fig.add_layout(
        LabelSet(
            x="x",
            y="y",
            text="label",
            source=p,
            x_offset=18,
            y_offset=-34,
            text_font_size="24px",
            text_color=INK,
            text_font_style="bold",
            text_font=value(FONT),
        )
    )
    fig.add_layout(
        LabelSet(
            x="x1",
            y="y1",
            text="label",
            source=sources["tissue_line"],
            x_offset=8,
            y_offset=-2,
            text_baseline="top",
            background_fill_color=PAPER,
            background_fill_alpha=0.85,
            text_font_size="22px",
            text_color=POINT,
            text_font_style="bold",
            text_font=value(FONT),
        )
    )
    fig.scatter(
        "x",
        "y",
        source=t,
        view=CDSView(filter=IndexFilter([0])),
        marker="square",
        size=24,
        line_width=3,
        fill_color=PAPER,
        line_color=REFERENCE,
    )
    tissue_marks = fig.scatter(
        "x",
        "y",
        source=t,
        view=CDSView(filter=IndexFilter([1])),
        marker="square",
        size=26,
        line_width=3,
        fill_color=CASE,
        line_color=PAPER,
    )
    arterial_mark = fig.scatter(
        "x",
        "y",
        source=sources["arterial"],
        marker="circle",
        size=28,
        color=POINT,
        line_color=PAPER,
        line_width=3,
    )
    fig.add_layout(
        LabelSet(
            x="x",
            y="y",
            text="text",
            source=sources["readout"],
            y_offset="dy",
            text_align="right",
            text_baseline="bottom",
            text_font_size="28px",
            text_font_style="bold",
            text_color=INK,
            text_font=value(FONT),
            background_fill_color=PAPER,
            background_fill_alpha=0.9,
        )
    )
    legend = Legend(
        items=[
            LegendItem(label="standard (reference)", renderers=[ref_line]),
            LegendItem(label="this case", renderers=[case_line]),
            LegendItem(label="arterial point", renderers=[arterial_mark]),
            LegendItem(label="at the tissue PO2", renderers=[tissue_marks]),
        ],
        location="center_right",
        label_text_font_size="24px",
        label_text_color=INK,
        label_text_font=FONT,
        glyph_width=56,
        glyph_height=30,
        background_fill_alpha=0.9,
        border_line_color=None,
    )
    fig.add_layout(legend)
    fig.add_layout(
        Title(
            text=f"⚠ {CAUTION}",
            text_font_size="15px",
            text_color="#555555",
            text_font_style="normal",
            text_font=FONT,
        ),
        "below",
    )
    return fig


def standalone_html(state: LectureState) -> str:
    """The current view as one offline HTML page (Bokeh resources inlined, no links out)."""
    frame = state.frame
    data = frame_data(frame)
    sources = {k: ColumnDataSource(data=v) for k, v in data.items()}
    fig = build_figure(sources, frame, width=1280, height=720)
    numbers = (
        f"Arterial SO2 {frame['arterial_so2']:.1f} %, CaO2 {frame['arterial_content_ml_dl']:.1f} "
        f"mL/dL, Hb {frame['hb_g_dl']:.1f} g/dL, DO2 {frame['do2_ml_min']:.0f} mL/min. "
        f"Reference P50 {_num(frame['reference_p50'], frame['digits'] + 1)} {frame['unit']}; "
        f"reference unloading {frame['reference_unloaded_ml_per_l']:.0f} mL/L."
    )
    caption = Div(
        text=(
            f'<p style="font: 26px {FONT}; color: {INK}; max-width: 1240px">'
            f"{html.escape(frame['caption'])}</p>"
            f'<p style="font: 20px {FONT}; color: {INK}">{html.escape(numbers)}</p>'
        ),
        width=1280,
        margin=(0, 20),
    )
    # The caution is part of the figure (a line under the axis), as in the PNG.
    return offline_file_html(column(fig, caption), title=f"o2transit · {frame['heading']}")


class KeyCatcher(pn.reactive.ReactiveHTML):
    """Turns a presenter's keys into ``action`` + ``presses`` (Python watches ``presses``).

    ArrowRight, PageDown and Space mean next; ArrowLeft and PageUp mean back. Keys typed in
    an input, a text area or a select, and keys on a focused slider, are left alone.
    """

    action = param.String(default="")
    presses = param.Integer(default=0)

    _template = '<div id="catcher" class="o2-keys" style="display:none"></div>'
    _scripts: ClassVar[dict[str, str]] = {
        "render": """
if (window._o2_keys) { document.removeEventListener("keydown", window._o2_keys); }
window._o2_keys = (e) => {
  const el = e.composedPath ? e.composedPath()[0] : e.target;
  const tag = el && el.tagName ? el.tagName.toUpperCase() : "";
  const typing = tag === "INPUT" || tag === "TEXTAREA" || tag === "SELECT";
  const sliding = el && el.getAttribute && el.getAttribute("role") === "slider";
  if (typing || sliding || (el && el.isContentEditable)) {
    return;
  }
  if (e.altKey || e.ctrlKey || e.metaKey) { return; }
  const map = {ArrowRight: "next", PageDown: "next", " ": "next", ArrowLeft: "back",
               PageUp: "back"};
  const act = map[e.key];
  if (!act) { return; }
  e.preventDefault();
  data.action = act;
  data.presses = data.presses + 1;
};
document.addEventListener("keydown", window._o2_keys);
"""
    }


TOOL_CSS = """
:host { --font-size: 16px; }
.bk-btn { font-size: 16px; padding: 4px 12px; }
"""

BIG_WIDGET_CSS = """
:host { --font-size: 22px; }
.bk-btn { font-size: 22px; padding: 6px 18px; font-weight: 600; }
select, .bk-input { font-size: 22px; height: auto; }
label { font-size: 18px; }
"""


class LecturePlot(pn.viewable.Viewer):
    """The plot filling the window; glides to each new frame."""

    def __init__(self, state: LectureState, **params):
        super().__init__(**params)
        self._state = state
        data = frame_data(state.frame)
        self._targets = {
            k: ColumnDataSource(data=v, name=f"o2-{k}-target") for k, v in data.items()
        }
        self._shown = {k: ColumnDataSource(data=v, name=f"o2-{k}-shown") for k, v in data.items()}
        for k, target in self._targets.items():
            target.js_on_change(
                "data", CustomJS(args={"target": target, "shown": self._shown[k]}, code=_TWEEN_JS)
            )
        self.figure = build_figure(self._shown, state.frame, sizing_mode="stretch_both")
        self.figure.name = "o2-lecture-figure"
        # The caption, for the PNG export (the page shows it as HTML under the plot).
        self.caption_source = ColumnDataSource(
            data={"text": [state.frame["caption"] if state.frame else ""]}, name="o2-caption"
        )
        # The targets and the caption are drawn by nothing; holding them here puts them in
        # the document.
        self.figure.tags = [*self._targets.values(), self.caption_source]
        self._pane = pn.pane.Bokeh(
            self.figure, sizing_mode="stretch_both", min_height=360, css_classes=["o2-lecture-plot"]
        )
        state.param.watch(self._update, ["frame"])

    def _update(self, *_events) -> None:
        frame = self._state.frame
        fig = self.figure
        fig.title.text = figure_title(frame)
        fig.xaxis.axis_label = f"PO2 ({frame['unit']})"
        fig.x_range.end = frame["x_max"]
        for k, v in frame_data(frame).items():
            self._targets[k].data = v
        self.caption_source.data = {"text": [frame["caption"]]}

    def __panel__(self):
        return self._pane


class LectureControls(pn.viewable.Viewer):
    """Step buttons and index, the factor chooser and slider, unit, exports, messages."""

    def __init__(self, state: LectureState, plot: LecturePlot, **params):
        super().__init__(**params)
        self._state = state
        css = [BIG_WIDGET_CSS]

        def later(fn):
            # Button events arrive outside the document lock: change the state on the next
            # tick with the lock held (as CaseControls does).
            return lambda *_e: pn.state.execute(fn, schedule=True)

        self._mode = pn.widgets.RadioButtonGroup(
            options={"Lesson": "lesson", "One factor": "factor"},
            value=state.mode,
            css_classes=["o2-lecture-mode"],
            stylesheets=[TOOL_CSS],
            disabled=not state.lessons,
        )
        self._back = pn.widgets.Button(
            label="◀ Back", css_classes=["o2-lecture-back"], stylesheets=css, width=150
        )
        self._next = pn.widgets.Button(
            label="Next ▶",
            css_classes=["o2-lecture-next"],
            stylesheets=css,
            color="primary",
            width=150,
        )
        self._index = pn.widgets.Select(
            options=[], css_classes=["o2-lecture-index"], stylesheets=css, width=360
        )
        self._lesson = pn.widgets.Select(
            options={v.name: k for k, v in state.lessons.items()},
            value=state.lesson,
            css_classes=["o2-lecture-lesson"],
            stylesheets=css,
            width=300,
            visible=len(state.lessons) > 1,
        )
        self._factor = pn.widgets.RadioButtonGroup(
            options={f.label: k for k, f in FACTORS.items()},
            value=state.factor,
            css_classes=["o2-lecture-factor"],
            stylesheets=css,
        )
        # One slider per factor: a slider whose range is changed under the pointer can
        # send a value clamped to its old range.
        self._sliders = {}
        for key, f in FACTORS.items():
            if f.choices:
                continue
            c = state.factor_control(key)
            self._sliders[key] = pn.widgets.FloatSlider(
                label=self._slider_name(c),
                start=c["lo"],
                end=c["hi"],
                value=c["value"],
                step=c["step"],
                width=300,
                css_classes=["o2-lecture-value", f"o2-lecture-value-{key}"],
                stylesheets=css,
                visible=False,
            )
        self._choice = pn.widgets.RadioButtonGroup(
            options=["adult", "fetal"],
            value="adult",
            css_classes=["o2-lecture-choice"],
            stylesheets=css,
        )
        self._tissue = pn.widgets.FloatSlider(
            label="Tissue PO2",
            start=5.0,
            end=100.0,
            value=state.tissue_po2_mmhg,
            step=1.0,
            width=240,
            css_classes=["o2-lecture-tissue"],
            stylesheets=css,
        )
        self._unit = pn.widgets.RadioButtonGroup(
            options=["mmHg", "kPa"],
            value=state.pressure_unit,
            css_classes=["o2-lecture-unit"],
            stylesheets=[TOOL_CSS],
        )
        self._png = pn.widgets.Button(
            label="Save PNG", css_classes=["o2-lecture-png"], stylesheets=[TOOL_CSS], width=110
        )
        self._png.js_on_click(
            args={
                "fig": plot.figure,
                "caption": plot.caption_source,
                "name": "o2transit-lecture.png",
            },
            code=_PNG_JS.replace("FONT_CSS", repr(FONT)).replace("INK_CSS", repr(INK)),
        )
        self._html = pn.widgets.FileDownload(
            callback=self._html_file,
            filename="o2transit-lecture.html",
            label="Save HTML",
            embed=False,
            css_classes=["o2-lecture-html"],
            stylesheets=[TOOL_CSS],
            width=120,
        )
        self._keys = KeyCatcher()
        self._message = pn.pane.HTML(
            "",
            visible=False,
            css_classes=["o2-lecture-msg"],
            sizing_mode="stretch_width",
            styles={"color": "#8a1010", "font-size": "20px", "font-weight": "600"},
        )
        self._caption = pn.pane.HTML(
            "",
            css_classes=["o2-lecture-caption"],
            sizing_mode="stretch_width",
            styles={"font-size": "clamp(18px, 1.45vw, 30px)", "line-height": "1.3", "color": INK},
            margin=(8, 24, 0, 24),
        )

        self._syncing = False
        self._back.on_click(later(state.previous_step))
        self._next.on_click(later(state.next_step))
        self._index.param.watch(self._picked_step, "value")
        self._lesson.param.watch(lambda e: self._quiet(state.choose_lesson, e.new), "value")
        self._mode.param.watch(self._picked_mode, "value")
        self._factor.param.watch(lambda e: self._quiet(state.choose_factor, e.new), "value")
        for slider in self._sliders.values():
            slider.param.watch(lambda e: self._quiet(state.set_factor_value, e.new), "value")
        self._choice.param.watch(
            lambda e: self._quiet(state.set_factor_value, 1.0 if e.new == "fetal" else 0.0),
            "value",
        )
        self._tissue.param.watch(lambda e: self._quiet(state.set_tissue_po2, e.new), "value")
        self._unit.param.watch(
            lambda e: self._quiet(setattr, state, "pressure_unit", e.new), "value"
        )
        self._keys.param.watch(self._pressed, "presses")
        state.param.watch(self._refresh, ["frame", "mode", "message"])

        self._lesson_bar = pn.Row(self._back, self._index, self._next, self._lesson, margin=0)
        self._factor_bar = pn.Row(
            self._factor, *self._sliders.values(), self._choice, self._tissue, margin=0
        )
        self.bar = pn.FlexBox(
            self._lesson_bar,
            self._factor_bar,
            self._keys,
            flex_wrap="wrap",
            justify_content="center",
            align_items="center",
            sizing_mode="stretch_width",
            css_classes=["o2-lecture-bar"],
        )
        self.tools = pn.Row(
            self._mode, pn.Spacer(width=24), self._unit, self._png, self._html, margin=(2, 8)
        )
        self._refresh()

    @staticmethod
    def _slider_name(c: dict) -> str:
        return f"{c['label']} ({c['unit']})" if c["unit"] else c["label"]

    # ---------------------------------------------------------------- events
    def _quiet(self, fn, *args) -> None:
        if not self._syncing:
            fn(*args)

    def _picked_step(self, event) -> None:
        if self._syncing or not event.new or event.new == event.old:
            return
        self._state.go_to(int(event.new))

    def _picked_mode(self, event) -> None:
        if self._syncing:
            return
        st = self._state
        if event.new == "lesson":
            st.go_to(st.step)
        else:
            st.choose_factor(st.factor)

    def _pressed(self, _event) -> None:
        st = self._state
        if self._keys.action == "next":
            st.next_step()
        elif self._keys.action == "back":
            st.previous_step()

    def _html_file(self):
        return io.StringIO(standalone_html(self._state))

    # ---------------------------------------------------------------- refresh
    def _refresh(self, *_events) -> None:
        st = self._state
        frame = st.frame
        self._syncing = True
        try:
            lesson_mode = st.mode == "lesson"
            self._mode.value = st.mode
            self._lesson_bar.visible = lesson_mode
            self._factor_bar.visible = not lesson_mode
            options = {t: str(i) for i, t in enumerate(st.step_titles(), start=1)}
            if options != self._index.options:
                self._index.options = options
            if options:
                self._index.value = str(min(st.step, len(options)))
            if lesson_mode:
                self._lesson.value = st.lesson
                self._back.disabled = st.step <= 1
                self._next.disabled = st.step >= st.step_count
            else:
                c = st.factor_control()
                self._factor.value = st.factor
                two_state = bool(c["choices"])
                for key, slider in self._sliders.items():
                    slider.visible = key == st.factor
                self._choice.visible = two_state
                if two_state:
                    self._choice.value = "fetal" if c["value"] >= 0.5 else "adult"
                else:
                    self._sliders[st.factor].param.update(
                        label=self._slider_name(c),
                        start=c["lo"],
                        end=c["hi"],
                        step=c["step"],
                        value=c["value"],
                    )
                lo, hi = (st.case.pressure_to_display(v) for v in (5.0, 100.0))
                step = 0.1 if st.pressure_unit == "kPa" else 1.0
                self._tissue.param.update(
                    label=f"Tissue PO2 ({st.pressure_unit})",
                    start=lo,
                    end=hi,
                    step=step,
                    value=round(st.case.pressure_to_display(st.tissue_po2_mmhg), 2),
                )
            self._unit.value = st.pressure_unit
        finally:
            self._syncing = False
        if frame:
            self._caption.object = html.escape(frame["caption"])
        problems = list(st.lesson_problems)
        text = [st.message] if st.message else []
        text += [f"Lesson file not used: {p}" for p in problems]
        self._message.object = "<br>".join(html.escape(t) for t in text)
        self._message.visible = bool(text)

    @property
    def caption(self) -> pn.pane.HTML:
        return self._caption

    @property
    def message(self) -> pn.pane.HTML:
        return self._message

    def __panel__(self):
        return self.bar
