"""Tests for model.units: the conversions and the one table of unit variants."""

from __future__ import annotations

import pytest
from o2transit.model import (
    UNIT_VARIANTS,
    UnitVariant,
    hb_g_l_to_g_dl,
    hb_mmol_l_to_g_dl,
    kpa_to_mmhg,
    unit_variants,
)
from o2transit.model.batch import COLUMN_VARIANTS
from o2transit.model.scenario import SCENARIO_UNIT_VARIANTS
from o2transit.model.units import MMHG_PER_KPA


def test_mmhg_per_kpa_is_the_torr():
    # 1 torr = 101325/760 Pa exactly (definition of the torr; from memory), and clinical
    # mmHg is taken equal to it, so 101.325 kPa is 760 mmHg to rounding.
    assert 101.325 * MMHG_PER_KPA == pytest.approx(760.0, rel=1e-15)


@pytest.mark.parametrize(
    ("key", "variant", "convert"),
    [
        ("paco2_mmhg", "paco2_kpa", kpa_to_mmhg),
        ("hb_g_dl", "hb_g_l", hb_g_l_to_g_dl),
        ("hb_g_dl", "hb_mmol_l", hb_mmol_l_to_g_dl),
    ],
)
def test_variant_factors_are_the_conversion_functions(key, variant, convert):
    # The table and the conversion functions are one fact: the same factor both ways.
    spec = unit_variants(key)[variant]
    assert spec.key == key
    for value in (0.5, 7.0, 123.0):
        assert spec.to_canonical(value) == pytest.approx(float(convert(value)), rel=1e-15)
        assert spec.from_canonical(spec.to_canonical(value)) == pytest.approx(value, rel=1e-15)


def test_percent_only_when_asked_for():
    # Nothing in "ph" or "fio2" says whether it is a fraction, so % is never implied.
    assert unit_variants("fio2") == {}
    assert unit_variants("fio2", ("_percent",)) == {"fio2_percent": UnitVariant("fio2", 0.01, "%")}


def test_unknown_suffix_is_refused():
    with pytest.raises(KeyError):
        unit_variants("paco2_mmhg", ("_psi",))


def test_every_suffix_names_its_unit_once():
    labels = [unit for _, _, unit in UNIT_VARIANTS.values()]
    assert len(labels) == len(set(labels))


def test_scenario_and_batch_read_their_variants_from_the_table():
    # Each format's own choice of keys, but the suffix -> unit and factor of the one table.
    for variants in (SCENARIO_UNIT_VARIANTS, COLUMN_VARIANTS):
        for name, spec in variants.items():
            suffix = next((s for s in UNIT_VARIANTS if name.endswith(s)), None)
            if suffix is None:  # the batch's pb_mmhg alias of barometric_pressure_mmhg
                assert (name, spec.factor) == ("pb_mmhg", 1.0)
                continue
            _, factor, unit = UNIT_VARIANTS[suffix]
            assert (spec.factor, spec.unit) == (factor, unit), name
    assert set(SCENARIO_UNIT_VARIANTS) == {
        "barometric_pressure_kpa",
        "paco2_kpa",
        "p50_kpa",
        "hb_g_l",
        "hb_mmol_l",
    }
