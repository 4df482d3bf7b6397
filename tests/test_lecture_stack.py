"""Lecture mode, factors combined: the case, each factor's share, the address."""

import math

import pytest
from o2transit.dashboard.lecture.stack import active, alone_inputs, combined_inputs, p50_shares
from o2transit.dashboard.lecture.state import LectureState

from o2transit import model

STANDARD_P50 = float(model.p50())  # the reference case's curve at pH 7.40, PCO2 40, 37 °C


def septic() -> LectureState:
    """Fever (39.5 °C) with acidosis (pH 7.20), set one after the other as a lecturer would."""
    state = LectureState()
    state.choose_factor("temperature_c")
    state.set_combine(True)
    assert state.set_factor_value(39.5)
    assert state.choose_factor("ph")
    assert state.set_factor_value(7.20)
    return state


def test_combined_factors_give_the_case_of_both():
    state = septic()
    assert state.combine and state.stacked == {"temperature_c": 39.5}
    assert state.factor_values() == {"temperature_c": 39.5, "ph": 7.20}
    f = state.frame
    assert f["tag"] == "Factors combined" and f["heading"] == "pH 7.20 + Temperature 39.5 °C"
    both = model.solve_transport(ph=7.20, temperature_c=39.5)
    assert f["p50"] == pytest.approx(float(both.arterial.p50_mmhg), rel=1e-9)
    assert f["loading"][0] == pytest.approx(float(both.arterial.po2_mmhg), rel=1e-9)


def test_shares_are_each_factor_alone_and_the_rest_is_interaction():
    # Kelman GR, J Appl Physiol 21:1375-1376 (1966): the virtual PO2 multiplies the PO2 by
    # 10^(0.40 (pH - 7.40)) and 10^(0.024 (37 - T)), so P50 scales by 10^0.08 at pH 7.20 and
    # by 10^(0.024 x 2.5) at 39.5 °C (Bradley et al. 1956 for the 0.024). Alone, each shift is
    # P50 (10^a - 1); together P50 (10^(a+b) - 1); the interaction P50 (10^a - 1)(10^b - 1).
    # Tolerance: the model finds P50 by inverting the curve (1e-6 relative is ample).
    a, b = 0.08, 0.024 * 2.5
    state = septic()
    f = state.frame
    by_key = {s["key"]: s["shift"] for s in f["shares"]}
    assert list(by_key) == ["ph", "temperature_c"]
    assert by_key["ph"] == pytest.approx(STANDARD_P50 * (10**a - 1), rel=1e-6)
    assert by_key["temperature_c"] == pytest.approx(STANDARD_P50 * (10**b - 1), rel=1e-6)
    assert f["p50_shift"] == pytest.approx(STANDARD_P50 * (10 ** (a + b) - 1), rel=1e-6)
    assert f["interaction"] == pytest.approx(STANDARD_P50 * (10**a - 1) * (10**b - 1), rel=1e-5)
    assert f["interaction"] == pytest.approx(f["p50_shift"] - sum(by_key.values()), abs=1e-12)
    # The caption says how the shift is shared, with units.
    caption = f["caption"]
    assert caption.startswith(f"Together the P50 moves +{f['p50_shift']:.1f} mmHg.")
    assert f"pH 7.20 +{by_key['ph']:.1f} mmHg" in caption
    assert f"Temperature 39.5 °C +{by_key['temperature_c']:.1f} mmHg" in caption
    assert f"The remaining +{f['interaction']:.1f} mmHg is their interaction" in caption


def test_shares_follow_the_pressure_unit():
    state = septic()
    mmhg = {s["key"]: s["shift"] for s in state.frame["shares"]}
    state.pressure_unit = "kPa"
    kpa = {s["key"]: s["shift"] for s in state.frame["shares"]}
    for key, shift in mmhg.items():
        assert kpa[key] == pytest.approx(float(model.mmhg_to_kpa(shift)), rel=1e-9)
    assert "kPa" in state.frame["caption"]


def test_pco2_with_a_ph_of_its_own_moves_at_that_ph():
    # With pH stacked, PCO2 keeps only its own term in Kelman's virtual PO2,
    # 10^(0.06 log10(40 / PCO2)): alone at pH 7.40 its share is P50 (10^(0.06 log10 1.5) - 1).
    values = {"ph": 7.20, "paco2_mmhg": 60.0}
    assert combined_inputs(values) == {"ph": 7.20, "paco2_mmhg": 60.0}
    assert alone_inputs("paco2_mmhg", values) == {"paco2_mmhg": 60.0, "ph": 7.40}
    assert alone_inputs("paco2_mmhg", {"paco2_mmhg": 60.0}, -1.5) == {
        "paco2_mmhg": 60.0,
        "base_excess_mmol_l": -1.5,
    }
    (ph, pco2) = p50_shares(values, STANDARD_P50)
    assert ph.key == "ph" and pco2.key == "paco2_mmhg"
    expected = STANDARD_P50 * (10 ** (0.06 * math.log10(1.5)) - 1)
    assert pco2.p50_shift_mmhg == pytest.approx(expected, rel=1e-6)


def test_factors_at_their_reference_are_not_stacked():
    assert active({"ph": 7.40, "temperature_c": 39.0, "fetal": 0.0}) == {"temperature_c": 39.0}
    state = LectureState()
    state.set_combine(True)
    state.choose_factor("dpg_mmol_l")  # ph was never moved: nothing to keep
    assert state.stacked == {}
    assert state.frame["shares"] == [] and "keeps its value" in state.frame["caption"]


def test_returning_to_a_factor_brings_back_its_value():
    state = septic()
    state.choose_factor("temperature_c")
    assert state.factor_value == 39.5 and state.stacked == {"ph": 7.20}
    assert state.factor_control()["value"] == pytest.approx(39.5)


def test_one_factor_mode_still_resets_the_last():
    state = septic()
    state.set_combine(False)
    assert state.stacked == {} and state.factor_values() == {"ph": 7.20}
    assert state.frame["tag"] == "One factor" and state.frame["shares"] == []
    state.choose_factor("temperature_c")
    assert state.factor_value == 37.0 and state.frame["p50_shift"] == pytest.approx(0, abs=1e-9)


def test_combined_address_round_trip():
    state = septic()
    query = state.to_query()
    assert query == {"factor": "ph", "ph": "7.2", "temperature_c": "39.5", "combine": "true"}
    copy = LectureState()
    assert copy.restore_query(query) == []
    assert copy.frame["heading"] == state.frame["heading"]
    assert copy.frame["p50_shift"] == pytest.approx(state.frame["p50_shift"])
    assert copy.frame["caption"] == state.frame["caption"]


def test_bad_combined_addresses_are_named():
    state = LectureState()
    messages = state.restore_query({"factor": "ph", "ph": "7.2", "temperature_c": "39"})
    assert messages == ["temperature_c = '39' is used only with combine=true; ignored"]
    assert not state.combine and state.factor_values() == {"ph": 7.2}
    messages = LectureState().restore_query(
        {"factor": "ph", "combine": "true", "temperature_c": "50"}
    )
    assert messages == [
        (
            "Temperature: temperature_c = '50' is outside the allowed range 33–42 °C; the "
            "reference 37 °C is used"
        )
    ]
    assert LectureState().restore_query({"factor": "ph", "combine": "maybe"}) == [
        "combine = 'maybe' must be true or false; one factor is shown"
    ]
