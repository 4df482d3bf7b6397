"""Tests for model.content: O2 content (bound + dissolved) and Fick arithmetic."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import oxygen_content
from properties import budget

FAST = budget(100)


@pytest.mark.parametrize(
    "kwargs, expected",
    # CaO2 = k Hb SO2 + alpha PO2 at Hb 15, SO2 0.98, PO2 100, computed by hand. k 1.34 is
    # the common clinical value (common practice); 1.39 the theoretical maximum and 1.368
    # measured (Dijkhuizen et al. 1977, Pflugers Arch 369:223-231).
    [
        ({}, 19.998),
        ({"o2_solubility_ml_dl_mmhg": 0.0031}, 20.008),
        ({"hufner_ml_g": 1.36}, 20.292),
        ({"hufner_ml_g": 1.39}, 20.733),
    ],
)
def test_arterial_content(kwargs, expected):
    # Tolerance 5e-4: exact arithmetic, hand values rounded to 3 decimals.
    assert abs(float(oxygen_content(15.0, 0.98, 100.0, **kwargs)) - expected) <= 5e-4


def test_venous_content_and_extraction():
    # Hb 15, SvO2 0.75, PvO2 40 -> 15.195 mL/dL; O2ER = (19.998 - 15.195)/19.998 = 0.2402
    # (computed by hand). Tolerance: rounding of the hand values.
    cv = float(oxygen_content(15.0, 0.75, 40.0))
    assert abs(cv - 15.195) <= 5e-4
    ca = float(oxygen_content(15.0, 0.98, 100.0))
    assert abs((ca - cv) / ca - 0.2402) <= 1e-4


def test_dyshaemoglobins_do_not_carry_o2():
    # COHb and MetHb carry no O2: with SO2 functional, C = k Hb (1 - FCOHb - FMetHb) SO2
    # + alpha PO2 (Siggaard-Andersen 1990 oxygen status algorithm, from memory).
    got = float(oxygen_content(15.0, 0.98, 100.0, cohb_fraction=0.2, methb_fraction=0.05))
    assert got == pytest.approx(1.34 * 15.0 * 0.75 * 0.98 + 0.3, rel=1e-12)


def test_input_matrix():
    assert np.ndim(oxygen_content(15.0, 0.98, 100.0)) == 0
    out = oxygen_content(np.array([[10.0], [15.0]]), np.array([0.7, 0.98]), 100.0)
    assert out.shape == (2, 2)
    assert out[1, 1] == pytest.approx(19.998)
    out = oxygen_content(np.array([15.0, np.nan]), 0.98, 100.0)
    assert np.isnan(out[1]) and np.isfinite(out[0])


@FAST
@given(
    hb=st.floats(2.0, 25.0),
    s=st.floats(0.0, 1.0),
    ds=st.floats(0.001, 0.5),
    po2=st.floats(0.0, 700.0),
    co=st.floats(0.0, 0.5),
)
def test_content_rises_with_saturation_and_falls_with_co(hb, s, ds, po2, co):
    base = float(oxygen_content(hb, s, po2, cohb_fraction=co))
    assert float(oxygen_content(hb, min(s + ds, 1.0), po2, cohb_fraction=co)) >= base
    assert float(oxygen_content(hb, s, po2, cohb_fraction=min(co + 0.1, 0.9))) <= base
    assert base >= 0.003 * po2 - 1e-12
