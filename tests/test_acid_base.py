"""Tests for model.acid_base: Douglas 1988 CO2 content, Kelman pK', Zander base excess."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import solve_transport
from o2transit.model.acid_base import (
    base_excess,
    bicarbonate,
    blood_co2_content,
    co2_pk,
    co2_solubility,
    ph_from_base_excess,
)
from properties import budget

DATA = Path(__file__).parent / "data"
FAST = budget(100)


def _rows(name):
    with open(DATA / name) as f:
        return list(csv.DictReader(line for line in f if not line.startswith("#")))


@pytest.mark.parametrize(
    "row", _rows("douglas1988_co2_content.csv"), ids=lambda r: r["pco2_mmhg"] + "/" + r["so2"]
)
def test_douglas_1988_blood_co2_content(row):
    # Douglas, Jones & Reed 1988 (J Appl Physiol 65:473-477) whole-blood equation with
    # Kelman 1967 pK' and solubility, computed by hand. Tolerance 0.01 mL/dL: rounding of
    # the hand values to 3 decimals plus margin.
    got = float(
        blood_co2_content(
            float(row["pco2_mmhg"]), float(row["ph"]), float(row["so2"]), float(row["hb_g_dl"])
        )
    )
    assert abs(got - float(row["blood_ml_dl"])) <= 0.01


def test_douglas_haldane_red_cell_part():
    # Douglas 1988 at constant pH: SO2 0 vs 1 at PCO2 40, pH 7.40, Hb 15 differs by
    # 48.265 - 46.660 = 1.61 mL/dL (computed by hand; 0.01 rounding).
    d = float(blood_co2_content(40.0, 7.4, 0.0, 15.0) - blood_co2_content(40.0, 7.4, 1.0, 15.0))
    assert abs(d - 1.605) <= 0.01


@pytest.mark.parametrize(
    "ph, t, expected",
    # Kelman 1967 (Respir Physiol 3:111-115) pK', evaluated by hand; tolerance 1e-5 (rounding).
    [(7.40, 37.0, 6.09072), (7.20, 37.0, 6.09940), (7.40, 32.0, 6.11432), (7.40, 40.0, 6.07656)],
)
def test_kelman_pk(ph, t, expected):
    assert abs(float(co2_pk(ph, t)) - expected) <= 1e-5


@pytest.mark.parametrize(
    "t, expected",
    # Kelman 1967 CO2 solubility [mmol/L/mmHg], evaluated by hand; tolerance 1e-5 (rounding).
    [(32.0, 0.03405), (37.0, 0.03070), (39.0, 0.02964), (40.0, 0.02917), (42.0, 0.02835)],
)
def test_kelman_solubility(t, expected):
    assert abs(float(co2_solubility(t)) - expected) <= 1e-5


@pytest.mark.parametrize(
    "row",
    _rows("zander_ph_from_base_excess.csv"),
    ids=lambda r: r["pco2_mmhg"] + "/" + r["base_excess_mmol_l"],
)
def test_zander_ph_from_base_excess(row):
    # Van Slyke equation in Zander's form (compared in Lang & Zander 2002, Clin Chem Lab Med
    # 40:404-410), pH solved by hand (Brent) at Hb 15, SO2 1. Tolerance 0.001 (brief
    # tolerance; hand values rounded to 4 decimals).
    got = float(
        ph_from_base_excess(float(row["base_excess_mmol_l"]), float(row["pco2_mmhg"]), 15.0)
    )
    assert abs(got - float(row["ph"])) <= 1e-3


def test_zander_self_consistent_at_normal():
    # Zander form at pH 7.40, PCO2 40, Hb 15: HCO3 24.26 and BE +0.002 (computed by hand).
    assert abs(float(bicarbonate(7.40, 40.0)) - 24.26) <= 0.005
    assert abs(float(base_excess(7.40, 40.0, 15.0)) - 0.002) <= 0.001


def test_zander_oxygenation_term():
    # Zander: BE referred to full oxygenation subtracts 0.2 Hb (1 - SO2) mmol/L
    # (Lang & Zander 2002). Exact arithmetic.
    d = float(base_excess(7.40, 40.0, 15.0, so2=1.0) - base_excess(7.40, 40.0, 15.0, so2=0.5))
    assert d == pytest.approx(0.2 * 15.0 * 0.5, abs=1e-12)


@FAST
@given(
    be=st.floats(-30.0, 25.0),
    pco2=st.floats(10.0, 120.0),
    hb=st.floats(3.0, 22.0),
    so2=st.floats(0.05, 1.0),
)
def test_ph_from_base_excess_round_trip(be, pco2, hb, so2):
    ph = float(ph_from_base_excess(be, pco2, hb, so2))
    assert 6.0 < ph < 8.6
    assert abs(float(base_excess(ph, pco2, hb, so2)) - be) <= 1e-8


@FAST
@given(
    ph=st.floats(7.0, 7.7),
    dph=st.floats(0.01, 0.2),
    pco2=st.floats(10.0, 120.0),
    hb=st.floats(3.0, 22.0),
)
def test_base_excess_rises_with_ph(ph, dph, pco2, hb):
    # Van Slyke: dBE/dpH = Z (ln10 HCO3 + beta) > 0 (Lang & Zander 2002, by differentiation).
    assert float(base_excess(ph + dph, pco2, hb)) > float(base_excess(ph, pco2, hb))


@FAST
@given(
    pco2=st.floats(15.0, 90.0),
    dp=st.floats(1.0, 30.0),
    ph=st.floats(7.2, 7.6),
    so2=st.floats(0.0, 1.0),
)
def test_co2_content_rises_with_pco2(pco2, dp, ph, so2):
    # The CO2 dissociation curve rises with PCO2 at fixed pH (Douglas 1988).
    assert float(blood_co2_content(pco2 + dp, ph, so2, 15.0)) > float(
        blood_co2_content(pco2, ph, so2, 15.0)
    )


def test_input_matrix():
    out = blood_co2_content(np.array([[30.0], [40.0]]), np.array([7.3, 7.4, 7.5]), 0.97, 15.0)
    assert out.shape == (2, 3)
    assert out[1, 1] == pytest.approx(46.716, abs=0.01)
    out = ph_from_base_excess(np.array([0.0, np.nan]), 40.0, 15.0)
    assert np.isnan(out[1]) and abs(float(out[0]) - 7.4) <= 1e-3
    out = blood_co2_content(np.array([40.0, np.nan]), 7.4, 0.97, 15.0)
    assert np.isnan(out[1]) and np.isfinite(out[0])


# --- through the chain ----------------------------------------------------------------


def test_chain_base_excess_sets_ph():
    # With base_excess given, arterial pH lies on the Zander buffer line of that BE (referred
    # to full oxygenation) at the arterial PCO2 and SaO2 (Lang & Zander 2002).
    r = solve_transport(base_excess_mmol_l=-10.0, paco2_mmhg=30.0)
    expected = ph_from_base_excess(-10.0, 30.0, 15.0, float(r.arterial.so2))
    assert float(r.arterial.ph) == pytest.approx(float(expected), abs=1e-6)
    # Zander table (SO2 1): 7.3070; SaO2 ~0.97 moves it by < 0.002.
    assert abs(float(r.arterial.ph) - 7.3070) <= 0.003
    assert float(r.arterial.base_excess_mmol_l) == pytest.approx(-10.0, abs=1e-6)


def test_chain_co2_mass_balance():
    # Fick for CO2: CvCO2 - CaCO2 = RQ VO2 / (10 Q) = 0.8 x 250 / 50 = 4.0 mL/dL (exact).
    r = solve_transport(rq=0.8, vo2_ml_min=250.0, cardiac_output_l_min=5.0)
    d = float(r.venous.co2_content_ml_dl - r.arterial.co2_content_ml_dl)
    assert d == pytest.approx(4.0, abs=1e-4)


def test_chain_arterial_co2_content_is_douglas():
    r = solve_transport()
    expected = blood_co2_content(r.arterial.pco2_mmhg, r.arterial.ph, r.arterial.so2, 15.0)
    assert float(r.arterial.co2_content_ml_dl) == pytest.approx(float(expected), abs=1e-6)


def test_chain_resting_venous_acid_base():
    # Resting mixed venous blood: PvCO2 a few mmHg above PaCO2 (physiological gap 2-5 mmHg,
    # review in Minerva Anestesiol 72:597-604, 2006) and pHv slightly below pHa (~7.36-7.37,
    # from memory). Ranges are common practice.
    r = solve_transport()
    gap = float(r.venous.pco2_mmhg - r.arterial.pco2_mmhg)
    assert 2.0 <= gap <= 7.0
    assert 7.33 <= float(r.venous.ph) <= 7.395
    assert float(r.venous.ph) < float(r.arterial.ph)


def test_chain_haldane_factor():
    # Loeppky, Luft & Fletcher 1983 (Respir Physiol 51:167-181): in vivo Haldane factor 0.28
    # +- 0.03 vol% CO2 per vol% HbO2. Full deoxygenation at constant PCO2 40 and BE:
    # Douglas content change with the Zander BE shift, divided by O2 capacity 1.34 x 15.
    # Accept 0.25-0.31 (the published mean +- 1 SD).
    hb = 15.0
    ph_ox = float(ph_from_base_excess(0.0, 40.0, hb, 1.0))
    ph_red = float(ph_from_base_excess(0.0, 40.0, hb, 0.0))
    dc = float(blood_co2_content(40.0, ph_red, 0.0, hb) - blood_co2_content(40.0, ph_ox, 1.0, hb))
    assert 0.25 <= dc / (1.34 * hb) <= 0.31
