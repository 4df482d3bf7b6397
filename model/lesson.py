"""Lesson files (``scenarios/lessons/*.toml``): an ordered sequence of cases with captions.

A lesson is what a lecturer steps through in front of a hall: each step is a complete case
(the same ``[air]``, ``[lungs]``, ``[blood]``, ``[circulation]`` tables as a scenario file;
keys left out take their defaults), a short title and a caption, and the tissue PO2 at which
the unloading is read. Every problem is reported as one :class:`LessonError` naming the
file, the step number, the key, the value, the allowed range and the unit; nothing is
half-loaded.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .scenario import ScenarioError, read_toml, scenario_from_mapping
from .units import MMHG_PER_KPA

TISSUE_PO2_LIMITS_MMHG = (5.0, 100.0)
"""Allowed tissue PO2 [mmHg]: from working muscle to a well-perfused organ (common practice)."""
DEFAULT_TISSUE_PO2_MMHG = 40.0
"""Tissue PO2 when a lesson names none [mmHg]: the usual resting mixed venous figure
(textbook value, from memory)."""
TITLE_CHARS = (1, 60)
CAPTION_CHARS = (1, 320)
"""Lengths that still fit on a projected slide in the lecture view [characters]."""
MAX_STEPS = 30

_TOP_KEYS = {"name", "description", "tissue_po2_mmhg", "tissue_po2_kpa", "step"}
_STEP_KEYS = {"title", "caption", "tissue_po2_mmhg", "tissue_po2_kpa"}
_CASE_TABLES = {"air", "lungs", "blood", "circulation"}


class LessonError(ValueError):
    """A lesson file that cannot be used; the message says where and why."""


@dataclass(frozen=True)
class LessonStep:
    """One step: ``inputs`` are keywords of :func:`model.solve_transport`."""

    number: int
    title: str
    caption: str
    tissue_po2_mmhg: float
    inputs: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Lesson:
    """A validated lesson: its steps in order (numbered from 1)."""

    name: str
    description: str
    path: str
    steps: tuple[LessonStep, ...]

    @property
    def key(self) -> str:
        """The file's stem, used as the lesson's name in a page address."""
        return Path(self.path).stem


def _text(value, what: str, limits: tuple[int, int], where: str) -> str:
    if not isinstance(value, str):
        raise LessonError(f"{where}: {what} = {value!r} must be text")
    text = " ".join(value.split())
    lo, hi = limits
    if not lo <= len(text) <= hi:
        raise LessonError(
            f"{where}: {what} has {len(text)} characters; allowed {lo}–{hi} characters"
        )
    return text


def _tissue_po2(table: dict, where: str, default: float) -> float:
    has_mmhg, has_kpa = "tissue_po2_mmhg" in table, "tissue_po2_kpa" in table
    if has_mmhg and has_kpa:
        raise LessonError(f"{where}: tissue_po2_mmhg and tissue_po2_kpa both given; keep one")
    if not (has_mmhg or has_kpa):
        return default
    key = "tissue_po2_mmhg" if has_mmhg else "tissue_po2_kpa"
    raw = table[key]
    factor, unit = (1.0, "mmHg") if has_mmhg else (MMHG_PER_KPA, "kPa")
    lo, hi = (v / factor for v in TISSUE_PO2_LIMITS_MMHG)
    if isinstance(raw, bool) or not isinstance(raw, (int, float)):
        raise LessonError(f"{where}: {key} = {raw!r} must be a number in {lo:.4g}–{hi:.4g} {unit}")
    if not lo <= raw <= hi:
        raise LessonError(
            f"{where}: {key} = {raw!r} is outside the allowed range {lo:.4g}–{hi:.4g} {unit} "
            "(tissue PO2)"
        )
    return float(raw) * factor


def lesson_from_mapping(data: dict, where: str = "<lesson>") -> Lesson:
    """Validate a parsed lesson mapping and build a :class:`Lesson`.

    Examples
    --------
    >>> lesson = lesson_from_mapping({
    ...     "name": "Two steps", "description": "Rest, then anaemia.",
    ...     "step": [{"title": "Rest", "caption": "A resting adult."},
    ...              {"title": "Anaemia", "caption": "Hb halved.", "blood": {"hb_g_dl": 7.5}}]})
    >>> [s.number for s in lesson.steps], lesson.steps[1].inputs
    ([1, 2], {'hb_g_dl': 7.5})
    >>> lesson_from_mapping({"name": "x", "description": "y", "step": [
    ...     {"title": "t", "caption": "c", "blood": {"hb_g_dl": 99}}]}, "demo.toml")
    Traceback (most recent call last):
    ...
    model.lesson.LessonError: demo.toml: step 1: [blood] hb_g_dl = 99 is outside the allowed range 2-25 g/dL (Haemoglobin)
    """
    for key in data:
        if key not in _TOP_KEYS:
            raise LessonError(
                f"{where}: unknown top-level key {key!r}; allowed: {', '.join(sorted(_TOP_KEYS))}"
            )
    for key in ("name", "description", "step"):
        if key not in data:
            raise LessonError(f"{where}: missing required top-level key {key!r}")
    name = _text(data["name"], "name", TITLE_CHARS, where)
    description = _text(data["description"], "description", (0, 2000), where)
    default_tissue = _tissue_po2(data, where, DEFAULT_TISSUE_PO2_MMHG)
    raw_steps = data["step"]
    if not isinstance(raw_steps, list) or not all(isinstance(s, dict) for s in raw_steps):
        raise LessonError(f"{where}: step must be an array of tables, each written [[step]]")
    if not 1 <= len(raw_steps) <= MAX_STEPS:
        raise LessonError(
            f"{where}: {len(raw_steps)} steps; allowed 1–{MAX_STEPS} steps per lesson"
        )
    steps = []
    for number, raw in enumerate(raw_steps, start=1):
        at = f"{where}: step {number}"
        for key in raw:
            if key not in _STEP_KEYS and key not in _CASE_TABLES:
                allowed = ", ".join(sorted(_STEP_KEYS | _CASE_TABLES))
                raise LessonError(f"{at}: unknown key {key!r}; allowed: {allowed}")
        for key in ("title", "caption"):
            if key not in raw:
                raise LessonError(f"{at}: missing required key {key!r} (text)")
        title = _text(raw["title"], "title", TITLE_CHARS, at)
        caption = _text(raw["caption"], "caption", CAPTION_CHARS, at)
        tissue = _tissue_po2(raw, at, default_tissue)
        case = {k: v for k, v in raw.items() if k in _CASE_TABLES}
        try:
            inputs = scenario_from_mapping(case, at).inputs
        except ScenarioError as exc:
            raise LessonError(str(exc)) from None
        steps.append(LessonStep(number, title, caption, tissue, dict(inputs)))
    return Lesson(name=name, description=description, path=where, steps=tuple(steps))


def load_lesson(path) -> Lesson:
    """Read and validate one lesson file; every step must also be solvable by the chain.

    Raises
    ------
    LessonError
        Unreadable file, TOML syntax error, unknown key, wrong type, value or text length out
        of range, or a step the chain cannot solve; the message names the file, the step
        number, the key, the value, the allowed range and the unit.
    """
    p = Path(path)
    lesson = lesson_from_mapping(read_toml(p, LessonError), str(p))
    from .transport import solve_transport

    for step in lesson.steps:
        try:
            solve_transport(**step.inputs)
        except ValueError as exc:
            raise LessonError(
                f"{p}: step {step.number}: the case cannot be solved: {exc}"
            ) from None
    return lesson


def lesson_files(directory) -> list[Path]:
    """The lesson files of a directory, by file name."""
    return sorted(Path(directory).glob("*.toml"))
