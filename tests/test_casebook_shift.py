"""Case files keep plans and the shift's gases; files saved before them still open."""

from __future__ import annotations

import pytest
from o2transit.model.casebook import CaseFileError, open_case, save_case
from o2transit.model.plans import Change, Plan
from o2transit.model.series import Gas

# An invented patient of our own.
GAS = {
    "pao2_mmhg": 82.0,
    "paco2_mmhg": 38.0,
    "ph": 7.25,
    "sao2": 0.93,
    "hb_g_dl": 8.5,
    "fio2": 0.6,
    "temperature_c": 39.0,
}
PLANS = [
    Plan("blood and oxygen", (Change("hb", 10.0, True), Change("fio2", 0.8))),
    Plan("cool", (Change("temperature", 37.0),)),
]
GASES = [Gas("06:00", GAS), Gas("10:00", {**GAS, "pao2_mmhg": 74.0, "svo2": 0.6})]


def test_plans_and_gases_round_trip(tmp_path):
    path = save_case(tmp_path, "bed 4 night", GAS, plans=PLANS, gases=GASES)
    text = path.read_text(encoding="utf-8")
    assert "[[plans]]" in text and "[[gases]]" in text and 'kind = "hb", value = 10.0' in text
    record = open_case(path)
    assert record.plans == PLANS
    assert record.gases == GASES


def test_a_file_without_plans_or_gases_opens_with_none(tmp_path):
    path = save_case(tmp_path, "old style", GAS)
    text = path.read_text(encoding="utf-8")
    assert "plans" not in text and "gases" not in text
    record = open_case(path)
    assert record.plans == [] and record.gases == []


def test_a_file_written_before_plans_existed_opens(tmp_path):
    # The layout of a format-1 file as saved before plans and gases were added.
    old = tmp_path / "bed-2.toml"
    old.write_text(
        '[case]\nlabel = "bed 2"\nsaved_at = 2026-01-02T03:04:05Z\nformat_version = 1\n\n'
        "[measured]\npao2_mmhg = 82.0\npaco2_mmhg = 38.0\nph = 7.25\nsao2 = 0.93\n"
        "hb_g_dl = 8.5\nfio2 = 0.6\ntemperature_c = 39.0\n\n"
        '[notes]\ntext = "prone"\n',
        encoding="utf-8",
    )
    record = open_case(old)
    assert record.plans == [] and record.gases == [] and record.notes == "prone"


@pytest.mark.parametrize(
    ("tail", "words"),
    [
        (
            '[[plans]]\nname = "x"\n[[plans.changes]]\nkind = "tide"\nvalue = 1.0\n',
            "[[plans]] number 1",
        ),
        ('[[plans]]\nname = ""\n', "plan name must be 1-40"),
        ('[[gases]]\ntime = "06:00"\n[gases.measured]\nfio2 = 0.6\n', "[[gases]] number 1"),
        ('[[gases]]\ntime = "26:00"\n[gases.measured]\nfio2 = 0.6\n', "is not a time"),
        ("plans = 3\n", "[[plans]] must be a list of tables"),
    ],
)
def test_damaged_plans_or_gases_are_named(tmp_path, tail, words):
    path = save_case(tmp_path, "bed 5", GAS)
    text = path.read_text(encoding="utf-8")
    head, notes = text.split("[notes]")
    if tail.startswith("plans ="):
        head = head.replace("[case]", tail + "[case]")
        path.write_text(head + "[notes]" + notes, encoding="utf-8")
    else:
        path.write_text(head + tail + "\n[notes]" + notes, encoding="utf-8")
    with pytest.raises(CaseFileError, match=words.replace("[", r"\[").replace("]", r"\]")):
        open_case(path)


def test_bad_plans_or_too_many_are_not_saved(tmp_path):
    with pytest.raises(CaseFileError, match="at most 4"):
        save_case(tmp_path, "bed 6", GAS, plans=[Plan(f"p{i}") for i in range(5)])
    with pytest.raises(CaseFileError, match="not saved: FiO2 to = 2"):
        save_case(tmp_path, "bed 6", GAS, plans=[Plan("p", (Change("fio2", 2.0),))])
    assert not (tmp_path / "bed-6.toml").exists()
