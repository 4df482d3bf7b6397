"""Lesson files (``scenarios/lessons/*.toml``): an ordered sequence of cases with captions.

A lesson is what a lecturer steps through in front of a hall: each step is a complete case
(the same ``[air]``, ``[lungs]``, ``[blood]``, ``[circulation]`` tables as a scenario file;
keys left out take their defaults), a short title and a caption, and the tissue point at which
the O2 extracted per litre is read: a tissue PO2 held at a given value, or the mixed venous
PO2 of the step's own solve (``tissue_point = "venous"``). Every problem is reported as one
:class:`LessonError` naming the file, the step number, the key, the value, the allowed range
and the unit; nothing is half-loaded. :func:`lesson_to_toml` writes a lesson file that
:func:`load_lesson` reads back.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import tomli_w

from .scenario import _TABLES as _SCENARIO_TABLES
from .scenario import ScenarioError, read_toml, scenario_from_mapping
from .units import UnitVariant, unit_variants

TISSUE_PO2_LIMITS_MMHG = (5.0, 100.0)
"""Allowed tissue PO2 [mmHg]: from working muscle to a well-perfused organ (common practice)."""
DEFAULT_TISSUE_PO2_MMHG = 40.0
"""Tissue PO2 when a lesson names none [mmHg]: the usual resting mixed venous figure
(textbook value, from memory)."""
TITLE_CHARS = (1, 60)
CAPTION_CHARS = (1, 320)
"""Lengths that still fit on a projected slide in the lecture view [characters]."""
MAX_STEPS = 30
TISSUE_POINTS = ("held", "venous")
"""Where a step reads the O2 extracted per litre: at a tissue PO2 held at its
``tissue_po2_mmhg``, or at the mixed venous PO2 that the step's VO2 and cardiac output give
(Fick)."""

_TISSUE_KEYS = {
    "tissue_po2_mmhg": UnitVariant("tissue_po2_mmhg", 1.0, "mmHg"),
    **unit_variants("tissue_po2_mmhg"),
}
"""Key of the tissue PO2 -> how it reads (``tissue_po2_mmhg`` or ``tissue_po2_kpa``)."""
_TOP_KEYS = {"name", "description", "step", "tissue_point", *_TISSUE_KEYS}
_STEP_KEYS = {"title", "caption", "tissue_point", *_TISSUE_KEYS}
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
    tissue_point: str = "held"
    """``"held"``: read at :attr:`tissue_po2_mmhg`; ``"venous"``: at the solve's venous PO2."""


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
    given = [k for k in _TISSUE_KEYS if k in table]
    if len(given) > 1:
        raise LessonError(f"{where}: {' and '.join(given)} both given; keep one")
    if not given:
        return default
    key = given[0]
    raw = table[key]
    spec = _TISSUE_KEYS[key]
    lo, hi = (spec.from_canonical(v) for v in TISSUE_PO2_LIMITS_MMHG)
    unit = spec.unit
    if isinstance(raw, bool) or not isinstance(raw, (int, float)):
        raise LessonError(f"{where}: {key} = {raw!r} must be a number in {lo:.4g}–{hi:.4g} {unit}")
    if not lo <= raw <= hi:
        raise LessonError(
            f"{where}: {key} = {raw!r} is outside the allowed range {lo:.4g}–{hi:.4g} {unit} "
            "(tissue PO2)"
        )
    return spec.to_canonical(float(raw))


def _tissue(table: dict, where: str, default: tuple[str, float]) -> tuple[str, float]:
    """(tissue point, tissue PO2 [mmHg]) of a table; a table naming a PO2 holds it there."""
    point = table.get("tissue_point")
    if point is not None and point not in TISSUE_POINTS:
        raise LessonError(
            f"{where}: tissue_point = {point!r} is not one of {', '.join(TISSUE_POINTS)}"
        )
    given = [k for k in _TISSUE_KEYS if k in table]
    if point == "venous" and given:
        raise LessonError(
            f"{where}: tissue_point = 'venous' and {given[0]} both given; keep one (a venous "
            "tissue point takes its PO2 from the solve)"
        )
    po2 = _tissue_po2(table, where, default[1])
    if point is None:
        point = "held" if given else default[0]
    return point, po2


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
    default_tissue = _tissue(data, where, ("held", DEFAULT_TISSUE_PO2_MMHG))
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
        point, tissue = _tissue(raw, at, default_tissue)
        case = {k: v for k, v in raw.items() if k in _CASE_TABLES}
        try:
            inputs = scenario_from_mapping(case, at).inputs
        except ScenarioError as exc:
            raise LessonError(str(exc)) from None
        steps.append(LessonStep(number, title, caption, tissue, dict(inputs), point))
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


def _plain_number(value):
    """A value as TOML holds it: text, true/false, or a number to 6 significant digits."""
    if isinstance(value, (bool, str)):
        return value
    number = float(value)
    if not math.isfinite(number):
        raise LessonError(f"cannot write the non-finite number {number!r} in a lesson file")
    short = float(f"{number:.6g}")
    return int(short) if short.is_integer() and abs(short) < 1e15 else short


def step_mapping(step: LessonStep) -> dict:
    """One step as the ``[[step]]`` table of a lesson file (case inputs in their tables).

    Examples
    --------
    >>> step_mapping(LessonStep(1, "Anaemia", "Hb halved.", 40.0, {"hb_g_dl": 7.5}))
    {'title': 'Anaemia', 'caption': 'Hb halved.', 'tissue_po2_mmhg': 40, 'blood': {'hb_g_dl': 7.5}}
    """
    out: dict = {"title": step.title, "caption": step.caption}
    if step.tissue_point == "venous":
        out["tissue_point"] = "venous"
    else:
        out["tissue_po2_mmhg"] = _plain_number(step.tissue_po2_mmhg)
    unknown = set(step.inputs) - {k for keys in _SCENARIO_TABLES.values() for k in keys}
    if unknown:
        raise LessonError(f"step {step.number}: unknown case input {min(unknown)!r}")
    for table, keys in _SCENARIO_TABLES.items():
        values = {k: _plain_number(step.inputs[k]) for k in keys if k in step.inputs}
        if values:
            out[table] = values
    return out


_FILE_HEADER = (
    "# A lesson for the o2transit lecture page (schema: scenarios/lessons/README.md).\n"
    "# Every case in it is an invented illustration, not a measurement.\n"
)


def lesson_to_toml(name: str, description: str, steps) -> str:
    """The text of a lesson file with these steps, checked by reading it back.

    ``steps`` are :class:`LessonStep` (their numbers are rewritten in order). Numbers are
    written to 6 significant digits.

    Raises
    ------
    LessonError
        A name, title or caption of the wrong length, no steps or too many, a tissue PO2 or
        a case input out of range: the message names the step, the key, the value, the
        allowed range and the unit, as for a file.

    Examples
    --------
    >>> text = lesson_to_toml("Two steps", "", [
    ...     LessonStep(1, "Rest", "A resting adult.", 40.0),
    ...     LessonStep(2, "Anaemia", "Hb halved.", 40.0, {"hb_g_dl": 7.5}, "venous")])
    >>> import tomllib
    >>> [s.tissue_point for s in lesson_from_mapping(tomllib.loads(text)).steps]
    ['held', 'venous']
    """
    data = {
        "name": name,
        "description": description,
        "step": [step_mapping(s) for s in steps],
    }
    lesson_from_mapping(data, "the new lesson")
    return _FILE_HEADER + tomli_w.dumps(data, multiline_strings=True)
