"""Tests for model.files: every loader refuses special, empty, oversized, badly encoded and
deeply nested files in one line naming the file, and never blocks."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from o2transit.model.ascent import AscentError, load_ascent
from o2transit.model.casebook import CaseFileError, open_case, save_case
from o2transit.model.files import MAX_NESTING, MAX_TEXT_BYTES, read_text, read_toml
from o2transit.model.lesson import LessonError, load_lesson
from o2transit.model.scenario import ScenarioError, load_scenario
from o2transit.model.scenario import read_toml as scenario_read_toml

LOADERS = [
    (load_scenario, ScenarioError),
    (load_ascent, AscentError),
    (load_lesson, LessonError),
    # issue 18 item 2: case files (the bedside screen's saved cases) were read with
    # Path.read_text: a FIFO hung, /dev/zero ran out of memory, deep nesting raised
    # RecursionError, a byte-order mark was refused.
    (open_case, CaseFileError),
]
SCENARIO = "[blood]\nhb_g_dl = 12\n"


def _bad_files(tmp_path: Path) -> dict[str, tuple[Path, str]]:
    d = tmp_path
    (d / "empty.toml").write_bytes(b"")
    (d / "blank.toml").write_text("  \n\n")
    (d / "utf16.toml").write_bytes(SCENARIO.encode("utf-16"))
    (d / "utf16le.toml").write_bytes(SCENARIO.encode("utf-16-le"))
    (d / "latin1.toml").write_bytes('name = "café"\n'.encode("latin-1"))
    (d / "binary.toml").write_bytes(bytes(range(256)) * 4)
    (d / "deep.toml").write_text("a = " + "[" * 2000 + "]" * 2000 + "\n")
    (d / "deep_tables.toml").write_text("[" + ".".join(["t"] * 2000) + "]\nx = 1\n")
    (d / "deep_inline.toml").write_text("a = " + "{b = " * 40 + "1" + "}" * 40 + "\n")
    (d / "digits.toml").write_text("[blood]\nhb_g_dl = " + "1" * 5000 + "\n")
    with open(d / "huge.toml", "wb") as f:
        f.truncate(MAX_TEXT_BYTES + 1)
    os.mkfifo(d / "fifo.toml")
    (d / "folder.toml").mkdir()
    return {
        "empty": (d / "empty.toml", "the file is empty"),
        "blank": (d / "blank.toml", "the file is empty (blank space only)"),
        "utf16": (d / "utf16.toml", "UTF-16 text, not UTF-8"),
        "utf16le": (d / "utf16le.toml", "NUL bytes"),
        "latin1": (d / "latin1.toml", "not UTF-8 text (byte 0xe9 on line 1"),
        "binary": (d / "binary.toml", "NUL bytes"),
        "deep": (d / "deep.toml", f"nested deeper than {MAX_NESTING} levels"),
        "deep_tables": (d / "deep_tables.toml", f"nested deeper than {MAX_NESTING} levels"),
        "deep_inline": (d / "deep_inline.toml", f"nested deeper than {MAX_NESTING} levels"),
        "digits": (d / "digits.toml", "not valid TOML"),
        "huge": (d / "huge.toml", "over the limit of 1.0 MiB"),
        "fifo": (d / "fifo.toml", "a FIFO (named pipe), not a regular file"),
        "folder": (d / "folder.toml", "a folder, not a regular file"),
        "zero": (Path("/dev/zero"), "a character device, not a regular file"),
        "missing": (d / "absent.toml", "cannot read the file"),
    }


@pytest.mark.parametrize("loader, error", LOADERS, ids=["scenario", "ascent", "lesson", "case"])
def test_every_loader_refuses_every_bad_file_in_one_line(tmp_path, loader, error):
    for kind, (path, message) in _bad_files(tmp_path).items():
        if loader is load_ascent and kind == "zero":
            message = "unknown file type"  # refused by its name before it is opened
        with pytest.raises(error) as info:
            loader(path)
        text = str(info.value)
        assert message in text, (kind, text)
        assert text.startswith(str(path)) and "\n" not in text, (kind, text)


def test_a_byte_order_mark_is_accepted(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + SCENARIO.encode())
    assert load_scenario(path).inputs == {"hb_g_dl": 12.0}
    assert read_text(path, ValueError) == SCENARIO


def test_a_case_file_with_a_byte_order_mark_opens(tmp_path):
    gas = {"pao2_mmhg": 72.0, "paco2_mmhg": 44.0, "ph": 7.33, "sao2": 0.925}
    gas |= {"hb_g_dl": 10.2, "fio2": 0.5, "temperature_c": 37.0}
    path = Path(save_case(tmp_path, "bom", gas))
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert open_case(path).label == "bom"


def test_the_shared_reader_keeps_its_old_name_and_signature(tmp_path):
    path = tmp_path / "x.toml"
    path.write_text(SCENARIO)
    assert scenario_read_toml is read_toml
    assert read_toml(path, ScenarioError) == {"blood": {"hb_g_dl": 12}}
