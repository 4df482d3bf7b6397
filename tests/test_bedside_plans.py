"""Bedside plans: stacks of changes from the fitted case, compared with the patient, kept.

The septic case of issue 16 (invented values): FiO2 0.6, Hb 8.5, 39 °C, pH 7.25, cardiac
output 7 L/min; shown in kPa and g/L throughout.
"""

from __future__ import annotations

import pytest
from bokeh.document import Document
from o2transit.dashboard.bedside.plans_compare_view import PlansPanel
from o2transit.dashboard.bedside.shift_summary import plans_section
from o2transit.dashboard.bedside.state import BedsideState
from o2transit.dashboard.bedside.summary import summary_html
from o2transit.dashboard.case.state import CaseState
from o2transit.model import kpa_to_mmhg
from o2transit.model.plans import Change, Plan, solve_plan
from septic_case import SEPTIC_GAS

SEPTIC = {**SEPTIC_GAS, "pvco2_mmhg": 45.0, "altitude_m": 0.0}


@pytest.fixture
def st(tmp_path):
    state = BedsideState(CaseState(), case_dir=tmp_path / "cases")
    state.case.pressure_unit = "kPa"
    state.case.hb_unit = "g/L"
    state.set_draft_model_units(SEPTIC)
    assert state.calculate(), state.entry_message
    assert state.fit_measured(), state.fit_message
    return state


def three_plans(st):
    stack = st.plan_stack
    a = stack.add_plan()
    assert stack.set_change(a, -1, "hb", 100.0)  # g/L on screen
    assert stack.set_change(a, -1, "fio2", 0.8)
    assert stack.set_change(a, -1, "temperature", 37.0)
    b = stack.add_plan()
    assert stack.set_change(b, -1, "fio2", 0.8)
    assert stack.add_lever("cardiac_output", -1)  # a third plan from the ranked table
    return stack


def test_three_plans_side_by_side_in_kpa_and_g_l(st):
    stack = three_plans(st)
    assert [p.name for p in stack.plans] == ["Plan A", "Plan B", "Plan C"]
    assert stack.plans[0].changes[0] == Change("hb", pytest.approx(10.0))
    rows = {r.key: r for r in stack.compare_rows()}
    assert stack.column_names() == ["Patient (fitted)", "Plan A", "Plan B", "Plan C"]
    # Plan A stacks all three: Hb 100 g/L, FiO2 0.80 and 37.0 °C in its column.
    assert rows["hb_g_dl"].unit == "g/L" and rows["hb_g_dl"].cells[1].value == "100"
    assert rows["hb_g_dl"].cells[1].delta == "+15"
    assert rows["fio2"].cells[1].value == "0.80" and rows["temperature_c"].cells[1].value == "37.0"
    assert rows["pao2_37_mmhg"].unit == "kPa"
    # The patient's PaO2 as read at 37 °C is the fitted one, close to the measured 82 mmHg.
    patient_kpa = float(rows["pao2_37_mmhg"].cells[0].value)
    assert float(kpa_to_mmhg(patient_kpa)) == pytest.approx(82.0, abs=1.0)
    # Values are what model.plans gives for the same plan from the same fitted case.
    direct = solve_plan(st.fit.inputs, stack.plans[0])
    assert rows["do2_ml_min"].cells[1].value == f"{direct.values['do2_ml_min']:.0f}"
    # The curve models' range sits beside SaO2, P50 and O2 extracted per litre only.
    assert all(rows[k].cells[0].spread for k in ("sao2", "p50_mmhg", "o2_extracted_ml_per_l"))
    assert not rows["do2_ml_min"].cells[0].spread
    low, high = (float(x) for x in rows["sao2"].cells[0].spread.split("–"))
    assert low <= float(rows["sao2"].cells[0].value) <= high
    texts = stack.steps_text(0)
    assert texts == ["Transfuse: Hb 85 → 100 g/L", "FiO2 0.60 → 0.80", "Cool: 39.0 → 37.0 °C"]
    assert stack.steps_text(2)[0].startswith("Cardiac output 7.0 → 8.4 L/min")


def test_plans_edited_in_place_and_refusals_name_field_value_range_unit(st):
    stack = three_plans(st)
    assert stack.set_change(0, 1, "fio2", 0.7)  # the second change of plan A, in place
    assert stack.plans[0].changes[1] == Change("fio2", 0.7)
    assert len(stack.plans[0].changes) == 3
    assert not stack.set_change(0, -1, "hb", 300.0)
    assert stack.plan_message == (
        "Not changed: Transfuse to Hb = 300 g/L is outside the allowed range 50–180 g/L."
    )
    assert stack.remove_change(0, 2)
    assert [c.kind for c in stack.plans[0].changes] == ["hb", "fio2"]
    assert stack.rename_plan(1, "  oxygen  only ")
    assert stack.plans[1].name == "oxygen only"
    assert not stack.rename_plan(1, "x" * 41) and "1-40" in stack.plan_message
    stack.add_plan()
    assert stack.add_plan() is None and "4 plans" in stack.plan_message
    assert stack.remove_plan(3) and len(stack.plans) == 3


def test_a_ranked_what_if_goes_into_a_chosen_plan_replacing_its_kind(st):
    stack = three_plans(st)
    assert stack.add_lever("fio2_1.00", 1)
    assert stack.plans[1].changes == (Change("fio2", 1.0),)


def test_a_plan_becomes_the_live_case_with_the_fit_as_baseline(st):
    stack = three_plans(st)
    assert stack.apply_plan(0), stack.plan_message
    assert st.case.hb_g_dl == pytest.approx(10.0) and st.case.fio2 == pytest.approx(0.8)
    assert st.case.temperature_c == pytest.approx(37.0)
    assert float(st.case.baseline.hb_g_dl) == pytest.approx(8.5)
    assert "Live case: Plan A" in stack.plan_message


def test_plans_follow_a_new_fit_and_clear_without_one(st):
    stack = three_plans(st)
    assert len(stack.outcomes) == 3
    st.calculate()  # a new accepted gas drops the fit: nothing is solved
    assert stack.outcomes == [] and stack.compare_rows() == []
    assert len(stack.plans) == 3  # the plans themselves stay, for the next fit
    st.fit_measured()
    assert len(stack.outcomes) == 3


def test_plans_are_saved_with_the_case_and_reopened(st, tmp_path):
    three_plans(st)
    st.case_label = "bed 4 night"
    assert st.save(), st.case_message
    other = BedsideState(CaseState(), case_dir=st.case_dir)
    assert other.open(other.saved_cases[0].path), other.case_message
    assert other.plan_stack.plans == st.plan_stack.plans
    assert len(other.plan_stack.outcomes) == 3  # solved again from the refitted case


def test_plans_panel_and_summary_show_the_plans(st):
    panel = PlansPanel(st)
    assert panel.__panel__().get_root(Document()) is not None
    assert "Fit the model" not in panel._table.object
    three_plans(st)
    assert [c._layout.visible for c in panel._cards] == [True, True, True, False]
    assert "Plan C" in panel._table.object and "models" in panel._table.object
    assert panel._items[0].visible and not panel._items[3].visible
    assert len(panel._plan_lines[0].data["x"]) > 100
    assert panel._fig.x_range.end > 18.0  # FiO2 0.8 takes PaO2 beyond 150 mmHg (20 kPa)
    section = plans_section(st)
    assert "Plan A" in section and "Transfuse: Hb 85 → 100 g/L" in section
    page = summary_html(st)
    assert "Plans from the fitted case" in page and "100 g/L" in page


def test_plan_without_changes_equals_the_patient(st):
    stack = st.plan_stack
    stack.add_plan()
    rows = stack.compare_rows()
    assert all(r.cells[1].value == r.cells[0].value for r in rows)
    assert stack.plans == [Plan("Plan A")]
