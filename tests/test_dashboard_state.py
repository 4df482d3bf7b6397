"""CaseState: inputs drive the model result the right way; baseline, scenarios, refusals."""

from pathlib import Path

import pytest
from o2transit.dashboard.case.state import SCENARIO_DIR, CaseState

from o2transit import model


def _num(state: CaseState, key: str) -> float:
    return {r.key: r.value for r in state.readings()}[key]


def test_default_case_solves_without_error():
    s = CaseState()
    assert s.result is not None and s.error_message == ""
    assert {"arterial", "venous", "standard"} <= set(s.curves)
    assert s.curves["arterial"].shape == s.curves["po2_mmhg"].shape


def test_altitude_up_lowers_sao2_and_do2():
    s = CaseState()
    sao2, do2 = _num(s, "arterial_so2"), _num(s, "do2")
    s.altitude_m = 4500.0
    assert _num(s, "arterial_so2") < sao2 - 5.0
    assert _num(s, "do2") < do2


def test_hb_down_lowers_do2_and_raises_extraction_ratio():
    s = CaseState()
    do2, o2er = _num(s, "do2"), _num(s, "extraction_ratio")
    s.hb_g_dl = 8.0
    assert _num(s, "do2") < do2
    assert _num(s, "extraction_ratio") > o2er


def test_temperature_up_raises_venous_p50():
    s = CaseState()
    p50 = _num(s, "venous_p50")
    s.temperature_c = 40.0
    assert _num(s, "venous_p50") > p50


def test_acidosis_shifts_curve_right():
    s = CaseState()
    p50 = _num(s, "arterial_p50")
    s.ph = 7.20
    assert _num(s, "arterial_p50") > p50


def test_base_excess_toggle_uses_base_excess():
    s = CaseState()
    s.acid_base_input = "base excess"
    kw = s.model_inputs()
    assert "ph" not in kw and kw["base_excess_mmol_l"] == 0.0
    p50 = _num(s, "arterial_p50")
    s.base_excess_mmol_l = -12.0
    assert _num(s, "arterial_p50") > p50


def test_baseline_deltas_are_differences_of_displayed_values():
    s = CaseState()
    before = {r.key: r.value for r in s.readings()}
    s.keep_baseline()
    assert all(r.delta == pytest.approx(0.0, abs=1e-9) for r in s.readings())
    s.hb_g_dl = 10.0
    for r in s.readings():
        assert r.delta == pytest.approx(r.value - before[r.key], rel=1e-9, abs=1e-9)
    assert {r.key: r.delta for r in s.readings()}["arterial_o2_content"] < -5.0
    s.clear_baseline()
    assert all(r.delta is None for r in s.readings())


def test_baseline_deltas_follow_display_unit():
    s = CaseState()
    s.keep_baseline()
    s.fio2 = 0.40
    mmhg = {r.key: r.delta for r in s.readings()}["arterial_po2"]
    s.pressure_unit = "kPa"
    kpa = {r.key: r.delta for r in s.readings()}["arterial_po2"]
    assert kpa == pytest.approx(float(model.mmhg_to_kpa(mmhg)), rel=1e-9)


def test_out_of_bounds_input_keeps_last_result_and_names_field():
    s = CaseState()
    result = s.result
    assert not s.set_display_input("hb_g_dl", 99.0)
    assert s.hb_g_dl == 15.0 and s.result is result
    assert "Hb" in s.error_message and "2–25 g/dL" in s.error_message


def test_out_of_bounds_in_display_unit():
    s = CaseState(pressure_unit="kPa")
    assert not s.set_display_input("paco2_mmhg", 40.0)
    assert "kPa" in s.error_message and s.paco2_mmhg == 40.0
    assert s.set_display_input("paco2_mmhg", 6.0)
    assert s.paco2_mmhg == pytest.approx(float(model.kpa_to_mmhg(6.0)))
    assert s.error_message == ""


def test_model_value_error_keeps_last_result(monkeypatch):
    s = CaseState()
    result, curves = s.result, s.curves

    def refuse(**kw):
        raise ValueError("fio2 = 0.3 is outside the allowed range 0.05-1 (FiO2)")

    monkeypatch.setattr(model, "solve_transport", refuse)
    s.fio2 = 0.30
    assert s.result is result and s.curves is curves
    assert "outside the allowed range" in s.error_message


def test_error_clears_on_next_valid_change(monkeypatch):
    s = CaseState()
    assert not s.set_display_input("temperature_c", 50.0)
    assert s.error_message
    s.temperature_c = 38.0
    assert s.error_message == ""


def test_do2i_needs_height_and_weight():
    s = CaseState()
    assert "do2i" not in {r.key for r in s.readings()}
    s.param.update(height_cm=170.0, weight_kg=70.0)
    values = {r.key: r.value for r in s.readings()}
    assert values["do2i"] == pytest.approx(values["do2"] / 1.8181, rel=1e-4)  # Mosteller


@pytest.mark.parametrize("path", sorted(SCENARIO_DIR.glob("*.toml")), ids=lambda p: p.stem)
def test_every_shipped_scenario_loads(path):
    s = CaseState()
    assert s.load_scenario(path), s.error_message
    assert s.scenario_name


def test_scenario_applies_inputs_and_resets_others(tmp_path: Path):
    f = tmp_path / "climb.toml"
    f.write_text(
        'name = "Climb"\ndescription = "test"\n[air]\naltitude_m = 4000\n'
        'pressure_model = "mountain"\n[blood]\nhb_g_dl = 17.5\n'
    )
    s = CaseState(fio2=0.5, temperature_c=39.0)
    assert s.load_scenario(f), s.error_message
    assert (s.altitude_m, s.pressure_model, s.hb_g_dl) == (4000, "mountain", 17.5)
    assert s.fio2 == 0.21 and s.temperature_c == 37.0
    assert s.scenario_name == "Climb"


def test_bad_scenario_changes_nothing(tmp_path: Path):
    f = tmp_path / "bad.toml"
    f.write_text('name = "Bad"\n[air]\naltitude_m = 3000\n[blood]\nhb_g_dl = 99\n')
    s = CaseState()
    result = s.result
    assert not s.load_scenario(f)
    assert s.altitude_m == 0.0 and s.hb_g_dl == 15.0 and s.result is result
    assert "Scenario not loaded" in s.error_message


def test_case_the_model_refuses_puts_input_back():
    s = CaseState(altitude_m=4500.0, hb_g_dl=9.0, temperature_c=40.0)
    result = s.result
    s.set_input("vo2_ml_min", 250.0)
    assert not s.set_input("vo2_ml_min", 4000.0)
    assert s.vo2_ml_min == 250.0 and s.result is result
    assert "VO2 = 4000 not applied" in s.error_message


def test_scenario_choices_use_names_and_mark_bad_files(tmp_path: Path):
    (tmp_path / "a.toml").write_text(
        'name = "Case A"\ndescription = "x"\n[air]\naltitude_m = 100\n'
    )
    (tmp_path / "b.toml").write_text("this is not toml [")
    choices = CaseState().scenario_choices(tmp_path)
    assert choices["Case A"] == str(tmp_path / "a.toml")
    assert choices["b (cannot be read)"] == str(tmp_path / "b.toml")


def test_unchanged_value_after_refusal_is_accepted():
    s = CaseState()
    assert not s.set_input("hb_g_dl", 99.0)
    assert s.set_input("hb_g_dl", 15.0)
    assert s.error_message == ""


def test_bounds_as_shown_in_kpa_are_accepted():
    s = CaseState(pressure_unit="kPa", fio2=1.0)  # on air, PaCO2 150 mmHg leaves no PAO2
    assert not s.set_display_input("paco2_mmhg", 21.0)
    assert "0.667–20 kPa" in s.error_message
    assert s.set_display_input("paco2_mmhg", 20.0), s.error_message
    assert s.paco2_mmhg == s.param.paco2_mmhg.bounds[1]


def test_apply_inputs_is_all_or_nothing():
    state = CaseState()
    assert state.apply_inputs({"altitude_m": 4500.0, "hb_g_dl": 9.0}, name="trial")
    assert state.altitude_m == 4500.0 and state.hb_g_dl == 9.0 and state.scenario_name == "trial"
    before = state.model_inputs()
    assert not state.apply_inputs({"altitude_m": 1000.0, "hb_g_dl": 99.0})
    assert "Hb (g/dL) = 99" in state.error_message and "2–25" in state.error_message
    assert state.model_inputs() == before
    assert not state.apply_inputs({"no_such_input": 1.0})
    assert state.model_inputs() == before


def test_pb_row_names_the_pressure_model():
    # A case at altitude is a place on a mountain: West 1996 by default, and the numbers say
    # which model gave PB (398.9 mmHg at 5400 m; ICAO 384.2), or that it was entered.
    s = CaseState()
    s.altitude_m = 5400.0
    row = {r.key: r for r in s.readings()}["barometric_pressure"]
    assert s.pressure_model == "mountain" and "West 1996 mountain model" in row.label
    assert row.value == pytest.approx(398.9, abs=0.1)
    s.pressure_model = "standard"
    row = {r.key: r for r in s.readings()}["barometric_pressure"]
    assert "ICAO standard atmosphere" in row.label and row.value == pytest.approx(384.2, abs=0.1)
    s.use_pressure_override = True
    assert "as entered" in {r.key: r for r in s.readings()}["barometric_pressure"].label
