"""model.ascent_report: a night as case inputs, chosen thresholds, comparison rows."""

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model.acclimatization import VENTILATION_SD_MMHG
from o2transit.model.ascent import (
    AscentDay,
    AscentProfile,
    forecast_points,
    load_ascent,
    run_ascent,
    run_ascents,
)
from o2transit.model.ascent_report import (
    CASE_KEYS,
    DAY_COLUMNS,
    Reading,
    ReadingError,
    day_rows,
    fit_person_offset,
    flagged_days,
    hypoxic_burden,
    night_case_inputs,
    nights_below,
    readings_from_csv,
    readings_to_csv,
)
from properties import budget

from o2transit import model

EXAMPLES = sorted((Path(__file__).resolve().parent.parent / "scenarios" / "ascents").glob("*.toml"))
RESULTS = run_ascents([load_ascent(p) for p in EXAMPLES])


def test_case_keys_are_chain_inputs():
    # A night's keys are case inputs of solve_transport (the one list of them).
    assert set(CASE_KEYS) <= set(model.CASE_INPUTS)


@pytest.mark.parametrize("result", RESULTS, ids=[p.stem for p in EXAMPLES])
def test_every_night_is_given_back_by_its_case_inputs(result):
    n = result.sleep_altitude_m.size
    cases = [night_case_inputs(result, d) for d in range(1, n + 1)]
    assert all(tuple(c) == CASE_KEYS for c in cases)
    batch = {
        k: (cases[0][k] if k == "pressure_model" else np.array([c[k] for c in cases]))
        for k in CASE_KEYS
    }
    again = model.solve_transport(**batch)
    # the same chain with the same inputs: agreement to the solver's tolerance (common practice)
    np.testing.assert_allclose(again.arterial.po2_mmhg, result.night.arterial.po2_mmhg, atol=1e-4)
    np.testing.assert_allclose(again.arterial.so2, result.night.arterial.so2, atol=1e-6)
    np.testing.assert_allclose(
        again.arterial.o2_content_ml_dl, result.night.arterial.o2_content_ml_dl, atol=1e-4
    )


def test_case_inputs_refuse_a_day_outside_the_schedule():
    r = RESULTS[0]
    for day in (0, r.sleep_altitude_m.size + 1):
        with pytest.raises(ValueError, match="outside the allowed range 1-"):
            night_case_inputs(r, day)


@pytest.mark.parametrize("result", RESULTS, ids=[p.stem for p in EXAMPLES])
def test_default_thresholds_give_the_model_summary(result):
    s = result.summary
    assert nights_below(result, 0.90) == s["nights_below_0_90"]
    assert nights_below(result, 0.80) == s["nights_below_0_80"]
    assert hypoxic_burden(result, 0.90) == pytest.approx(s["hypoxic_burden_saturation_days"])
    assert len(flagged_days(result)) == sum(1 for f in result.flags if f)


@budget(40)
@given(st.floats(0.5, 1.0), st.floats(0.5, 1.0))
def test_a_higher_threshold_never_counts_fewer_nights(a, b):
    lo, hi = sorted((a, b))
    for r in RESULTS:
        assert nights_below(r, lo) <= nights_below(r, hi)
        assert hypoxic_burden(r, lo) <= hypoxic_burden(r, hi)


def test_sea_level_has_no_burden():
    r = run_ascent(AscentProfile("home", (AscentDay(0.0),) * 4))
    assert nights_below(r, 0.90) == 0 and hypoxic_burden(r, 0.90) == 0.0
    assert flagged_days(r) == []


def test_day_rows_follow_the_json_record():
    r = RESULTS[0]
    rows = day_rows(r)
    record = r.to_dict()["days"]
    assert len(rows) == len(record)
    assert all(tuple(row) == (*DAY_COLUMNS, "flags") for row in rows)
    for row, d in zip(rows, record):
        assert row["sao2"] == d["sao2"] and row["high_sao2"] == d["high_point"]["sao2"]
        assert row["flags"] == "; ".join(d["flags"])


# ---------------------------------------------------------------- a trekker's readings
SLOW = EXAMPLES[[p.stem for p in EXAMPLES].index("slow-to-5300m")]


def test_readings_csv_round_trip_and_optional_columns():
    rs = readings_from_csv(
        "day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score\n3,3300,86,88,1\n4,3800,83,,\n\n",
        13,
    )
    assert rs == (Reading(3, 3300.0, 86.0, 88.0, 1), Reading(4, 3800.0, 83.0))
    assert readings_from_csv(readings_to_csv(rs), 13) == rs
    short = readings_from_csv("day,altitude_m,spo2_pct\n2,2800,91\n", 13)
    assert short == (Reading(2, 2800.0, 91.0),)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("day,alt,spo2\n1,2,3\n", ["the header must be day,altitude_m,spo2_pct"]),
        ("day,altitude_m,spo2_pct\n", ["no readings"]),
        ("day,altitude_m,spo2_pct\n14,3300,88\n", ["row 1 day = '14'", "1-13"]),
        ("day,altitude_m,spo2_pct\n2.5,3300,88\n", ["row 1 day = '2.5'", "whole day"]),
        ("day,altitude_m,spo2_pct\n2,3300,101\n", ["row 1 spo2_pct = '101'", "50-100 %"]),
        ("day,altitude_m,spo2_pct\n2,9500,88\n", ["row 1 altitude_m = '9500'", "-500-9000 m"]),
        ("day,altitude_m,spo2_pct\n2,3300,\n", ["row 1 spo2_pct is missing"]),
        ("day,altitude_m,spo2_pct\n2,high,88\n", ["row 1 altitude_m = 'high'", "number"]),
        (
            "day,altitude_m,spo2_pct,heart_rate_min\n2,3300,88,300\n",
            ["row 1 heart_rate_min = '300'", "25-220 /min"],
        ),
        (
            "day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score\n2,3300,88,,13\n",
            ["row 1 lake_louise_score = '13'", "0-12 points"],
        ),
        (
            "day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score\n2,3300,88,,1.5\n",
            ["lake_louise_score = '1.5'", "whole number"],
        ),
        ("day,altitude_m,spo2_pct\n2,3300,88,1\n", ["more cells than the header"]),
    ],
)
def test_bad_readings_name_field_value_range_and_unit(text, words):
    with pytest.raises(ReadingError) as err:
        readings_from_csv(text, 13, "mine.csv")
    assert "mine.csv" in str(err.value)
    for w in words:
        assert w in str(err.value), str(err.value)


def test_fit_recovers_an_offset_from_noise_free_readings():
    # Readings made by the model itself for a person 2 mmHg above typical: the fit finds
    # them again, shrunk toward the typical lowlander by the prior (few readings) and
    # close to 2 with many; its SD falls as readings are added.
    p = load_ascent(SLOW)
    days = list(range(2, 13))
    alts = [p.days[d - 2].sleep_altitude_m for d in days]
    truth = 100.0 * forecast_points(p, days, alts, 2.0)
    few = fit_person_offset(
        p, [Reading(d, a, float(s)) for d, a, s in list(zip(days, alts, truth))[:2]]
    )
    many = fit_person_offset(p, [Reading(d, a, float(s)) for d, a, s in zip(days, alts, truth)])
    assert 0.5 < few.offset_mmhg < 2.0
    assert many.offset_mmhg == pytest.approx(2.0, abs=0.25)
    assert many.sd_mmhg < few.sd_mmhg < VENTILATION_SD_MMHG
    assert max(abs(x) for x in many.residual_pct) < 0.6
    assert not many.at_limit and many.n == len(days)


def test_fit_of_impossible_readings_stops_at_its_bound():
    p = load_ascent(SLOW)
    fit = fit_person_offset(p, [Reading(10, 5300.0, 99.0), Reading(11, 5300.0, 99.0)])
    assert fit.at_limit and fit.offset_mmhg < 0.0
    assert fit.offset_mmhg == pytest.approx(-4.0 * VENTILATION_SD_MMHG, abs=0.05)


def test_fit_refuses_no_readings_and_days_outside():
    p = load_ascent(SLOW)
    with pytest.raises(ReadingError, match="no readings"):
        fit_person_offset(p, [])
    with pytest.raises(ReadingError, match="day = 20 is outside the allowed range 1-13"):
        fit_person_offset(p, [Reading(20, 3000.0, 90.0)])


def test_reforecast_with_the_fit_follows_the_readings():
    p = load_ascent(SLOW)
    low = [Reading(3, 3300.0, 84.0), Reading(4, 3800.0, 80.0), Reading(6, 4200.0, 77.0)]
    fit = fit_person_offset(p, low)
    r = run_ascent(p, person_offset_mmhg=fit.offset_mmhg, offset_sd_mmhg=fit.sd_mmhg)
    typical = run_ascent(p)
    later = slice(6, 11)  # the days after the last reading
    assert np.all(r.night.arterial.so2[later] < typical.night.arterial.so2[later])
    assert np.all((r.sao2_high - r.sao2_low)[later] < (typical.sao2_high - typical.sao2_low)[later])
