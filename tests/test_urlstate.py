"""The page address as case state: written from a CaseState, read back key by key."""

from urllib.parse import urlencode

import pytest
from o2transit.dashboard.case.state import CaseState
from o2transit.dashboard.urlstate import (
    CASE_KEYS,
    case_link,
    case_query,
    check_case_query,
    parse_query_string,
    restore_case,
)

CASES = [
    {},
    {"altitude_m": 4500.0, "hb_g_dl": 9.0},
    {"altitude_m": 5000.0, "pressure_model": "mountain", "paco2_mmhg": 28.0},
    {"barometric_pressure_mmhg": 400.0, "fio2": 0.3},
    {"base_excess_mmol_l": -12.0, "paco2_mmhg": 28.0},
    {"base_excess_mmol_l": 0.0},
    {"p50_mmhg": 20.0, "curve": "dash"},
    {"curve": "siggaard_andersen1990", "dpg_mmol_l": 1.0, "cohb_fraction": 0.2},
    {"temperature_c": 39.5, "vo2_temperature_scaling": True, "cardiac_output_l_min": 7.0},
    {"height_cm": 180.0, "weight_kg": 75.0, "vo2_ml_min": 400.0, "shunt_fraction": 0.15},
    {"ph": 7.3, "rq": 0.9, "diffusing_capacity_ml_min_mmhg": 10.0, "capillary_volume_ml": 50.0},
]


@pytest.mark.parametrize("inputs", CASES)
def test_round_trip_through_the_address_gives_the_same_case(inputs):
    source = CaseState()
    assert source.apply_inputs(inputs)
    source.pressure_unit = "kPa"
    query = "?" + urlencode(case_query(source))
    copy = CaseState()
    assert restore_case(copy, parse_query_string(query)) == []
    for name in CASE_KEYS:
        a, b = getattr(source, name), getattr(copy, name)
        if isinstance(a, float):
            assert b == pytest.approx(a, rel=1e-9), name
        else:
            assert b == a, name
    assert float(copy.result.arterial.po2_mmhg) == pytest.approx(
        float(source.result.arterial.po2_mmhg)
    )


def test_defaults_write_an_empty_address_and_changes_only_themselves():
    state = CaseState()
    assert case_query(state) == {}
    state.altitude_m = 4500.0
    state.hb_g_dl = 9.0
    assert case_query(state) == {"altitude_m": "4500", "hb_g_dl": "9"}


def test_mode_values_are_written_only_in_their_mode():
    state = CaseState()
    state.p50_mmhg = 20.0  # typed but the override is off: not part of the case
    state.base_excess_mmol_l = -5.0
    assert case_query(state) == {}
    state.use_p50_override = True
    state.acid_base_input = "base excess"
    assert case_query(state) == {"p50_mmhg": "20", "base_excess_mmol_l": "-5"}


def test_each_bad_value_falls_back_alone_with_a_message():
    state = CaseState()
    messages = restore_case(
        state,
        {
            "altitude_m": "4500",
            "hb_g_dl": "99",
            "fio2": "abc",
            "ph": "nan",
            "curve": "nonsense",
            "vo2_temperature_scaling": "maybe",
            "colour": "blue",
        },
    )
    assert state.altitude_m == 4500.0  # the valid key is applied
    assert state.hb_g_dl == 15.0 and state.fio2 == 0.21 and state.ph == 7.40
    assert state.curve == "severinghaus" and state.vo2_temperature_scaling is False
    text = "\n".join(messages)
    assert "Hb = 99 is outside the allowed range 2–25 g/dL; the default 15 g/dL is used" in text
    assert "FiO2 = 'abc' is not a number in 0.05–1; the default 0.21 is used" in text
    assert "Arterial pH = 'nan' is not a number" in text
    assert "'nonsense' is not one of" in text and "severinghaus" in text
    assert "'maybe' must be true or false" in text
    assert "'colour' is not an input of this page; ignored" in text
    assert len(messages) == 6
    assert state.error_message == ""


def test_unit_variants_of_the_scenario_files_are_read_and_checked_in_their_unit():
    state = CaseState()
    assert restore_case(state, {"hb_g_l": "90", "paco2_kpa": "4"}) == []
    assert state.hb_g_dl == pytest.approx(9.0)
    assert state.paco2_mmhg == pytest.approx(30.0, abs=0.01)
    (message,) = restore_case(CaseState(), {"paco2_kpa": "40"})
    assert "PaCO2 = 40 is outside the allowed range 0.6666–20 kPa" in message
    assert "default 5.333 kPa" in message


def test_a_refused_combination_keeps_what_still_solves():
    state = CaseState()
    messages = restore_case(state, {"cohb_fraction": "0.6", "methb_fraction": "0.5"})
    assert state.cohb_fraction == 0.6 and state.methb_fraction == 0.0
    (message,) = messages
    assert message.startswith("methb_fraction = 0.5 not applied with the rest")
    assert "below 0.9" in message


def test_display_choices_and_other_owners_keys():
    state = CaseState()
    inputs, display, messages = check_case_query(
        state, {"pressure_unit": "kPa", "hb_unit": "g/L", "lesson": "x"}, other_keys=["lesson"]
    )
    assert inputs == {} and display == {"pressure_unit": "kPa", "hb_unit": "g/L"}
    assert messages == []
    (message,) = check_case_query(state, {"pressure_unit": "bar"})[2]
    assert "'bar' is not one of mmHg, kPa" in message


def test_selector_spellings_and_booleans():
    state = CaseState()
    assert (
        restore_case(
            state,
            {"curve": "dash2016", "acid_base_input": "base_excess", "use_p50_override": "1"},
        )
        == []
    )
    assert state.curve == "dash"
    assert state.acid_base_input == "base excess"
    assert state.use_p50_override is True


def test_case_link_for_other_screens():
    inputs = {"altitude_m": 5200.0, "pressure_model": "mountain", "hb_g_dl": 17.0, "ph": 7.46}
    link = case_link(inputs)
    # the mountain pressure model is the case screen's default, so the address leaves it out
    assert link == "/?altitude_m=5200&hb_g_dl=17&ph=7.46"
    state = CaseState()
    assert restore_case(state, parse_query_string(link.split("?", 1)[1])) == []
    assert (state.altitude_m, state.pressure_model, state.hb_g_dl, state.ph) == (
        5200.0,
        "mountain",
        17.0,
        7.46,
    )
    assert case_link({}) == "/"
    with pytest.raises(ValueError, match="outside the allowed range"):
        case_link({"hb_g_dl": 99.0})
