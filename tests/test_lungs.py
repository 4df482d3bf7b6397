"""Tests for model.lungs: alveolar gas equation, Bohr integration, admixture."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import alveolar_po2, solve_transport
from o2transit.model.lungs import end_capillary_po2
from properties import budget

FAST = budget(100)


def test_alveolar_gas_reference_example():
    # Alveolar gas equation, full form (Fenn, Rahn & Otis 1946, Am J Physiol 146:637-653):
    # FiO2 0.21, PB 760, PH2O 47, PaCO2 36, R 0.8 -> 106.6 by hand (the usual worked example
    # rounds it to 107; the simple form would give 104.7). Tolerance 0.1 mmHg: the model's
    # PH2O at 37 degC is 47.12, not 47 (0.21 x 0.12 = 0.03).
    got = float(alveolar_po2(fio2=0.21, pb_mmhg=760.0, paco2_mmhg=36.0, rq=0.8))
    assert abs(got - 106.6) <= 0.1


@pytest.mark.parametrize(
    "pb, paco2, expected",
    # Full alveolar gas equation (Fenn, Rahn & Otis 1946), FiO2 0.21, PH2O 47, R 0.8,
    # computed by hand; PB from ICAO / West 1996; the PaCO2 inputs are illustrative.
    [
        (760.0, 40.0, 101.8),
        (526.0, 40.0, 52.7),
        (536.8, 30.0, 66.9),
        (405.4, 40.0, 27.4),
        (419.7, 25.0, 48.3),
    ],
)
def test_alveolar_gas_worked_table(pb, paco2, expected):
    # Tolerance 0.1 mmHg: hand values rounded to 0.1, PH2O 47 vs 47.12 moves PAO2 by 0.03.
    got = float(alveolar_po2(fio2=0.21, pb_mmhg=pb, paco2_mmhg=paco2, rq=0.8))
    assert abs(got - expected) <= 0.1


def test_alveolar_gas_pure_oxygen():
    # Full form with FiO2 1.0: PAO2 = PB - PH2O - PaCO2 = 760 - 47 - 40 = 673.0 (by hand).
    # Tolerance 0.15: PH2O 47.12 at 37 degC instead of 47.
    got = float(alveolar_po2(fio2=1.0, pb_mmhg=760.0, paco2_mmhg=40.0))
    assert abs(got - 673.0) <= 0.15


@FAST
@given(
    fio2=st.floats(0.1, 1.0),
    pb=st.floats(250.0, 800.0),
    paco2=st.floats(10.0, 60.0),
    rq=st.floats(0.7, 1.1),
)
def test_alveolar_gas_full_form(fio2, pb, paco2, rq):
    # The full form equals FiO2 (PB - PH2O) - PaCO2 (1 - FiO2 (1 - R)) / R (Fenn, Rahn &
    # Otis 1946, algebraic identity), with PH2O 47.12 at 37 degC (IAPWS-IF97, 0.1 %).
    expected = fio2 * (pb - 47.12) - paco2 * (1.0 - fio2 * (1.0 - rq)) / rq
    got = float(alveolar_po2(fio2=fio2, pb_mmhg=pb, paco2_mmhg=paco2, rq=rq))
    assert abs(got - expected) <= 0.06 * fio2 + 1e-9


def test_alveolar_input_matrix():
    out = alveolar_po2(
        fio2=np.array([0.21, 0.4, 1.0]), pb_mmhg=np.array([[760.0], [500.0]]), paco2_mmhg=40.0
    )
    assert out.shape == (2, 3)
    out = alveolar_po2(fio2=0.21, pb_mmhg=np.array([760.0, np.nan]), paco2_mmhg=40.0)
    assert np.isnan(out[1]) and np.isfinite(out[0])


@pytest.mark.parametrize(
    "pa, pv, t, expected",
    # Bohr (1909) integration of dPc/dt = DLO2 (PA - Pc) / (beta Vc), DLO2 30, Vc 75 mL
    # (Roughton & Forster 1957), Hb 15, k 1.34, Severinghaus 1979 curve; values computed by
    # hand with an independent integrator. The equation form is from memory.
    [
        (100.0, 40.0, 0.25, 99.4),
        (60.0, 35.0, 0.75, 59.4),
        (48.0, 30.0, 0.75, 44.9),
        (35.0, 21.0, 0.75, 29.8),
        (35.0, 21.0, 0.25, 24.7),
    ],
)
def test_bohr_integration(pa, pv, t, expected):
    # Tolerance 0.5 mmHg: independent integrators with different step rules.
    got = float(end_capillary_po2(pa, pv, 15.0, transit_time_s=t))
    assert abs(got - expected) <= 0.5


def test_bohr_equilibrates_within_1_mmhg_at_sea_level():
    # Same integration: at sea level (PA 100, Pv 40) the capillary comes within 1 mmHg of
    # PA by 0.24 s with DLO2 30 and by 0.48 s with DLO2 15 (computed by hand, +-0.03 s).
    assert 100.0 - float(end_capillary_po2(100.0, 40.0, 15.0, transit_time_s=0.27)) <= 1.0
    assert 100.0 - float(end_capillary_po2(100.0, 40.0, 15.0, transit_time_s=0.21)) > 1.0
    slow = {"diffusing_capacity_ml_min_mmhg": 15.0}
    assert 100.0 - float(end_capillary_po2(100.0, 40.0, 15.0, transit_time_s=0.51, **slow)) <= 1.0
    assert 100.0 - float(end_capillary_po2(100.0, 40.0, 15.0, transit_time_s=0.45, **slow)) > 1.0


@FAST
@given(
    pa=st.floats(30.0, 600.0),
    frac=st.floats(0.1, 0.95),
    t=st.floats(0.05, 1.5),
    dl=st.floats(5.0, 100.0),
)
def test_bohr_bounded_and_monotone_in_diffusing_capacity(pa, frac, t, dl):
    pv = frac * pa
    pc = float(end_capillary_po2(pa, pv, 15.0, transit_time_s=t, diffusing_capacity_ml_min_mmhg=dl))
    assert pv - 1e-9 <= pc <= pa + 1e-9
    more = float(
        end_capillary_po2(pa, pv, 15.0, transit_time_s=t, diffusing_capacity_ml_min_mmhg=dl * 1.5)
    )
    assert more >= pc - 1e-9


# --- through the chain ------------------------------------------------------------------


def test_chain_alveolar_equals_equation():
    r = solve_transport(pressure_model="standard")  # PB 760 exactly
    expected = alveolar_po2(fio2=0.21, pb_mmhg=760.0, paco2_mmhg=40.0, rq=0.8)
    assert float(r.alveolar_po2_mmhg) == pytest.approx(float(expected), abs=1e-9)
    assert float(r.aa_gradient_mmhg) == pytest.approx(
        float(r.alveolar_po2_mmhg - r.arterial.po2_mmhg), abs=1e-6
    )


def test_chain_transit_time():
    # Capillary transit time = Vc / capillary flow (Roughton & Forster 1957), the capillary
    # flow being the non-shunted part of the cardiac output: 75 mL / (5000/60 mL/s) = 0.9 s
    # with no shunt, 0.9 / 0.98 with shunt 0.02. Exact arithmetic.
    r = solve_transport(cardiac_output_l_min=5.0, capillary_volume_ml=75.0, shunt_fraction=0.0)
    assert float(r.capillary_transit_time_s) == pytest.approx(0.9, rel=1e-9)
    r = solve_transport(cardiac_output_l_min=5.0, capillary_volume_ml=75.0, shunt_fraction=0.02)
    assert float(r.capillary_transit_time_s) == pytest.approx(0.9 / 0.98, rel=1e-9)


def test_chain_no_shunt_equilibrates_at_sea_level():
    # At rest at sea level diffusion equilibrates well within the transit time, so with no
    # shunt PaO2 is within 1 mmHg of PAO2 (textbook physiology, from memory).
    r = solve_transport(shunt_fraction=0.0)
    assert float(r.alveolar_po2_mmhg - r.end_capillary_po2_mmhg) <= 1.0
    assert float(r.aa_gradient_mmhg) <= 1.0


def test_chain_summit_diffusion_limited():
    # Near the summit the end-capillary PO2 stays several mmHg below PAO2 at rest
    # (Bohr integration above, 5 mmHg gap; West 1983 expedition findings, from memory).
    sea = solve_transport(shunt_fraction=0.0)
    top = solve_transport(
        altitude_m=8848.0, pressure_model="mountain", paco2_mmhg=10.0, shunt_fraction=0.0
    )
    gap_sea = float(sea.alveolar_po2_mmhg - sea.end_capillary_po2_mmhg)
    gap_top = float(top.alveolar_po2_mmhg - top.end_capillary_po2_mmhg)
    assert gap_top > gap_sea + 1.0


@budget(60)
@given(
    qs=st.lists(st.floats(0.0, 0.35), min_size=2, max_size=12),
    altitude=st.floats(0.0, 3000.0),
    fio2=st.floats(0.21, 1.0),
)
def test_more_shunt_never_raises_pao2(qs, altitude, fio2):
    # Berggren 1942 shunt equation: admixing more venous blood cannot raise arterial content
    # or PO2. Evaluated as one broadcast call over sorted shunt fractions.
    q = np.sort(np.array(qs))
    r = solve_transport(shunt_fraction=q, altitude_m=altitude, fio2=fio2)
    assert r.arterial.po2_mmhg.shape == q.shape
    assert np.all(np.diff(r.arterial.po2_mmhg) <= 1e-6)
    assert np.all(np.diff(r.arterial.o2_content_ml_dl) <= 1e-9)
