"""Acclimatization model: field data of lowlanders at altitude, inputs, invariants."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import barometric_pressure, inspired_po2
from o2transit.model.acclimatization import (
    VENTILATION_SD_MMHG,
    acclimatization_step,
    acclimatized_paco2,
    acute_paco2,
    baseline_state,
    dpg_p50_ratio,
    dpg_target,
    equivalent_altitude,
    fio2_from_flow,
    haemoglobin,
    hb_mass_ceiling,
    hb_mass_growth_per_day,
    high_point_paco2,
    person_offset_weight,
    ph_henderson_hasselbalch,
    plasma_volume_slow_target,
    plasma_volume_target,
    respiratory_exchange_ratio,
)
from o2transit.model.dissociation import p50
from properties import budget
from scipy.optimize import brentq


def pio2_at(h, fio2=0.2093):
    return inspired_po2(fio2, barometric_pressure(h, model="mountain"))


def stay(h, nights, state=None):
    """States after each of ``nights`` nights at altitude ``h`` (mountain pressure model)."""
    state = baseline_state() if state is None else state
    out = []
    for _ in range(nights):
        state = acclimatization_step(state, pio2_at(h), h)
        out.append(state)
    return out


# (a) published values


def test_acclimatized_paco2_through_its_data_points():
    # Wachsmuth et al., Br J Sports Med 2013;47(Suppl 1):i93-9 (ISA3600): 30.7 mmHg after
    # 12-16 d at 3600 m; Grocott et al., NEJM 2009;360:140-9: 13.3 mmHg at 8400 m. The
    # regression is fitted through them, so only rounding of the inputs is allowed (0.05).
    assert float(acclimatized_paco2(94.6)) == pytest.approx(30.7, abs=0.05)
    assert float(acclimatized_paco2(47.1)) == pytest.approx(13.3, abs=0.05)
    assert float(acclimatized_paco2(149.1)) == pytest.approx(40.0, abs=0.01)


def test_isa3600_paco2_time_course():
    # ISA3600 resting PaCO2 at 3600 m: 35.8 (day 3), 32.4 (days 5-7), 30.7 (days 12-16) mmHg.
    # Our nights count t = day - 1 (the 3.4-day fit), so day 3 is night 2. Tolerance 1.5 mmHg:
    # the spread of the field means between neighbouring days.
    s = stay(3600.0, 15)
    assert float(s[1].paco2_mmhg) == pytest.approx(35.8, abs=1.5)
    for night in (4, 5, 6):
        assert float(s[night - 1].paco2_mmhg) == pytest.approx(32.4, abs=1.5)
    for night in (11, 12, 13, 14, 15):
        assert float(s[night - 1].paco2_mmhg) == pytest.approx(30.7, abs=1.5)


def test_isa3600_acute_paco2_after_two_hours():
    # ISA3600: 39.1 mmHg after 2 h at 3600 m; the acute slope is our uncertain choice and
    # gives 38.4, so the tolerance is 1.5 mmHg.
    assert float(acute_paco2(pio2_at(3600.0))) == pytest.approx(39.1, abs=1.5)


def test_isa3600_renal_compensation():
    # ISA3600 days 12-16: HCO3 20.1 mmol/L, and pH 7.429 by Henderson-Hasselbalch (pK 6.1,
    # s 0.0307) from their HCO3 and PaCO2. Tolerance 1 mmol/L and 0.03 (slope 0.5 against the
    # measured 0.52, and the PaCO2 difference above).
    s = stay(3600.0, 13)[-1]
    assert float(s.hco3_mmol_l) == pytest.approx(20.1, abs=1.0)
    assert float(s.ph) == pytest.approx(7.429, abs=0.03)


def test_henderson_hasselbalch_reproduces_isa3600_ph():
    # pH computed from the ISA3600 table (HCO3 20.1, PaCO2 30.7 -> 7.429; 24.8, 39.7 -> 7.409).
    assert float(ph_henderson_hasselbalch(20.1, 30.7)) == pytest.approx(7.429, abs=0.001)
    assert float(ph_henderson_hasselbalch(24.8, 39.7)) == pytest.approx(7.409, abs=0.001)


def test_dpg_mairbaurl_1993():
    # Mairbaeurl et al., J Appl Physiol 1993;74:40-8, 4559 m: 2,3-DPG +28 %; 79 % of the
    # change within 22 h. Target: exact by construction (0.5 points for the pressure
    # model); time course: 3 points.
    x = pio2_at(4559.0)
    assert float(dpg_target(x) / 5.0 - 1.0) == pytest.approx(0.28, abs=0.005)
    s = acclimatization_step(baseline_state(), x, 4559.0, dt_days=22.0 / 24.0)
    assert float((s.dpg_mmol_l - 5.0) / (dpg_target(x) - 5.0)) == pytest.approx(0.79, abs=0.03)


def test_plasma_volume_and_hb_beidleman_2017():
    # Beidleman et al., Am J Physiol Regul Integr Comp Physiol 2017;312:R265-72: after day 1 at
    # 2500 m PV -6 %, Hb +0.5 g/dL; per further 500 m PV -1 %, Hb +0.1. At 4300 m: PV -9.6 %,
    # Hb +0.86. Our Hb follows from PV and an assumed haematocrit 0.44: 0.1 g/dL tolerance.
    assert float(plasma_volume_target(4300.0)) == pytest.approx(-0.096, abs=1e-9)
    for h, d_hb in ((2500.0, 0.5), (4300.0, 0.86)):
        assert float(haemoglobin(15.0, 1.0, plasma_volume_target(h))) - 15.0 == pytest.approx(
            d_hb, abs=0.1
        )


@pytest.mark.parametrize(
    ("h", "days", "measured", "source"),
    [
        (3600.0, 12, 0.030, "Wachsmuth 2013 ISA3600, +3.0 % by day 12"),
        (5260.0, 7, 0.037, "Ryan 2014 PLoS One 9:e108788, +3.7 % day 7"),
        (5260.0, 16, 0.076, "Ryan 2014, +7.6 % day 16"),
        (3454.0, 28, 0.0526, "Siebenmann 2015 J Appl Physiol 119:1194, +5.26 % at 28 d"),
    ],
)
def test_hb_mass_field_data(h, days, measured, source):
    # Tolerance 2 points: the between-subject SD in these studies is about 3 points.
    s = stay(h, days)[-1]
    assert float(s.hb_mass_ratio - 1.0) == pytest.approx(measured, abs=0.02), source


def test_trek_regression_values():
    # Regression (not field data): the trek of acclimatization.md section 9 check 10 (nights
    # 1400 ... 5160 m), recomputed for the issue-15 refit (acute floor 25,
    # the arrival offset of high_point_paco2, renal slope 0.46, slow plasma-volume
    # contraction, Hb-mass onset and ceiling) by a separate scalar re-implementation of the
    # same equations in plain math (no o2transit import), which gives PaCO2 25.53, pH
    # 7.455, Hb 17.22. Before the refit the values were 25.8, 7.440, 16.19. Tolerances as
    # before.
    s = baseline_state()
    for h in (1400, 2850, 3440, 3440, 3860, 4240, 4240, 4910, 5160):
        s = acclimatization_step(s, pio2_at(float(h)), float(h))
    assert float(s.paco2_mmhg) == pytest.approx(25.53, abs=0.05)
    assert float(s.ph) == pytest.approx(7.455, abs=0.005)
    assert float(s.hb_g_dl) == pytest.approx(17.22, abs=0.05)


def test_equivalent_altitude_worked_values():
    # Computed values (acclimatization.md section 7): FiO2 0.25 at 5000 m is 3717 m on air
    # (mountain model) and 3793 m (standard atmosphere); 1 m for the water-vapour rounding.
    assert float(equivalent_altitude(5000.0, 0.25, pressure_model="mountain")) == pytest.approx(
        3717.0, abs=1.0
    )
    assert float(equivalent_altitude(5000.0, 0.25)) == pytest.approx(3793.0, abs=1.0)


def test_fio2_from_flow_common_practice():
    # Common practice, no single source: about 4 % per L/min on top of 21 %.
    np.testing.assert_allclose(fio2_from_flow([0.0, 1.0, 2.0, 6.0]), [0.21, 0.25, 0.29, 0.45])
    assert float(fio2_from_flow(2.0, per_litre=0.03)) == pytest.approx(0.27)
    assert float(fio2_from_flow(40.0)) == 1.0


def test_dpg_p50_relation_fit_points():
    # Fit set of the saturating 2,3-DPG -> standard P50 relation. Operation Everest II
    # (Wagner et al., High Alt Med Biol 2007;8:32-42; read in an abstract): DPG 1.7 -> 3.8
    # mmol/L at PB 282 mmHg with standard P50 28.2 -> 33.1 mmHg. Stored blood depleted of
    # DPG: about 18 mmHg against 26.86 (from memory). Both are fitted, so 0.002.
    assert float(dpg_p50_ratio(5.0 * 3.8 / 1.7)) == pytest.approx(33.1 / 28.2, abs=0.002)
    assert float(dpg_p50_ratio(0.0)) == pytest.approx(18.0 / 26.86, abs=0.002)
    assert float(dpg_p50_ratio(5.0)) == pytest.approx(1.0, abs=1e-12)
    # and the DPG target reaches the chamber's x 2.24 at PB 282 (PIO2 0.2093 (282 - 47))
    assert float(dpg_target(0.2093 * (282.0 - 47.0)) / 5.0) == pytest.approx(3.8 / 1.7, abs=0.01)


def test_dpg_p50_relation_saturates():
    # Not linear: each further mmol/L of DPG moves P50 less (the complaint was a
    # linear, steep term: +8 % at 3600 m). Our relation gives +2.6 % at the 3600 m target.
    d = np.linspace(0.0, 15.0, 61)
    r = dpg_p50_ratio(d)
    assert np.all(np.diff(r) > 0) and np.all(np.diff(r, 2) < 0)
    rise_3600 = float(dpg_p50_ratio(dpg_target(pio2_at(3600.0)))) - 1.0
    assert 0.0 < rise_3600 < 0.04


def _chamber(pbs):
    """States of a chamber ascent, one night per barometric pressure [mmHg]: the inspired
    PO2 of dry air at that PB, and the mountain-model altitude of that PB for blood volume."""
    s, out = baseline_state(), []
    for pb in pbs:
        h = brentq(lambda a, p=pb: float(barometric_pressure(a, model="mountain")) - p, -500, 11000)
        s = acclimatization_step(s, 0.2093 * (pb - 47.0), h)
        out.append((pb, s))
    return out


def _in_vivo_p50(state):
    standard = 26.86 * float(dpg_p50_ratio(state.dpg_mmol_l))
    return float(p50(ph=state.ph, pco2_mmhg=state.paco2_mmhg, p50_mmhg=standard))


@pytest.mark.parametrize("profile", ["linear", "held"])
def test_oeii_in_vivo_p50(profile):
    # Check set (not fitted): Operation Everest II measured an in-vivo P50 of 26-27 mmHg
    # throughout the chamber ascent (Wagner et al. 2007, abstract read): the alkalosis offset
    # the DPG rise. The chamber's day-by-day profile was not read; two reconstructions (from
    # memory; the abstract says 42 days): PB falling linearly in standard-atmosphere
    # altitude from day 3 to the summit on day 38, and 8 days to PB 429 held for 6 nights,
    # 6 more to PB 347 held for 6. Every night at PB 429 and 347 (within 5 mmHg) must lie in
    # 26-27 mmHg, the published range itself.
    if profile == "linear":
        alts = [0.0, 0.0, *np.linspace(0.0, 8848.0, 36)]
        pbs = [float(barometric_pressure(h)) for h in alts]
    else:
        pbs = [760.0] * 2 + list(np.linspace(760, 429, 8)) + [429.0] * 6
        pbs += list(np.linspace(429, 347, 6)) + [347.0] * 6
    checked = 0
    for pb, state in _chamber(pbs):
        if min(abs(pb - 429.0), abs(pb - 347.0)) <= 5.0:
            assert 26.0 <= _in_vivo_p50(state) <= 27.0, (profile, pb)
            checked += 1
    assert checked >= 2


def test_summit_paco2_ph_and_r():
    # The summit of Everest as a day's high point from a 7900 m camp after weeks of an
    # expedition (invented schedule). West et al. 1983 (read): alveolar PCO2 7.5 mmHg, which
    # fixes the end of the acclimatized curve, so the arrival here checks the high-point
    # path (within 1 mmHg); pH above 7.7 (West 1984, from memory) and the exchange ratio 0.9
    # the alveolar samples imply (alveolar PO2 about 35, from memory).
    nights = [2800, 3400, 3400, 3900, 4300, 4300, 4900, 5300] + [5300] * 10
    nights += [6000, 6400, 6400, 5300, 5300, 5300, 6400, 7100, 7100, 7900]
    s = baseline_state()
    for h in nights:
        s = acclimatization_step(s, pio2_at(float(h)), float(h))
    summit = float(high_point_paco2(pio2_at(8848.0), pio2_at(7900.0), s.ventilation_offset_mmhg))
    assert summit == pytest.approx(7.5, abs=1.0)
    hco3 = min(float(s.hco3_mmol_l), 24.0 + 0.2 * (summit - 40.0))
    assert float(ph_henderson_hasselbalch(hco3, summit)) > 7.7
    assert float(respiratory_exchange_ratio(7.5)) == pytest.approx(0.9, abs=1e-9)
    assert float(respiratory_exchange_ratio(30.0)) == pytest.approx(0.8, abs=1e-12)


def test_extreme_altitude_ph_after_weeks():
    # Grocott et al. 2009 (read): arterial pH 7.45-7.65 at 8400 m in climbers after weeks;
    # renal compensation is incomplete there. Weeks at 5300-6400 m, then 7100 and 8400 m.
    nights = [2800, 3400, 3900, 4300, 4900, 5300] + [5300] * 14 + [6400] * 4 + [7100, 8400]
    s = baseline_state()
    for h in nights:
        s = acclimatization_step(s, pio2_at(float(h)), float(h))
    assert 7.45 <= float(s.ph) <= 7.65


def test_isa3600_hb_after_twelve_days():
    # ISA3600 (read): Hb 15.0 -> 17.3 g/dL after 12 days at 3600 m; the slow plasma-volume
    # contraction is fitted to it, so 0.2 g/dL (rounding of the fit).
    assert float(stay(3600.0, 12)[-1].hb_g_dl) == pytest.approx(17.3, abs=0.2)


def test_plasma_volume_keeps_falling_after_the_first_days():
    # Beidleman et al. 2017 (read): plasma volume keeps falling with time at altitude.
    pv = [float(s.plasma_volume_change) for s in stay(4000.0, 21)]
    assert pv[1] > pv[6] > pv[13] > pv[20]
    # after one night: each part one step of its own time constant (1 d and 7 d)
    first = float(plasma_volume_target(4000.0)) * (1 - np.exp(-1.0))
    first += float(plasma_volume_slow_target(4000.0)) * (1 - np.exp(-1.0 / 7.0))
    assert pv[0] == pytest.approx(first, rel=1e-9)
    assert float(plasma_volume_slow_target(1500.0)) == 0.0


def test_hb_mass_onset_and_plateau():
    # Siebenmann et al. 2015 (read): at 3454 m Hb-mass growth starts late (up to 12 d) and
    # plateaus after 20-24 d. Ours: the first days grow less than the full rate, and the
    # ceiling is reached between day 20 and day 26.
    masses = [float(s.hb_mass_ratio) for s in stay(3454.0, 30)]
    rate = float(hb_mass_growth_per_day(3454.0))
    assert masses[0] - 1.0 < 0.5 * rate
    top = 1.0 + float(hb_mass_ceiling(3454.0))
    reached = next(i + 1 for i, m in enumerate(masses) if m >= top - 1e-12)
    assert 20 <= reached <= 26
    assert masses[-1] == pytest.approx(top)


def test_band_sd_matches_sato_1994():
    # Fit set: Sato et al., J Appl Physiol 1994 (title and abstract read; volume and pages
    # from memory): six subjects at 3810 m, SpO2 86.2 +- 2.3 on day 2 and 91.0 +- 1.5 on day
    # 12. The abstract labels its first +- as SE, so these are read as SEs: between-person
    # SDs 2.3 sqrt(6) = 5.6 and 1.5 sqrt(6) = 3.7 points. One person offset of +-SD drives the
    # chain to about that spread; 0.3 points: a least-squares fit of two values with one
    # parameter.
    from o2transit.model.ascent import AscentDay, AscentProfile, forecast_points

    p = AscentProfile("3810", (AscentDay(3810.0),) * 12)
    s = 100.0 * forecast_points(
        p, [2, 12], [3810.0, 3810.0], [VENTILATION_SD_MMHG, -VENTILATION_SD_MMHG]
    )
    sd = (s[1] - s[0]) / 2.0
    n = 6
    assert sd[0] == pytest.approx(2.3 * n**0.5, abs=0.3)
    assert sd[1] == pytest.approx(1.5 * n**0.5, abs=0.3)


def test_dpg_p50_stored_blood_scott_2016():
    # Check set: Scott et al., Anesth Analg 2016;122:616-23 (abstract read): red cells stored
    # 24 +- 8 days had 2,3-DPG about 90 % lower and P50 about 30 % lower than fresh cells.
    # The relation is fitted to OEII and a from-memory P50 of DPG-free blood, not to this;
    # 0.03 for the abstract's "about".
    assert float(dpg_p50_ratio(0.1 * 5.0)) == pytest.approx(0.70, abs=0.03)


# (b) input matrix


def test_step_broadcasts_over_people_and_altitudes():
    h = np.array([0.0, 3000.0, 5000.0])
    s = baseline_state(np.array([40.0, 38.0, 42.0]), 15.0, 5.0)
    s2 = acclimatization_step(s, pio2_at(h), h, baseline_paco2_mmhg=np.array([40.0, 38.0, 42.0]))
    assert s2.paco2_mmhg.shape == (3,)
    assert float(s2.paco2_mmhg[0]) == pytest.approx(40.0)
    assert np.all(np.diff(s2.paco2_mmhg[1:]) < 0)


def test_hb_mass_growth_zero_below_threshold():
    assert float(hb_mass_growth_per_day(1500.0)) == 0.0
    assert float(hb_mass_growth_per_day(2650.0)) == pytest.approx(0.0013)


def test_person_offset_acts_only_in_hypoxia():
    # the ramp (0 at sea level, full from PIO2 100) times the acclimatized PaCO2 relative to
    # its value at 3810 m (PIO2 92): a fixed fraction of ventilation, not of mmHg
    w = person_offset_weight([160.0, 149.1, 124.55, 100.0, 92.0, 60.0])
    ratio = acclimatized_paco2(np.array([124.55, 100.0, 60.0])) / acclimatized_paco2(92.0)
    np.testing.assert_allclose(w, [0.0, 0.0, 0.5 * ratio[0], ratio[1], 1.0, ratio[2]])
    assert np.all(np.diff(person_offset_weight(np.linspace(45.0, 100.0, 50))) > 0)
    s0 = acclimatization_step(baseline_state(), pio2_at(0.0), 0.0, person_offset_mmhg=3.0)
    assert float(s0.paco2_mmhg) == pytest.approx(40.0)
    hi = acclimatization_step(baseline_state(), pio2_at(3810.0), 3810.0, person_offset_mmhg=3.0)
    lo = acclimatization_step(baseline_state(), pio2_at(3810.0), 3810.0)
    assert float(hi.paco2_mmhg - lo.paco2_mmhg) == pytest.approx(3.0, abs=0.01)


def test_acute_response_is_braked():
    # Our floor of 25 mmHg: an unacclimatized night at 9000 m cannot hyperventilate to the
    # PaCO2 of acclimatized climbers.
    assert float(acute_paco2(38.5)) == pytest.approx(25.0)
    assert float(acute_paco2(38.5, 30.0)) == pytest.approx(25.0 * 30.0 / 40.0)


# (c) invariants


@budget(60)
@given(st.floats(45.0, 150.0), st.floats(45.0, 150.0), st.floats(-12.0, 0.0))
def test_going_higher_never_raises_paco2(x_night, x_high, offset):
    lo, hi = min(x_night, x_high), max(x_night, x_high)
    s = max(offset, float(acclimatized_paco2(hi) - acute_paco2(hi)))
    here = float(high_point_paco2(hi, hi, s))
    higher = float(high_point_paco2(lo, hi, s))
    assert higher <= here + 1e-9
    assert higher >= float(acclimatized_paco2(lo)) - 1e-9


def test_sea_level_stays_at_baseline():
    for s in stay(0.0, 10):
        assert float(s.paco2_mmhg) == pytest.approx(40.0)
        assert float(s.hb_g_dl) == pytest.approx(15.0)
        assert float(s.dpg_mmol_l) == pytest.approx(5.0)
        assert float(s.cardiac_output_l_min) == pytest.approx(5.0)


def test_descent_returns_toward_baseline():
    up = stay(4500.0, 14)[-1]
    down = stay(0.0, 40, up)
    paco2 = np.array([float(s.paco2_mmhg) for s in down])
    assert np.all(np.diff(paco2) > 0) and paco2[-1] == pytest.approx(40.0, abs=0.1)
    assert float(down[2].dpg_mmol_l) == pytest.approx(5.0, abs=0.05)
    assert float(down[-1].hb_mass_ratio) < float(up.hb_mass_ratio)


@budget(60)
@given(st.floats(0.0, 8500.0), st.floats(0.21, 1.0))
def test_oxygen_lowers_equivalent_altitude(h, fio2):
    eq = float(equivalent_altitude(h, fio2))
    assert eq <= h + 1e-3
    assert float(equivalent_altitude(h, 0.2093)) == pytest.approx(h, abs=1e-3)


@budget(60)
@given(st.floats(40.0, 160.0), st.floats(40.0, 160.0))
def test_paco2_targets_monotonic_in_pio2(a, b):
    lo, hi = min(a, b), max(a, b)
    assert float(acclimatized_paco2(lo)) <= float(acclimatized_paco2(hi)) + 1e-12
    assert float(acute_paco2(lo)) <= float(acute_paco2(hi)) + 1e-12
    assert float(acclimatized_paco2(lo)) <= float(acute_paco2(lo))


def test_fit_check_table_names_tests_that_exist():
    # tests/data/acclimatization_fit_check.csv says, per published number, fit or check and
    # which test holds it: every row has all columns, and every named test exists.
    import csv
    from pathlib import Path

    here = Path(__file__).resolve().parent
    with open(here / "data" / "acclimatization_fit_check.csv", encoding="utf-8") as f:
        rows = list(csv.DictReader(line for line in f if not line.startswith("#")))
    assert rows and all(None not in r and all(v is not None for v in r.values()) for r in rows)
    assert {r["role"].split(" ")[0] for r in rows} == {"fit", "check"}
    source = "".join(p.read_text(encoding="utf-8") for p in here.glob("test_*.py"))
    for r in rows:
        for name in r["test"].replace(";", " ").split():
            if name.startswith("test_"):
                assert f"def {name}(" in source, (r["quantity"], name)
