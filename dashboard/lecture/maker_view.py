"""The lesson maker's panel: add the view shown as a step, order the steps, save the file.

A thin view over :class:`~.maker.LessonMaker`; it is built with the page (hidden until the
lecturer opens it), so nothing is fetched after load.
"""

from __future__ import annotations

import html
import io

import panel as pn

from ..look import ACCENT, INK
from .controls import TOOL_CSS, later, wrapping
from .maker import LessonMaker
from .state import LectureState

FIELD_CSS = """
:host { --font-size: 16px; }
.bk-input { font-size: 16px; }
label { font-size: 15px; }
"""


class LessonMakerView(pn.viewable.Viewer):
    """Fields for the next step, the list of steps with Up, Down and Remove, Try and Save."""

    def __init__(self, state: LectureState, **params):
        super().__init__(**params)
        self._state = state
        self.maker = maker = LessonMaker(state.shown_step)
        css = [FIELD_CSS]
        self.toggle = pn.widgets.Toggle(
            label="Make a lesson",
            value=False,
            css_classes=["o2-lecture-make"],
            stylesheets=[TOOL_CSS],
            width=130,
        )
        self._name = pn.widgets.TextInput.from_param(
            maker.param.lesson_name, css_classes=["o2-maker-name"], stylesheets=css, width=260
        )
        self._title = pn.widgets.TextInput.from_param(
            maker.param.title, css_classes=["o2-maker-title"], stylesheets=css, width=300
        )
        self._caption = pn.widgets.TextAreaInput.from_param(
            maker.param.caption,
            css_classes=["o2-maker-caption"],
            stylesheets=css,
            width=420,
            height=90,
        )
        self._add = pn.widgets.Button(
            label="Add this view as a step",
            css_classes=["o2-maker-add"],
            stylesheets=[TOOL_CSS],
            color="primary",
            width=200,
        )
        self._steps = pn.widgets.Select(
            options={}, size=5, css_classes=["o2-maker-steps"], stylesheets=css, width=320
        )
        self._up = self._button("▲ Earlier", "o2-maker-up", later(maker.move, -1))
        self._down = self._button("▼ Later", "o2-maker-down", later(maker.move, +1))
        self._remove = self._button("Remove", "o2-maker-remove", later(maker.remove))
        self._try = self._button("Show it here", "o2-maker-try", later(self._show_here))
        self._save = pn.widgets.FileDownload(
            callback=self._file,
            filename=maker.file_name,
            label="Save lesson file",
            embed=False,
            css_classes=["o2-maker-save"],
            stylesheets=[TOOL_CSS],
            width=150,
        )
        self._note = pn.pane.HTML(
            "", css_classes=["o2-maker-msg"], styles={"font-size": "16px", "color": INK}
        )
        self._add.on_click(later(maker.add))
        self._steps.param.watch(self._picked, "value")
        self.toggle.param.watch(self._opened, "value")
        maker.param.watch(self._refresh, ["steps", "selected", "message", "lesson_name", "title"])
        state.param.watch(self._view_changed, ["frame"])
        self._panel = pn.Column(
            wrapping(self._name, self._title, self._caption, self._add, css="o2-maker-next"),
            wrapping(
                self._steps,
                pn.Column(self._up, self._down, self._remove, margin=0),
                pn.Column(self._try, self._save, margin=0),
                self._note,
                css="o2-maker-list",
            ),
            visible=False,
            sizing_mode="stretch_width",
            css_classes=["o2-lecture-maker"],
            styles={"border-top": f"3px solid {ACCENT}", "background": "#f6f8f8"},
            margin=(6, 0, 0, 0),
        )
        self._refresh()

    @staticmethod
    def _button(label: str, css: str, callback) -> pn.widgets.Button:
        button = pn.widgets.Button(
            label=label, css_classes=[css], stylesheets=[TOOL_CSS], width=130
        )
        button.on_click(callback)
        return button

    # ---------------------------------------------------------------- events
    def _opened(self, event) -> None:
        self._panel.visible = event.new
        if event.new:
            self.maker.fill_from_view()

    def _view_changed(self, *_events) -> None:
        if self._panel.visible:
            self.maker.fill_from_view()

    def _picked(self, event) -> None:
        if event.new is not None and not self._syncing:
            self.maker.choose(int(event.new))

    def _show_here(self) -> None:
        if self.maker.problem():
            self.maker.message = self.maker.problem()
            return
        self._state.add_lesson(self.maker.lesson())
        self.maker.message = f"“{self.maker.lesson_name}” is in the lesson picker; step through it."

    def _file(self):
        problem = self.maker.problem()
        text = self.maker.toml() if not problem else f"# Not a lesson yet: {problem}\n"
        return io.StringIO(text)

    # ---------------------------------------------------------------- refresh
    _syncing = False

    def _refresh(self, *_events) -> None:
        m = self.maker
        self._syncing = True
        try:
            options = {t: str(i) for i, t in enumerate(m.step_titles())}
            self._steps.options = options
            self._steps.value = str(m.selected) if options else None
        finally:
            self._syncing = False
        problem = m.problem()
        has = bool(m.steps)
        for button in (self._up, self._down, self._remove):
            button.disabled = not has
        self._save.disabled = bool(problem)
        self._try.disabled = bool(problem)
        self._save.filename = m.file_name
        note = m.message or (problem if has else "")
        count = f"{len(m.steps)} step{'s' if len(m.steps) != 1 else ''}"
        self._note.object = f"<b>{count}</b><br>{html.escape(note)}"

    @property
    def panel(self) -> pn.Column:
        return self._panel

    def __panel__(self):
        return self._panel
