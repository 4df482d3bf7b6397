"""Bedside words in the units on screen, flags that agree with the value shown, the usual
range column, the identifier warning and the 'how sure' ranges (issue 16, item 3 and 4)."""

from __future__ import annotations

import pytest
from bokeh.document import Document
from o2transit.dashboard.bedside.identifiers import identifier_hints
from o2transit.dashboard.bedside.spread_view import HowSurePanel
from o2transit.dashboard.bedside.state import BedsideState
from o2transit.dashboard.bedside.summary import summary_html
from o2transit.dashboard.bedside.wording import (
    fit_words,
    in_display_units,
    lever_label,
    shown_value,
    usual_range,
)
from o2transit.dashboard.case.state import CaseState
from o2transit.model import bedside
from septic_case import SEPTIC_GAS

SEPTIC = {**SEPTIC_GAS, "paco2_mmhg": 33.0, "lactate_mmol_l": 4.1}


@pytest.fixture
def st(tmp_path):
    state = BedsideState(CaseState(), case_dir=tmp_path / "cases")
    state.case.pressure_unit = "kPa"
    state.case.hb_unit = "g/L"
    return state


def entered(st, values=SEPTIC):
    st.set_draft_model_units(values)
    assert st.calculate(), st.entry_message
    return st


def test_model_texts_move_to_the_display_units():
    case = CaseState(pressure_unit="kPa", hb_unit="g/L")
    # 760 mmHg x 101.325/760 = 101.3 kPa; 8.5 g/dL = 85 g/L (unit definitions, exact).
    assert in_display_units(case, "not given: 760 mmHg assumed") == "not given: 101.3 kPa assumed"
    assert lever_label(case, "Transfuse: Hb 8.5 → 10.0 g/dL") == "Transfuse: Hb 85 → 100 g/L"
    assert lever_label(case, "Shunt 0.286 → 0.186") == "Shunt 28.6 → 18.6 %"
    assert lever_label(case, "FiO2 0.60 → 1.00") == "FiO2 0.60 → 1.00"
    words = fit_words(case, "SvO2 measured 0.62, model 0.596; PvO2 measured 36, model 39.2.")
    assert words == "SvO2 measured 62.0 %, model 59.6 %; PvO2 measured 4.80 kPa, model 5.23 kPa."
    mmhg = CaseState()
    assert in_display_units(mmhg, "760 mmHg assumed") == "760 mmHg assumed"


def test_derived_rows_carry_a_usual_range_in_display_units(st):
    entered(st)
    rows = {r.key: r for r in st.derived_rows()}
    assert rows["shunt_fraction"].usual == "≤ 10 %"
    assert rows["extraction_ratio"].usual == "20–30 %"
    # The Berlin P/F bound 300 mmHg = 40.0 kPa (unit definitions).
    assert rows["pao2_fio2_ratio"].usual == "> 40.0 kPa"
    # S/F is a ratio (SaO2 in % over FiO2 as a fraction): no unit.
    assert rows["sao2_fio2_ratio"].unit == ""


def test_a_gradient_without_age_is_flagged_against_the_adult_value(st):
    entered(st)  # no age given
    row = {r.key: r for r in st.derived_rows()}["aa_gradient_mmhg"]
    assert row.flag == "▲ above adult value (no age)"
    assert "age not given" in row.usual
    entered(st, {**SEPTIC, "age_years": 40.0})
    row = {r.key: r for r in st.derived_rows()}["aa_gradient_mmhg"]
    assert row.flag == "▲ above age-expected" and row.usual.endswith("for age")


def test_flags_agree_with_the_value_shown():
    case = CaseState()
    # An extraction ratio of 0.30004 shows as 30.0 % and is not above the 30 % bound.
    assert shown_value(case, "extraction_ratio", 0.30004, 1) == pytest.approx(0.30)
    assert (
        shown_value(case, "extraction_ratio", 0.30004, 1)
        <= bedside.USUAL_RANGES["extraction_ratio"][1]
    )
    kpa = CaseState(pressure_unit="kPa")
    assert usual_range(kpa, "pco2_gap_mmhg") == "≤ 0.80 kPa"


def test_flag_list_and_summary_in_kpa(st):
    entered(st)
    st.fit_measured()
    page = summary_html(st)
    assert "PaCO2 4.40 kPa: below 4.67 kPa" in page  # 33 and 35 mmHg in kPa
    assert "[mmHg]" not in page and "760 mmHg" not in page


@pytest.mark.parametrize(
    ("text", "found"),
    [
        ("John Smith 12/03/1961", ["a date ('12/03/1961')", "a name ('John Smith')"]),
        ("Mrs Jones", ["a name ('Mrs Jones')"]),
        ("bed 4 dob 1961-03-12", ["a date ('dob')", "a date ('1961-03-12')"]),
        ("Bed 4 Night", []),
        ("ARDS Teaching case", []),
        ("bed 4 day 2", []),
    ],
)
def test_identifier_hints(text, found):
    assert identifier_hints(text) == found


def test_a_name_in_the_label_saves_with_a_warning(st):
    entered(st)
    st.case_label = "John Smith 12/03/1961"
    assert st.save(), st.case_message  # a warning, not a block
    assert "⚠ Saved, but the label or notes look like they hold" in st.case_message
    assert "John Smith" in st.case_message
    st.case_label = "bed 4 night"
    assert st.save() and "⚠" not in st.case_message


def test_how_sure_ranges_follow_the_gas_and_the_fit(st):
    panel = HowSurePanel(st)
    assert panel.__panel__().get_root(Document()) is not None
    entered(st)
    rows = {r.key: r for r in st.doubt.tolerance_rows()}
    assert set(rows) == {"shunt_fraction", "vo2_ml_min", "p50_insitu_mmhg"}
    assert float(rows["shunt_fraction"].low) < float(rows["shunt_fraction"].value)
    assert rows["p50_insitu_mmhg"].unit == "kPa"
    assert "CLIA" in st.doubt.source()
    wide = float(rows["vo2_ml_min"].high) - float(rows["vo2_ml_min"].low)
    st.doubt.tolerance_set = "repeatability"
    rows = {r.key: r for r in st.doubt.tolerance_rows()}
    assert float(rows["vo2_ml_min"].high) - float(rows["vo2_ml_min"].low) < wide
    assert st.doubt.curve_rows() == []
    st.fit_measured()
    curve = {r.key: r for r in st.doubt.curve_rows()}
    assert set(curve) == {"sao2", "p50_mmhg", "o2_extracted_ml_per_l"}
    assert "Between the four curve models" in panel._table.object
