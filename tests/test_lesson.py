"""Lesson files: the shipped example, and every way a file can be refused."""

import textwrap
from pathlib import Path

import pytest
from o2transit.model.lesson import (
    CAPTION_CHARS,
    DEFAULT_TISSUE_PO2_MMHG,
    MAX_STEPS,
    LessonError,
    LessonStep,
    lesson_files,
    lesson_from_mapping,
    lesson_to_toml,
    load_lesson,
    step_mapping,
)

from o2transit import model

LESSON_DIR = Path(__file__).resolve().parent.parent / "scenarios" / "lessons"
EXAMPLE = LESSON_DIR / "rest-to-altitude.toml"

GOOD = """
name = "Short lesson"
description = "Two invented steps."

[[step]]
title = "Rest"
caption = "A resting adult."

[[step]]
title = "Anaemia"
caption = "Half the haemoglobin."
tissue_po2_kpa = 4.0

[step.blood]
hb_g_l = 75
"""


def write(tmp_path, text, name="lesson.toml"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def test_example_lesson_loads_and_every_step_solves():
    lesson = load_lesson(EXAMPLE)
    assert lesson.key == "rest-to-altitude"
    assert [s.number for s in lesson.steps] == list(range(1, 8))
    assert lesson.steps[0].title == "Resting adult at sea level"
    assert lesson.steps[1].tissue_po2_mmhg == 20.0  # exercise names its own tissue PO2
    assert lesson.steps[0].tissue_po2_mmhg == 40.0
    assert lesson.steps[4].inputs["pressure_model"] == "mountain"
    assert lesson.steps[4].tissue_point == "venous"  # altitude reads the venous solve
    assert {s.tissue_point for s in lesson.steps[:4]} == {"held"}
    for step in lesson.steps:
        assert CAPTION_CHARS[0] <= len(step.caption) <= CAPTION_CHARS[1]
        model.solve_transport(**step.inputs)
    assert lesson_files(LESSON_DIR) == sorted(LESSON_DIR.glob("*.toml"))
    assert EXAMPLE in lesson_files(LESSON_DIR)


def test_units_convert_and_defaults_apply(tmp_path):
    lesson = load_lesson(write(tmp_path, GOOD))
    rest, anaemia = lesson.steps
    assert rest.inputs == {} and rest.tissue_po2_mmhg == DEFAULT_TISSUE_PO2_MMHG
    assert anaemia.inputs == {"hb_g_dl": 7.5}
    assert anaemia.tissue_po2_mmhg == pytest.approx(4.0 * 760 / 101.325)


@pytest.mark.parametrize(
    ("change", "expected"),
    [
        (lambda t: "colour = 'red'\n" + t, "unknown top-level key 'colour'"),
        (
            lambda t: t.replace('title = "Rest"', 'title = "Rest"\nnote = "x"'),
            "step 1: unknown key 'note'",
        ),
        (
            lambda t: t.replace('caption = "A resting adult."\n', ""),
            "step 1: missing required key 'caption' (text)",
        ),
        (
            lambda t: t.replace('title = "Rest"', "title = 3"),
            "step 1: title = 3 must be text",
        ),
        (
            lambda t: t.replace('"A resting adult."', '"' + "x" * 400 + '"'),
            f"step 1: caption has 400 characters; allowed 1–{CAPTION_CHARS[1]} characters",
        ),
        (
            lambda t: t.replace("hb_g_l = 75", "hb_g_l = 400"),
            "step 2: [blood] hb_g_l = 400 is outside the allowed range 20-250 g/L (Haemoglobin)",
        ),
        (
            lambda t: t.replace("hb_g_l = 75", "haemoglobin = 7"),
            "step 2: [blood] unknown key 'haemoglobin'",
        ),
        (
            lambda t: t.replace("tissue_po2_kpa = 4.0", "tissue_po2_kpa = 40.0"),
            "step 2: tissue_po2_kpa = 40.0 is outside the allowed range 0.6666–13.33 kPa",
        ),
        (
            lambda t: t.replace("tissue_po2_kpa = 4.0", "tissue_po2_mmhg = 2"),
            "step 2: tissue_po2_mmhg = 2 is outside the allowed range 5–100 mmHg (tissue PO2)",
        ),
        (
            lambda t: t.replace(
                "tissue_po2_kpa = 4.0", "tissue_po2_kpa = 4.0\ntissue_po2_mmhg = 30"
            ),
            "step 2: tissue_po2_mmhg and tissue_po2_kpa both given; keep one",
        ),
        (
            lambda t: t.replace("tissue_po2_kpa = 4.0", 'tissue_po2_kpa = "low"'),
            "step 2: tissue_po2_kpa = 'low' must be a number",
        ),
        (
            lambda t: t.replace("hb_g_l = 75", "cohb_fraction = 0.5\nmethb_fraction = 0.5"),
            "step 2: [blood] cohb_fraction + methb_fraction must stay below 0.9",
        ),
        (
            lambda t: t.replace(
                "[step.blood]\nhb_g_l = 75", "[step.air]\naltitude_m = 9000\nfio2 = 0.05"
            ),
            "step 2: the case cannot be solved: alveolar PO2",
        ),
        (lambda t: t + "\n[[step]\n", "not valid TOML"),
    ],
)
def test_bad_files_are_refused_with_file_step_key_value_range_and_unit(tmp_path, change, expected):
    path = write(tmp_path, change(textwrap.dedent(GOOD)))
    with pytest.raises(LessonError) as err:
        load_lesson(path)
    message = str(err.value)
    assert message.startswith(str(path)), message
    assert expected in message, message


def test_like_a_scenario_file_name_and_description_are_optional(tmp_path):
    # issue 14 item 1: the lesson loader follows the scenario files' rules; the name falls
    # back to the file's name, the description to no text.
    text = textwrap.dedent(GOOD).replace('name = "Short lesson"\n', "")
    text = text.replace('description = "Two invented steps."\n', "")
    lesson = load_lesson(write(tmp_path, text, name="my-lesson.toml"))
    assert lesson.name == "my-lesson" and lesson.description == ""
    assert [s.title for s in lesson.steps] == ["Rest", "Anaemia"]


def test_every_problem_in_a_lesson_is_reported_at_once(tmp_path):
    # issue 14 item 1: report every problem in a file at once, not only the first.
    text = "colour = 'red'\n" + textwrap.dedent(GOOD)
    text = text.replace('title = "Rest"', 'title = 3\nnote = "x"')
    text = text.replace("hb_g_l = 75", "hb_g_l = 400\nhaemoglobin = 7")
    text = text.replace("tissue_po2_kpa = 4.0", "tissue_po2_kpa = 40.0")
    path = write(tmp_path, text)
    with pytest.raises(LessonError) as err:
        load_lesson(path)
    expected = [
        "unknown top-level key 'colour'",
        "step 1: unknown key 'note'",
        "step 1: title = 3 must be text",
        "step 2: tissue_po2_kpa = 40.0 is outside the allowed range",
        "step 2: [blood] hb_g_l = 400 is outside the allowed range 20-250 g/L (Haemoglobin)",
        "step 2: [blood] unknown key 'haemoglobin'",
    ]
    problems = err.value.problems
    assert len(problems) == len(expected), problems
    for want in expected:
        assert sum(want in p for p in problems) == 1, (want, problems)
    assert all(p.startswith(str(path)) for p in problems)
    assert str(err.value).splitlines() == list(problems)


def test_every_step_the_chain_cannot_solve_is_named(tmp_path):
    step = '[[step]]\ntitle = "t{n}"\ncaption = "c"\n[step.air]\naltitude_m = 9000\nfio2 = 0.05\n'
    path = write(tmp_path, step.format(n=1) + step.format(n=2))
    with pytest.raises(LessonError) as err:
        load_lesson(path)
    assert [p.split(": the case")[0] for p in err.value.problems] == [
        f"{path}: step 1",
        f"{path}: step 2",
    ]


def test_step_must_be_an_array_of_tables_and_count_is_bounded():
    base = {"name": "n", "description": "d"}
    with pytest.raises(LessonError, match="missing required top-level key 'step'"):
        lesson_from_mapping(base, "x.toml")
    with pytest.raises(
        LessonError, match=r"step must be an array of tables, each written \[\[step\]\]"
    ):
        lesson_from_mapping({**base, "step": {"title": "t"}}, "x.toml")
    with pytest.raises(LessonError, match=f"0 steps; allowed 1–{MAX_STEPS} steps per lesson"):
        lesson_from_mapping({**base, "step": []}, "x.toml")
    many = [{"title": "t", "caption": "c"}] * (MAX_STEPS + 1)
    with pytest.raises(LessonError, match=f"{MAX_STEPS + 1} steps; allowed 1–{MAX_STEPS}"):
        lesson_from_mapping({**base, "step": many}, "x.toml")


def test_unreadable_file_names_itself(tmp_path):
    missing = tmp_path / "nope.toml"
    with pytest.raises(LessonError, match="nope.toml: cannot read the file"):
        load_lesson(missing)


def test_lesson_level_tissue_po2_is_the_default_of_each_step(tmp_path):
    text = textwrap.dedent(GOOD).replace(
        'description = "Two invented steps."', 'description = "d"\ntissue_po2_mmhg = 25'
    )
    rest, anaemia = load_lesson(write(tmp_path, text)).steps
    assert rest.tissue_po2_mmhg == 25.0
    assert anaemia.tissue_po2_mmhg == pytest.approx(30.0, abs=0.01)  # its own 4.0 kPa


def test_tissue_point_venous_and_its_refusals(tmp_path):
    text = textwrap.dedent(GOOD).replace(
        'description = "Two invented steps."', 'description = "d"\ntissue_point = "venous"'
    )
    rest, anaemia = load_lesson(write(tmp_path, text)).steps
    assert rest.tissue_point == "venous"  # the lesson's default
    assert anaemia.tissue_point == "held"  # a step naming a PO2 holds it there
    assert anaemia.tissue_po2_mmhg == pytest.approx(30.0, abs=0.01)
    held = text.replace('title = "Rest"', 'title = "Rest"\ntissue_point = "held"')
    assert load_lesson(write(tmp_path, held)).steps[0].tissue_point == "held"
    for change, expected in [
        (
            ('title = "Rest"', 'title = "Rest"\ntissue_point = "arterial"'),
            "step 1: tissue_point = 'arterial' is not one of held, venous",
        ),
        (
            ("tissue_po2_kpa = 4.0", 'tissue_po2_kpa = 4.0\ntissue_point = "venous"'),
            "step 2: tissue_point = 'venous' and tissue_po2_kpa both given; keep one",
        ),
    ]:
        with pytest.raises(LessonError) as err:
            load_lesson(write(tmp_path, text.replace(*change)))
        assert expected in str(err.value)


def test_written_lesson_reads_back_step_for_step(tmp_path):
    lesson = load_lesson(EXAMPLE)
    path = tmp_path / "copy.toml"
    path.write_text(lesson_to_toml(lesson.name, lesson.description, lesson.steps), "utf-8")
    again = load_lesson(path)
    assert again.name == lesson.name and again.description == lesson.description
    assert len(again.steps) == len(lesson.steps)
    for a, b in zip(lesson.steps, again.steps):
        assert (a.number, a.title, a.caption, a.tissue_point) == (
            b.number,
            b.title,
            b.caption,
            b.tissue_point,
        )
        assert b.tissue_po2_mmhg == pytest.approx(a.tissue_po2_mmhg)
        assert b.inputs.keys() == a.inputs.keys()
        for key, value in a.inputs.items():
            assert b.inputs[key] == (
                value if isinstance(value, (bool, str)) else pytest.approx(value)
            )
    text = path.read_text("utf-8")
    assert text.startswith("# A lesson for the o2transit lecture page")
    assert 'tissue_point = "venous"' in text and "[step.air]" in text


def test_writing_refuses_what_reading_would(tmp_path):
    rest = LessonStep(1, "Rest", "A resting adult.", 40.0)
    with pytest.raises(LessonError, match="step 2: title has 61 characters; allowed 1–60"):
        lesson_to_toml("n", "", [rest, LessonStep(2, "x" * 61, "c", 40.0)])
    with pytest.raises(
        LessonError,
        match=r"step 1: \[blood\] hb_g_dl = 99 is outside the allowed range 2-25 g/dL",
    ):
        lesson_to_toml("n", "", [LessonStep(1, "t", "c", 40.0, {"hb_g_dl": 99.0})])
    with pytest.raises(LessonError, match="tissue_po2_mmhg = 200 is outside the allowed range"):
        lesson_to_toml("n", "", [LessonStep(1, "t", "c", 200.0)])
    with pytest.raises(LessonError, match="0 steps; allowed 1–30 steps per lesson"):
        lesson_to_toml("n", "", [])
    with pytest.raises(LessonError, match="unknown case input 'colour'"):
        step_mapping(LessonStep(1, "t", "c", 40.0, {"colour": 1.0}))
