"""model.ascent_report: a night as case inputs, chosen thresholds, comparison rows."""

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model.ascent import AscentDay, AscentProfile, load_ascent, run_ascent, run_ascents
from o2transit.model.ascent_report import (
    CASE_KEYS,
    DAY_COLUMNS,
    day_rows,
    flagged_days,
    hypoxic_burden,
    night_case_inputs,
    nights_below,
)
from properties import budget

from o2transit import model

EXAMPLES = sorted((Path(__file__).resolve().parent.parent / "scenarios" / "ascents").glob("*.toml"))
RESULTS = run_ascents([load_ascent(p) for p in EXAMPLES])


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
