"""Thin views of lecture mode over :class:`dashboard.lecture.state.LectureState`.

The plot (drawn by :mod:`.figures`), the controls (step buttons and index, factor chooser
and sliders, unit, the exports of :mod:`.export`) and the presenter's keys.

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

import panel as pn
from bokeh.models import ColumnDataSource, CustomJS

from .export import png_js, standalone_html
from .figures import INK, build_figure, figure_title, frame_data
from .keys import KeyCatcher
from .state import FACTORS, LectureState

GLIDE_MS = 350

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
            code=png_js(),
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
