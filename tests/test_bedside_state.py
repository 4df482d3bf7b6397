"""Bedside state: measured entry (all or nothing), derived rows, fit, what-ifs, cases, summary.

Model numbers are tested in the model's own tests; here we test what the screen does with
them: units, refusals, wording, what becomes the live case and the baseline, and files.
"""

import datetime as dt

import pytest
from o2transit.dashboard.bedside.display import signed
from o2transit.dashboard.bedside.state import EXAMPLE_GAS, MEASURED_KEYS, BedsideState
from o2transit.dashboard.bedside.summary import BOKEH_JS, summary_html
from o2transit.dashboard.case.state import CaseState
from o2transit.model import bedside
from test_bedside_plans import SEPTIC  # the septic patient (invented, ours)

from o2transit import model


@pytest.fixture
def st(tmp_path):
    return BedsideState(CaseState(), case_dir=tmp_path / "cases")


def entered(st, values=EXAMPLE_GAS):
    st.set_draft_model_units(values)
    assert st.calculate(), st.entry_message
    return st


def test_every_model_field_is_on_the_form():
    assert set(MEASURED_KEYS) == set(bedside.MEASURED_LIMITS)


def test_draft_follows_display_units(st):
    st.case.pressure_unit = "kPa"
    st.case.hb_unit = "g/L"
    st.set_draft("pao2_mmhg", 9.0)
    st.set_draft("hb_g_dl", 94.0)
    st.set_draft("sao2", 91.5)
    assert st.draft["pao2_mmhg"] == pytest.approx(float(model.kpa_to_mmhg(9.0)))
    assert st.draft["hb_g_dl"] == pytest.approx(9.4)
    assert st.draft["sao2"] == pytest.approx(0.915)
    assert st.display_label("pao2_mmhg").endswith("(kPa)")
    assert st.display_label("hb_g_dl").endswith("(g/L)")
    st.case.pressure_unit = "mmHg"
    assert st.draft_display("pao2_mmhg") == pytest.approx(67.5, abs=0.05)
    st.set_draft("pao2_mmhg", None)
    assert "pao2_mmhg" not in st.draft


def test_calculate_accepts_all_and_fills_derived_rows(st):
    entered(st)
    assert st.measured["pao2_mmhg"] == 68.0
    rows = {r.key: r for r in st.derived_rows()}
    # P/F = 68 / 0.6 = 113 mmHg: arithmetic of the definition, exact.
    assert rows["pao2_fio2_ratio"].value == "113"
    assert "moderate" in rows["pf_category_berlin"].value
    assert rows["pao2_fio2_ratio"].flag == "▼ ARDS range"
    assert rows["shunt_fraction"].unit == "%" and rows["shunt_fraction"].flag == "▲ high"
    assert rows["shunt_fraction"].source.startswith("Berggren")
    assert all(r.source for r in rows.values())
    assert "lactate [mmol/L] above 2" in st.derived_text("flags")


def test_derived_rows_in_kpa(st):
    entered(st)
    mmhg = {r.key: float(r.value) for r in st.derived_rows() if r.unit == "mmHg"}
    st.case.pressure_unit = "kPa"
    rows = {r.key: r for r in st.derived_rows()}
    assert rows["alveolar_po2_mmhg"].unit == "kPa"
    # 100, 200, 300 mmHg x 101.325/760 = 13.3, 26.7, 40.0 kPa (unit conversion, exact).
    assert "13.3, 26.7, 40.0 kPa" in rows["pf_category_berlin"].note
    assert float(rows["alveolar_po2_mmhg"].value) == pytest.approx(
        float(model.mmhg_to_kpa(mmhg["alveolar_po2_mmhg"])), abs=0.01
    )


def test_out_of_range_refused_with_field_value_range_unit_nothing_changed(st):
    entered(st)
    measured, derived = st.measured, st.derived
    st.case.pressure_unit = "kPa"
    st.set_draft("pao2_mmhg", 900.0)  # mmHg habit typed into a kPa field
    st.set_draft("fio2", 60.0)  # percent typed into a fraction field
    assert not st.calculate()
    assert st.measured is measured and st.derived is derived
    msg = st.field_errors["pao2_mmhg"]
    assert "PaO2" in msg and "900 kPa" in msg and "1.33–100 kPa" in msg
    assert "FiO2 = 60 is outside the allowed range 0.05–1" in st.field_errors["fio2"]
    assert st.entry_message.startswith("Not calculated") and "Nothing was changed" in (
        st.entry_message
    )


def test_required_fields_named(st):
    values = dict(EXAMPLE_GAS)
    del values["ph"]
    st.set_draft_model_units(values)
    assert not st.calculate()
    assert st.field_errors["ph"].startswith("Arterial pH: a value is required")
    assert st.measured is None


def test_cross_field_refusal_from_model(st):
    st.set_draft_model_units({**EXAMPLE_GAS, "cohb_fraction": 0.6, "methb_fraction": 0.5})
    assert not st.calculate()
    assert "cohb_fraction + methb_fraction" in st.entry_message


def test_hidden_alternative_is_not_used(st):
    st.set_draft_model_units({**EXAMPLE_GAS, "barometric_pressure_mmhg": 500.0})
    assert st.pressure_source == "altitude"
    entered(st, st.draft)
    assert "barometric_pressure_mmhg" not in st.measured
    st.pressure_source = "barometric pressure"
    assert st.calculate()
    assert st.measured["barometric_pressure_mmhg"] == 500.0 and "altitude_m" not in st.measured


def test_single_point_p50_refusal_shown(st):
    entered(st, {**EXAMPLE_GAS, "pao2_mmhg": 300.0, "sao2": 0.995})
    rows = {r.key: r for r in st.derived_rows()}
    assert rows["p50_insitu_mmhg"].value == "refused"
    assert "single-point method" in rows["p50_insitu_mmhg"].note


def test_fit_and_use_fitted_sets_live_case_and_baseline(st):
    entered(st)
    assert st.fit_measured(), st.fit_message
    assert st.fit.consistent and "consistent" in st.fit_summary()
    rows = st.fit_rows()
    assert rows[0][0] == "PaO2" and rows[0][5] == "fitted" and rows[0][6] == "match"
    assert st.use_fitted()
    assert st.case.baseline is st.case.result
    # Live inputs are the fitted ones rounded as the tables show them (shunt 28.6 % ->
    # 0.286, VO2 whole, pH to 3 decimals), not 0.2857 / 276.66 / 7.2206 (issue 16).
    f = st.fit.inputs
    assert st.case.shunt_fraction == round(f["shunt_fraction"], 3)
    assert st.case.vo2_ml_min == round(f["vo2_ml_min"]) and st.case.ph == round(f["ph"], 3)
    assert st.case.paco2_mmhg == round(f["paco2_mmhg"], 1)
    if "p50_mmhg" in f:  # fitted only when SaO2 is off the curve
        assert st.case.p50_mmhg == round(f["p50_mmhg"], 1)
    shown = {r.key: r.value for r in st.fitted_rows()}
    assert f"{100 * st.case.shunt_fraction:.1f}" == shown["shunt_fraction"]
    assert f"{st.case.vo2_ml_min:.0f}" == shown["vo2_ml_min"]
    # Rounding VO2 to 1 mL/min and shunt to 0.1 % moves PaO2 by 0.2 mmHg here (computed):
    # under the half-mmHg the screen rounds to.
    assert float(st.case.result.arterial.po2_mmhg) == pytest.approx(
        float(st.fit.result.arterial.po2_mmhg), abs=0.5
    )
    assert st.case.height_cm == 172.0  # DO2I on the other tab needs the body size too
    assert st.case.scenario_name.startswith("Fitted to measured gas")


def test_inconsistent_measurements_said_plainly(st):
    entered(st, {**EXAMPLE_GAS, "svo2": 0.95})  # venous above arterial
    assert st.fit_measured()
    assert not st.fit.consistent
    assert st.fit_summary().startswith("The measurements do not fit together")
    assert "SvO2" in st.fit_summary()


def test_new_calculation_drops_the_old_fit(st):
    entered(st)
    st.fit_measured()
    entered(st, {**EXAMPLE_GAS, "pao2_mmhg": 80.0})
    assert st.fit is None and st.fit_rows() == []


def test_patient_curve_has_measured_points_at_patient_temperature(st):
    entered(st)
    view = st.patient_curve()
    x, y = view["measured_arterial"]
    assert y == pytest.approx(91.5)
    assert x > 68.0  # 38.4 degC: the in-vivo PO2 is above the 37 degC analyser value
    assert view["measured_venous"][1] == pytest.approx(64.0)
    assert "not fitted" in view["title"]
    st.fit_measured()
    assert view["title"] != st.patient_curve()["title"]


def test_summary_page_standalone(st):
    entered(st)
    st.fit_measured()
    st.case_label = "Bed 4 night"
    st.notes = "Prone at 02:00."
    page = summary_html(st, when=dt.datetime(2026, 12, 2, 3, 10))
    assert "2026-12-02 03:10" in page and "Bed 4 night" in page and "Prone at 02:00." in page
    assert "not a medical device" in page
    assert "113" in page  # P/F
    assert "@media print" in page
    assert "Shunt (venous admixture)" in page and "ranked by PaO2" not in page
    assert "ranked by O2 delivery (DO2)" in page and "Outside usual ranges" in page
    # Offline: the only http(s) text in the file is inside the bundled BokehJS library
    # (licence and documentation links, and addresses of optional parts this page does
    # not use: MathJax, icon fonts, map tiles); the page itself names no address.
    library = BOKEH_JS.render_js()
    assert library in page
    outside_library = page.replace(library, "")
    assert "http://" not in outside_library and "https://" not in outside_library
    assert "Bokeh.embed.embed_items" in outside_library


def test_what_ifs_ranked_resorted_and_applied_with_fitted_baseline(st):
    entered(st)
    st.fit_measured()
    assert st.lever_table, st.lever_message
    st.rank_by = "pao2"
    assert st.lever_table[0].key == "fio2_1.00"
    assert st.lever_rows()[0][1] == "FiO2 0.60 → 1.00"
    # issue 16: the ranked table gives the value after each what-if, with its change
    top = st.lever_table[0]
    head, row = st.lever_head(), st.lever_rows()[0]
    assert head[2] == "DO2 after (Δ), mL/min"
    assert row[2] == f"{top.do2_ml_min:.0f} ({signed(top.delta_do2_ml_min, 0)})"
    assert row[2].split(" ")[0] != "" and "(" in row[3]
    assert st.apply_lever("fio2_1.00"), st.lever_message
    assert st.case.fio2 == 1.0
    base = st.case.baseline
    assert float(base.fio2) == pytest.approx(0.6)
    assert float(base.shunt_fraction) == round(st.fit.fitted["shunt_fraction"], 3)
    # A second what-if is compared against the fitted case, not the first what-if.
    assert st.apply_lever("transfusion")
    assert float(st.case.baseline.fio2) == pytest.approx(0.6)
    assert st.case.hb_g_dl == pytest.approx(10.0) and st.case.fio2 == pytest.approx(0.6)


def test_what_if_settings_rerank_and_refusals(st):
    entered(st)
    st.fit_measured()
    st.stored_blood = True
    transfusion = next(o for o in st.lever_table if o.key == "transfusion")
    assert "2,3-DPG" in transfusion.label
    st.case.hb_unit = "g/L"
    assert not st.set_target_hb_display(300.0)
    assert "300 g/L is outside the allowed range 50–180 g/L" in st.lever_message
    assert st.set_target_hb_display(120.0) and st.target_hb_g_dl == pytest.approx(12.0)
    st.shunt_change = 0.0
    assert all(o.key != "shunt" for o in st.lever_table)


def test_save_refuses_silent_overwrite_then_overwrites(st):
    entered(st)
    st.fit_measured()
    st.case_label = "bed 4 night"
    st.notes = "first"
    assert st.save(), st.case_message
    path = st.saved_cases[0].path
    assert path.parent == st.case_dir_path() and "Saved bed-4-night.toml" in st.case_message
    st.notes = "second"
    assert not st.save()
    assert st.overwrite_offer == str(path) and "already exists" in st.case_message
    assert "first" in path.read_text(encoding="utf-8")
    assert st.save(overwrite=True)
    assert "second" in path.read_text(encoding="utf-8") and st.overwrite_offer == ""


def test_save_refuses_identifier_like_label(st):
    entered(st)
    st.case_label = "MRN 12345678"
    assert not st.save()
    assert st.case_message.startswith("Not saved") and "record number" in st.case_message
    assert st.saved_cases == []


def test_open_restores_entry_fit_and_notes_and_lists_damaged_files(st):
    entered(st)
    st.fit_measured()
    st.case_label, st.notes = "bed 4 night", "Prone from 02:00."
    st.save()
    (st.case_dir_path() / "broken.toml").write_text("[case\n", encoding="utf-8")
    other = BedsideState(CaseState(), case_dir=st.case_dir)
    assert [r.label for r in other.saved_cases] == ["bed 4 night"]
    assert len(other.case_problems) == 1 and "broken.toml" in other.case_problems[0]
    assert other.open(other.saved_cases[0].path), other.case_message
    assert other.draft["pao2_mmhg"] == 68.0 and other.notes == "Prone from 02:00."
    assert other.measured == st.measured
    assert other.fit is not None and "same as saved" in other.case_message
    assert not other.open(st.case_dir_path() / "broken.toml")
    assert other.case_message.startswith("Not opened") and "not valid TOML" in other.case_message


def test_screen_renders_and_follows_state(st):
    from bokeh.document import Document
    from o2transit.dashboard.bedside.views import (
        BedsideScreen,
        DerivedTable,
        MeasuredEntry,
        WhatIfTable,
    )

    entry, table, levers = MeasuredEntry(st), DerivedTable(st), WhatIfTable(st)
    assert BedsideScreen(st).__panel__().get_root(Document()) is not None
    st.fill_example()
    assert entry._inputs["pao2_mmhg"].value == 68.0
    st.clear_entry()
    assert entry._inputs["pao2_mmhg"].value == float("-inf")  # Panel's empty box
    entered(st)
    assert "PaO2/FiO2" in table._pane.object and "Berggren" in table._pane.object
    st.fit_measured()
    assert levers._pick.value == st.lever_table[0].key
    st.rank_by = "pao2"
    assert levers._pick.value == "fio2_1.00"
    st.calculate()  # a new calculation empties the table: the picker must cope
    assert levers._pick.options == {}


def test_model_table_at_39c_shows_the_37c_reading_and_flags_what_it_shows(st):
    st.case.pressure_unit, st.case.hb_unit = "kPa", "g/L"
    entered(st, SEPTIC)
    assert st.fit_measured() and st.use_fitted()
    rows = {r.key: r for r in st.case.readings()}
    # The chain's PaO2 is at 39 degC; it carries the temperature and no flag, since the
    # reference range is for gases read at 37 degC, like the measured 82 mmHg = 10.9 kPa.
    at_39, at_37 = rows["arterial_po2"], rows["arterial_po2_37"]
    assert at_39.label.endswith("at 39.0 °C") and (at_39.low, at_39.flag) == (None, "")
    assert at_37.label == "PaO2 as read at 37 °C"
    assert f"{at_37.value:.1f}" == "10.9" and at_37.value < at_39.value
    # The model's PvO2 as read at 37 degC is the fit's, as its residual table shows it.
    pvo2 = next(r for r in st.fit.residuals if r.quantity == "PvO2").model
    assert rows["venous_po2_37"].value == pytest.approx(pvo2 / 7.50062, abs=0.01)
    for r in rows.values():  # every flag agrees with the number as the table rounds it
        shown = float(f"{r.value:.{r.digits}f}")
        low = None if r.low is None else float(f"{r.low:.{r.digits}f}")
        high = None if r.high is None else float(f"{r.high:.{r.digits}f}")
        expected = "low" if low is not None and shown < low else ""
        expected = "high" if high is not None and shown > high else expected
        assert r.flag == expected, r


def test_the_shown_extraction_on_a_bound_is_not_flagged():
    from o2transit.dashboard.case.readings import Reading

    # 39.7 mL O2/L is shown as 40: on the lower bound 40, not below it (issue 16).
    assert Reading("o2_extracted_per_l", "", 39.7, "mL O2/L", 0, 40.0, 60.0, None).flag == ""
    assert Reading("o2_extracted_per_l", "", 39.4, "mL O2/L", 0, 40.0, 60.0, None).flag == "low"


def test_fio2_and_hb_fields_name_their_owner(st):
    st.case.hb_unit = "g/L"
    assert st.display_label("fio2") == "FiO2 when drawn (fraction)"
    assert st.display_label("hb_g_dl") == "Measured Hb (g/L)"
    assert st.case.display_label("fio2") == "Model FiO2 (fraction)"
    assert st.case.display_label("hb_g_dl") == "Model Hb (g/L)"


def test_derived_words_follow_the_pressure_unit(st):
    st.case.pressure_unit = "kPa"
    entered(st, SEPTIC)
    rows = {r.key: r for r in st.derived_rows()}
    # 40 mmHg = 5.33 kPa (1 kPa = 7.50062 mmHg); the Berlin cut-offs 100/200 mmHg likewise.
    assert "PCO2 5.33 kPa" in rows["p50_standard_mmhg"].label
    assert "5.33 kPa" in rows["p50_standard_mmhg"].source
    assert "13.3 < P/F ≤ 26.7 kPa" in rows["pf_category_berlin"].value
    assert rows["sao2_fio2_ratio"].unit == ""
    text = " ".join(f"{r.label} {r.value} {r.unit} {r.source} {r.usual}" for r in rows.values())
    assert "mmHg" not in text.replace("cut-offs are in mmHg", "")


def test_shunt_what_if_is_set_in_percent_points_like_the_plans(st):
    entered(st)
    assert st.fit_measured()
    shunt = 100.0 * st.fit.inputs["shunt_fraction"]
    st.shunt_change_points = -15.0
    label = next(r[1] for r in st.lever_rows() if r[1].startswith("Shunt"))
    assert label == f"Shunt {shunt:.1f} → {shunt - 15.0:.1f} %"
    st.shunt_change_points = 50.0  # 34.8 % + 50 points is beyond the 80 % the model takes
    assert st.lever_table == []
    assert "a shunt change of +50 % points would take the shunt from" in st.lever_message
    assert "outside the allowed range 0–80 %" in st.lever_message
