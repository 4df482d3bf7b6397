"""Tests for model.plans: named stacks of changes applied to a fitted case and solved."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import rank_levers, solve_transport
from o2transit.model.bedside import temperature_corrected_po2
from o2transit.model.plans import (
    CHANGE_KINDS,
    MAX_PLANS,
    READINGS,
    Change,
    Plan,
    apply_change,
    change_from_lever,
    check_change,
    compare_plans,
    plan_from_table,
    plan_table,
    readings,
    solve_plan,
)
from properties import budget

# An invented septic patient of our own (fitted-case shape): FiO2 0.6, Hb 8.5, 39 degC.
BASE = {
    "fio2": 0.6,
    "paco2_mmhg": 41.5,
    "ph": 7.22,
    "hb_g_dl": 8.5,
    "temperature_c": 39.0,
    "cardiac_output_l_min": 7.0,
    "vo2_ml_min": 276.0,
    "shunt_fraction": 0.29,
    "p50_mmhg": 28.7,
    "altitude_m": 0.0,
}


def test_each_single_change_predicts_what_its_ranked_what_if_predicts():
    table = rank_levers(BASE, target_hb_g_dl=10.0, cooling_to_c=37.0, shunt_change=-0.1)
    assert {o.key for o in table} >= {"transfusion", "cooling", "ph", "shunt", "fio2_0.80"}
    for o in table:
        change = change_from_lever(o, BASE)
        out = solve_plan(BASE, Plan("one", (change,)))
        assert not out.error
        for key, attr in (("do2_ml_min", "do2_ml_min"), ("pvo2_mmhg", "pvo2_mmhg")):
            # The same rule from the same case: equal to the chain's tolerance.
            assert out.values[key] == pytest.approx(getattr(o, attr), rel=1e-6), o.key


def test_changes_stack_instead_of_resetting():
    # The complaint: FiO2 0.8 after a transfusion put Hb back to 8.5.
    plan = Plan(
        "blood, oxygen, cool",
        (Change("hb", 10.0), Change("fio2", 0.8), Change("temperature", 37.0)),
    )
    out = solve_plan(BASE, plan)
    assert [s.applied for s in out.steps] == [True, True, True]
    assert out.values["hb_g_dl"] == pytest.approx(10.0)
    assert out.values["fio2"] == pytest.approx(0.8)
    assert out.values["temperature_c"] == pytest.approx(37.0)
    direct = solve_transport(**out.inputs)
    assert out.values["do2_ml_min"] == pytest.approx(float(direct.do2_ml_min))
    # Each step acts on the case the last one left: the steps' before values chain.
    assert [s.before for s in out.steps] == pytest.approx([8.5, 0.6, 39.0])


def test_deltas_are_plan_minus_base_and_37c_values_invert_the_correction():
    base, outs = compare_plans(BASE, [Plan("up", (Change("fio2", 0.8),))])
    ref = readings(solve_transport(**BASE))
    assert base == pytest.approx(ref)
    out = outs[0]
    for key in READINGS:
        assert out.deltas[key] == pytest.approx(out.values[key] - base[key])
    # Moving the 37 degC value back to the patient's temperature gives the chain's PaO2
    # (Severinghaus 1979 Eq 3 depends on the temperature step only).
    back = float(temperature_corrected_po2(out.values["pao2_37_mmhg"], 39.0))
    assert back == pytest.approx(out.values["pao2_mmhg"], rel=1e-9)
    # O2 extracted per litre is 10 (CaO2 - CvO2), the Fick VO2 per litre of flow.
    assert out.values["o2_extracted_ml_per_l"] == pytest.approx(
        out.values["vo2_ml_min"] / BASE["cardiac_output_l_min"], rel=1e-6
    )


def test_changes_that_do_not_apply_say_why_and_change_nothing():
    # pH 7.22 at 39 degC reads 7.22 + 0.0147 x 2 = 7.25 at 37 degC (Rosenthal's coefficient).
    out = solve_plan(BASE, Plan("no-ops", (Change("hb", 8.0), Change("ph", 7.25))))
    assert [s.applied for s in out.steps] == [False, False]
    assert "already at or above" in out.steps[0].note
    assert "already at the target" in out.steps[1].note
    case, step = apply_change({**BASE, "temperature_c": 36.0}, Change("temperature", 37.0))
    assert not step.applied and "not warmer" in step.note and case["temperature_c"] == 36.0
    assert out.deltas["do2_ml_min"] == pytest.approx(0.0, abs=1e-9)


def test_fio2_can_go_down_and_shunt_changes_by_the_amount():
    case, step = apply_change(BASE, Change("fio2", 0.4))
    assert case["fio2"] == 0.4 and step.before == 0.6 and step.applied
    case, step = apply_change(BASE, Change("shunt", -0.1))
    assert case["shunt_fraction"] == pytest.approx(0.19)


def test_a_plan_the_chain_refuses_keeps_its_steps_and_says_why():
    # 2 L/min delivers about 220 mL O2/min, below the VO2 of 276: the chain refuses.
    out = solve_plan(BASE, Plan("low flow", (Change("cardiac_output", 2.0),)))
    assert out.error and "vo2_ml_min" in out.error
    assert all(math.isnan(v) for v in out.values.values())
    assert len(out.steps) == 1


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (Change("fio2", 1.5), "FiO2 to = 1.5 is outside the allowed range 0.05-1"),
        (Change("hb", 30.0), "Transfuse to Hb = 30 g/dL is outside the allowed range 5-18 g/dL"),
        (Change("tide", 1.0), "plan change 'tide' is unknown"),
        (Change("ph", float("nan")), "must be a number"),
        (Change("ph", True), "must be a number"),
    ],
)
def test_bad_changes_are_refused_with_field_value_range_unit(change, words):
    with pytest.raises(ValueError, match=words.replace("(", r"\(")):
        check_change(change)


def test_shunt_change_out_of_range_is_refused_by_the_step():
    out = solve_plan(BASE, Plan("too much", (Change("shunt", -0.5),)))
    assert "outside the allowed range 0-0.8" in out.error


def test_plans_round_trip_through_plain_tables_and_bad_tables_are_refused():
    plan = Plan("A: blood", (Change("hb", 10.0, True), Change("fio2", 0.8)))
    assert plan_from_table(plan_table(plan)) == plan
    with pytest.raises(ValueError, match="unknown key"):
        plan_from_table({"name": "x", "changes": [{"kind": "hb", "value": 10, "colour": 1}]})
    with pytest.raises(ValueError, match="plan name must be 1-40"):
        plan_from_table({"name": "", "changes": []})
    with pytest.raises(ValueError, match="at most 4"):
        compare_plans(BASE, [Plan(f"p{i}") for i in range(MAX_PLANS + 1)])


@budget(15)
@given(
    hb=st.floats(8.6, 14.0),
    fio2=st.floats(0.61, 1.0),
)
def test_more_blood_or_oxygen_never_lowers_delivery(hb, fio2):
    out = solve_plan(BASE, Plan("p", (Change("hb", hb), Change("fio2", fio2))))
    assert out.deltas["do2_ml_min"] > 0
    assert out.deltas["sao2"] >= -1e-9


def test_every_kind_has_its_range_and_chain_input():
    assert set(CHANGE_KINDS) == {"fio2", "hb", "cardiac_output", "temperature", "ph", "shunt"}
    for kind in CHANGE_KINDS.values():
        assert kind.low < kind.high
        assert kind.quantity in solve_transport.__code__.co_varnames


def test_a_step_is_the_one_change_rule_not_a_ranking(monkeypatch):
    # A plan applies one change with model.levers.one_change; it never ranks what-ifs.
    from o2transit.model import levers

    def refuse(*_args, **_kwargs):
        raise AssertionError("a plan step must not rank what-ifs")

    monkeypatch.setattr(levers, "rank_levers", refuse)
    for change, lever in (
        (Change("hb", 10.0, True), "transfusion"),
        (Change("temperature", 37.0), "cooling"),
        (Change("ph", 7.35), "ph"),
        (Change("cardiac_output", 8.0), "cardiac_output"),
    ):
        case, step = apply_change(BASE, change)
        rule = levers.one_change(
            BASE, lever, change.value, stored_blood_dpg_depleted=change.stored_blood
        )
        assert step.applied and case == rule.inputs and step.note == rule.note
