"""The lecture page's controls over :class:`~.state.LectureState`: thin, no physiology.

Step buttons, index and lesson picker; the factor chooser, its slider, combining and the
tissue PO2; the plot's view (saturation or O2 content); unit and exports; the presenter's
keys and the messages. Every bar wraps, so nothing is pushed off a 1024 px screen.
"""

from __future__ import annotations

import html
import io

import panel as pn

from ..look import INK
from ..responsive import held, serving
from .export import png_js, standalone_html
from .keys import KeyCatcher
from .state import FACTORS, LectureState

TOOL_CSS = """
:host { --font-size: 15px; }
.bk-btn { font-size: 15px; padding: 4px 10px; }
"""

BIG_WIDGET_CSS = """
:host { --font-size: 20px; }
.bk-btn { font-size: 20px; padding: 5px 14px; font-weight: 600; }
select, .bk-input { font-size: 20px; height: auto; }
label { font-size: 17px; }
"""


def later(fn, *args):
    """A click callback that runs ``fn(*args)`` on the next tick with the document lock held,
    all its changes in one message and the figure in a second (:func:`responsive.held`; at
    once without a server).

    Button events arrive outside the document lock (as in the case screen's controls).
    """
    run = held(lambda: fn(*args))
    return lambda *_e: run() if serving() else fn(*args)


def update_changed(widget, **values) -> None:
    """``widget.param.update(**values)`` with only the values that differ from the widget's
    (an unchanged value still costs its validation and watchers)."""
    changed = {k: v for k, v in values.items() if getattr(widget, k) != v}
    if changed:
        widget.param.update(changed)


def wrapping(*objects, css: str, **kwargs) -> pn.FlexBox:
    """A row that wraps onto the next line instead of running off the screen."""
    return pn.FlexBox(*objects, flex_wrap="wrap", align_items="center", css_classes=[css], **kwargs)


class LectureControls(pn.viewable.Viewer):
    """Step buttons and index, the factor chooser and slider, view, unit, exports, messages."""

    def __init__(self, state: LectureState, plot, **params):
        super().__init__(**params)
        self._state = state
        css = [BIG_WIDGET_CSS]

        self._mode = pn.widgets.RadioButtonGroup(
            options={"Lesson": "lesson", "One factor": "factor"},
            value=state.mode,
            css_classes=["o2-lecture-mode"],
            stylesheets=[TOOL_CSS],
            disabled=not state.lessons,
        )
        self._back = pn.widgets.Button(
            label="◀ Back", css_classes=["o2-lecture-back"], stylesheets=css, width=130
        )
        self._next = pn.widgets.Button(
            label="Next ▶",
            css_classes=["o2-lecture-next"],
            stylesheets=css,
            color="primary",
            width=130,
        )
        self._index = pn.widgets.Select(
            options=[], css_classes=["o2-lecture-index"], stylesheets=css, width=340
        )
        self._lesson = pn.widgets.Select(
            options=self._lesson_options(),
            value=state.lesson,
            css_classes=["o2-lecture-lesson"],
            stylesheets=css,
            width=300,
            min_width=240,
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
                width=280,
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
            label="Tissue PO2 (mmHg)",
            start=5.0,
            end=100.0,
            value=state.tissue_po2_mmhg,
            step=1.0,
            width=250,
            css_classes=["o2-lecture-tissue"],
            stylesheets=css,
        )
        self._combine = pn.widgets.RadioButtonGroup(
            options={"One at a time": False, "Combined": True},
            value=state.combine,
            css_classes=["o2-lecture-combine"],
            stylesheets=css,
        )
        self._view = pn.widgets.RadioButtonGroup(
            options={"SO2": "saturation", "O2 content": "content"},
            value=state.view,
            css_classes=["o2-lecture-view"],
            stylesheets=css,
        )
        self._unit = pn.widgets.RadioButtonGroup(
            options=["mmHg", "kPa"],
            value=state.pressure_unit,
            css_classes=["o2-lecture-unit"],
            stylesheets=[TOOL_CSS],
        )
        self._png = pn.widgets.Button(
            label="Save PNG", css_classes=["o2-lecture-png"], stylesheets=[TOOL_CSS], width=100
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
            width=110,
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
            styles={"font-size": "clamp(17px, 1.45vw, 30px)", "line-height": "1.3", "color": INK},
            margin=(6, 24, 0, 24),
        )
        self._wire()
        # One wrapping row of single widgets (a nested row would not wrap inside it).
        self._lesson_items = [self._back, self._index, self._next, self._lesson]
        self._factor_items = [
            self._factor,
            *self._sliders.values(),
            self._choice,
            self._combine,
            self._tissue,
        ]
        self.bar = pn.FlexBox(
            *self._lesson_items,
            *self._factor_items,
            self._view,
            self._keys,
            flex_wrap="wrap",
            justify_content="center",
            align_items="center",
            sizing_mode="stretch_width",
            css_classes=["o2-lecture-bar"],
        )
        self.tools = [self._mode, self._unit, self._png, self._html]
        self._refresh()

    def _wire(self) -> None:
        state = self._state
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
        self._combine.param.watch(lambda e: self._quiet(state.set_combine, e.new), "value")
        self._view.param.watch(lambda e: self._quiet(setattr, state, "view", e.new), "value")
        self._unit.param.watch(
            lambda e: self._quiet(setattr, state, "pressure_unit", e.new), "value"
        )
        self._keys.param.watch(self._pressed, "presses")
        state.param.watch(self._refresh, ["frame", "mode", "message", "lesson"])

    @staticmethod
    def _slider_name(c: dict) -> str:
        return f"{c['label']} ({c['unit']})" if c["unit"] else c["label"]

    def _lesson_options(self) -> dict[str, str]:
        return {v.name: k for k, v in self._state.lessons.items()}

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
        action = {
            "next": st.next_step,
            "back": st.previous_step,
            "first": st.first_step,
            "last": st.last_step,
        }.get(self._keys.action)
        if action is not None:
            action()  # in factor mode, a step key returns to the lesson

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
            self._back.visible = self._next.visible = self._index.visible = lesson_mode
            self._lesson.visible = lesson_mode and len(st.lessons) > 1
            for item in (self._factor, self._combine, self._tissue):
                item.visible = not lesson_mode
            if lesson_mode:
                self._choice.visible = False
                for slider in self._sliders.values():
                    slider.visible = False
            options = {t: str(i) for i, t in enumerate(st.step_titles(), start=1)}
            if options != self._index.options:
                self._index.options = options
            if options:
                self._index.value = str(min(st.step, len(options)))
            lessons = self._lesson_options()
            if lessons != self._lesson.options:
                self._lesson.options = lessons
            if lesson_mode:
                self._lesson.value = st.lesson
                self._back.disabled = st.step <= 1
                self._next.disabled = st.step >= st.step_count
            else:
                self._refresh_factor()
            self._view.value = st.view
            self._unit.value = st.pressure_unit
        finally:
            self._syncing = False
        if frame:
            self._caption.object = html.escape(frame["caption"])
        text = [st.message] if st.message else []
        text += [f"Lesson file not used: {p}" for p in st.lesson_problems]
        self._message.object = "<br>".join(html.escape(t) for t in text)
        self._message.visible = bool(text)

    def _refresh_factor(self) -> None:
        st = self._state
        c = st.factor_control()
        self._factor.value = st.factor
        self._combine.value = st.combine
        two_state = bool(c["choices"])
        for key, slider in self._sliders.items():
            slider.visible = key == st.factor
        self._choice.visible = two_state
        if two_state:
            self._choice.value = "fetal" if c["value"] >= 0.5 else "adult"
        else:
            update_changed(
                self._sliders[st.factor],
                label=self._slider_name(c),
                start=c["lo"],
                end=c["hi"],
                step=c["step"],
                value=c["value"],
            )
        lo, hi = (st.case.pressure_to_display(v) for v in (5.0, 100.0))
        step = 0.1 if st.pressure_unit == "kPa" else 1.0
        update_changed(
            self._tissue,
            label=f"Tissue PO2 ({st.pressure_unit})",
            start=lo,
            end=hi,
            step=step,
            value=round(st.case.pressure_to_display(st.tissue_po2_mmhg), 2),
        )

    @property
    def caption(self) -> pn.pane.HTML:
        return self._caption

    @property
    def message(self) -> pn.pane.HTML:
        return self._message

    def __panel__(self):
        return self.bar
