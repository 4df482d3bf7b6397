"""Tests for model.air and model.units: barometric pressure, water vapour, inspired PO2."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from ambiance import Atmosphere
from hypothesis import given
from hypothesis import strategies as st
from iapws.iapws97 import _PSat_T
from o2transit.model import (
    barometric_pressure,
    hb_g_dl_to_g_l,
    hb_g_dl_to_mmol_l,
    hb_g_l_to_g_dl,
    hb_mmol_l_to_g_dl,
    inspired_po2,
    kpa_to_mmhg,
    mmhg_to_kpa,
    water_vapour_pressure,
)
from properties import budget

DATA = Path(__file__).parent / "data"
PA_PER_MMHG = 133.322387415  # 101325 Pa / 760 (definition of the standard atmosphere)
FAST = budget(100)


def test_reference_tables_name_their_source():
    # House style: every tests/data/*.csv opens with a header line naming its source.
    files = sorted(DATA.glob("*.csv"))
    assert files
    for f in files:
        first = f.read_text(encoding="utf-8").splitlines()[0]
        assert first.startswith("# Source: ") and len(first) > 40, f.name


def test_standard_atmosphere_matches_ambiance():
    # ICAO Standard Atmosphere (Doc 7488/3, 1993) as implemented by the `ambiance`
    # library, which takes geometric height. Tolerance 1 Pa (brief); the troposphere
    # formula is closed-form, so agreement should be far better than that.
    h = np.linspace(0.0, 8848.0, 60)
    ref_mmhg = Atmosphere(h).pressure / PA_PER_MMHG
    got = barometric_pressure(h, model="standard")
    assert np.max(np.abs(got - ref_mmhg)) <= 1.0 / PA_PER_MMHG


def test_standard_atmosphere_sea_level_is_760():
    # ICAO: 101 325 Pa = 760 mmHg at sea level, by definition.
    assert abs(float(barometric_pressure(0.0)) - 760.0) <= 1e-9


def test_standard_atmosphere_uses_geopotential_height():
    # ICAO uses geopotential height; with geometric height as H the summit value would be
    # 235.85 mmHg instead of 236.28 (ISA computed by hand). Tolerance 0.05 separates them.
    assert abs(float(barometric_pressure(8848.0)) - 236.28) <= 0.05


def test_mountain_model_table():
    # West 1996 (J Appl Physiol 81:1850-1854) model atmosphere; the coefficients behind
    # these values are FROM MEMORY (not re-read in the paper), see the CSV header.
    # Tolerance 0.1 mmHg: the table is rounded to 0.1 mmHg.
    with open(DATA / "west1996_pressure.csv") as f:
        rows = list(csv.DictReader(line for line in f if not line.startswith("#")))
    h = np.array([float(r["altitude_m"]) for r in rows])
    pb = np.array([float(r["pb_mmhg"]) for r in rows])
    got = barometric_pressure(h, model="mountain")
    assert np.max(np.abs(got - pb)) <= 0.1


def test_mountain_above_standard_at_altitude():
    # West et al. 1983 (J Appl Physiol 54:1188-1194): measured Himalayan pressures are
    # considerably higher than the standard atmosphere near the summit.
    h = np.array([3000.0, 5000.0, 8848.0])
    assert np.all(barometric_pressure(h, model="mountain") > barometric_pressure(h) + 5.0)


def test_unknown_pressure_model_raises():
    with pytest.raises(ValueError, match="model"):
        barometric_pressure(1000.0, model="martian")


@FAST
@given(
    h=st.lists(st.integers(-400, 9000), min_size=2, max_size=20),
    model=st.sampled_from(["standard", "mountain"]),
)
def test_pressure_falls_with_altitude(h, model):
    hs = np.unique(np.array(h, dtype=float))
    pb = barometric_pressure(hs, model=model)
    assert np.all(np.diff(pb) < 0) and np.all(pb > 0)


def test_water_vapour_matches_iapws97():
    # IAPWS-IF97 saturation pressure (iapws library, _PSat_T in MPa). Tolerance 0.1 % over
    # 30-42 degC (brief); an embedded approximation (Buck 1981) is about 0.03 % off at 37.
    t = np.linspace(30.0, 42.0, 49)
    ref = np.array([_PSat_T(tc + 273.15) * 1e6 for tc in t]) / PA_PER_MMHG
    got = water_vapour_pressure(t)
    assert np.max(np.abs(got / ref - 1.0)) <= 1e-3


def test_water_vapour_37():
    # IAPWS-IF97 at 37 degC: 6.2818 kPa = 47.12 mmHg; 0.05 mmHg ~ 0.1 %.
    assert abs(float(water_vapour_pressure(37.0)) - 47.12) <= 0.05


def test_inspired_po2_sea_level():
    # PIO2 = FiO2 (PB - PH2O): 0.21 (760 - 47.12) = 149.70 mmHg (computed by hand);
    # 0.05 mmHg covers the 0.1 % water vapour tolerance.
    assert abs(float(inspired_po2(0.21, 760.0)) - 149.70) <= 0.05


@FAST
@given(fio2=st.floats(0.05, 1.0), pb=st.floats(150.0, 1100.0), t=st.floats(30.0, 42.0))
def test_inspired_po2_is_fio2_times_dry_pressure(fio2, pb, t):
    # Definition of inspired PO2 of saturated gas (common practice).
    expected = fio2 * (pb - float(water_vapour_pressure(t)))
    assert float(inspired_po2(fio2, pb, t)) == pytest.approx(expected, rel=1e-12, abs=1e-12)


def test_cdc_inspired_fraction_3050_m():
    # CDC Yellow Book 2024: at 3050 m inspired PO2 is 69 % of sea level. With ICAO 0.667
    # and West's model 0.682 (computed by hand); both lie within 0.69 +- 0.03.
    for model in ("standard", "mountain"):
        ratio = inspired_po2(0.21, barometric_pressure(3050.0, model=model)) / inspired_po2(
            0.21, 760.0
        )
        assert abs(float(ratio) - 0.69) <= 0.03


# --- input matrix ---------------------------------------------------------------------


def test_scalar_array_broadcast_nan():
    assert np.ndim(barometric_pressure(1000.0)) == 0
    h = np.array([[0.0], [1000.0], [2000.0]])
    assert barometric_pressure(h).shape == (3, 1)
    grid = inspired_po2(np.array([0.21, 0.5]), barometric_pressure(h))
    assert grid.shape == (3, 2)
    assert grid[2, 1] == pytest.approx(float(inspired_po2(0.5, barometric_pressure(2000.0))))
    out = barometric_pressure(np.array([0.0, np.nan]))
    assert np.isnan(out[1]) and np.isfinite(out[0])
    out = water_vapour_pressure(np.array([37.0, np.nan]))
    assert np.isnan(out[1]) and np.isfinite(out[0])
    assert np.isnan(float(inspired_po2(np.nan, 760.0)))


# --- units ----------------------------------------------------------------------------


def test_pressure_units():
    # 760 mmHg = 101.325 kPa (definition of the standard atmosphere).
    assert float(mmhg_to_kpa(760.0)) == pytest.approx(101.325, rel=1e-6)
    assert float(kpa_to_mmhg(101.325)) == pytest.approx(760.0, rel=1e-6)
    x = np.array([1.0, 40.0, 760.0])
    np.testing.assert_allclose(kpa_to_mmhg(mmhg_to_kpa(x)), x, rtol=1e-12)


def test_hb_units():
    # 1 g/dL = 10 g/L; Hb monomer 16 114.5 g/mol (a quarter of the 64 458 g/mol tetramer,
    # common practice): 15 g/dL = 9.309 mmol/L. Tolerance 0.001: rounding of the hand value.
    assert float(hb_g_dl_to_g_l(15.0)) == pytest.approx(150.0, rel=1e-12)
    assert float(hb_g_l_to_g_dl(150.0)) == pytest.approx(15.0, rel=1e-12)
    assert abs(float(hb_g_dl_to_mmol_l(15.0)) - 9.309) <= 1e-3
    x = np.array([5.0, 15.0])
    np.testing.assert_allclose(hb_mmol_l_to_g_dl(hb_g_dl_to_mmol_l(x)), x, rtol=1e-12)
