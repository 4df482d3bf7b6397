"""Tests for model.transport.solve_transport: the whole chain, air to venous blood."""

from __future__ import annotations

import dataclasses
import inspect
import json
from unittest import mock

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st
from o2transit.model import (
    CASE_INPUTS,
    CURVES,
    HUFNER_ML_G,
    INPUT_CHOICES,
    INPUT_LIMITS,
    O2_SOLUBILITY_ML_DL_MMHG,
    PRESSURE_MODELS,
    barometric_pressure,
    body_surface_area,
    extraction_ratio,
    inspired_po2,
    oxygen_content,
    oxygen_delivery,
    saturation,
    solve_transport,
    transport,
    venous_content_fick,
    vo2_at_temperature,
)
from o2transit.model.limits import MAX_COHB_PLUS_METHB
from properties import budget

FAST = budget(60)
SOLVER_KEYS = set(inspect.signature(solve_transport).parameters)


@pytest.fixture(scope="module")
def rest():
    return solve_transport()


# --- (d) textbook ranges for a healthy adult at rest at sea level ------------------------


def test_resting_delivery(rest):
    # DO2 ~1000 mL/min at rest (Hb 15, Q 5 L/min); +-15 % is common practice, no source.
    assert 850.0 <= float(rest.do2_ml_min) <= 1150.0


def test_resting_venous_point(rest):
    # Mixed venous SvO2 0.70-0.80, PvO2 35-45 mmHg, O2ER 0.2-0.3 at rest: common textbook
    # ranges (common practice, no source).
    assert 0.70 <= float(rest.venous.so2) <= 0.80
    assert 35.0 <= float(rest.venous.po2_mmhg) <= 45.0
    assert 0.20 <= float(rest.extraction_ratio) <= 0.30


def test_resting_arterial_point(rest):
    # PaO2 80-100 mmHg, SaO2 0.95-0.99 and A-a gradient below ~15 mmHg in healthy young
    # adults breathing air at sea level (common practice, no source).
    assert 80.0 <= float(rest.arterial.po2_mmhg) <= 100.0
    assert 0.95 <= float(rest.arterial.so2) <= 0.99
    assert 0.0 <= float(rest.aa_gradient_mmhg) <= 15.0


def test_resting_venous_point_regression(rest):
    # The Fick / Douglas / Zander recipe computed by hand for the same inputs gives SvO2
    # 0.733, PvO2 39.9, PvCO2 44.91, pHv 7.378 at PaO2 95; our PaO2 comes out of the
    # chain (~96), so allow 0.01 / 1 mmHg / 0.3 mmHg / 0.003 (regression, not physiology).
    assert abs(float(rest.venous.so2) - 0.733) <= 0.01
    assert abs(float(rest.venous.po2_mmhg) - 39.9) <= 1.0
    assert abs(float(rest.venous.pco2_mmhg) - 44.91) <= 0.3
    assert abs(float(rest.venous.ph) - 7.378) <= 0.003


# --- Fick and content arithmetic -----------------------------------------------------------


def test_fick_arithmetic(rest):
    # Fick principle: VO2 = Q (CaO2 - CvO2) x 10; DO2 = Q CaO2 x 10; O2ER = VO2 / DO2.
    ca, cv = float(rest.arterial.o2_content_ml_dl), float(rest.venous.o2_content_ml_dl)
    q = float(rest.cardiac_output_l_min)
    assert q * (ca - cv) * 10.0 == pytest.approx(float(rest.vo2_ml_min), rel=1e-9)
    assert float(rest.do2_ml_min) == pytest.approx(q * ca * 10.0, rel=1e-12)
    assert float(rest.extraction_ratio) == pytest.approx(
        float(rest.vo2_ml_min / rest.do2_ml_min), rel=1e-9
    )
    assert float(rest.o2_extracted_ml_per_l) == pytest.approx(10.0 * (ca - cv), rel=1e-9)


def test_contents_consistent_with_curve(rest):
    for side, cond in (
        (rest.arterial, rest.arterial_conditions),
        (rest.venous, rest.venous_conditions),
    ):
        s = float(saturation(side.po2_mmhg, **cond))
        assert s == pytest.approx(float(side.so2), abs=1e-9)
        c = float(oxygen_content(15.0, side.so2, side.po2_mmhg))
        assert c == pytest.approx(float(side.o2_content_ml_dl), abs=1e-6)


def test_shunt_mixing_by_content(rest):
    # Berggren 1942: CaO2 = (1 - Qs) CcO2 + Qs CvO2 (blood mixes by content).
    qs = float(rest.shunt_fraction)
    mixed = (1 - qs) * float(rest.end_capillary_o2_content_ml_dl) + qs * float(
        rest.venous.o2_content_ml_dl
    )
    assert float(rest.arterial.o2_content_ml_dl) == pytest.approx(mixed, abs=1e-6)


def test_venous_shift_gain_definition(rest):
    # Contract: extra O2 per litre unloaded because the venous curve is right-shifted, at
    # the venous PO2: 10 k Hb [S_art(PvO2) - S_ven(PvO2)].
    pv = rest.venous.po2_mmhg
    ds = float(
        saturation(pv, **rest.arterial_conditions) - saturation(pv, **rest.venous_conditions)
    )
    assert float(rest.venous_shift_gain_ml_per_l) == pytest.approx(10 * 1.34 * 15.0 * ds, rel=1e-6)
    # Venous blood is more acid and hypercapnic, so the shift helps unloading (Bohr effect).
    assert float(rest.venous_shift_gain_ml_per_l) > 0.0
    assert float(rest.venous.p50_mmhg) > float(rest.arterial.p50_mmhg)


def test_circulation_arithmetic():
    # DO2 = Q x CaO2 x 10: 5 L/min x 20 mL/dL = 1000 mL/min (definition, exact).
    assert float(oxygen_delivery(5.0, 20.0)) == pytest.approx(1000.0, rel=1e-12)
    # Fick, computed by hand (k 1.34, Hb 15, SaO2 0.98, PaO2 95, Q 5, VO2 250): CaO2 19.98,
    # CvO2 14.98, O2ER 0.250 (rounding of the hand values).
    assert abs(float(venous_content_fick(19.98, 250.0, 5.0)) - 14.98) <= 1e-9
    assert abs(float(extraction_ratio(19.98, 14.98)) - 0.2502) <= 1e-4
    # VO2 x 1.10 per degC (the model's documented factor; 10-13 %/degC is common practice,
    # from memory): 250 x 1.1^2 = 302.5 (exact).
    assert float(vo2_at_temperature(250.0, 39.0)) == pytest.approx(302.5, rel=1e-12)


@pytest.mark.parametrize(
    "height, weight, expected",
    # Mosteller 1987 (N Engl J Med 317:1098), sqrt(H W / 3600), computed by hand.
    [(170.0, 70.0, 1.8181), (180.0, 80.0, 2.0000), (160.0, 60.0, 1.6330)],
)
def test_body_surface_area(height, weight, expected):
    # Tolerance 1e-4: rounding of the hand values.
    assert abs(float(body_surface_area(height, weight)) - expected) <= 1e-4


# --- result object -------------------------------------------------------------------------


def test_result_frozen_and_json_ready(rest):
    with pytest.raises(dataclasses.FrozenInstanceError):
        rest.do2_ml_min = 0.0
    d = rest.to_dict()
    text = json.dumps(d)
    back = json.loads(text)
    assert back["arterial"]["po2_mmhg"] == pytest.approx(float(rest.arterial.po2_mmhg))
    assert isinstance(d["do2_ml_min"], float)
    assert isinstance(d["venous"]["so2"], float)
    arr = solve_transport(altitude_m=np.array([0.0, 1000.0])).to_dict()
    assert json.loads(json.dumps(arr))["arterial"]["po2_mmhg"][1] < arr["arterial"]["po2_mmhg"][0]


def test_scalar_fields_are_0d_arrays(rest):
    for f in dataclasses.fields(rest):
        v = getattr(rest, f.name)
        if isinstance(v, np.ndarray):
            assert v.shape == (), f.name
    assert isinstance(rest.arterial.po2_mmhg, np.ndarray) and rest.arterial.po2_mmhg.shape == ()


# --- (b) input matrix ----------------------------------------------------------------------


def test_array_input_matches_scalars():
    alt = np.array([0.0, 2000.0, 4000.0])
    r = solve_transport(altitude_m=alt)
    assert r.arterial.po2_mmhg.shape == (3,)
    assert r.venous.so2.shape == (3,)
    for i, h in enumerate(alt):
        one = solve_transport(altitude_m=h)
        assert float(r.arterial.po2_mmhg[i]) == pytest.approx(
            float(one.arterial.po2_mmhg), abs=1e-4
        )
        assert float(r.venous.po2_mmhg[i]) == pytest.approx(float(one.venous.po2_mmhg), abs=1e-4)


def test_broadcasting():
    r = solve_transport(altitude_m=np.array([[0.0], [3000.0]]), fio2=np.array([0.21, 0.3, 0.5]))
    assert r.arterial.po2_mmhg.shape == (2, 3)
    assert r.do2_ml_min.shape == (2, 3)
    one = solve_transport(altitude_m=3000.0, fio2=0.3)
    assert float(r.arterial.po2_mmhg[1, 1]) == pytest.approx(float(one.arterial.po2_mmhg), abs=1e-4)


def test_nan_propagates():
    r = solve_transport(hb_g_dl=np.array([15.0, np.nan]))
    assert np.isnan(r.arterial.o2_content_ml_dl[1])
    assert np.isnan(r.venous.po2_mmhg[1])
    assert np.isfinite(r.venous.po2_mmhg[0])
    assert float(r.venous.po2_mmhg[0]) == pytest.approx(
        float(solve_transport().venous.po2_mmhg), abs=1e-4
    )


_SOLVER_LIMITS = sorted(k for k in CASE_INPUTS if k in INPUT_LIMITS)
_SETTINGS = {"hufner_ml_g", "o2_solubility_ml_dl_mmhg", "tol", "max_iterations"}


def test_limits_cover_solver_inputs():
    numeric = {
        "altitude_m",
        "barometric_pressure_mmhg",
        "fio2",
        "paco2_mmhg",
        "rq",
        "shunt_fraction",
        "diffusing_capacity_ml_min_mmhg",
        "capillary_volume_ml",
        "hb_g_dl",
        "temperature_c",
        "ph",
        "base_excess_mmol_l",
        "dpg_mmol_l",
        "cohb_fraction",
        "methb_fraction",
        "p50_mmhg",
        "cardiac_output_l_min",
        "vo2_ml_min",
    }
    assert numeric <= set(_SOLVER_LIMITS)


def test_every_solver_keyword_is_a_case_input_or_a_setting():
    # A new keyword of solve_transport needs a range in INPUT_LIMITS or choices in
    # INPUT_CHOICES to count as a case input (scenario files, page address, case files).
    assert SOLVER_KEYS - _SETTINGS == set(CASE_INPUTS)
    assert set(CASE_INPUTS) == (set(INPUT_LIMITS) | set(INPUT_CHOICES)) & SOLVER_KEYS
    assert list(CASE_INPUTS) == [
        k for k in inspect.signature(solve_transport).parameters if k in CASE_INPUTS
    ]


@pytest.mark.parametrize("name", _SOLVER_LIMITS)
@pytest.mark.parametrize("side", ["below", "above"])
def test_out_of_range_names_field(name, side):
    lo, hi, _, _ = INPUT_LIMITS[name]
    value = lo - max(abs(lo) * 0.5, 0.5) if side == "below" else hi + max(abs(hi) * 0.5, 0.5)
    with pytest.raises(ValueError, match=rf"\b{name} = "):
        solve_transport(**{name: value})


@pytest.mark.parametrize("name", ["fio2", "hb_g_dl", "altitude_m"])
def test_out_of_range_in_array_names_field(name):
    lo, hi, _, _ = INPUT_LIMITS[name]
    with pytest.raises(ValueError, match=rf"\b{name} = "):
        solve_transport(**{name: np.array([lo, hi + 1.0])})


def test_unknown_names_raise():
    with pytest.raises(ValueError, match="curve"):
        solve_transport(curve="nonsense")
    with pytest.raises(ValueError, match="pressure_model"):
        solve_transport(pressure_model="nonsense")


def test_both_ph_and_base_excess_raise():
    with pytest.raises(ValueError, match="ph"):
        solve_transport(ph=7.4, base_excess_mmol_l=0.0)


def test_impossible_cases_raise():
    # Summit air with normal PaCO2 leaves no alveolar O2 (alveolar gas equation).
    with pytest.raises(ValueError, match="alveolar"):
        solve_transport(altitude_m=8848.0, paco2_mmhg=40.0)
    # VO2 far above delivery: the venous content would be negative (Fick).
    with pytest.raises(ValueError, match="vo2_ml_min"):
        solve_transport(vo2_ml_min=3000.0, cardiac_output_l_min=1.0)


# --- (c) invariants through the chain ------------------------------------------------------


@FAST
@given(
    q=st.lists(st.floats(4.0, 15.0), min_size=2, max_size=10),
    vo2=st.floats(150.0, 300.0),
    hb=st.floats(10.0, 18.0),
    altitude=st.floats(0.0, 3000.0),
)
def test_more_cardiac_output_never_lowers_svo2(q, vo2, hb, altitude):
    # Fick: at fixed VO2 more flow means less extraction per litre, so SvO2 cannot fall.
    # (Domain kept where the delivery can supply the VO2.)
    qs = np.sort(np.array(q))
    r = solve_transport(cardiac_output_l_min=qs, vo2_ml_min=vo2, hb_g_dl=hb, altitude_m=altitude)
    assert np.all(np.diff(r.venous.so2) >= -1e-7)


@FAST
@given(h=st.lists(st.floats(0.0, 5000.0), min_size=2, max_size=10))
def test_pao2_falls_with_altitude(h):
    hs = np.unique(np.round(np.array(h)))
    r = solve_transport(altitude_m=hs)
    assert np.all(np.diff(r.arterial.po2_mmhg) < 0)
    assert np.all(np.diff(r.inspired_po2_mmhg) < 0)


@FAST
@given(hb=st.lists(st.floats(6.0, 20.0), min_size=2, max_size=10))
def test_delivery_rises_with_hb(hb):
    # DO2 is proportional to Hb at fixed Q and SaO2 (content equation).
    hs = np.unique(np.round(np.array(hb), 3))
    r = solve_transport(hb_g_dl=hs)
    assert np.all(np.diff(r.do2_ml_min) > 0)


def test_fetal_p50_raises_sao2_at_altitude():
    # A left-shifted curve (P50 20, fetal blood; from memory) loads more O2 at a low PAO2.
    base = solve_transport(altitude_m=5000.0, paco2_mmhg=25.0)
    left = solve_transport(altitude_m=5000.0, paco2_mmhg=25.0, p50_mmhg=20.0)
    assert float(left.arterial.so2) > float(base.arterial.so2)


def test_carbon_monoxide_lowers_content_and_pvo2():
    # COHb removes O2 capacity and left-shifts the curve: less CaO2 and lower PvO2 at the
    # same VO2 (Haldane's first law; Roughton & Darling 1944, from memory).
    base = solve_transport()
    co = solve_transport(cohb_fraction=0.25)
    assert float(co.arterial.o2_content_ml_dl) < float(base.arterial.o2_content_ml_dl)
    assert float(co.venous.po2_mmhg) < float(base.venous.po2_mmhg)


def test_vo2_temperature_scaling():
    # Fever raises VO2 about 10-13 % per degC (common practice, from memory); the model
    # documents 1.10 per degC. Only the direction and rough size are checked.
    r = solve_transport(temperature_c=39.0, vo2_temperature_scaling=True)
    assert 250.0 * 1.15 <= float(r.vo2_ml_min) <= 250.0 * 1.30
    assert float(solve_transport(temperature_c=39.0).vo2_ml_min) == pytest.approx(250.0)


# --- the float path for one case against the array path --------------------------------------


def _leaves(d, prefix=""):
    for k, v in d.items():
        if isinstance(v, dict):
            yield from _leaves(v, f"{prefix}{k}.")
        elif k not in ("iterations", "pressure_model"):  # counts and names, not numbers
            yield f"{prefix}{k}", v


def _random_cases(n: int) -> list[dict]:
    """Valid cases mixing CO, MetHb, altitude, fever, acidosis, every curve (invented)."""
    rng = np.random.default_rng(11)
    curves = ["severinghaus", "dash", "hill", "siggaard_andersen1990"]
    cases = []
    for i in range(n):
        case = {
            "altitude_m": float(rng.uniform(0.0, 4000.0)),
            "fio2": float(rng.uniform(0.21, 0.6)),
            "paco2_mmhg": float(rng.uniform(28.0, 50.0)),
            "shunt_fraction": float(rng.uniform(0.0, 0.3)),
            "hb_g_dl": float(rng.uniform(10.0, 18.0)),
            "temperature_c": float(rng.uniform(35.0, 41.0)),
            "cardiac_output_l_min": float(rng.uniform(4.0, 8.0)),
            "vo2_ml_min": float(rng.uniform(200.0, 320.0)),
            "cohb_fraction": float(rng.uniform(0.0, 0.25)) if i % 2 else 0.0,
            "methb_fraction": float(rng.uniform(0.0, 0.15)) if i % 3 == 1 else 0.0,
            "curve": curves[i % 4],
        }
        if i % 3 == 0:
            case["ph"] = float(rng.uniform(7.05, 7.5))
        elif i % 3 == 1:
            case["base_excess_mmol_l"] = float(rng.uniform(-15.0, 8.0))
        if i % 5 == 0:
            case["dpg_mmol_l"] = float(rng.uniform(3.0, 8.0))
        if i % 7 == 0:
            case["p50_mmhg"] = float(rng.uniform(18.0, 32.0))
        cases.append(case)
    return cases


@pytest.mark.parametrize("scaling", [False, True])
def test_float_path_matches_array_path(scaling):
    # One scalar case runs through math on floats; an array runs the vectorised chain. Both
    # take the same steps, so they agree to rounding (1e-9 allows for the odd last ulp
    # carried through the Newton solves; regression, not physiology).
    cases = _random_cases(24)
    by_curve: dict[str, list[int]] = {}
    for i, c in enumerate(cases):
        key = (c["curve"], tuple(sorted(k for k in c if k not in ("curve",))))
        by_curve.setdefault(key, []).append(i)
    for (curve, keys), idx in by_curve.items():
        arrays = {k: np.array([cases[i][k] for i in idx]) for k in keys}
        batch = solve_transport(curve=curve, vo2_temperature_scaling=scaling, **arrays)
        batch_leaves = dict(_leaves(batch.to_dict()))
        for j, i in enumerate(idx):
            one = solve_transport(vo2_temperature_scaling=scaling, **cases[i])
            assert isinstance(one.arterial.po2_mmhg, np.ndarray)
            for name, value in _leaves(one.to_dict()):
                assert value == pytest.approx(batch_leaves[name][j], rel=1e-9, abs=1e-9), (
                    name,
                    cases[i],
                )


def test_float_path_0d_array_and_numpy_scalars():
    # 0-d arrays and numpy scalars take the float path too; results equal plain floats.
    a = solve_transport(altitude_m=np.array(3000.0), hb_g_dl=np.float64(13.0), fio2=0.3)
    b = solve_transport(altitude_m=3000.0, hb_g_dl=13.0, fio2=0.3)
    c = solve_transport(altitude_m=np.array([3000.0]), hb_g_dl=13.0, fio2=0.3)
    assert a.to_dict() == b.to_dict()
    assert float(b.arterial.po2_mmhg) == pytest.approx(float(c.arterial.po2_mmhg[0]), rel=1e-9)
    assert float(b.venous.so2) == pytest.approx(float(c.venous.so2[0]), rel=1e-9)


def test_float_path_refusals_match_array_path():
    # A refusal found inside the chain is worded by the array path for scalars as well.
    for kw in (
        {"vo2_ml_min": 2000.0, "cardiac_output_l_min": 1.0},
        {"altitude_m": 8800.0, "paco2_mmhg": 45.0},
    ):
        with pytest.raises(ValueError) as one:
            solve_transport(**kw)
        with pytest.raises(ValueError) as arr:
            solve_transport(**{k: np.array([v]) for k, v in kw.items()})
        assert str(one.value) == str(arr.value)


@pytest.mark.parametrize(
    "kw",
    [
        {"barometric_pressure_mmhg": 500.0, "fio2": 0.3},
        {"altitude_m": 6000.0, "pressure_model": "mountain", "paco2_mmhg": 25.0},
        {"fio2": 0.3, "hufner_ml_g": 1.39, "o2_solubility_ml_dl_mmhg": 0.0031, "tol": 1e-9},
        {"altitude_m": 4000.0, "max_iterations": 3},
    ],
)
def test_float_path_options_match_array_path(kw):
    # Pressure given directly, the mountain model, other constants and an iteration cap
    # act alike on both paths (regression, not physiology).
    physical = ("barometric_pressure_mmhg", "fio2", "altitude_m", "paco2_mmhg")
    as_array = {k: (np.array([v]) if k in physical else v) for k, v in kw.items()}
    one, arr = solve_transport(**kw), solve_transport(**as_array)
    assert one.iterations == arr.iterations
    for name, value in _leaves(one.to_dict()):
        assert value == pytest.approx(dict(_leaves(arr.to_dict()))[name][0], rel=1e-9, abs=1e-9)


def _limit(name: str):
    lo, hi = INPUT_LIMITS[name][:2]
    return st.floats(lo, hi)


@st.composite
def _valid_cases(draw) -> dict:
    """Any case within INPUT_LIMITS and INPUT_CHOICES that the chain may solve.

    PaCO2 and VO2 are drawn below the bounds beyond which no case can be solved (the
    alveolar gas equation leaves PAO2 <= 1 mmHg; VO2 above the O2 that Q could carry at full
    saturation plus the dissolved O2 at the inspired PO2), so that most examples solve; the
    refusals near those bounds are still drawn.
    """
    case = {
        "pressure_model": draw(st.sampled_from(PRESSURE_MODELS)),
        "curve": draw(st.sampled_from(CURVES)),
        "vo2_temperature_scaling": draw(st.booleans()),
    }
    later = {"paco2_mmhg", "vo2_ml_min", "cohb_fraction", "methb_fraction"}
    defaults = {k: p.default for k, p in inspect.signature(solve_transport).parameters.items()}
    always = [k for k in _SOLVER_LIMITS if defaults[k] is not None]
    for name in sorted(set(always) - later - {"altitude_m"}):
        case[name] = draw(_limit(name))
    case["cohb_fraction"] = draw(_limit("cohb_fraction"))
    case["methb_fraction"] = draw(_limit("methb_fraction"))
    assume(case["cohb_fraction"] + case["methb_fraction"] < MAX_COHB_PLUS_METHB)
    pressure = draw(st.sampled_from(["altitude_m", "barometric_pressure_mmhg"]))
    case[pressure] = draw(_limit(pressure))
    pb = case.get("barometric_pressure_mmhg")
    if pb is None:
        pb = float(barometric_pressure(case["altitude_m"], model=case["pressure_model"]))
    fio2, t = case["fio2"], case["temperature_c"]
    pio2 = float(inspired_po2(fio2, pb, t))
    lo, hi = INPUT_LIMITS["paco2_mmhg"][:2]
    paco2_max = (pio2 - 1.0) / (fio2 + (1.0 - fio2) / case["rq"])
    case["paco2_mmhg"] = draw(st.floats(lo, min(hi, paco2_max) if paco2_max > lo else hi))
    carry = 1.0 - case["cohb_fraction"] - case["methb_fraction"]
    content_max = HUFNER_ML_G * case["hb_g_dl"] * carry + O2_SOLUBILITY_ML_DL_MMHG * pio2
    vo2_max = 10.0 * case["cardiac_output_l_min"] * content_max
    if case["vo2_temperature_scaling"]:
        vo2_max /= float(vo2_at_temperature(1.0, t))
    lo, hi = INPUT_LIMITS["vo2_ml_min"][:2]
    case["vo2_ml_min"] = draw(st.floats(lo, min(hi, vo2_max) if vo2_max > lo else hi))
    acid_base = draw(st.sampled_from(["ph", "base_excess_mmol_l", None]))
    if acid_base is not None:
        case[acid_base] = draw(_limit(acid_base))
    for name in ("dpg_mmol_l", "p50_mmhg"):
        if draw(st.booleans()):
            case[name] = draw(_limit(name))
    return case


def _on_floats_only(case: dict):
    """solve_transport of one case of floats, failing if it leaves the float path."""
    left = AssertionError("the case of floats left the float path for the array path")
    with mock.patch.object(transport, "_case_arrays", side_effect=left):
        return solve_transport(**case)


@budget(60)
@given(case=_valid_cases())
def test_float_path_agrees_with_array_path_everywhere(case):
    # The same stage functions on floats (model.floats) and on 1-element arrays (numpy): the
    # same answer to 1e-9 relative (abs 1e-9 for values near zero: rounding carried through
    # the Newton solves; regression, not physiology), the same refusal, and a case the array
    # path solves never falls off the float path.
    as_array = {k: (v if isinstance(v, (str, bool)) else np.array([v])) for k, v in case.items()}
    try:
        arr = solve_transport(**as_array)
    except ValueError as exc:
        with pytest.raises(ValueError) as one:
            solve_transport(**case)
        assert str(one.value) == str(exc)
        return
    one = _on_floats_only(case)
    assert one.iterations == arr.iterations
    arr_leaves = dict(_leaves(arr.to_dict()))
    for name, value in _leaves(one.to_dict()):
        assert value == pytest.approx(arr_leaves[name][0], rel=1e-9, abs=1e-9), name


@pytest.mark.parametrize("name", ["hb_g_dl", "fio2", "paco2_mmhg", "cardiac_output_l_min"])
def test_a_nan_input_is_refused_with_field_range_and_unit(name):
    # issue 18: NaN inputs returned NaN results without an error.
    label = INPUT_LIMITS[name][3]
    with pytest.raises(ValueError, match=rf"{name} = nan is not a number \({label}; allowed"):
        solve_transport(**{name: float("nan")})
    with pytest.raises(ValueError, match=name):
        solve_transport(**{name: float("inf")})


def test_running_out_of_passes_is_said_not_hidden():
    # issue 18: 60 passes without converging returned silently.
    capped = solve_transport(altitude_m=4000.0, max_iterations=2)
    assert not bool(capped.converged) and capped.to_dict()["converged"] is False
    assert bool(solve_transport(altitude_m=4000.0).converged)
    both = solve_transport(altitude_m=np.array([0.0, 4000.0]), max_iterations=60)
    assert both.converged.tolist() == [True, True]


def test_altitude_defaults_to_the_mountain_model_and_says_so():
    # A case given by altitude is a place on a mountain: West's fit (J Appl Physiol 1996;
    # 81:1850-4) by default, 398.9 mmHg at 5400 m against the ICAO 384.2; 400.4 +- 2.7 was
    # measured at the 5400 m Everest base camp (West et al., J Appl Physiol 1983;54:1188-94,
    # read). The result names the model; a pressure that was given is "given".
    r = solve_transport(altitude_m=5400.0)
    assert r.pressure_model == "mountain"
    assert float(r.barometric_pressure_mmhg) == pytest.approx(400.4, abs=2.7)
    std = solve_transport(altitude_m=5400.0, pressure_model="standard")
    assert std.pressure_model == "standard"
    assert float(std.barometric_pressure_mmhg) == pytest.approx(384.2, abs=0.1)
    given = solve_transport(barometric_pressure_mmhg=400.0, altitude_m=5400.0)
    assert given.pressure_model == "given" and given.to_dict()["pressure_model"] == "given"
    arr = solve_transport(altitude_m=np.array([0.0, 5400.0]))
    assert arr.pressure_model == "mountain" and arr.to_dict()["pressure_model"] == "mountain"
