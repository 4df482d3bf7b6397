"""Lesson files (``scenarios/lessons/*.toml``): an ordered sequence of cases with captions.

A lesson is what a lecturer steps through in front of a hall: each step is a complete case
(the same ``[air]``, ``[lungs]``, ``[blood]``, ``[circulation]`` tables as a scenario file;
keys left out take their defaults), a short title and a caption, and the tissue point at which
the O2 extracted per litre is read: a tissue PO2 held at a given value, or the mixed venous
PO2 of the step's own solve (``tissue_point = "venous"``). Every problem is reported, all at
once, as one :class:`LessonError` (a line each) naming the file, the step number, the key,
the value, the allowed range and the unit; nothing is half-loaded. :func:`lesson_to_toml` writes a lesson file that
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
    """A lesson file that cannot be used; the message says where and why.

    ``problems`` lists every problem found (one per line of the message, each starting with
    the file), as :class:`model.scenario.ScenarioError` does.
    """

    def __init__(self, message: str = "", problems: tuple[str, ...] = ()):
        super().__init__(message)
        self.problems = problems or tuple(str(message).splitlines()) or (str(message),)


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


def _checked(problems: list[str], fn, *args):
    """``fn(*args)``, or None after adding its refusal's lines to ``problems``."""
    try:
        return fn(*args)
    except LessonError as exc:
        problems.extend(exc.problems)
        return None


def lesson_from_mapping(
    data: dict, where: str = "<lesson>", default_name: str | None = None
) -> Lesson:
    """Validate a parsed lesson mapping and build a :class:`Lesson`.

    As for scenario files, every problem is collected and all are raised together as one
    :class:`LessonError` (one line each: where, step, key, value, allowed range and unit).
    ``name`` falls back to ``default_name`` (the file's name), else ``where``;
    ``description`` to no text. At least one ``[[step]]`` is needed.

    Examples
    --------
    >>> lesson = lesson_from_mapping({
    ...     "name": "Two steps", "description": "Rest, then anaemia.",
    ...     "step": [{"title": "Rest", "caption": "A resting adult."},
    ...              {"title": "Anaemia", "caption": "Hb halved.", "blood": {"hb_g_dl": 7.5}}]})
    >>> [s.number for s in lesson.steps], lesson.steps[1].inputs
    ([1, 2], {'hb_g_dl': 7.5})
    >>> lesson_from_mapping({"step": [{"title": "t", "caption": "c"}]}, "demo.toml", "demo").name
    'demo'
    >>> lesson_from_mapping({"name": "x", "description": "y", "step": [
    ...     {"title": "t", "caption": "c", "blood": {"hb_g_dl": 99}}]}, "demo.toml")
    Traceback (most recent call last):
    ...
    model.lesson.LessonError: demo.toml: step 1: [blood] hb_g_dl = 99 is outside the allowed range 2-25 g/dL (Haemoglobin)
    """
    if not isinstance(data, dict):
        raise LessonError(f"{where}: expected a table of keys, not {type(data).__name__}")
    problems: list[str] = []
    for key in data:
        if key not in _TOP_KEYS:
            problems.append(
                f"{where}: unknown top-level key {key!r}; allowed: {', '.join(sorted(_TOP_KEYS))}"
            )
    name = default_name or where
    if "name" in data:
        name = _checked(problems, _text, data["name"], "name", TITLE_CHARS, where) or name
    description = ""
    if "description" in data:
        description = (
            _checked(problems, _text, data["description"], "description", (0, 2000), where) or ""
        )
    default_tissue = _checked(problems, _tissue, data, where, ("held", DEFAULT_TISSUE_PO2_MMHG))
    default_tissue = default_tissue or ("held", DEFAULT_TISSUE_PO2_MMHG)
    raw_steps = data.get("step")
    if raw_steps is None:
        problems.append(
            f"{where}: missing required top-level key 'step' (at least one [[step]] table)"
        )
        raw_steps = []
    elif not isinstance(raw_steps, list) or not all(isinstance(s, dict) for s in raw_steps):
        problems.append(f"{where}: step must be an array of tables, each written [[step]]")
        raw_steps = []
    elif not 1 <= len(raw_steps) <= MAX_STEPS:
        problems.append(f"{where}: {len(raw_steps)} steps; allowed 1–{MAX_STEPS} steps per lesson")
        raw_steps = raw_steps[:MAX_STEPS]
    steps = []
    for number, raw in enumerate(raw_steps, start=1):
        at = f"{where}: step {number}"
        before = len(problems)
        for key in raw:
            if key not in _STEP_KEYS and key not in _CASE_TABLES:
                allowed = ", ".join(sorted(_STEP_KEYS | _CASE_TABLES))
                problems.append(f"{at}: unknown key {key!r}; allowed: {allowed}")
        texts = {}
        for key, limits in (("title", TITLE_CHARS), ("caption", CAPTION_CHARS)):
            if key not in raw:
                problems.append(f"{at}: missing required key {key!r} (text)")
            else:
                texts[key] = _checked(problems, _text, raw[key], key, limits, at)
        tissue = _checked(problems, _tissue, raw, at, default_tissue)
        case = {k: v for k, v in raw.items() if k in _CASE_TABLES}
        try:
            inputs = scenario_from_mapping(case, at).inputs
        except ScenarioError as exc:
            problems.extend(exc.problems)
            continue
        if len(problems) == before and tissue is not None:
            point, po2 = tissue
            steps.append(
                LessonStep(number, texts["title"], texts["caption"], po2, dict(inputs), point)
            )
    if problems:
        raise LessonError("\n".join(problems), tuple(problems))
    return Lesson(name=name, description=description, path=where, steps=tuple(steps))


def load_lesson(path) -> Lesson:
    """Read and validate one lesson file; every step must also be solvable by the chain.

    Raises
    ------
    LessonError
        Unreadable, special, empty, oversized or non-UTF-8 file, TOML syntax error or
        nesting (:mod:`model.files`); unknown key, wrong type, value or text length out of
        range, or a step the chain cannot solve, all reported at once; each line names the
        file, the step number, the key, the value, the allowed range and the unit. The name
        falls back to the file's name without ``.toml``.
    """
    p = Path(path)
    lesson = lesson_from_mapping(read_toml(p, LessonError), str(p), default_name=p.stem)
    from .transport import solve_transport

    problems = []
    for step in lesson.steps:
        try:
            solve_transport(**step.inputs)
        except ValueError as exc:
            problems.append(f"{p}: step {step.number}: the case cannot be solved: {exc}")
    if problems:
        raise LessonError("\n".join(problems), tuple(problems))
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
