"""The ``o2transit`` command as a user meets it: help, version, several files, busy ports."""

from __future__ import annotations

import argparse
import json
import socket
import subprocess
import sys
from pathlib import Path

import pytest

import o2transit
from o2transit.cli import build_parser, main

ROOT = Path(__file__).resolve().parent.parent
SCENARIOS = ROOT / "scenarios"
BAD = "[blood]\nhb_g_dl = 99\n"


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    (action,) = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    return dict(action.choices)


def test_version(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--version"])
    assert stop.value.code == 0
    assert capsys.readouterr().out.strip() == f"o2transit {o2transit.__version__}"


@pytest.mark.parametrize("name", ["evaluate", "ascent", "batch", "serve"])
def test_every_subcommand_and_option_says_what_it_takes(name):
    sub = _subparsers(build_parser())[name]
    assert sub.description and len(sub.description) > 40
    for action in sub._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        assert action.help, f"{name} {action.dest}: no help"
        # an option with a value of its own names its default in the help
        if action.option_strings and action.default not in (None, False):
            assert "default" in action.help, f"{name} {action.dest}: default not stated"


def test_batch_help_lists_the_columns_it_reads_and_writes():
    text = _subparsers(build_parser())["batch"].format_help()
    for column in (
        "pao2_mmhg",
        "pao2_kpa",
        "hb_g_l",
        "sao2_percent",
        "temperature_c",
        "svo2",
        "shunt_fraction",
        "do2_ml_min",
        "error",
    ):
        assert column in text
    assert "README" not in text  # a pip-installed user has none


def test_evaluate_prints_every_good_file_and_reports_every_bad_one(tmp_path, capsys):
    bad1, bad2 = tmp_path / "bad1.toml", tmp_path / "bad2.toml"
    bad1.write_text(BAD)
    bad2.write_text("not toml [")
    good = SCENARIOS / "fever.toml"
    rc = main(["evaluate", str(bad1), str(good), str(bad2), str(SCENARIOS / "anaemia.toml")])
    out, err = capsys.readouterr()
    assert rc == 2
    assert "Fever" in out and "Anaemia" in out.replace("anaemia", "Anaemia")
    assert "bad1.toml" in err and "bad2.toml" in err and "2 of 4 files failed" in err


def test_evaluate_json_is_always_a_list(capsys):
    assert main(["evaluate", str(SCENARIOS / "fever.toml"), "--json"]) == 0
    records = json.loads(capsys.readouterr().out)
    assert isinstance(records, list) and len(records) == 1
    assert records[0]["scenario"].startswith("Fever")


def test_evaluate_json_with_a_bad_file_still_lists_the_good_ones(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(BAD)
    assert main(["evaluate", str(bad), str(SCENARIOS / "fever.toml"), "--json"]) == 2
    out, err = capsys.readouterr()
    assert [r["scenario"][:5] for r in json.loads(out)] == ["Fever"]
    assert "bad.toml" in err


def test_ascent_reads_a_csv_day_table_and_labels_delivery_per_minute(tmp_path, capsys):
    # the CSV day table of scenarios/ascents/README.md
    path = tmp_path / "my-trek.csv"
    path.write_text("day,sleep_altitude_m,high_altitude_m,fio2\n1,2800,,\n2,3300,3600,\n")
    assert main(["ascent", str(path)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("my-trek")
    assert "mL/min" in out and "mL/m " not in out


def test_ascent_refuses_an_unknown_file_type_in_one_line(tmp_path, capsys):
    path = tmp_path / "trek.txt"
    path.write_text("day 1: 2800 m\n")
    assert main(["ascent", str(path)]) == 2
    err = capsys.readouterr().err
    assert "unknown file type '.txt'" in err and ".csv" in err and ".toml" in err


def test_serve_on_a_busy_port_says_one_line_and_exits_non_zero():
    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen()
        port = taken.getsockname()[1]
        run = subprocess.run(  # noqa: PLW1510 - the status is asserted
            [sys.executable, "-m", "o2transit", "serve", "--port", str(port), "--no-show"],
            capture_output=True,
            text=True,
            timeout=120,
        )
    assert run.returncode == 2
    assert run.stdout == ""  # nothing announced
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and f"port {port}" in lines[0] and "--port" in lines[0]


def test_serve_refuses_a_port_out_of_range(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["serve", "--port", "70000"])
    assert stop.value.code == 2
    assert "outside 1-65535" in capsys.readouterr().err


def test_broken_pipe_is_quiet():
    # `o2transit evaluate ... | head -1`: the reader leaves; no traceback.
    run = subprocess.run(  # noqa: PLW1510 - the status is asserted
        f"{sys.executable} -m o2transit evaluate {SCENARIOS}/*.toml | head -1",
        shell=True,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert "Traceback" not in run.stderr, run.stderr


def test_names_with_terminal_escapes_are_shown_not_obeyed(tmp_path, capsys):
    path = tmp_path / "x.toml"
    path.write_text('name = "ward\\u001b[2J cleared"\ndescription = "d"\n')
    assert main(["evaluate", str(path)]) == 0
    out = capsys.readouterr().out
    assert "\x1b" not in out and "ward\\x1b[2J cleared" in out
