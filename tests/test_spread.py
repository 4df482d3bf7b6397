"""Tests for model.spread: the curve models' spread and analyser tolerances carried through."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from o2transit.model import derive, saturation
from o2transit.model.dissociation import STANDARD_P50_MMHG
from o2transit.model.spread import (
    SPREAD_CURVES,
    TOLERANCE_SETS,
    curve_band,
    reading_spread,
    tolerance_grid,
    tolerance_of,
    tolerance_ranges,
)
from septic_case import SEPTIC_GAS

# An invented septic patient of our own: FiO2 0.6, Hb 8.5, 39 degC, pH 7.25, CO 7 L/min.
GAS = SEPTIC_GAS


def test_the_band_holds_every_curve_and_is_narrow_at_the_standard_p50():
    grid = np.linspace(5.0, 150.0, 200)
    band = curve_band(grid, {})
    for c in SPREAD_CURVES:
        s = np.asarray(saturation(grid, curve=c))
        assert np.all(band["low"] <= s + 1e-15) and np.all(s <= band["high"] + 1e-15)
    # Every curve's standard P50 is 26.8-26.86 mmHg (their papers' values, in
    # model.dissociation): at 26.8 mmHg the four agree to within half a percent.
    p50s = list(STANDARD_P50_MMHG.values())
    assert max(p50s) - min(p50s) < 0.1
    at = curve_band(26.83, {})
    assert float(at["high"] - at["low"]) < 0.005


def test_the_models_part_more_at_extreme_ph_and_temperature_on_the_steep_part():
    normal = curve_band(35.0, {})
    septic = curve_band(35.0, {"ph": 7.05, "temperature_c": 40.0, "pco2_mmhg": 60.0})
    assert float(septic["high"] - septic["low"]) > float(normal["high"] - normal["low"])


def test_reading_spread_matches_each_curve_read_alone():
    cond = {"ph": 7.22, "pco2_mmhg": 41.0, "temperature_c": 39.0}
    out = reading_spread(94.0, 45.0, 8.5, cond, {**cond, "ph": 7.19})
    for c in SPREAD_CURVES:
        sa = float(saturation(94.0, **cond, curve=c))
        assert out["sao2"]["by_curve"][c] == pytest.approx(sa)
    assert out["sao2"]["low"] == min(out["sao2"]["by_curve"].values())
    # O2 extracted per litre = 10 (CaO2 - CvO2) with CaO2 = 1.34 Hb S + 0.003 PO2 (the
    # content equation of model.content): checked for one curve by hand.
    c = "hill1910"
    sa = out["sao2"]["by_curve"][c]
    sv = float(saturation(45.0, **{**cond, "ph": 7.19}, curve=c))
    by_hand = 10.0 * (1.34 * 8.5 * (sa - sv) + 0.003 * (94.0 - 45.0))
    assert out["o2_extracted_ml_per_l"]["by_curve"][c] == pytest.approx(by_hand, rel=1e-3)


def test_tolerances_are_the_larger_of_absolute_and_relative():
    # CLIA '88 PCO2: 5 mmHg or 8 %, whichever is greater (Westgard QP-11, read there).
    assert tolerance_of("paco2_mmhg", 40.0) == pytest.approx(5.0)
    assert tolerance_of("paco2_mmhg", 80.0) == pytest.approx(6.4)
    assert tolerance_of("ph", 7.25) == pytest.approx(0.04)
    assert tolerance_of("fio2", 0.6) == 0.0
    with pytest.raises(ValueError, match="tolerance set 'iso9999' is unknown"):
        tolerance_of("ph", 7.4, "iso9999")


def test_the_grid_is_every_combination_and_stays_in_range():
    grid = tolerance_grid({**GAS, "sao2": 0.995})
    varied = [k for k in GAS if tolerance_of(k, GAS[k]) > 0]
    assert len(grid["fio2"]) == 3 ** len(varied)
    assert grid["sao2"].max() == 1.0  # 0.995 + 0.01 clipped to a saturation of 1
    combos = {tuple(round(grid[k][i], 9) for k in varied) for i in range(len(grid["fio2"]))}
    assert len(combos) == 3 ** len(varied)


def test_vectorised_ranges_equal_a_loop_over_the_corners_and_middles():
    small = {k: GAS[k] for k in ("pao2_mmhg", "paco2_mmhg", "ph", "sao2", "hb_g_dl", "fio2")}
    small.update(temperature_c=39.0, svo2=0.60, cardiac_output_l_min=7.0)
    got = tolerance_ranges(small)
    varied = [k for k in small if tolerance_of(k, small[k]) > 0]
    shunts = []
    for steps in itertools.product((-1, 0, 1), repeat=len(varied)):
        gas = dict(small)
        for k, s in zip(varied, steps):
            gas[k] = min(small[k] + s * tolerance_of(k, small[k]), 1.0 if k == "sao2" else 1e9)
        shunts.append(float(derive(**gas)["shunt_fraction"]))
    assert got["shunt_fraction"].low == pytest.approx(min(shunts))
    assert got["shunt_fraction"].high == pytest.approx(max(shunts))
    assert got["shunt_fraction"].value == pytest.approx(float(derive(**small)["shunt_fraction"]))


def test_ranges_hold_the_measured_value_and_repeatability_is_narrower():
    clia = tolerance_ranges(GAS, "clia1988")
    rep = tolerance_ranges(GAS, "repeatability")
    for key in ("shunt_fraction", "vo2_ml_min", "p50_insitu_mmhg"):
        for r in (clia, rep):
            assert r[key].low <= r[key].value <= r[key].high
        assert rep[key].high - rep[key].low < clia[key].high - clia[key].low


def test_refused_combinations_are_counted():
    # Near full saturation the single-point P50 is refused above SaO2 0.97 (model.bedside).
    r = tolerance_ranges({**GAS, "sao2": 0.965})["p50_insitu_mmhg"]
    assert 0 < r.refused < r.cases


def test_every_set_names_its_source():
    for table in TOLERANCE_SETS.values():
        assert table["label"] and table["source"]
        assert {"pao2_mmhg", "sao2", "hb_g_dl"} <= set(table["tolerances"])
