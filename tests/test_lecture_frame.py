"""Lecture frame: the O2 content view, the tissue point, the words and colours on the plot."""

import numpy as np
import pytest
from bokeh.document import Document
from bokeh.models import GlyphRenderer, Legend
from o2transit.dashboard.lecture.figures import (
    LEGEND_TEXT,
    frame_data,
    readout_lines,
    tissue_label,
)
from o2transit.dashboard.lecture.state import LectureState
from o2transit.dashboard.lecture.views import LecturePlot
from o2transit.dashboard.look import ARTERIAL, REFERENCE, VENOUS

from o2transit import model


@pytest.fixture
def state():
    return LectureState()


def step_titled(state, lesson, title):
    state.choose_lesson(lesson)
    (number,) = [s.number for s in state.current_lesson.steps if s.title == title]
    assert state.go_to(number)
    return state.current_lesson.steps[number - 1]


def test_content_view_is_the_models_content_on_the_grid(state):
    step_titled(state, "rest-to-altitude", "Anaemia at sea level")
    state.view = "content"
    f = state.frame
    r = state.case.result
    grid = np.linspace(0.5, 150.0, 300)  # the case screen's PO2 grid
    so2 = model.saturation(grid, **r.arterial_conditions)
    expected = model.oxygen_content(float(r.hb_g_dl), so2, grid)
    assert np.allclose(f["current_content"], expected, rtol=1e-12)
    data = frame_data(f)
    assert np.array_equal(data["curves"]["current"], f["current_content"])
    assert data["arterial"]["y"] == [f["arterial_content_ml_dl"]]
    # Anaemia: the same saturation curve, the plateau at 8/15 of the reference's bound O2
    # (1.34 x Hb x SO2 bound plus 0.003 x PO2 dissolved; common textbook values).
    assert np.allclose(f["current"], f["reference"], atol=0.5)
    bound, dissolved = model.HUFNER_ML_G * f["current"][-1] / 100, 0.003 * 150.0
    plateau = f["current_content"][-1] / f["reference_content"][-1]
    assert plateau == pytest.approx((8 * bound + dissolved) / (15 * bound + dissolved), abs=2e-3)
    assert f["y_max_content"] == 25.0


def test_carbon_monoxide_shows_as_a_lower_plateau_and_a_left_shift(state):
    step_titled(state, "rest-to-altitude", "Carbon monoxide")
    state.view = "content"
    f = state.frame
    # A quarter of the sites hold CO: the saturation curve still reaches 100 % ...
    assert f["current"][-1] > 99.0
    # ... but the content plateau is about three quarters of the reference's, and P50 falls.
    bound = model.HUFNER_ML_G * 15.0
    assert f["current_content"][-1] == pytest.approx(0.75 * bound, abs=0.6)
    assert f["current_content"][-1] / f["reference_content"][-1] == pytest.approx(0.75, abs=0.02)
    assert f["p50_shift"] < -5.0
    half = np.interp(0.5 * f["current_content"][-1], f["current_content"], f["x"])
    half_ref = np.interp(0.5 * f["reference_content"][-1], f["reference_content"], f["x"])
    assert half < half_ref - 5.0  # half of what it carries is held down to a lower PO2


def test_the_view_is_in_the_address(state):
    state.view = "content"
    assert state.to_query()["view"] == "content"
    copy = LectureState()
    assert copy.restore_query(state.to_query()) == [] and copy.view == "content"
    assert LectureState().restore_query({"view": "pie"}) == [
        "view = 'pie' is not one of saturation, content; saturation is used"
    ]


def test_a_venous_tissue_point_gives_the_case_screens_extraction(state):
    step = step_titled(state, "rest-to-altitude", "First day at 4500 m")
    assert step.tissue_point == "venous"
    f = state.frame
    r = model.solve_transport(**step.inputs)
    assert f["tissue_point"] == "venous"
    assert f["tissue_po2"] == pytest.approx(float(r.venous.po2_mmhg), rel=1e-9)
    assert f["tissue_so2"] == pytest.approx(100 * float(r.venous.so2), rel=1e-9)
    assert f["extracted_ml_per_l"] == pytest.approx(float(r.o2_extracted_ml_per_l), rel=1e-9)
    # Fick: VO2 / Q, here 250 mL/min over 6.3 L/min; the reference's 250 / 5.
    assert f["extracted_ml_per_l"] == pytest.approx(250 / 6.3, rel=1e-6)
    assert f["reference_extracted_ml_per_l"] == pytest.approx(50.0, rel=1e-6)
    assert tissue_label(f) == f"unloading: venous PO2 {f['tissue_po2']:.0f} by Fick"


def test_a_held_tissue_point_reads_the_venous_curve(state):
    f = state.frame  # the resting adult, tissue PO2 held at 40 mmHg
    r = state.case.result
    so2 = float(model.saturation(40.0, **r.venous_conditions))
    content = float(model.oxygen_content(15.0, so2, 40.0))
    assert f["tissue_so2"] == pytest.approx(100 * so2, rel=1e-12)
    assert f["extracted_ml_per_l"] == pytest.approx(
        10 * (float(r.arterial.o2_content_ml_dl) - content), rel=1e-12
    )
    # At rest the venous PO2 of the solve is about 40 mmHg, so this is about the case
    # screen's number (50 mL/L, VO2 250 over 5 L/min).
    assert f["extracted_ml_per_l"] == pytest.approx(float(r.o2_extracted_ml_per_l), abs=0.5)
    assert tissue_label(f) == "unloading: tissue PO2 held at 40"


def test_readout_has_a_unit_on_every_change(state):
    step_titled(state, "rest-to-altitude", "Fever at 39.5 °C")
    f = state.frame
    p50, extracted = readout_lines(f)
    assert p50 == f"P50 {f['p50']:.1f} mmHg:  +{f['p50_shift']:.1f} mmHg  vs reference"
    assert extracted == (
        f"O2 extracted per litre:  {f['extracted_ml_per_l']:.0f} mL/L,  "
        f"+{f['extracted_change_ml_per_l']:.1f} mL/L vs reference"
    )
    assert frame_data(f)["readout"]["text"] == [p50, extracted]


def test_home_and_end_go_to_the_first_and_last_step(state):
    assert state.last_step() and state.step == state.step_count == 7
    assert state.first_step() and state.step == 1
    state.choose_factor("ph")
    assert state.last_step() and state.mode == "lesson" and state.step == 7


def test_plot_uses_the_case_screens_colours_and_names(state):
    plot = LecturePlot(state)
    fig = plot.figure
    plot.__panel__().get_root(Document())
    (legend,) = fig.select(type=Legend)
    items = {item.label.value: item.renderers[0].glyph for item in legend.items}
    assert items[LEGEND_TEXT["arterial"]].line_color == ARTERIAL
    assert items[LEGEND_TEXT["venous"]].line_color == VENOUS
    assert items[LEGEND_TEXT["reference"]].line_color == REFERENCE
    assert items[LEGEND_TEXT["arterial_point"]].fill_color == ARTERIAL
    assert items["unloading: tissue PO2 held at 40"].fill_color == VENOUS
    assert LEGEND_TEXT["bar"] == "O2 extracted per litre"  # the case screen's words
    # The tissue point's legend follows the step's tissue point.
    step_titled(state, "rest-to-altitude", "First day at 4500 m")
    labels = [item.label.value for item in legend.items]
    assert tissue_label(state.frame) in labels and labels[4].startswith("unloading: venous PO2 ")
    # The content view changes the axis and its range, from the frame.
    state.view = "content"
    assert fig.yaxis[0].axis_label == "O2 content (mL O2/dL)"
    assert fig.y_range.end == state.frame["y_max_content"]
    drawn = [r for r in fig.renderers if isinstance(r, GlyphRenderer)]
    assert len(drawn) >= 8


def test_one_word_for_the_reference_throughout(state):
    words = " ".join(LEGEND_TEXT.values()) + " ".join(readout_lines(state.frame))
    assert "standard" not in words and "baseline" not in words
    assert "reference" in words
