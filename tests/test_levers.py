"""Tests for model.levers.rank_levers: one-at-a-time what-ifs and their ranking."""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st
from o2transit.model import HUFNER_ML_G, NORMAL_DPG_MMOL_L, rank_levers, solve_transport
from o2transit.model.circulation import VO2_Q10_PER_C
from o2transit.model.levers import (
    RANK_QUANTITIES,
    STORED_BLOOD_DPG_MMOL_L,
    one_change,
    sort_outcomes,
)
from properties import budget

FAST = budget(20)

# An invented ventilated patient of our own.
CASE = {
    "fio2": 0.5,
    "paco2_mmhg": 45.0,
    "ph": 7.30,
    "hb_g_dl": 8.0,
    "temperature_c": 38.5,
    "shunt_fraction": 0.30,
    "cardiac_output_l_min": 4.5,
    "vo2_ml_min": 260.0,
}


@pytest.fixture(scope="module")
def table():
    return rank_levers(CASE, shunt_change=-0.1)


def by_key(outcomes):
    return {o.key: o for o in outcomes}


def test_every_lever_is_there(table):
    keys = set(by_key(table))
    assert keys == {
        "fio2_0.60",
        "fio2_0.80",
        "fio2_1.00",
        "transfusion",
        "cardiac_output",
        "cooling",
        "ph",
        "shunt",
    }
    assert all(not o.error for o in table)


def test_deltas_are_against_the_base(table):
    base = solve_transport(**CASE)
    for o in table:
        assert o.delta_do2_ml_min == pytest.approx(o.do2_ml_min - float(base.do2_ml_min))
        assert o.delta_pvo2_mmhg == pytest.approx(o.pvo2_mmhg - float(base.venous.po2_mmhg))
        again = solve_transport(**o.inputs)
        assert float(again.do2_ml_min) == pytest.approx(o.do2_ml_min, rel=1e-9)
        assert {k: o.inputs[k] for k in o.changes} == o.changes


def test_transfusion_raises_content_and_delivery(table):
    o = by_key(table)["transfusion"]
    assert o.changes == {"hb_g_dl": 10.0}
    assert o.delta_cao2_ml_dl > 0 and o.delta_do2_ml_min > 0
    # CaO2 = 1.34 Hb SaO2 + 0.003 PaO2 (Hufner factor 1.34 mL/g and O2 solubility 0.003
    # mL/dL/mmHg, common practice): the change is exactly that of its two terms...
    base = solve_transport(**CASE)
    bound = HUFNER_ML_G * (10.0 * o.sao2 - 8.0 * float(base.arterial.so2))
    dissolved = 0.003 * o.delta_pao2_mmhg
    assert o.delta_cao2_ml_dl == pytest.approx(bound + dissolved, rel=1e-6)
    # ...and at least 1.34 x 2 g/dL x SaO2: with a 0.3 shunt the richer venous blood also
    # raises SaO2 (venous admixture carries more O2).
    assert o.delta_cao2_ml_dl >= HUFNER_ML_G * 2.0 * float(base.arterial.so2)
    # DO2 = 10 Q CaO2 with Q unchanged (Fick; common practice).
    assert o.delta_do2_ml_min == pytest.approx(10 * 4.5 * o.delta_cao2_ml_dl, rel=1e-6)


def test_dpg_depleted_blood_mixes_by_haemoglobin_and_unloads_less():
    normal = by_key(rank_levers(CASE))["transfusion"]
    stored = by_key(rank_levers(CASE, stored_blood_dpg_depleted=True))["transfusion"]
    share = 8.0 / 10.0
    expected = share * NORMAL_DPG_MMOL_L + (1 - share) * STORED_BLOOD_DPG_MMOL_L
    assert stored.changes["dpg_mmol_l"] == pytest.approx(expected)
    assert "2,3-DPG" in stored.label
    # Less DPG shifts the curve left (Benesch & Benesch, Biochem Biophys Res Commun 1967;
    # 26:162, from memory): the same O2 is unloaded at a lower venous PO2.
    assert stored.pvo2_mmhg < normal.pvo2_mmhg
    assert stored.do2_ml_min == pytest.approx(normal.do2_ml_min, rel=0.01)


def test_cardiac_output_lever(table):
    o = by_key(table)["cardiac_output"]
    assert o.changes == {"cardiac_output_l_min": pytest.approx(4.5 * 1.2)}
    assert o.delta_do2_ml_min > 0 and o.delta_svo2 > 0 and o.delta_extraction_ratio < 0


def test_cooling_scales_vo2_and_follows_alpha_stat(table):
    o = by_key(table)["cooling"]
    assert o.changes["temperature_c"] == 36.0
    assert o.changes["vo2_ml_min"] == pytest.approx(260.0 * VO2_Q10_PER_C ** (36.0 - 38.5))
    assert o.changes["paco2_mmhg"] == pytest.approx(45.0 * 10 ** (0.019 * (36.0 - 38.5)))
    assert o.changes["ph"] == pytest.approx(7.30 + 0.0147 * 2.5)
    assert o.delta_extraction_ratio < 0 and o.delta_svo2 > 0
    held = by_key(rank_levers(CASE, cooling_rule="ph_stat"))["cooling"]
    assert set(held.changes) == {"temperature_c", "vo2_ml_min"}


def test_cooling_with_model_temperature_scaling_leaves_vo2_to_the_model():
    o = by_key(rank_levers({**CASE, "vo2_temperature_scaling": True}))["cooling"]
    assert "vo2_ml_min" not in o.changes


def test_ph_correction_holds_paco2(table):
    o = by_key(table)["ph"]
    # pH 7.40 as read at 37 degC is 7.40 - 0.0147 x 1.5 at 38.5 degC (Rosenthal 1948
    # coefficient, from memory, as in model.bedside); the label shows 37 degC readings.
    assert o.changes == {"ph": pytest.approx(7.40 - 0.0147 * 1.5)}
    assert o.label == "Correct pH: 7.32 → 7.40"
    assert o.inputs["paco2_mmhg"] == 45.0


def test_ph_correction_from_base_excess_case():
    case = {k: v for k, v in CASE.items() if k != "ph"} | {"base_excess_mmol_l": -8.0}
    o = by_key(rank_levers(case))["ph"]
    assert "base_excess_mmol_l" not in o.inputs
    assert o.inputs["ph"] == pytest.approx(7.40 - 0.0147 * 1.5)
    assert not o.error


def test_shunt_change(table):
    o = by_key(table)["shunt"]
    assert o.changes == {"shunt_fraction": pytest.approx(0.20)}
    assert o.delta_pao2_mmhg > 0


def test_levers_that_do_not_apply_are_left_out():
    # pH 7.40 read at 37 degC is 7.40 + 0.0147 x 2 at 35 degC: already at the target.
    case = {**CASE, "fio2": 1.0, "hb_g_dl": 12.0, "temperature_c": 35.0, "ph": 7.4294}
    assert set(by_key(rank_levers(case))) == {"cardiac_output"}


def test_fio2_steps_are_targets_above_the_present_fio2():
    keys = [o.key for o in rank_levers(CASE, fio2_steps=(0.4, 0.55, 0.9), rank_by="pao2")]
    assert [k for k in keys if k.startswith("fio2")] == ["fio2_0.90", "fio2_0.55"]


@pytest.mark.parametrize("rank_by", list(RANK_QUANTITIES))
def test_ranking_obeys_the_rule(rank_by):
    outcomes = rank_levers(CASE, shunt_change=-0.1, rank_by=rank_by)
    name, sign, _ = RANK_QUANTITIES[rank_by]
    gains = [sign * getattr(o, f"delta_{name}") for o in outcomes]
    assert all(a >= b - 1e-9 for a, b in itertools.pairwise(gains))
    assert sort_outcomes(list(reversed(outcomes)), rank_by) == outcomes


def test_refused_what_if_is_kept_and_ranked_last():
    # A shunt of 0.8 leaves too little end-capillary blood to supply VO2 400 mL/min at
    # Hb 8 g/dL: the chain refuses that what-if (venous content below zero).
    case = {**CASE, "vo2_ml_min": 400.0, "cardiac_output_l_min": 6.0, "shunt_fraction": 0.1}
    outcomes = rank_levers(case, shunt_change=0.7)
    last = outcomes[-1]
    assert last.key == "shunt" and last.error and math.isnan(last.do2_ml_min)
    assert all(not o.error for o in outcomes[:-1])


@FAST
@given(
    fio2=st.floats(0.21, 0.9),
    shunt=st.floats(0.0, 0.5),
    hb=st.floats(6.0, 18.0),
    q=st.floats(3.0, 9.0),
)
def test_more_oxygen_never_lowers_pao2(fio2, shunt, hb, q):
    case = {"fio2": fio2, "shunt_fraction": shunt, "hb_g_dl": hb, "cardiac_output_l_min": q}
    try:
        solve_transport(**case)
    except ValueError:  # delivery below the default VO2: no case to change
        assume(False)
    outcomes = [o for o in rank_levers(case) if o.key.startswith("fio2")]
    assert outcomes, "at least FiO2 1.0 lies above every FiO2 drawn"
    assert all(o.delta_pao2_mmhg >= -1e-6 for o in outcomes)
    steps = sorted(outcomes, key=lambda o: o.changes["fio2"])
    assert all(a.pao2_mmhg <= b.pao2_mmhg + 1e-6 for a, b in itertools.pairwise(steps))


# --- invalid settings are refused with field, value, range and unit ---------------------


@pytest.mark.parametrize(
    ("kwargs", "pattern"),
    [
        ({"fio2_steps": (0.4, 1.5)}, r"fio2_steps = 1.5 is outside the allowed range 0.05-1"),
        ({"target_hb_g_dl": 30.0}, r"target_hb_g_dl = 30.0 is outside .* 2-25 g/dL"),
        ({"cardiac_output_factor": 0.8}, r"cardiac_output_factor = 0.8 is outside .* 1-3"),
        ({"cardiac_output_factor": 1.0}, r"cardiac_output_factor = 1.0"),
        ({"cooling_to_c": 20.0}, r"cooling_to_c = 20.0 is outside .* 25-43 degC"),
        ({"ph_target": 8.2}, r"ph_target = 8.2 is outside .* 6.6-7.9"),
        ({"shunt_change": -0.5}, r"shunt_change = -0.5 would take the shunt fraction from 0.30"),
        ({"shunt_change": "a lot"}, r"shunt_change = 'a lot' must be a number"),
        ({"rank_by": "speed"}, r"rank_by 'speed' is unknown"),
        ({"cooling_rule": "colder"}, r"cooling_rule 'colder' is unknown"),
        ({"stored_blood_dpg_depleted": "yes"}, r"must be true or false"),
    ],
)
def test_invalid_lever_settings_are_refused(kwargs, pattern):
    with pytest.raises(ValueError, match=pattern):
        rank_levers(CASE, **kwargs)


def test_invalid_base_case_is_refused():
    with pytest.raises(ValueError, match=r"hb_g_dl = 40 is outside the allowed range"):
        rank_levers({**CASE, "hb_g_dl": 40.0})
    with pytest.raises(ValueError, match="unexpected keyword argument 'colour'"):
        rank_levers({**CASE, "colour": 1.0})


def test_outcome_inputs_are_live_cases_for_the_dashboard(table):
    from o2transit.dashboard.case.state import CaseState

    state = CaseState()
    for o in table:
        assert state.apply_inputs(o.inputs, name=o.label), state.error_message
        assert float(state.result.do2_ml_min) == pytest.approx(o.do2_ml_min, rel=1e-9)


# ------------------------------------------------------------------ one change on its own
def test_one_change_is_the_rule_every_ranked_what_if_was_built_with(table):
    # Each ranked what-if's case is the case one_change builds from the same setting.
    settings = {
        "transfusion": ("transfusion", 10.0),
        "cardiac_output": ("cardiac_output", CASE["cardiac_output_l_min"] * 1.2),
        "cooling": ("cooling", 36.0),
        "ph": ("ph", 7.40),
        "shunt": ("shunt", -0.1),
        "fio2_0.80": ("fio2", 0.8),
    }
    outcomes = by_key(table)
    for key, (lever, value) in settings.items():
        made = one_change(CASE, lever, value)
        assert made is not None and made.inputs == outcomes[key].inputs, key
        assert made.changes == outcomes[key].changes, key
    # The base case is not changed in place.
    assert CASE["hb_g_dl"] == 8.0


def test_one_change_that_does_not_apply_is_none():
    assert one_change(CASE, "transfusion", 7.0) is None  # Hb 8.0 already above
    assert one_change(CASE, "cooling", 39.0) is None  # 38.5 degC is not warmer than 39
    assert one_change(CASE, "fio2", 0.5) is None
    assert one_change(CASE, "shunt", 0.0) is None
    # pH 7.30 at 38.5 degC reads 7.30 + 0.0147 x 1.5 = 7.322 at 37 degC (Rosenthal 1948).
    assert one_change(CASE, "ph", 7.322) is None


def test_one_change_goes_down_as_well_and_drops_base_excess_for_a_ph():
    made = one_change(CASE, "fio2", 0.3)
    assert made.inputs["fio2"] == 0.3 and made.label == "FiO2 0.50 → 0.30"
    be_case = {k: v for k, v in CASE.items() if k != "ph"} | {"base_excess_mmol_l": -8.0}
    made = one_change(be_case, "ph", 7.40)
    assert "base_excess_mmol_l" not in made.inputs and "ph" in made.inputs


@pytest.mark.parametrize(
    ("lever", "value", "pattern"),
    [
        ("tide", 1.0, r"lever 'tide' is unknown"),
        ("fio2", 1.5, r"fio2 = 1.5 is outside the allowed range 0.05-1"),
        ("transfusion", 30.0, r"target_hb_g_dl = 30.0 is outside .* g/dL"),
        ("cardiac_output", 0.1, r"cardiac_output = 0.1 is outside .* L/min"),
        ("shunt", -0.5, r"would take the shunt fraction from 0.30 to -0.20"),
        ("ph", "acid", r"ph_target = 'acid' must be a number"),
    ],
)
def test_one_change_refuses_bad_values_with_field_value_range_unit(lever, value, pattern):
    with pytest.raises(ValueError, match=pattern):
        one_change(CASE, lever, value)
