"""The lesson maker: a lesson built from views shown on the lecture page, saved as a file.

No Panel import. :class:`LessonMaker` collects steps, each the case shown when it was added
(:meth:`~.state.LectureState.shown_step`: its inputs and tissue point) with a title and a
caption the lecturer writes; steps can be moved and removed, and the whole is written by
:func:`model.lesson.lesson_to_toml`, which reads the text back through the lesson file
checks before it is offered. A refusal names the field, the value, the allowed range and
the unit, as for a lesson file.
"""

from __future__ import annotations

import dataclasses
import re
import tomllib
from collections.abc import Callable

import param

from ...model.lesson import (
    MAX_STEPS,
    Lesson,
    LessonError,
    LessonStep,
    lesson_from_mapping,
    lesson_to_toml,
    step_mapping,
)


def file_stem(name: str) -> str:
    """'Shunt, anaemia & flow' -> 'shunt-anaemia-flow' (the file name, and the lesson key)."""
    stem = re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-")
    return stem[:60] or "lesson"


class LessonMaker(param.Parameterized):
    """Steps of a new lesson, from views of the lecture page, and the file they make."""

    lesson_name = param.String(default="My lesson", label="Lesson name")
    description = param.String(default="", label="What the lesson is for")
    title = param.String(default="", label="Step title")
    caption = param.String(default="", label="Step caption")
    steps = param.List(default=[], item_type=LessonStep, doc="The steps so far, in order.")
    selected = param.Integer(default=0, bounds=(0, None), doc="Index of the chosen step.")
    message = param.String(default="", doc="Why the last action was refused, or what it did.")

    def __init__(self, shown: Callable[[], LessonStep], **params):
        super().__init__(**params)
        self._shown = shown
        self._filled = ("", "")

    # ------------------------------------------------------------------ the next step
    def fill_from_view(self, force: bool = False) -> None:
        """Put the slide's title and caption in the fields, unless the lecturer wrote there."""
        shown = self._shown()
        if force or (self.title, self.caption) == self._filled or not self.title:
            self.param.update(title=shown.title, caption=shown.caption)
            self._filled = (shown.title, shown.caption)

    def add(self) -> bool:
        """Add the view shown as the last step, with the title and caption in the fields."""
        step = dataclasses.replace(self._shown(), title=self.title, caption=self.caption)
        steps = [*self.steps, step]
        if len(steps) > MAX_STEPS:
            self.message = f"{len(steps)} steps; allowed 1–{MAX_STEPS} steps per lesson."
            return False
        try:
            self._check(steps)
        except LessonError as exc:
            self.message = f"Step not added: {exc}."
            return False
        self.message = f"Added step {len(steps)}: {step.title}."
        self._filled = (self.title, self.caption)  # the next slide fills the fields again
        self.param.update(steps=steps, selected=len(steps) - 1)
        return True

    # ------------------------------------------------------------------ the steps
    def step_titles(self) -> list[str]:
        return [f"{i}. {s.title}" for i, s in enumerate(self.steps, start=1)]

    def choose(self, index: int) -> None:
        if 0 <= index < len(self.steps):
            self.selected = index

    def move(self, delta: int) -> bool:
        """Move the chosen step ``delta`` places (−1: earlier, +1: later)."""
        i, steps = self.selected, list(self.steps)
        j = i + delta
        if not (0 <= i < len(steps) and 0 <= j < len(steps)):
            self.message = "No step to move there."
            return False
        steps[i], steps[j] = steps[j], steps[i]
        self.message = ""
        self.param.update(steps=steps, selected=j)
        return True

    def remove(self) -> bool:
        """Remove the chosen step."""
        i, steps = self.selected, list(self.steps)
        if not 0 <= i < len(steps):
            self.message = "No step to remove."
            return False
        gone = steps.pop(i)
        self.message = f"Removed: {gone.title}."
        self.param.update(steps=steps, selected=max(0, min(i, len(steps) - 1)))
        return True

    # ------------------------------------------------------------------ the file
    def _numbered(self, steps=None) -> list[LessonStep]:
        return [
            dataclasses.replace(s, number=i)
            for i, s in enumerate(self.steps if steps is None else steps, start=1)
        ]

    def _check(self, steps) -> Lesson:
        data = {
            "name": self.lesson_name,
            "description": self.description,
            "step": [step_mapping(s) for s in self._numbered(steps)],
        }
        return lesson_from_mapping(data, "Lesson")

    @property
    def file_name(self) -> str:
        return f"{file_stem(self.lesson_name)}.toml"

    def problem(self) -> str:
        """Why the lesson cannot be saved yet ('' when it can)."""
        if not self.steps:
            return "Add at least one step: show a view, give it a title and a caption, Add."
        try:
            self._check(self.steps)
        except LessonError as exc:
            return str(exc)
        return ""

    def toml(self) -> str:
        """The lesson file's text (raises :class:`LessonError` when it cannot be made)."""
        return lesson_to_toml(self.lesson_name, self.description, self._numbered())

    def lesson(self) -> Lesson:
        """The lesson as the file reads back (path: the file name it would be saved as)."""
        return lesson_from_mapping(tomllib.loads(self.toml()), self.file_name)
