"""Tests for model.casebook: case files that are kept, written atomically, read back safely."""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import tomllib
from pathlib import Path

import pytest
from o2transit.model import casebook, fit_case
from o2transit.model.casebook import (
    CASE_DIR_ENV,
    IDENTIFIER_WARNING,
    CaseFileError,
    default_case_dir,
    label_slug,
    list_cases,
    open_case,
    save_case,
)

REPO = Path(__file__).resolve().parent.parent

# An invented blood gas of our own.
GAS = {
    "pao2_mmhg": 72.0,
    "paco2_mmhg": 44.0,
    "ph": 7.33,
    "sao2": 0.925,
    "hb_g_dl": 10.2,
    "fio2": 0.5,
    "temperature_c": 37.6,
    "cohb_fraction": 0.01,
    "svo2": 0.66,
    "pvo2_mmhg": 37.0,
    "cardiac_output_l_min": 5.2,
    "lactate_mmol_l": 1.8,
}


@pytest.fixture(scope="module")
def fit():
    return fit_case(GAS)


def stray_files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if not p.name.endswith(".toml"))


# --- round trip -----------------------------------------------------------------------


def test_round_trip(tmp_path, fit):
    notes = 'Prone since 06:00.\nPEEP 12 — "recruited" at 08:00; 50 % O2.'
    path = save_case(tmp_path, "Bed 4, day 2", GAS, fit, notes)
    assert path == tmp_path / "bed-4-day-2.toml"
    record = open_case(path)
    assert record.label == "Bed 4, day 2"
    assert record.measured == GAS
    assert record.notes == notes
    assert record.path == path
    assert record.fit_consistent is fit.consistent
    assert record.fit_messages == fit.messages
    assert record.fit_assumptions == fit.assumptions
    assert record.fitted == pytest.approx(fit.fitted, rel=1e-5)  # 6 significant digits kept
    assert set(record.fit_inputs) == set(fit.inputs)
    for key, value in fit.inputs.items():
        if isinstance(value, str):
            assert record.fit_inputs[key] == value
        else:
            assert record.fit_inputs[key] == pytest.approx(value, rel=1e-5)
    assert [r["quantity"] for r in record.residuals] == [r.quantity for r in fit.residuals]
    assert record.saved_at.tzinfo is not None


def test_reopened_fit_gives_the_same_case(tmp_path, fit):
    from o2transit.model import solve_transport

    record = open_case(save_case(tmp_path, "teaching case", GAS, fit))
    again = solve_transport(**record.fit_inputs)
    # 6 significant digits in the file move PaO2 by far less than 0.01 mmHg.
    assert float(again.arterial.po2_mmhg) == pytest.approx(
        float(fit.result.arterial.po2_mmhg), abs=0.01
    )


def test_file_is_readable_toml_with_the_documented_tables(tmp_path, fit):
    path = save_case(tmp_path, "bed 7", GAS, fit, "short note")
    text = path.read_text(encoding="utf-8")
    assert text.startswith("# o2transit case file")
    data = tomllib.loads(text)
    assert list(data) == ["case", "measured", "fit", "notes"]
    assert data["case"]["format_version"] == casebook.FORMAT_VERSION
    assert set(data["fit"]) >= {"inputs", "fitted", "residuals", "consistent", "messages"}
    assert "pao2_mmhg = 72.0" in text
    assert data["notes"]["text"] == "short note"


def test_case_without_fit_or_notes(tmp_path):
    record = open_case(save_case(tmp_path, "arterial only", {**GAS, "svo2": None}))
    assert record.fit_inputs == {} and record.fitted == {} and record.residuals == []
    assert record.fit_consistent is None
    assert "svo2" not in record.measured
    assert record.notes == ""


# --- nothing overwritten silently -------------------------------------------------------


def test_no_silent_overwrite(tmp_path, fit):
    path = save_case(tmp_path, "bed 4", GAS, fit, "first")
    before = path.read_bytes()
    with pytest.raises(CaseFileError, match="already exists"):
        save_case(tmp_path, "bed 4", GAS, None, "second")
    with pytest.raises(CaseFileError, match="already exists"):
        save_case(tmp_path, "Bed-4", GAS, None, "same file name from another label")
    assert path.read_bytes() == before
    save_case(tmp_path, "bed 4", GAS, None, "second", overwrite=True)
    assert open_case(path).notes == "second"
    assert stray_files(tmp_path) == []


# --- a crash mid-write leaves the old file whole -----------------------------------------


def test_failure_mid_write_keeps_the_old_file_and_no_temp_file(tmp_path, fit, monkeypatch):
    path = save_case(tmp_path, "bed 4", GAS, fit, "original")
    before = path.read_bytes()

    def half_then_fail(handle, data):
        handle.write(data[: len(data) // 2])
        handle.flush()
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(casebook, "_write_bytes", half_then_fail)
    with pytest.raises(CaseFileError, match="No space left on device"):
        save_case(tmp_path, "bed 4", GAS, None, "replacement", overwrite=True)
    assert path.read_bytes() == before
    assert stray_files(tmp_path) == []
    records, problems = list_cases(tmp_path)
    assert [r.notes for r in records] == ["original"] and problems == []


def test_failure_at_rename_keeps_the_old_file(tmp_path, fit, monkeypatch):
    path = save_case(tmp_path, "bed 4", GAS, fit, "original")
    before = path.read_bytes()

    def broken_replace(src, dst):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(casebook.os, "replace", broken_replace)
    with pytest.raises(CaseFileError, match="Input/output error"):
        save_case(tmp_path, "bed 4", GAS, None, "replacement", overwrite=True)
    assert path.read_bytes() == before
    assert stray_files(tmp_path) == []


def test_process_killed_mid_write_leaves_old_file_and_a_temp_file_that_is_ignored(tmp_path):
    # A real crash: a child process dies (os._exit, no cleanup) after writing half of the
    # new text into the temporary file.
    path = save_case(tmp_path, "bed 4", GAS, None, "original")
    before = path.read_bytes()
    child = textwrap.dedent(f"""
        import os
        from o2transit.model import casebook

        def die_halfway(handle, data):
            handle.write(data[: len(data) // 2])
            handle.flush()
            os._exit(9)

        casebook._write_bytes = die_halfway
        casebook.save_case({str(tmp_path)!r}, "bed 4", {GAS!r}, None, "new", overwrite=True)
    """)
    done = subprocess.run(
        [sys.executable, "-c", child],
        check=False,
        cwd=REPO,
        timeout=120,
        capture_output=True,
        text=True,
    )
    assert done.returncode == 9, done.stderr
    assert path.read_bytes() == before
    leftovers = stray_files(tmp_path)
    assert len(leftovers) == 1 and leftovers[0].startswith(".bed-4.")
    records, problems = list_cases(tmp_path)
    assert [r.notes for r in records] == ["original"] and problems == []


# --- a damaged file is reported; the others still open -------------------------------------


def test_corrupt_files_are_reported_and_the_others_load(tmp_path, fit):
    save_case(tmp_path, "good one", GAS, fit)
    save_case(tmp_path, "good two", GAS)
    (tmp_path / "truncated.toml").write_text('[case]\nlabel = "cut', encoding="utf-8")
    (tmp_path / "future.toml").write_text(
        '[case]\nlabel = "x"\nsaved_at = 2026-01-01T00:00:00Z\nformat_version = 9\n[measured]\n',
        encoding="utf-8",
    )
    good = (tmp_path / "good-two.toml").read_text(encoding="utf-8")
    (tmp_path / "bad-value.toml").write_text(
        good.replace("fio2 = 0.5", "fio2 = 5.0"), encoding="utf-8"
    )
    (tmp_path / "no-case.toml").write_text("[measured]\npao2_mmhg = 80.0\n", encoding="utf-8")
    (tmp_path / "binary.toml").write_bytes(b"\xff\xfe\x00garbage")
    records, problems = list_cases(tmp_path)
    assert sorted(r.label for r in records) == ["good one", "good two"]
    text = "\n".join(problems)
    assert len(problems) == 5
    assert "truncated.toml: not valid TOML" in text
    assert "future.toml: format_version = 9" in text
    assert "bad-value.toml: [measured] fio2 = 5 is outside the allowed range 0.05-1" in text
    assert "no-case.toml: missing the [case] table" in text
    assert "binary.toml: cannot read the file" in text


def test_open_case_raises_a_clear_error(tmp_path):
    bad = tmp_path / "x.toml"
    bad.write_text("not = [toml", encoding="utf-8")
    with pytest.raises(CaseFileError, match=r"x.toml: not valid TOML .* may be damaged"):
        open_case(bad)
    with pytest.raises(CaseFileError, match="cannot read the file"):
        open_case(tmp_path / "missing.toml")


def test_listing_is_newest_first_and_a_missing_folder_is_empty(tmp_path):
    save_case(tmp_path, "older", GAS)
    newer = save_case(tmp_path, "newer", GAS)
    text = newer.read_text(encoding="utf-8")
    newer.write_text(text.replace("saved_at = 20", "saved_at = 21", 1), encoding="utf-8")
    records, _ = list_cases(tmp_path)
    assert [r.label for r in records] == ["newer", "older"]
    assert list_cases(tmp_path / "not-yet") == ([], [])


# --- labels: no identifiers ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("label", "pattern"),
    [
        ("", "1-60 characters"),
        ("   ", "1-60 characters"),
        ("x" * 61, "1-60 characters"),
        ("bed <4>", "contains '<>'"),
        ("bed 4\nday 2", None),  # whitespace is folded to single spaces: accepted
        ("MRN 12345678", "looks like a record number"),
        (42, "must be text"),
    ],
)
def test_label_validation(tmp_path, label, pattern):
    if pattern is None:
        assert open_case(save_case(tmp_path, label, GAS)).label == "bed 4 day 2"
        return
    with pytest.raises(CaseFileError, match=pattern):
        save_case(tmp_path, label, GAS)
    assert not tmp_path.exists() or list(tmp_path.iterdir()) == []


def test_identifier_warning_is_shown_with_a_refused_number():
    with pytest.raises(CaseFileError) as info:
        casebook.check_label("bed 4 0123456789")
    assert IDENTIFIER_WARNING in str(info.value)
    assert "names" in IDENTIFIER_WARNING and "record numbers" in IDENTIFIER_WARNING


def test_slugs():
    assert label_slug("Bed 4, day 2 (ARDS)") == "bed-4-day-2-ards"
    assert label_slug("Lit 3 — J2 réa") == "lit-3-j2-rea"
    assert label_slug("床 4") == "4"
    assert label_slug("床").startswith("case-") and label_slug("床") != label_slug("病床")


def test_invalid_measured_values_and_notes_are_refused(tmp_path):
    with pytest.raises(ValueError, match=r"sao2 = 1.2 is outside the allowed range"):
        save_case(tmp_path, "bed 4", {**GAS, "sao2": 1.2})
    with pytest.raises(CaseFileError, match="notes"):
        save_case(tmp_path, "bed 4", GAS, notes=7)
    with pytest.raises(CaseFileError, match="at most"):
        save_case(tmp_path, "bed 4", GAS, notes="x" * 20001)
    assert list(tmp_path.iterdir()) == []


def test_unwritable_folder_gives_a_clear_message(tmp_path):
    blocker = tmp_path / "file-not-folder"
    blocker.write_text("", encoding="utf-8")
    with pytest.raises(CaseFileError, match="cannot save the case"):
        save_case(blocker / "cases", "bed 4", GAS)


# --- where cases live ----------------------------------------------------------------------


def test_default_dir_honours_the_environment(monkeypatch, tmp_path):
    monkeypatch.setenv(CASE_DIR_ENV, str(tmp_path / "my cases"))
    assert default_case_dir() == tmp_path / "my cases"
    monkeypatch.delenv(CASE_DIR_ENV)
    if sys.platform.startswith(("win", "darwin")):
        pytest.skip("XDG rules apply on Linux and other Unix only")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
    assert default_case_dir() == tmp_path / "data" / "o2transit" / "cases"
    monkeypatch.setenv("XDG_DATA_HOME", "relative/ignored")  # XDG spec: must be absolute
    assert default_case_dir() == Path.home() / ".local" / "share" / "o2transit" / "cases"
    monkeypatch.delenv("XDG_DATA_HOME")
    assert default_case_dir() == Path.home() / ".local" / "share" / "o2transit" / "cases"
    assert not os.environ.get(CASE_DIR_ENV)


def test_fit_input_out_of_range_in_a_file_is_reported(tmp_path, fit):
    path = save_case(tmp_path, "bed 4", GAS, fit)
    text = path.read_text(encoding="utf-8")
    start = text.index("shunt_fraction = ", text.index("[fit.inputs]"))
    end = text.index("\n", start)
    path.write_text(text[:start] + "shunt_fraction = 0.95" + text[end:], encoding="utf-8")
    with pytest.raises(CaseFileError, match=r"\[fit.inputs\] shunt_fraction = 0.95 is outside"):
        open_case(path)
