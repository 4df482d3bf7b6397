"""The lesson maker: steps from views shown, moved and removed, saved and read back."""

import pytest
from bokeh.document import Document
from o2transit.dashboard.lecture.maker import LessonMaker, file_stem
from o2transit.dashboard.lecture.maker_view import LessonMakerView
from o2transit.dashboard.lecture.state import LectureState
from o2transit.model.lesson import load_lesson


@pytest.fixture
def state():
    return LectureState()


def add_shown(maker: LessonMaker, title: str, caption: str) -> bool:
    maker.param.update(title=title, caption=caption)
    return maker.add()


def test_make_a_lesson_from_views_and_read_it_back(state, tmp_path):
    maker = LessonMaker(state.shown_step)
    maker.lesson_name = "Sepsis, step by step"
    state.go_to(3)  # fever, tissue PO2 held at 40
    assert add_shown(maker, "Fever", "Heat moves the curve right.")
    state.choose_lesson("shunt-anaemia-and-flow")
    state.go_to(2)  # a shunt, read at the venous PO2
    assert add_shown(maker, "Shunt", "Venous blood joins the arterial stream.")
    state.choose_factor("temperature_c")
    state.set_combine(True)
    state.set_factor_value(39.5)
    state.choose_factor("ph")
    state.set_factor_value(7.2)
    state.set_tissue_po2(30.0)
    assert add_shown(maker, "Septic patient", "Fever with acidosis.")
    assert maker.step_titles() == ["1. Fever", "2. Shunt", "3. Septic patient"]
    # Reorder: the septic patient first, then remove the shunt.
    assert maker.move(-1) and maker.move(-1) and maker.selected == 0
    maker.choose(2)
    assert maker.remove() and maker.step_titles() == ["1. Septic patient", "2. Fever"]
    assert maker.problem() == ""
    path = tmp_path / maker.file_name
    assert maker.file_name == "sepsis-step-by-step.toml"
    path.write_text(maker.toml(), encoding="utf-8")
    lesson = load_lesson(path)
    septic, fever = lesson.steps
    assert (septic.title, septic.caption, septic.tissue_point) == (
        "Septic patient",
        "Fever with acidosis.",
        "held",
    )
    assert septic.tissue_po2_mmhg == 30.0
    assert septic.inputs == {"ph": 7.2, "temperature_c": 39.5}
    assert fever.inputs == state.lessons["rest-to-altitude"].steps[2].inputs
    # Shown again, the read-back lesson gives the same frame as the views it was made from.
    state.add_lesson(maker.lesson())
    assert state.lesson == "sepsis-step-by-step" and state.step == 1
    assert state.frame["heading"] == "Septic patient"
    assert state.frame["tissue_po2"] == 30.0


def test_a_venous_step_is_saved_as_venous(state, tmp_path):
    state.choose_lesson("staying-at-altitude")
    state.go_to(4)
    maker = LessonMaker(state.shown_step)
    maker.fill_from_view()
    assert maker.title == "Day 3 at 4500 m" and maker.caption.startswith("Breathing goes on")
    assert maker.add()
    text = maker.toml()
    assert 'tissue_point = "venous"' in text and "tissue_po2_mmhg" not in text
    path = tmp_path / "x.toml"
    path.write_text(text, encoding="utf-8")
    (step,) = load_lesson(path).steps
    assert step.tissue_point == "venous" and step.inputs["altitude_m"] == 4500


def test_bad_input_is_refused_with_field_value_range_and_unit(state):
    maker = LessonMaker(state.shown_step)
    assert maker.problem().startswith("Add at least one step")
    assert not add_shown(maker, "", "A caption.")
    assert maker.message == (
        "Step not added: Lesson: step 1: title has 0 characters; allowed 1–60 characters."
    )
    assert not add_shown(maker, "Rest", "x" * 321)
    assert "caption has 321 characters; allowed 1–320 characters" in maker.message
    assert maker.steps == []
    assert add_shown(maker, "Rest", "A resting adult.")
    maker.lesson_name = ""
    assert maker.problem() == "Lesson: name has 0 characters; allowed 1–60 characters"
    assert not maker.move(+1) and maker.message == "No step to move there."


def test_fields_follow_the_slide_until_written_in(state):
    maker = LessonMaker(state.shown_step)
    maker.fill_from_view()
    assert maker.title == "Resting adult at sea level"
    state.go_to(2)
    maker.fill_from_view()
    assert maker.title == "Hard exercise"
    maker.title = "My own words"
    state.go_to(3)
    maker.fill_from_view()
    assert maker.title == "My own words"  # kept
    maker.fill_from_view(force=True)
    assert maker.title.startswith("Fever")


def test_file_names():
    assert file_stem("Shunt, anaemia & flow") == "shunt-anaemia-flow"
    assert file_stem("¿¡") == "lesson"


def test_maker_view_renders(state):
    view = LessonMakerView(state)
    assert view.__panel__().get_root(Document()) is not None
    view.toggle.value = True
    assert view.panel.visible and view.maker.title == "Resting adult at sea level"


def test_after_a_step_is_added_the_fields_follow_the_slide_again(state):
    maker = LessonMaker(state.shown_step)
    maker.fill_from_view()
    maker.title = "Rest"
    assert maker.add()
    state.go_to(2)
    maker.fill_from_view()
    assert maker.title == "Hard exercise"
