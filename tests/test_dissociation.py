"""Tests for model.dissociation: published values, input matrix, invariants."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from hypothesis import example, given
from hypothesis import strategies as st
from o2transit.model import (
    CURVE_ALIASES,
    CURVES,
    NORMAL_DPG_MMOL_L,
    SHORT_NAMES,
    STANDARD_P50_MMHG,
    canonical_curve,
    p50,
    po2_from_saturation,
    saturation,
)
from properties import budget

DATA = Path(__file__).parent / "data"
FAST = budget(100)
# One name per curve model; aliases are tested separately.
MODELS = ("severinghaus1979", "dash2016", "siggaard_andersen1990", "hill1910")


def _read_csv(name):
    with open(DATA / name) as f:
        rows = [line for line in f if not line.startswith("#")]
    return list(csv.DictReader(rows))


# --- (a) published values -------------------------------------------------------------


def test_severinghaus_1979_table1():
    # Severinghaus 1979 Table 1 (standard curve, pH 7.40, 37 degC, PCO2 40). Tolerance
    # 0.0055 S: the paper states Eq 1 fits the standard curve within +-0.0055 S.
    rows = _read_csv("severinghaus1979_table1.csv")
    assert len(rows) == 51
    po2 = np.array([float(r["po2_mmhg"]) for r in rows])
    table = np.array([float(r["so2_percent"]) for r in rows]) / 100.0
    model = saturation(po2, curve="severinghaus")
    assert np.max(np.abs(model - table)) <= 0.0055
    # The paper (author's revision) gives a mean error of 0.0026; allow 0.003.
    assert np.mean(np.abs(model - table)) <= 0.003


@pytest.mark.parametrize("curve, tol", [("dash2016", 0.01), ("siggaard_andersen1990", 0.01)])
def test_other_curves_reproduce_table1(curve, tol):
    # Dash et al. 2016 and Siggaard-Andersen 1990 are independent fits of the same standard
    # human curve as Severinghaus 1979 Table 1; 0.01 S is about twice Severinghaus' own fit
    # error (common practice, no source).
    rows = _read_csv("severinghaus1979_table1.csv")
    po2 = np.array([float(r["po2_mmhg"]) for r in rows])
    table = np.array([float(r["so2_percent"]) for r in rows]) / 100.0
    assert np.max(np.abs(saturation(po2, curve=curve) - table)) <= tol


def test_hill_reproduces_table1_in_its_range():
    # Lykkeboe & Johansen 1978: human n = 2.7 holds for S 0.36-0.98; one n is a cruder fit,
    # so allow 0.015 S against Severinghaus 1979 Table 1 there (common practice, no source).
    rows = _read_csv("severinghaus1979_table1.csv")
    po2 = np.array([float(r["po2_mmhg"]) for r in rows])
    table = np.array([float(r["so2_percent"]) for r in rows]) / 100.0
    inside = (table >= 0.36) & (table <= 0.98)
    assert np.max(np.abs(saturation(po2[inside], curve="hill") - table[inside])) <= 0.015


@pytest.mark.parametrize(
    "po2, expected",
    # Severinghaus 1979 Eq 1 evaluated by hand at standard conditions (virtual PO2 = PO2).
    [(10.0, 0.09653), (26.8, 0.49859), (40.0, 0.74946), (60.0, 0.90580), (100.0, 0.97747)],
)
def test_severinghaus_eq1_values(po2, expected):
    # Tolerance 1e-5: the hand values are rounded to 5 decimals.
    assert abs(float(saturation(po2, curve="severinghaus1979")) - expected) <= 1e-5


def test_severinghaus_p50():
    # Root of Severinghaus 1979 Eq 1 (S = 0.5), computed: 26.857 mmHg; 0.001 covers rounding.
    assert abs(float(p50(curve="severinghaus")) - 26.857) <= 1e-3


@pytest.mark.parametrize(
    "so2, expected",
    # Ellis 1989 (J Appl Physiol 67:902) exact inverse of Severinghaus Eq 1, evaluated by hand.
    [(0.5, 26.857), (0.75, 40.040), (0.9, 58.655), (0.97, 90.573), (0.99, 131.94)],
)
def test_ellis_inverse_values(so2, expected):
    # Tolerance 0.001 mmHg (0.01 for the 2-decimal value): rounding of the hand values.
    tol = 0.01 if so2 == 0.99 else 0.001
    assert abs(float(po2_from_saturation(so2, curve="severinghaus")) - expected) <= tol


def test_ellis_inverse_round_trip_exact():
    # Ellis 1989: the Cardano root of Eq 1 is exact, so the round trip is limited only by
    # floating point (1e-9 is a generous bound, common practice).
    s = np.linspace(0.01, 0.99, 99)
    back = saturation(po2_from_saturation(s, curve="severinghaus"), curve="severinghaus")
    assert np.max(np.abs(back - s)) <= 1e-9


@pytest.mark.parametrize(
    "po2, expected",
    # Hill equation, n 2.7 (Lykkeboe & Johansen 1978), P50 26.8 (Dash et al. 2016 P50,S),
    # evaluated by hand.
    [(20.0, 0.31212), (40.0, 0.74674), (60.0, 0.89808), (100.0, 0.97222)],
)
def test_hill_values(po2, expected):
    # Tolerance 1e-5: hand values rounded to 5 decimals.
    assert abs(float(saturation(po2, curve="hill")) - expected) <= 1e-5


def test_hill_p50_is_26_8():
    # Standard-state P50 26.8 mmHg (Dash et al. 2016 P50,S), used by the Hill curve.
    assert abs(float(p50(curve="hill")) - 26.8) <= 1e-9


@pytest.mark.parametrize(
    "kwargs, expected",
    # Siggaard-Andersen & Siggaard-Andersen 1990 (Scand J Clin Lab Invest 50 Suppl 203),
    # tanh oxygen status algorithm, with the MetHb term of Siggaard-Andersen, Siggaard-
    # Andersen & Fogh-Andersen 1993 (Suppl 214); P50 computed by hand from the equations.
    [
        ({}, 26.840),
        ({"ph": 7.2}, 32.72),
        ({"ph": 7.6}, 21.98),
        ({"pco2_mmhg": 8.0 * 7.500615758}, 27.44),
        ({"dpg_mmol_l": 8.0}, 32.87),
        ({"dpg_mmol_l": 2.0}, 21.88),
        ({"methb_fraction": 0.1}, 24.80),
        ({"temperature_c": 39.0}, 29.96),
    ],
)
def test_tanh_1990_p50(kwargs, expected):
    # Tolerance 0.006 mmHg: hand values rounded to 0.01 mmHg (0.005) plus solver slack.
    got = float(p50(curve="siggaard_andersen1990", **kwargs))
    assert abs(got - expected) <= 0.006


def test_tanh_1990_standard_saturation():
    # Siggaard-Andersen 1990: s0 = 0.867 at p0 = 7 kPa by construction of the tanh equation.
    assert abs(float(saturation(7.0 * 7.500615758, curve="siggaard_andersen1990")) - 0.867) <= 1e-3


@pytest.mark.parametrize(
    "po2, expected",
    # Dash, Korman & Bassingthwaighte 2016 (Eur J Appl Physiol 116:97-113), Table 1 Hill
    # coefficient nH = 2.82 - 1.20 10^(-PO2/29.25), P50,S 26.8; evaluated by hand.
    [(20.0, 0.32026), (40.0, 0.75189), (100.0, 0.97617)],
)
def test_dash_2016_standard_state(po2, expected):
    # Tolerance 1e-5: hand values rounded to 5 decimals. (The authors' 2017 code, with
    # 2.8/1.2/29.2, gives 0.97555 at 100 mmHg, which this tolerance would reject.)
    assert abs(float(saturation(po2, curve="dash")) - expected) <= 1e-5


def _plasma_ph_from_rbc(ph_rbc):
    # Red-cell pH = 0.795 pHplasma + 1.357 (Siggaard-Andersen 1971, as used with Dash 2016).
    return (ph_rbc - 1.357) / 0.795


@pytest.mark.parametrize(
    "kwargs, expected",
    # Dash et al. 2016 Eq 9a-d and 10 (paper coefficients), P50 computed by hand.
    [
        ({"ph": _plasma_ph_from_rbc(7.04)}, 32.347),
        ({"ph": _plasma_ph_from_rbc(7.44)}, 22.105),
        ({"pco2_mmhg": 60.0}, 29.389),
        ({"pco2_mmhg": 20.0}, 24.297),
        # DPG 6.65 mM in the paper's units; the model scales its 5.0 mmol/L normal to 4.65 mM.
        ({"dpg_mmol_l": NORMAL_DPG_MMOL_L * 6.65 / 4.65}, 28.313),
        ({"temperature_c": 40.0}, 31.498),
        ({"temperature_c": 33.0}, 21.682),
    ],
)
def test_dash_2016_p50_shifts(kwargs, expected):
    # Tolerance 0.002 mmHg: hand values rounded to 0.001 mmHg plus solver slack.
    assert abs(float(p50(curve="dash", **kwargs)) - expected) <= 2e-3


def test_dash_standard_p50():
    # Dash et al. 2016: P50,S = 26.8 mmHg at the standard state.
    assert abs(float(p50(curve="dash")) - 26.8) <= 1e-6


def test_aliases_match_canonical_names():
    po2 = np.linspace(1.0, 200.0, 50)
    for alias, name in (
        ("severinghaus", "severinghaus1979"),
        ("dash", "dash2016"),
        ("hill", "hill1910"),
    ):
        np.testing.assert_array_equal(saturation(po2, curve=alias), saturation(po2, curve=name))


def test_curves_tuple_lists_all_models():
    assert set(MODELS) <= set(CURVES)


def test_one_alias_table_both_ways():
    # Short names and canonical names come from one table; every accepted name resolves.
    assert {v: k for k, v in SHORT_NAMES.items()} == CURVE_ALIASES
    assert set(CURVES) == set(CURVE_ALIASES) | set(STANDARD_P50_MMHG)
    for name in CURVES:
        assert canonical_curve(name) in STANDARD_P50_MMHG
    assert canonical_curve("hill") == "hill1910"
    with pytest.raises(ValueError, match="curve 'kelman' is unknown"):
        canonical_curve("kelman")


def test_kelman_virtual_po2_ph_shift_severinghaus():
    # Kelman 1966 virtual PO2: at pH 7.2 the PO2 maps to PO2 * 10^(0.40 * -0.2) on the
    # standard curve, so S(60; pH 7.2) = Eq1(60 * 10^-0.08). Exact identity, 1e-12.
    x = 60.0 * 10 ** (-0.08)
    eq1 = 1.0 / (23400.0 / (x**3 + 150.0 * x) + 1.0)
    assert abs(float(saturation(60.0, ph=7.2)) - eq1) <= 1e-12


# --- (b) input matrix -----------------------------------------------------------------


@pytest.mark.parametrize("curve", MODELS)
def test_scalar_in_scalar_out(curve):
    out = saturation(40.0, curve=curve)
    assert np.ndim(out) == 0
    assert 0.0 < float(out) < 1.0


@pytest.mark.parametrize("curve", MODELS)
def test_array_and_broadcasting(curve):
    po2 = np.linspace(5.0, 150.0, 7)
    out = saturation(po2, curve=curve)
    assert out.shape == (7,)
    grid = saturation(po2[:, None], ph=np.array([7.2, 7.4, 7.6]), curve=curve)
    assert grid.shape == (7, 3)
    for j, ph in enumerate((7.2, 7.4, 7.6)):
        np.testing.assert_allclose(grid[:, j], saturation(po2, ph=ph, curve=curve), rtol=1e-12)
    inv = po2_from_saturation(np.array([[0.3], [0.6]]), temperature_c=[36.0, 38.0], curve=curve)
    assert inv.shape == (2, 2)


@pytest.mark.parametrize("curve", MODELS)
def test_nan_propagates(curve):
    out = saturation(np.array([40.0, np.nan, 60.0]), curve=curve)
    assert np.isnan(out[1])
    assert np.all(np.isfinite(out[[0, 2]]))
    assert float(out[0]) == pytest.approx(float(saturation(40.0, curve=curve)), abs=1e-12)
    inv = po2_from_saturation(np.array([0.5, np.nan]), curve=curve)
    assert np.isnan(inv[1]) and np.isfinite(inv[0])


@pytest.mark.parametrize("curve", MODELS)
def test_nan_propagates_with_co(curve):
    out = saturation(np.array([40.0, np.nan]), cohb_fraction=0.1, curve=curve)
    assert np.isnan(out[1]) and np.isfinite(out[0])


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"po2_mmhg": -1.0}, "po2_mmhg"),
        ({"po2_mmhg": 40.0, "ph": 9.5}, "ph"),
        ({"po2_mmhg": 40.0, "pco2_mmhg": -5.0}, "pco2_mmhg"),
        ({"po2_mmhg": 40.0, "temperature_c": 80.0}, "temperature_c"),
        ({"po2_mmhg": 40.0, "dpg_mmol_l": -1.0}, "dpg_mmol_l"),
        ({"po2_mmhg": 40.0, "cohb_fraction": 1.5}, "cohb_fraction"),
        ({"po2_mmhg": 40.0, "methb_fraction": -0.1}, "methb_fraction"),
        ({"po2_mmhg": 40.0, "p50_mmhg": 0.0}, "p50_mmhg"),
    ],
)
def test_out_of_range_names_field(kwargs, field):
    po2 = kwargs.pop("po2_mmhg")
    with pytest.raises(ValueError, match=rf"\b{field} = "):
        saturation(po2, **kwargs)


@pytest.mark.parametrize("so2", [-0.1, 1.1])
def test_inverse_out_of_range_names_field(so2):
    with pytest.raises(ValueError, match="so2"):
        po2_from_saturation(so2)


def test_unknown_curve_raises():
    with pytest.raises(ValueError, match="curve"):
        saturation(40.0, curve="bohr1904")


def test_inverse_end_points():
    assert float(po2_from_saturation(0.0)) == 0.0
    assert np.isinf(float(po2_from_saturation(1.0)))
    assert float(saturation(0.0)) == 0.0


# --- (c) invariants -------------------------------------------------------------------

conditions = st.fixed_dictionaries(
    {
        "ph": st.floats(6.9, 7.8),
        "pco2_mmhg": st.floats(15.0, 90.0),
        "temperature_c": st.floats(30.0, 42.0),
        "dpg_mmol_l": st.floats(0.5, 10.0),
    }
)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(po2=st.lists(st.floats(0.0, 700.0), min_size=2, max_size=20), cond=conditions)
def test_saturation_bounded_and_non_decreasing(curve, po2, cond):
    p = np.sort(np.array(po2))
    s = saturation(p, curve=curve, **cond)
    assert np.all((s >= 0.0) & (s <= 1.0))
    assert np.all(np.diff(s) >= -1e-12)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(
    po2=st.lists(st.floats(0.0, 700.0), min_size=2, max_size=20),
    cohb=st.floats(0.0, 0.5),
    methb=st.floats(0.0, 0.3),
)
# Found by fuzzing: PO2 and COHb so small that d^2 in the Haldane Newton step underflowed
# to 0 and the saturation came out NaN (hill1910).
@example(po2=[1e-59, 1.0], cohb=4e-278, methb=0.0)
@example(po2=[5e-324, 1e-150], cohb=5e-324, methb=0.3)
def test_saturation_bounded_and_non_decreasing_with_co_methb(curve, po2, cohb, methb):
    p = np.sort(np.array(po2))
    s = saturation(p, cohb_fraction=cohb, methb_fraction=methb, curve=curve)
    assert np.all((s >= 0.0) & (s <= 1.0))
    assert np.all(np.diff(s) >= -1e-9)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(s=st.floats(0.01, 0.99), cond=conditions)
def test_inverse_round_trip(curve, s, cond):
    # Round trip to 1e-6 (brief); the inverse is exact or Newton-converged.
    p = po2_from_saturation(s, curve=curve, **cond)
    assert abs(float(saturation(p, curve=curve, **cond)) - s) <= 1e-6


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(s=st.floats(0.01, 0.99), cohb=st.floats(0.01, 0.5))
def test_inverse_round_trip_with_co(curve, s, cohb):
    p = po2_from_saturation(s, cohb_fraction=cohb, curve=curve)
    assert abs(float(saturation(p, cohb_fraction=cohb, curve=curve)) - s) <= 1e-6


def _p50(curve, **kw):
    return float(p50(curve=curve, **kw))


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(ph=st.floats(6.9, 7.7), dph=st.floats(0.02, 0.2))
def test_lower_ph_raises_p50(curve, ph, dph):
    # Bohr effect (Bohr, Hasselbalch & Krogh 1904, from memory): acid shifts the curve right.
    assert _p50(curve, ph=ph - dph) > _p50(curve, ph=ph)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(pco2=st.floats(15.0, 90.0), dp=st.floats(2.0, 30.0))
def test_higher_pco2_raises_p50(curve, pco2, dp):
    # CO2 at constant pH raises P50 in every model (Kelman 1966 +0.06 in log10 per log10 PCO2).
    assert _p50(curve, pco2_mmhg=pco2 + dp) > _p50(curve, pco2_mmhg=pco2)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(t=st.floats(30.0, 41.0), dt=st.floats(0.2, 3.0))
def test_higher_temperature_raises_p50(curve, t, dt):
    # Bradley, Severinghaus & Stupfel 1956: +0.024 log10 P50 per degC.
    assert _p50(curve, temperature_c=t + dt) > _p50(curve, temperature_c=t)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(dpg=st.floats(0.5, 9.0), dd=st.floats(0.2, 3.0))
def test_more_dpg_raises_p50(curve, dpg, dd):
    # Benesch & Benesch 1967 (from memory): 2,3-DPG lowers O2 affinity.
    assert _p50(curve, dpg_mmol_l=dpg + dd) > _p50(curve, dpg_mmol_l=dpg)


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(cohb=st.floats(0.02, 0.5))
def test_carbon_monoxide_lowers_p50(curve, cohb):
    # Haldane's first law with the tanh CO formulation (Siggaard-Andersen et al. 1993):
    # COHb shifts the remaining curve left.
    assert _p50(curve, cohb_fraction=cohb) < _p50(curve)


@pytest.mark.parametrize("curve", MODELS)
def test_fetal_p50_override(curve):
    # Fetal blood P50 ~19-20 mmHg (from memory); the override lowers P50 to ~20 at standard
    # conditions for every curve (the override *is* the standard-state P50).
    assert _p50(curve, p50_mmhg=20.0) < _p50(curve)
    assert abs(_p50(curve, p50_mmhg=20.0) - 20.0) <= 1e-6


@pytest.mark.parametrize("curve", MODELS)
@FAST
@given(ph=st.floats(7.0, 7.7))
def test_override_shifts_act_on_top(curve, ph):
    # With an overridden standard P50, the pH shift still acts: lower pH raises P50.
    assert _p50(curve, p50_mmhg=20.0, ph=ph - 0.1) > _p50(curve, p50_mmhg=20.0, ph=ph)
