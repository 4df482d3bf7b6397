"""Tests for model.scenario: every shipped scenario loads and solves; bad files fail well."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from o2transit.model import ScenarioError, load_scenario, solve_transport

SCENARIO_DIR = Path(__file__).resolve().parent.parent / "scenarios"
SCENARIOS = sorted(SCENARIO_DIR.glob("*.toml"))

VALID = """\
name = "Test case"
description = "A valid case for the loader tests."

[air]
altitude_m = 0
fio2 = 0.21

[lungs]
paco2_mmhg = 40.0

[blood]
hb_g_dl = 15.0
ph = 7.40

[circulation]
cardiac_output_l_min = 5.0
vo2_ml_min = 250.0
"""


def test_scenario_files_exist():
    assert SCENARIOS, f"no scenario files in {SCENARIO_DIR}"


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.name)
def test_scenario_loads_and_solves(path):
    sc = load_scenario(path)
    assert sc.name and sc.description
    assert Path(sc.path).name == path.name
    r = solve_transport(**sc.inputs)
    for v in (r.arterial.po2_mmhg, r.arterial.so2, r.venous.po2_mmhg, r.venous.so2, r.do2_ml_min):
        assert np.all(np.isfinite(v))
    assert 0.0 < float(r.venous.so2) < float(r.arterial.so2) <= 1.0
    assert (
        float(r.venous.po2_mmhg) < float(r.arterial.po2_mmhg) <= float(r.alveolar_po2_mmhg) + 1e-6
    )


def _write(tmp_path, text, name="case.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_valid_file_round_trip(tmp_path):
    sc = load_scenario(_write(tmp_path, VALID))
    assert sc.name == "Test case"
    assert sc.inputs["hb_g_dl"] == pytest.approx(15.0)
    assert sc.inputs["ph"] == pytest.approx(7.40)


@pytest.mark.parametrize(
    "old, new, key, expected",
    [
        # 150 g/L = 15 g/dL; 5.333 kPa = 40 mmHg (1 kPa = 7.50062 mmHg); Hb 9.309 mmol/L
        # (monomer, 16 114.5 g/mol) = 15 g/dL.
        ("hb_g_dl = 15.0", "hb_g_l = 150", "hb_g_dl", 15.0),
        ("hb_g_dl = 15.0", "hb_mmol_l = 9.3084", "hb_g_dl", 15.0),
        ("paco2_mmhg = 40.0", "paco2_kpa = 5.33288", "paco2_mmhg", 40.0),
        ("ph = 7.40", "ph = 7.40\np50_kpa = 3.5731", "p50_mmhg", 26.8),
        ("altitude_m = 0", "barometric_pressure_kpa = 101.325", "barometric_pressure_mmhg", 760.0),
    ],
)
def test_unit_alternatives(tmp_path, old, new, key, expected):
    sc = load_scenario(_write(tmp_path, VALID.replace(old, new)))
    assert sc.inputs[key] == pytest.approx(expected, abs=2e-3)


@pytest.mark.parametrize(
    "text, keys",
    [
        ("syntax", ("not valid", "TOML")),
        ("unknown", ("hb_gdl",)),
        ("unknown_table", ("heart",)),
        ("wrong_type", ("hb_g_dl",)),
        ("wrong_bool", ("vo2_temperature_scaling",)),
        ("out_of_range", ("hb_g_dl", "40")),
        ("out_of_range_kpa", ("paco2_kpa",)),
        ("both_ph_be", ("ph", "base_excess_mmol_l")),
        ("both_hb", ("hb_g_dl", "hb_g_l")),
        ("bad_curve", ("curve",)),
    ],
)
def test_bad_file_raises_scenario_error(tmp_path, text, keys):
    variants = {
        "syntax": VALID.replace("hb_g_dl = 15.0", "hb_g_dl = = 15.0"),
        "unknown": VALID.replace("hb_g_dl = 15.0", "hb_gdl = 15.0"),
        "unknown_table": VALID + "\n[heart]\nrate = 60\n",
        "wrong_type": VALID.replace("hb_g_dl = 15.0", 'hb_g_dl = "fifteen"'),
        "wrong_bool": VALID.replace(
            "vo2_ml_min = 250.0", "vo2_ml_min = 250.0\nvo2_temperature_scaling = 1"
        ),
        "out_of_range": VALID.replace("hb_g_dl = 15.0", "hb_g_dl = 40"),
        "out_of_range_kpa": VALID.replace("paco2_mmhg = 40.0", "paco2_kpa = 50.0"),
        "both_ph_be": VALID.replace("ph = 7.40", "ph = 7.40\nbase_excess_mmol_l = -5.0"),
        "both_hb": VALID.replace("hb_g_dl = 15.0", "hb_g_dl = 15.0\nhb_g_l = 150"),
        "bad_curve": VALID.replace("ph = 7.40", 'ph = 7.40\ncurve = "bohr1904"'),
    }
    path = _write(tmp_path, variants[text], name=f"bad-{text}.toml")
    with pytest.raises(ScenarioError) as info:
        load_scenario(path)
    msg = str(info.value)
    assert path.name in msg
    for k in keys:
        assert k in msg
    assert isinstance(info.value, ValueError)


def test_out_of_range_message_gives_allowed_range(tmp_path):
    # scenarios/README.md: the message names file, table, key, value and allowed range.
    path = _write(tmp_path, VALID.replace("hb_g_dl = 15.0", "hb_g_dl = 40"))
    with pytest.raises(ScenarioError, match=r"\[blood\] hb_g_dl = 40.*2.*25") as info:
        load_scenario(path)
    assert str(path.name) in str(info.value)


def test_missing_file_raises_scenario_error(tmp_path):
    path = tmp_path / "absent.toml"
    with pytest.raises(ScenarioError, match="absent.toml"):
        load_scenario(path)


def test_unsolvable_case_raises_scenario_error(tmp_path):
    # Summit air with PaCO2 40 leaves no alveolar O2 (alveolar gas equation).
    path = _write(tmp_path, VALID.replace("altitude_m = 0", "altitude_m = 8848"))
    with pytest.raises(ScenarioError, match=path.name):
        load_scenario(path)


@pytest.mark.parametrize("drop", ["name", "description"])
def test_name_and_description_are_optional(tmp_path, drop):
    # scenarios/README.md: every key is optional; the name falls back to the file's name.
    lines = [ln for ln in VALID.splitlines() if not ln.startswith(drop + " =")]
    sc = load_scenario(_write(tmp_path, "\n".join(lines) + "\n", name="my-case.toml"))
    assert sc.name == ("my-case" if drop == "name" else "Test case")
    assert sc.description == ("" if drop == "description" else VALID.split('"')[3])


def test_one_table_alone_is_a_case(tmp_path):
    # issue 14: printf '[blood]\nhb_g_dl = 10\n' > x.toml; o2transit evaluate x.toml
    sc = load_scenario(_write(tmp_path, "[blood]\nhb_g_dl = 10\n", name="x.toml"))
    assert sc.name == "x" and sc.inputs == {"hb_g_dl": 10.0}


def test_misspelt_table_is_reported_as_such(tmp_path):
    path = _write(tmp_path, "[blod]\nhb_g_dl = 10\n")
    with pytest.raises(ScenarioError) as info:
        load_scenario(path)
    msg = str(info.value)
    assert "unknown table [blod]" in msg and "did you mean 'blood'" in msg
    assert "name" not in msg.split(";")[0]  # not reported as a missing name


def test_every_problem_in_a_file_is_reported_at_once(tmp_path):
    text = (
        "[blood]\nhb_g_dl = 40\nph = 7.3\nbase_excess_mmol_l = -5\n"
        "[air]\nfio2 = 2\nhb_g_l = 90\n[lungs]\nshunt = 0.1\n[heart]\nrate = 60\n"
    )
    path = _write(tmp_path, text, name="many.toml")
    with pytest.raises(ScenarioError) as info:
        load_scenario(path)
    problems = info.value.problems
    assert str(info.value).splitlines() == list(problems)
    assert all(p.startswith(f"{path}: ") for p in problems)
    expected = [
        r"\[blood\] hb_g_dl = 40 is outside the allowed range 2-25 g/dL \(Haemoglobin\)",
        r"\[air\] fio2 = 2 is outside the allowed range 0.05-1 \(FiO2\)",
        r"\[air\] unknown key 'hb_g_l'; it belongs in \[blood\]",
        r"\[lungs\] unknown key 'shunt'; did you mean 'shunt_fraction'",
        r"unknown table \[heart\]",
        r"\[blood\] ph and base_excess_mmol_l are both given; keep one",
    ]
    for pattern in expected:
        assert any(re.search(pattern, p) for p in problems), pattern
    assert len(problems) == len(expected)


def test_a_value_of_the_wrong_type_names_the_allowed_range_and_unit(tmp_path):
    path = _write(tmp_path, '[lungs]\npaco2_kpa = "five"\n[blood]\nhb_g_dl = nan\n')
    with pytest.raises(ScenarioError) as info:
        load_scenario(path)
    a, b = info.value.problems
    assert "[lungs] paco2_kpa = 'five' must be a number; allowed range 0.6666-20 kPa" in a
    assert "[blood] hb_g_dl = nan is not a number; allowed range 2-25 g/dL" in b


def test_a_top_level_key_is_sent_to_its_table(tmp_path):
    with pytest.raises(
        ScenarioError, match=r"hb_g_dl is not a top-level key; put it in the \[blood\]"
    ):
        load_scenario(_write(tmp_path, "hb_g_dl = 10\n"))
