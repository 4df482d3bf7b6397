"""Tests for model.series: one patient's gases through a shift, derived and fitted in turn."""

from __future__ import annotations

import numpy as np
import pytest
from o2transit.model import derive, fit_case, kpa_to_mmhg
from o2transit.model.bedside import temperature_corrected_po2
from o2transit.model.series import (
    Gas,
    check_time,
    elapsed_hours,
    gas_from_table,
    gas_table,
    read_gas_csv,
    trend,
)
from septic_case import SEPTIC_GAS

# An invented septic patient of our own over a shift (FiO2 0.6, Hb 8.5, 39 degC, CO 7).
FIRST = SEPTIC_GAS
SECOND = {**FIRST, "pao2_mmhg": 74.0, "sao2": 0.92, "ph": 7.28, "temperature_c": 38.6}
CSV_HEAD = "time,pao2_kpa,paco2_kpa,ph,sao2,hb_g_dl,fio2,temperature_c\n"
THIRD = {**FIRST, "pao2_mmhg": 86.0, "sao2": 0.95, "fio2": 0.5, "temperature_c": 38.1}


@pytest.fixture(scope="module")
def shift():
    return trend([Gas("06:00", FIRST), Gas("10:00", SECOND), Gas("14:00", THIRD)])


def test_times_cross_midnight_and_dates_are_absolute():
    assert elapsed_hours(["22:00", "02:30", "06:00"]).tolist() == [0.0, 4.5, 8.0]
    assert elapsed_hours(["06:00", "06:00"]).tolist() == [0.0, 0.0]
    assert elapsed_hours(["2026-03-01 23:00", "2026-03-02 01:00"]).tolist() == [0.0, 2.0]
    with pytest.raises(ValueError, match="earlier than the gas before it"):
        elapsed_hours(["2026-03-02 01:00", "2026-03-01 23:00"])
    assert check_time("6.05") == "06:05"
    for bad in ("25:00", "noon", "2026-02-30 10:00", 6):
        with pytest.raises(ValueError, match="time"):
            check_time(bad)


def test_trend_values_are_those_of_each_gas(shift):
    assert shift.hours.tolist() == [0.0, 4.0, 8.0]
    v = shift.values
    # P/F = PaO2 / FiO2, the definition: 82/0.6, 74/0.6, 86/0.5.
    assert v["pao2_fio2_ratio"] == pytest.approx([136.667, 123.333, 172.0], abs=1e-3)
    for i, gas in enumerate((FIRST, SECOND, THIRD)):
        alone = fit_case(gas)
        assert v["shunt_fitted"][i] == pytest.approx(alone.fitted["shunt_fraction"], rel=1e-6)
        assert v["do2_ml_min"][i] == pytest.approx(float(alone.result.do2_ml_min), rel=1e-6)
        assert v["p50_invivo_mmhg"][i] == pytest.approx(
            float(alone.result.arterial.p50_mmhg), rel=1e-6
        )
        one = derive(**gas)
        assert v["shunt_berggren"][i] == pytest.approx(float(one["shunt_fraction"]))
        assert v["p50_insitu_mmhg"][i] == pytest.approx(float(one["p50_insitu_mmhg"]))
        # Points on the curve are at the patient's temperature (Severinghaus 1979 Eq 3).
        t = gas["temperature_c"]
        pa = float(temperature_corrected_po2(gas["pao2_mmhg"], t))
        assert v["arterial_po2_mmhg"][i] == pytest.approx(pa)
        assert v["venous_so2"][i] == gas["svo2"]


def test_given_fits_are_used_and_missing_venous_gives_nan():
    made = fit_case(FIRST)
    calls = []

    def counting(measured, curve):
        calls.append(curve)
        return fit_case(measured, curve=curve)

    arterial_only = {k: v for k, v in SECOND.items() if k not in ("pvo2_mmhg", "svo2")}
    t = trend([Gas("06:00", FIRST), Gas("08:00", arterial_only)], fits=[made, None], fit=counting)
    assert calls == ["severinghaus"]
    assert t.fits[0] is made
    assert np.isnan(t.values["venous_po2_mmhg"][1])
    assert np.isnan(t.values["shunt_berggren"][1])
    assert np.isfinite(t.values["shunt_fitted"][1])


def test_pasted_csv_in_kpa_g_l_and_percent():
    text = (
        "# shift of bed 4\n"
        "time,pao2_kpa,paco2_kpa,ph,sao2_percent,hb_g_l,fio2,temperature_c,svo2_percent\n"
        "06:00,10.9,5.1,7.25,93,85,0.6,39,60\n"
        "10:00,9.9,5.1,7.28,92,85,0.6,38.6,\n"
    )
    gases = read_gas_csv(text)
    assert [g.time for g in gases] == ["06:00", "10:00"]
    assert gases[0].measured["pao2_mmhg"] == pytest.approx(float(kpa_to_mmhg(10.9)))
    assert gases[0].measured["hb_g_dl"] == pytest.approx(8.5)
    assert gases[0].measured["sao2"] == pytest.approx(0.93)
    assert "svo2" not in gases[1].measured
    semicolons = read_gas_csv(
        "time;pao2_kpa;paco2_kpa;ph;sao2;hb_g_dl;fio2;temperature_c\n"
        "06:00;10,9;5,1;7,25;0,93;8,5;0,6;39"
    )
    assert semicolons[0].measured["ph"] == 7.25


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("pao2_mmhg,ph\n82,7.2", "no 'time' column"),
        ("time,pao2_mmhg,tide\n06:00,82,1", "column 'tide' is not a measured value"),
        ("time,pao2_mmhg,pao2_kpa\n06:00,82,10", "both give pao2_mmhg"),
        (
            CSV_HEAD + "06:00,900,5.1,7.25,0.93,8.5,0.6,39",
            "line 2: pao2_kpa = 900 kPa is outside the allowed range 1.333-99.99 kPa",
        ),
        (
            CSV_HEAD + "06:00,x,5.1,7.25,0.93,8.5,0.6,39",
            "line 2: pao2_kpa = 'x' is not a number",
        ),
        ("time,pao2_kpa\n06:00,10", "line 2: gas at 06:00: paco2_mmhg"),
        ("", "no gases"),
    ],
)
def test_pasted_csv_refusals_name_line_column_value_range(text, words):
    with pytest.raises(ValueError, match=words.replace("(", r"\(")):
        read_gas_csv(text)


def test_gases_round_trip_through_plain_tables():
    gas = Gas("06:00", FIRST)
    assert gas_from_table(gas_table(gas)) == gas
    with pytest.raises(ValueError, match="unknown key"):
        gas_from_table({"time": "06:00", "measured": FIRST, "bed": 4})
    with pytest.raises(ValueError, match="gas at 06:00: fio2 = 1.5"):
        gas_from_table({"time": "06:00", "measured": {**FIRST, "fio2": 1.5}})


def test_an_empty_series_has_an_empty_trend():
    t = trend([])
    assert t.hours.size == 0 and t.gases == ()
