"""Bedside shift: gases added one after another or pasted, each fitted, the trend, kept."""

from __future__ import annotations

import pytest
from bokeh.document import Document
from o2transit.dashboard.bedside.series_view import SeriesPanel
from o2transit.dashboard.bedside.shift_summary import series_section
from o2transit.dashboard.bedside.state import BedsideState
from o2transit.dashboard.case.state import CaseState
from o2transit.model import fit_case, mmhg_to_kpa
from septic_case import SEPTIC_GAS

# The septic case of issue 16 (invented values), then two later gases of the shift.
FIRST = {**SEPTIC_GAS, "altitude_m": 0.0}
SECOND = {**FIRST, "pao2_mmhg": 74.0, "sao2": 0.92, "ph": 7.28, "temperature_c": 38.6}
PASTED = (
    "time,pao2_kpa,paco2_kpa,ph,sao2_percent,hb_g_l,fio2,temperature_c,pvo2_kpa,"
    "svo2_percent,cardiac_output_l_min,altitude_m\n"
    "14:00,11.5,5.2,7.31,95,90,0.5,38.1,5.2,66,6.5,0\n"
)


@pytest.fixture
def st(tmp_path):
    state = BedsideState(CaseState(), case_dir=tmp_path / "cases")
    state.case.pressure_unit = "kPa"
    state.case.hb_unit = "g/L"
    return state


def add(st, values, time):
    st.set_draft_model_units(values)
    assert st.calculate(), st.entry_message
    st.series.gas_time = time
    assert st.series.add_current(), st.series.series_message


def test_three_gases_give_a_trend_in_display_units(st):
    add(st, FIRST, "06:00")
    add(st, SECOND, "10:00")
    st.series.pasted = PASTED
    assert st.series.read_pasted(), st.series.series_message
    assert st.series.pasted == ""
    rows = st.series.trend_rows()
    assert [r.time for r in rows] == ["06:00", "10:00", "14:00"]
    assert [r.hours for r in rows] == ["0.0", "4.0", "8.0"]
    head = st.series.trend_head()
    assert head[2] == "P/F (kPa)" and head[6] == "P50 in vivo (kPa)"
    # P/F = PaO2/FiO2: 82 mmHg / 0.6 = 136.7 mmHg = 18.2 kPa (definition and conversion).
    assert rows[0].values[0] == f"{float(mmhg_to_kpa(82.0 / 0.6)):.1f}"
    shunt = fit_case(SECOND).fitted["shunt_fraction"]
    assert rows[1].values[1] == f"{100 * shunt:.1f}"
    data = st.series.trend_data()
    assert list(data["hours"]) == [0.0, 4.0, 8.0] and data["time"][2] == "14:00"
    pts = st.series.points_data()
    assert len(pts["arterial"][0]) == 3 and len(pts["venous"][0]) == 3
    assert pts["curve"] is not None


def test_refusals_name_what_is_wrong_and_change_nothing(st):
    st.series.gas_time = "06:00"
    assert not st.series.add_current()
    assert st.series.series_message.startswith("Calculate a measured gas first")
    st.set_draft_model_units(FIRST)
    st.calculate()
    st.series.gas_time = ""
    assert not st.series.add_current() and "Time drawn" in st.series.series_message
    st.series.gas_time = "25:00"
    assert not st.series.add_current() and "is not a time" in st.series.series_message
    st.series.pasted = PASTED.replace("11.5", "900")
    assert not st.series.read_pasted()
    assert "pao2_kpa = 900 kPa is outside the allowed range" in st.series.series_message
    assert st.series.gases == []


def test_a_gas_at_the_same_time_is_replaced_and_the_form_fit_is_reused(st):
    add(st, FIRST, "06:00")
    assert st.fit_measured()
    add(st, SECOND, "06:00")
    assert len(st.series.gases) == 1 and "replaced" in st.series.series_message
    assert st.series.gases[0].measured["pao2_mmhg"] == 74.0
    # A gas fitted on the form is not fitted again when added to the shift.
    st.set_draft_model_units({**FIRST, "pao2_mmhg": 90.0})
    assert st.calculate() and st.fit_measured()
    st.series.gas_time = "08:00"
    assert st.series.add_current()
    assert st.series.trend.fits[1] is st.fit


def test_the_shift_is_saved_with_the_case_and_reopened(st):
    add(st, FIRST, "06:00")
    add(st, SECOND, "10:00")
    st.case_label = "bed 4 night"
    assert st.save(), st.case_message
    other = BedsideState(CaseState(), case_dir=st.case_dir)
    assert other.open(other.saved_cases[0].path), other.case_message
    assert [g.time for g in other.series.gases] == ["06:00", "10:00"]
    assert other.series.trend is not None and len(other.series.trend_rows()) == 2


def test_panel_and_summary_show_the_shift(st):
    panel = SeriesPanel(st)
    assert panel.__panel__().get_root(Document()) is not None
    assert "No gases" in panel._table.object
    add(st, FIRST, "06:00")
    add(st, SECOND, "10:00")
    assert "10:00" in panel._table.object and "P/F (kPa)" in panel._table.object
    assert list(panel._trend_sources[0].data["x"]) == [0.0, 4.0]
    assert panel._art.data["first"] == ["06:00", ""] and panel._art.data["label"] == ["", "10:00"]
    assert "Gases through the shift" in series_section(st) and "10:00" in series_section(st)
    assert st.series.remove_gas(1) and len(st.series.gases) == 1
    st.series.clear_series()
    assert st.series.trend is None and "No gases" in panel._table.object
