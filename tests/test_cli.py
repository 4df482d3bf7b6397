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


def test_flags_state_their_default_too():
    # issue 14 item 9: every option says its default, flags included ("instead of tables"
    # alone left the reader to guess).
    for name, sub in _subparsers(build_parser()).items():
        for action in sub._actions:
            if action.option_strings and not isinstance(action, argparse._HelpAction):
                if action.required:
                    continue
                assert "default" in action.help, f"{name} {action.option_strings}: no default"


def test_importing_the_command_loads_no_model():
    # issue 18: SIGINT while the command was starting printed a KeyboardInterrupt traceback
    # (the model, about a second of imports, loaded before main() could catch it).
    code = (
        "import sys, o2transit.cli; print(sorted({'numpy', 'scipy', 'pyarrow'} & set(sys.modules)))"
    )
    run = subprocess.run(  # noqa: PLW1510 - the output is asserted
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120
    )
    assert run.stdout.strip() == "[]", run.stdout + run.stderr


def test_an_interrupt_while_starting_is_one_line(tmp_path):
    # The command interrupted while it loads the model: one line, status 130, no traceback.
    code = (
        "import _thread, threading, sys\n"
        "threading.Timer(0.05, _thread.interrupt_main).start()\n"
        "import builtins\n"
        "real = builtins.__import__\n"
        "def slow(name, *a, **k):\n"
        "    if name.startswith('numpy'):\n"
        "        import time; time.sleep(0.2)\n"
        "    return real(name, *a, **k)\n"
        "builtins.__import__ = slow\n"
        "from o2transit.cli import main\n"
        f"sys.exit(main(['evaluate', {str(SCENARIOS / 'anaemia.toml')!r}]))\n"
    )
    run = subprocess.run(  # noqa: PLW1510 - the status is asserted
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120
    )
    assert run.returncode == 130, run.stderr
    assert "Traceback" not in run.stderr, run.stderr
    assert run.stderr.strip().splitlines() == ["interrupted (SIGINT); no output file left behind"]


def test_a_signal_the_caller_ignores_stays_ignored():
    # `nohup o2transit batch ...`: nohup ignores SIGHUP; batch installed its own handler over
    # it, so closing the terminal still stopped the run.
    import signal

    from o2transit.cli import _raise_signalled, _stop_on_signals

    saved = {s: signal.getsignal(s) for s in (signal.SIGHUP, signal.SIGTERM)}
    try:
        signal.signal(signal.SIGHUP, signal.SIG_IGN)
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        _stop_on_signals()
        assert signal.getsignal(signal.SIGHUP) == signal.SIG_IGN
        assert signal.getsignal(signal.SIGTERM) is _raise_signalled
    finally:
        for s, handler in saved.items():
            signal.signal(s, handler)


def test_ascent_names_the_file_once_when_a_schedule_cannot_be_solved(tmp_path, capsys):
    path = tmp_path / "thick.toml"
    path.write_text(
        "[baseline]\nhb_g_dl = 25\n[[day]]\nsleep_altitude_m = 5000\n"
        "[[day]]\nsleep_altitude_m = 5500\n"
    )
    assert main(["ascent", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count(str(path)) == 1, err


def test_a_day_table_the_csv_module_cannot_split_is_one_line(tmp_path, capsys):
    # found by the fuzz suite (explore profile): a bare carriage return in an ascent CSV
    # raised _csv.Error through the command as a traceback.
    path = tmp_path / "mac.csv"
    path.write_bytes(b"\r[[step]]\n")
    assert main(["ascent", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[0].startswith(f"error: {path}: ") and len(err) == 2, err


def test_batch_shows_an_output_name_with_terminal_escapes_as_text(tmp_path, capsys):
    # issue 18 (smaller): names with escape sequences were printed raw; batch's summary
    # line still echoed the output's name as given.
    src = tmp_path / "in.csv"
    src.write_text(
        "pao2_mmhg,paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c\n80,40,7.4,0.95,12,0.4,37\n"
    )
    out = tmp_path / "\x1b]0;owned\x07o.csv"
    assert main(["batch", str(src), "-o", str(out)]) == 0
    err = capsys.readouterr().err
    assert "\x1b" not in err and "\x07" not in err and "\\x1b]0;owned\\x07o.csv" in err
