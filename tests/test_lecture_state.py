"""Lecture state: steps, one factor at a time, derived numbers, the page address; render smoke."""

import shutil
from pathlib import Path

import pytest
from bokeh.document import Document
from o2transit.dashboard.lecture.app import create_lecture_app
from o2transit.dashboard.lecture.export import standalone_html
from o2transit.dashboard.lecture.figures import frame_data
from o2transit.dashboard.lecture.state import FACTORS, FETAL_P50_MMHG, LESSON_DIR, LectureState
from o2transit.dashboard.lecture.views import LectureControls, LecturePlot

from o2transit import model

STANDARD_P50 = float(model.p50())  # the reference case's curve at pH 7.40, PCO2 40, 37 °C


@pytest.fixture
def state():
    return LectureState()


def test_opens_on_the_first_step_of_the_example_lesson(state):
    assert state.mode == "lesson" and state.lesson == "rest-to-altitude" and state.step == 1
    assert state.step_titles()[1] == "2. Hard exercise"
    f = state.frame
    assert f["tag"] == "Step 1 of 7" and f["heading"] == "Resting adult at sea level"
    assert f["p50_shift"] == pytest.approx(0.0, abs=1e-9)  # the first step is the reference
    assert f["extracted_change_ml_per_l"] == pytest.approx(0.0, abs=1e-9)
    assert len(f["x"]) == len(f["current"]) == len(f["reference"]) == 300


def test_step_navigation_stays_inside_the_lesson(state):
    assert not state.previous_step() and state.step == 1
    assert state.next_step() and state.step == 2
    assert state.frame["tissue_po2"] == 20.0
    assert state.go_to(7) and not state.next_step() and state.step == 7
    assert not state.go_to(8)
    assert state.message == "Step 8 does not exist; this lesson has steps 1–7."
    assert state.step == 7


def test_each_lesson_step_is_the_model_case(state):
    lesson = state.current_lesson
    for step in lesson.steps:
        state.go_to(step.number)
        result = model.solve_transport(**step.inputs)
        assert state.frame["loading"][0] == pytest.approx(float(result.arterial.po2_mmhg))
        assert state.frame["p50"] == pytest.approx(float(result.arterial.p50_mmhg))


def test_ph_shift_matches_kelman_virtual_po2():
    # Kelman GR, J Appl Physiol 21:1375-1376 (1966): virtual PO2 factor 10^(0.40 (pH - 7.40)) at
    # constant PCO2, so P50(7.20) = P50(7.40) 10^0.08. Tolerance: the model finds P50 by
    # inverting the curve (1e-6 relative is ample).
    state = LectureState()
    state.choose_factor("ph")
    assert state.set_factor_value(7.20)
    expected = STANDARD_P50 * (10**0.08 - 1)
    assert state.frame["p50_shift"] == pytest.approx(expected, rel=1e-6)
    assert expected == pytest.approx(5.43, abs=0.01)


def test_temperature_shift_matches_the_0024_factor():
    # Bradley, Severinghaus & Stupfel, J Appl Physiol 9:201-204 (1956): 0.024 log10 units per
    # degC, used in Kelman's virtual PO2; P50(39 degC) = P50(37) 10^(0.048). Same tolerance.
    state = LectureState()
    state.choose_factor("temperature_c")
    assert state.set_factor_value(39.0)
    assert state.frame["p50_shift"] == pytest.approx(STANDARD_P50 * (10**0.048 - 1), rel=1e-6)


@pytest.mark.parametrize(
    ("key", "value", "sign"),
    [
        ("ph", 7.20, +1),
        ("ph", 7.60, -1),
        ("paco2_mmhg", 60.0, +1),
        ("paco2_mmhg", 25.0, -1),
        ("temperature_c", 40.0, +1),
        ("temperature_c", 34.0, -1),
        ("dpg_mmol_l", 8.0, +1),
        ("dpg_mmol_l", 1.0, -1),
        ("cohb_fraction", 0.3, -1),
        ("fetal", 1.0, -1),
    ],
)
def test_each_factor_alone_moves_p50_the_right_way(key, value, sign):
    state = LectureState()
    state.choose_factor(key)
    assert state.frame["p50_shift"] == pytest.approx(0.0, abs=1e-9)  # at its reference
    state.param.update(factor_value=value)
    f = state.frame
    assert sign * f["p50_shift"] > 0.2
    # Only this factor moved: every other input of the case is at its default.
    moved = {n for n in FACTORS[key].inputs(value)}
    for name in ("hb_g_dl", "fio2", "altitude_m", "cardiac_output_l_min", "vo2_ml_min"):
        assert name in moved or getattr(state.case, name) == state.case.param[name].default


def test_fetal_blood_uses_the_documented_p50():
    state = LectureState()
    state.choose_factor("fetal")
    state.set_factor_value(1.0)
    assert state.frame["p50"] == pytest.approx(FETAL_P50_MMHG)
    assert state.frame["heading"] == "Fetal Hb: fetal blood"


def test_unloading_at_the_tissue_point_follows_the_curve():
    state = LectureState()
    state.choose_factor("ph")
    state.set_factor_value(7.20)  # right shift: more O2 given up at the same tissue PO2
    right = state.frame["extracted_change_ml_per_l"]
    state.set_factor_value(7.60)
    left = state.frame["extracted_change_ml_per_l"]
    assert right > 5.0 and left < -5.0
    # A lower tissue PO2 frees more O2 from the same blood.
    state.set_factor_value(7.40)
    at40 = state.frame["extracted_ml_per_l"]
    assert state.set_tissue_po2(20.0)
    assert state.frame["extracted_ml_per_l"] > at40 + 20
    # The amount is the content difference, 10 (CaO2 - C(tissue)) mL/L: Hb-bound plus dissolved.
    f = state.frame
    bound = model.HUFNER_ML_G * 15.0 * (f["arterial_so2"] - f["tissue_so2"]) / 100 * 10
    dissolved = model.O2_SOLUBILITY_ML_DL_MMHG * (f["loading"][0] - 20.0) * 10
    assert f["extracted_ml_per_l"] == pytest.approx(bound + dissolved, rel=1e-9)


def test_anaemia_unloads_less_per_litre(state):
    state.go_to(6)
    f = state.frame
    assert f["p50_shift"] == pytest.approx(0.0, abs=0.05)  # the curve itself does not move
    ratio = f["extracted_ml_per_l"] / f["reference_extracted_ml_per_l"]
    assert ratio == pytest.approx(8.0 / 15.0, abs=0.03)  # Hb 8 vs 15, less the dissolved part


def test_kpa_display(state):
    state.choose_factor("paco2_mmhg")
    state.pressure_unit = "kPa"
    c = state.factor_control()
    assert c["unit"] == "kPa" and c["lo"] == pytest.approx(20 / 7.50062, rel=1e-4)
    assert state.set_factor_value(8.0)
    assert state.factor_value == pytest.approx(8.0 * 760 / 101.325)
    f = state.frame
    assert f["unit"] == "kPa"
    assert f["p50"] == pytest.approx(float(model.mmhg_to_kpa(state.case.result.arterial.p50_mmhg)))
    assert "kPa" in frame_data(f)["readout"]["text"][0]


def test_unit_switch_in_factor_mode_writes_the_heading_in_the_new_unit(state):
    state.choose_factor("paco2_mmhg")
    assert state.frame["heading"] == "PCO2 40 mmHg"
    state.pressure_unit = "kPa"
    kpa = float(model.mmhg_to_kpa(40.0))  # 5.33 kPa; the heading once kept 40.0 in kPa
    assert state.frame["heading"] == f"PCO2 {kpa:.1f} kPa"
    assert state.factor_control()["value"] == pytest.approx(kpa)


def test_refused_values_name_field_value_range_and_unit(state):
    state.choose_factor("temperature_c")
    assert not state.set_factor_value(45.0)
    assert state.message == "Temperature = 45 is outside the allowed range 33–42 °C; kept 37 °C."
    assert not state.set_tissue_po2(2.0)
    assert state.message.startswith("Tissue PO2 = 2 is outside the allowed range 5–100 mmHg")
    assert not state.choose_factor("salt")
    assert "Factor 'salt' unknown" in state.message
    assert not state.choose_lesson("nope")
    assert state.message == (
        "Lesson 'nope' not found; lessons here: rest-to-altitude, shunt-anaemia-and-flow, "
        "staying-at-altitude."
    )


def test_address_round_trip(state):
    state.go_to(5)
    assert state.to_query() == {"lesson": "rest-to-altitude", "step": "5"}
    copy = LectureState()
    assert copy.restore_query(state.to_query()) == []
    assert copy.step == 5 and copy.frame["heading"] == state.frame["heading"]

    state.choose_factor("cohb_fraction")
    state.set_factor_value(30.0)  # shown in %
    state.set_tissue_po2(25.0)
    state.pressure_unit = "kPa"
    query = state.to_query()
    assert query == {
        "factor": "cohb_fraction",
        "cohb_fraction": "0.3",
        "tissue_po2_mmhg": "25",
        "pressure_unit": "kPa",
    }
    copy = LectureState()
    assert copy.restore_query(query) == []
    assert copy.frame["heading"] == state.frame["heading"]
    assert copy.frame["extracted_ml_per_l"] == pytest.approx(state.frame["extracted_ml_per_l"])


def test_bad_address_values_fall_back_with_messages(state):
    messages = state.restore_query(
        {"lesson": "rest-to-altitude", "step": "0", "size": "xl", "pressure_unit": "bar"}
    )
    assert state.step == 1 and state.pressure_unit == "mmHg"
    assert "step = '0' is outside the allowed range 1–7; step 1 is shown" in messages
    assert "'size' is not a setting of the lecture page; ignored" in messages
    assert "pressure_unit = 'bar' is not one of mmHg, kPa; mmHg is used" in messages
    messages = LectureState().restore_query({"factor": "dpg_mmol_l", "dpg_mmol_l": "abc"})
    assert messages == [
        (
            "2,3-DPG: dpg_mmol_l = 'abc' is outside the allowed range 0–10 mmol/L; the "
            "reference 5 mmol/L is used"
        )
    ]
    other = LectureState()
    assert other.restore_query({"factor": "fetal", "fetal": "perhaps"}) == [
        "fetal = 'perhaps' must be true or false; adult blood is shown"
    ]
    assert other.mode == "factor" and other.frame["p50_shift"] == pytest.approx(0.0, abs=1e-9)
    assert (
        LectureState()
        .restore_query({"lesson": "gone"})[0]
        .startswith(
            "lesson = 'gone' not found (lessons: rest-to-altitude, shunt-anaemia-and-flow, "
            "staying-at-altitude)"
        )
    )


def test_a_broken_lesson_file_is_reported_and_the_rest_still_load(tmp_path):
    shutil.copy(LESSON_DIR / "rest-to-altitude.toml", tmp_path)
    (tmp_path / "broken.toml").write_text('name = "b"\n', encoding="utf-8")
    state = LectureState(lesson_dir=tmp_path)
    assert list(state.lessons) == ["rest-to-altitude"]
    (problem,) = state.lesson_problems
    assert "broken.toml: missing required top-level key 'step'" in problem


def test_without_lessons_the_page_opens_on_one_factor(tmp_path):
    state = LectureState(lesson_dir=tmp_path)
    assert state.mode == "factor" and state.step_count == 0
    assert not state.go_to(1) and state.message == "No lesson is loaded."
    assert state.frame["heading"] == "pH 7.40"


def test_views_render_and_html_export_holds_the_view(state):
    plot = LecturePlot(state)
    controls = LectureControls(state, plot)
    assert plot.__panel__().get_root(Document()) is not None
    assert controls.__panel__().get_root(Document()) is not None
    assert create_lecture_app().get_root(Document()) is not None
    state.go_to(3)
    assert plot.figure.title.text == "Step 3 of 7 · Fever at 39.5 °C"
    page = standalone_html(state)
    assert "Fever at 39.5 °C" in page and "not a medical device" in page


def test_lecture_screen_is_registered():
    from o2transit.dashboard.app import SCREENS
    from o2transit.dashboard.nav import SCREEN_TITLES

    page = SCREENS["/lecture"]()
    assert isinstance(page, type(create_lecture_app()))
    assert SCREEN_TITLES["/lecture"] == "Lecture"
    assert Path(LESSON_DIR).is_dir()
