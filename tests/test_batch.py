"""Tests for model.batch and the ``o2transit batch`` command."""

from __future__ import annotations

import csv
import io
import math
import shutil
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from o2transit.model import derive
from o2transit.model.batch import (
    ALL_OUTPUTS,
    BATCH_OUTPUTS,
    CAUTION,
    CHUNK_ROWS,
    END_COLUMN,
    BatchError,
    derive_columns,
    read_table,
    run_batch,
)
from o2transit.model.bedside import DERIVED_FIELDS
from properties import budget

from o2transit.cli import main

DATA = Path(__file__).parent / "data"
CATEGORIES = ("pf_category_berlin", "pf_category_global2024", "sf_category_global2024")
REQUIRED = ("pao2_mmhg", "paco2_mmhg", "ph", "sao2", "hb_g_dl", "fio2", "temperature_c")


def _rows(path: Path, delimiter: str = ",") -> list[dict[str, str]]:
    with open(path, encoding="utf-8") as f:
        lines = [line for line in f if not line.startswith("#")]
    return list(csv.DictReader(lines, delimiter=delimiter))


def _header(path: Path) -> list[str]:
    with open(path, encoding="utf-8") as f:
        return next(csv.reader(line for line in f if not line.startswith("#")))


def _in_own_process(args: list[str]) -> None:
    """Python with ``args`` in a process of its own (single-threaded: batch forks workers)."""
    import subprocess
    import sys

    done = subprocess.run(
        [sys.executable, *args], capture_output=True, text=True, timeout=300, check=False
    )
    assert done.returncode == 0, done.stderr


def _num(cell: str) -> float:
    return float(cell.replace(",", ".")) if cell else math.nan


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.fixture
def cohort(tmp_path):
    out = tmp_path / "out.csv"
    summary = run_batch(DATA / "batch_cohort_mmhg.csv", out, stream=io.StringIO())
    return summary, _rows(out), out


# --- the cohort file ------------------------------------------------------------------


def test_every_row_is_kept_and_outputs_added(cohort):
    summary, rows, out = cohort
    header = _header(out)
    inputs = _header(DATA / "batch_cohort_mmhg.csv")
    assert header == inputs + list(BATCH_OUTPUTS) + [END_COLUMN]
    for key in (
        "pao2_fio2_ratio",
        "aa_gradient_mmhg",
        "cao2_ml_dl",
        "p50_insitu_mmhg",
        "shunt_fraction",
        "do2_ml_min",
        "error",
    ):
        assert key in header
    # 10 data lines, one blank line skipped; input cells passed through untouched.
    assert summary.rows == len(rows) == 9
    assert [r["case"] for r in rows] == ["A", "B", "C", "D", "E", "ward 3, bed 2", "G", "H", "I"]
    assert rows[1]["pao2_mmhg"] == "68" and rows[1]["svo2"] == "0.66"


def test_output_is_plain_csv_with_the_header_on_line_1(cohort, tmp_path):
    # issue 14: line 1 was a '#' caution with commas; every reader must take the output
    # with its defaults (pandas, csv.DictReader), and a label "bed #4" must survive.
    import pandas as pd

    _, rows, out = cohort
    text = out.read_text()
    assert text.splitlines()[0].startswith("case,pao2_mmhg,")
    assert CAUTION not in text and not any(line.startswith("#") for line in text.splitlines())
    frame = pd.read_csv(out)
    assert list(frame.columns) == _header(out) and len(frame) == len(rows) == 9
    with open(out, newline="", encoding="utf-8") as f:
        assert [r["case"] for r in csv.DictReader(f)] == [r["case"] for r in rows]
    src = tmp_path / "hash.csv"
    src.write_text(",".join(("case",) + REQUIRED) + "\nbed #4,80,40,7.4,0.95,12,0.4,37\n")
    run_batch(src, tmp_path / "hash_out.csv", stream=io.StringIO())
    back = pd.read_csv(tmp_path / "hash_out.csv")
    assert back["case"].tolist() == ["bed #4"] and back["pao2_fio2_ratio"].tolist() == [200]


def test_the_last_row_says_the_output_is_complete(cohort):
    # The documented check: the last row's rows_in_output equals the rows read; every
    # other row leaves it blank.
    _, rows, _ = cohort
    assert [r[END_COLUMN] for r in rows] == [""] * (len(rows) - 1) + [str(len(rows))]


def test_malformed_rows_get_their_message_and_blank_outputs(cohort):
    summary, rows, _ = cohort
    by_case = {r["case"]: r for r in rows}
    expected = {
        "C": "pao2_mmhg = '7O' is not a number",
        "D": "fio2 = 4 is outside the allowed range 0.05-1 (FiO2); give a fraction",
        "E": "ph is missing",
        "G": "row has 15 cells but the header has 14",
        "I": "pao2_mmhg is missing",
    }
    for case, message in expected.items():
        row = by_case[case]
        assert message in row["error"], case
        assert all(row[k] == "" for k in BATCH_OUTPUTS if k != "error"), case
    good = [r for r in rows if r["case"] not in expected]
    assert all(r["error"] == "" for r in good)
    assert all(r["pao2_fio2_ratio"] != "" for r in good)
    assert summary.rows_with_errors == len(expected)


def test_batch_values_equal_derive_row_by_row(cohort):
    # The file path must give what model.bedside.derive gives for the same row, to the
    # decimals shown (DERIVED_FIELDS); tolerance half a unit in the last place shown.
    _, rows, _ = cohort
    row = next(r for r in rows if r["case"] == "B")
    d = derive(
        pao2_mmhg=68.0,
        paco2_mmhg=46.0,
        ph=7.31,
        sao2=0.92,
        hb_g_dl=9.8,
        fio2=0.6,
        temperature_c=38.4,
        barometric_pressure_mmhg=752.0,
        age_years=71.0,
        pvo2_mmhg=36.0,
        svo2=0.66,
        pvco2_mmhg=53.0,
        cardiac_output_l_min=6.1,
    )
    for key in BATCH_OUTPUTS:
        if key in ("error",):
            continue
        if d[key].dtype == object:
            assert row[key] == str(d[key]), key
        elif np.isfinite(d[key]):
            half = 0.5 * 10.0 ** -DERIVED_FIELDS[key][2] + 1e-12
            assert abs(_num(row[key]) - float(d[key])) <= half, key
        else:
            assert row[key] == "", key


def test_kpa_gl_percent_semicolon_file_matches_the_mmhg_file(tmp_path):
    # Same patients in kPa (4 decimals), g/L and percent, ';' with decimal commas: every
    # output within one unit of the last shown decimal (the kPa rounding is 0.004 mmHg).
    mm_out, kpa_out = tmp_path / "mm.csv", tmp_path / "kpa.csv"
    run_batch(DATA / "batch_cohort_mmhg.csv", mm_out, stream=io.StringIO())
    summary = run_batch(DATA / "batch_cohort_kpa.csv", kpa_out, stream=io.StringIO())
    assert summary.rows_with_errors == 0
    mm = [r for r in _rows(mm_out) if not r["error"]]
    kpa = _rows(kpa_out, delimiter=";")
    assert len(mm) == len(kpa) == 4
    assert kpa[2]["case"] == "ward 3; bed 2"
    assert "," in kpa[1]["cao2_ml_dl"]  # decimal comma kept in the output
    for a, b in zip(mm, kpa):
        for key in BATCH_OUTPUTS:
            if key in DERIVED_FIELDS and key not in CATEGORIES:
                one = 10.0 ** -DERIVED_FIELDS[key][2] + 1e-9
                x, y = _num(a[key]), _num(b[key])
                assert (math.isnan(x) and math.isnan(y)) or abs(x - y) <= one, key
            elif key != "error":
                assert a[key] == b[key], key


def test_all_columns_option(tmp_path):
    out = tmp_path / "all.csv"
    run_batch(DATA / "batch_cohort_mmhg.csv", out, all_columns=True, stream=io.StringIO())
    header = _header(out)
    assert header[-len(ALL_OUTPUTS) - 1 :] == list(ALL_OUTPUTS) + [END_COLUMN]
    assert set(DERIVED_FIELDS) <= set(header)


def test_output_can_be_read_back_but_not_rerun(tmp_path, cohort):
    _, rows, out = cohort
    _, data, delimiter = read_table(out)
    assert len(data) == len(rows) and delimiter == ","
    with pytest.raises(BatchError, match="has the name of an output column"):
        run_batch(out, tmp_path / "again.csv", stream=io.StringIO())


# --- column handling ------------------------------------------------------------------


def test_derive_columns_flags_each_bad_cell():
    cols = {k: ["1"] * 3 for k in REQUIRED}
    cols.update(
        pao2_mmhg=["80", "", "80"],
        paco2_mmhg=["40", "40", "x"],
        ph=["7.4"] * 3,
        sao2=["0.95", "0.95", "95"],
        hb_g_dl=["12"] * 3,
        fio2=["0.4"] * 3,
        temperature_c=["37"] * 3,
    )
    derived, errors = derive_columns(cols)
    assert errors[0] == ""
    assert errors[1].startswith("pao2_mmhg is missing")
    assert "paco2_mmhg = 'x' is not a number" in errors[2]
    assert "sao2 = 95 is outside the allowed range 0.05-1 (SaO2); give a fraction" in errors[2]
    assert np.isfinite(derived["cao2_ml_dl"][0]) and np.isnan(derived["cao2_ml_dl"][1:]).all()


def test_a_row_derive_refuses_is_isolated(monkeypatch):
    # Should derive ever refuse a row the cell checks let through, that row alone gets the
    # message and the others keep their values.
    import o2transit.model.batch as batch_module

    real = batch_module.derive

    def picky(**kw):
        if np.any(np.asarray(kw["pao2_mmhg"]) == 77.0):
            raise ValueError("pao2_mmhg = 77 refused for this test")
        return real(**kw)

    monkeypatch.setattr(batch_module, "derive", picky)
    cols = {
        "pao2_mmhg": ["80", "77", "90"],
        "paco2_mmhg": ["40"] * 3,
        "ph": ["7.4"] * 3,
        "sao2": ["0.95"] * 3,
        "hb_g_dl": ["12"] * 3,
        "fio2": ["0.4"] * 3,
        "temperature_c": ["37"] * 3,
    }
    derived, errors = derive_columns(cols)
    assert errors.tolist() == ["", "pao2_mmhg = 77 refused for this test", ""]
    assert derived["pao2_fio2_ratio"][[0, 2]].tolist() == [200.0, 225.0]
    assert np.isnan(derived["pao2_fio2_ratio"][1]) and derived["notes"][1] == ""


@budget(40)
@given(
    cells=st.lists(st.text(max_size=8), min_size=1, max_size=6), column=st.sampled_from(REQUIRED)
)
def test_any_cell_text_never_aborts(cells, column):
    # Whatever a cell holds, the batch reports it per row and never raises.
    n = len(cells)
    cols = {
        "pao2_mmhg": ["80"] * n,
        "paco2_mmhg": ["40"] * n,
        "ph": ["7.4"] * n,
        "sao2": ["0.95"] * n,
        "hb_g_dl": ["12"] * n,
        "fio2": ["0.4"] * n,
        "temperature_c": ["37"] * n,
    }
    cols[column] = cells
    derived, errors = derive_columns(cols)
    ok = errors == ""
    assert np.isfinite(derived["cao2_ml_dl"][ok]).all()
    assert np.isnan(derived["cao2_ml_dl"][~ok]).all()
    assert all(column in e for e in errors[~ok])


def test_cohb_plus_methb_row_error():
    cols = {
        "pao2_mmhg": ["80"],
        "paco2_mmhg": ["40"],
        "ph": ["7.4"],
        "sao2": ["0.95"],
        "hb_g_dl": ["12"],
        "fio2": ["0.4"],
        "temperature_c": ["37"],
        "cohb_fraction": ["0.6"],
        "methb_fraction": ["0.5"],
    }
    _, errors = derive_columns(cols)
    assert "cohb_fraction + methb_fraction" in errors[0]


def test_chunks_do_not_change_results(tmp_path):
    # More rows than one chunk, with a bad row in the second chunk.
    n = CHUNK_ROWS + 7
    src = tmp_path / "many.csv"
    lines = [",".join(REQUIRED)] + ["80,40,7.40,0.95,12,0.4,37"] * n
    lines[CHUNK_ROWS + 3] = "80,40,7.40,0.95,12,0.4,99"
    src.write_text("\n".join(lines) + "\n")
    summary = run_batch(src, tmp_path / "o.csv", stream=io.StringIO())
    rows = _rows(tmp_path / "o.csv")
    assert summary.rows == n and summary.rows_with_errors == 1
    assert "temperature_c = 99 degC" in rows[CHUNK_ROWS + 2]["error"]
    assert {r["pao2_fio2_ratio"] for r in rows if not r["error"]} == {"200"}


def test_worker_processes_give_the_same_bytes_as_one_worker(tmp_path):
    # The command computes chunks in worker processes (fork); a quoted block, a ragged row
    # and blank lines among several chunks must come out byte for byte as with one worker.
    src = tmp_path / "many.csv"
    base = "80,40,7.40,0.95,12,0.4,37"
    rows = [base] * (3 * CHUNK_ROWS)
    rows[5] = "80,40,7.40,0.95,12,0.4,99"
    rows[CHUNK_ROWS + 1] = ""
    rows[2 * CHUNK_ROWS] = '"80",40,7.40,0.95,12,0.4,37'  # from here on, the csv module
    rows[2 * CHUNK_ROWS + 9] = base + ",1"
    src.write_text(
        "case_label,"
        + ",".join(REQUIRED)
        + "\n"
        + "\n".join(f"bed {i}," + r if r else "" for i, r in enumerate(rows))
        + "\n"
    )
    outs = []
    for n in ("1", "3"):
        out = tmp_path / f"o{n}.csv"
        _in_own_process(["-m", "o2transit", "batch", str(src), "-o", str(out), "--workers", n])
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
    got = _rows(tmp_path / "o3.csv")
    assert len(got) == 3 * CHUNK_ROWS - 1 and got[-1]["rows_in_output"] == str(len(got))
    assert "temperature_c = 99 degC" in got[5]["error"]


def test_worker_count_is_checked():
    with pytest.raises(SystemExit) as stop:
        main(["batch", "in.csv", "-o", "out.csv", "--workers", "0"])
    assert stop.value.code == 2


@pytest.mark.parametrize(
    "header, message",
    [
        ("paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c", "pao2_mmhg or pao2_kpa"),
        ("pao2_mmhg,pao2_kpa,paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c", "keep one"),
        ("pao2_mmhg,ph,ph,paco2_mmhg,sao2,hb_g_dl,fio2,temperature_c", "more than once"),
    ],
)
def test_file_level_problems_write_nothing(tmp_path, header, message):
    src = tmp_path / "in.csv"
    src.write_text(header + "\n" + ",".join(["1"] * len(header.split(","))) + "\n")
    out = tmp_path / "out.csv"
    with pytest.raises(BatchError, match=message):
        run_batch(src, out, stream=io.StringIO())
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [src]  # no temporary file left behind


def test_empty_and_missing_files(tmp_path):
    with pytest.raises(BatchError, match="input file not found"):
        run_batch(tmp_path / "nope.csv", tmp_path / "o.csv")
    (tmp_path / "empty.csv").write_text("# only a comment\n\n")
    with pytest.raises(BatchError, match="no header"):
        run_batch(tmp_path / "empty.csv", tmp_path / "o.csv")
    src = tmp_path / "in.csv"
    shutil.copy(DATA / "batch_cohort_mmhg.csv", src)
    with pytest.raises(BatchError, match="overwrite the input"):
        run_batch(src, src)
    with pytest.raises(BatchError, match="does not exist"):
        run_batch(src, tmp_path / "no_such_dir" / "o.csv")


def test_unreadable_csv_is_a_file_level_error(tmp_path):
    # A cell longer than the csv module's field limit (131,072 characters).
    src = tmp_path / "huge.csv"
    src.write_text(
        "pao2_mmhg,paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c\n" + '"' + "8" * 200_000 + '"\n'
    )
    with pytest.raises(BatchError, match="not a readable CSV file"):
        run_batch(src, tmp_path / "o.csv")


def test_plain_and_quoted_files_give_the_same_rows(tmp_path):
    # A file without any quote is split directly and its lines passed through; one quoted
    # cell sends it through the csv module. Both must write the same rows.
    lines = (DATA / "batch_cohort_mmhg.csv").read_text().splitlines()
    plain = [line for line in lines if '"' not in line]
    (tmp_path / "plain.csv").write_text("\n".join(plain) + "\n")
    (tmp_path / "quoted.csv").write_text("\n".join(plain + ['"Q",80,40,7.4,0.95,12,0.4,37']) + "\n")
    run_batch(tmp_path / "plain.csv", tmp_path / "a.csv", stream=io.StringIO())
    run_batch(tmp_path / "quoted.csv", tmp_path / "b.csv", stream=io.StringIO())
    a = (tmp_path / "a.csv").read_text().splitlines()
    b = (tmp_path / "b.csv").read_text().splitlines()
    # every row alike but for the end cell (rows_in_output), which only the last row holds
    assert a[-1].endswith(f",{len(a) - 1}") and b[-1].endswith(f",{len(b) - 1}")
    cut = [line.rsplit(",", 1)[0] for line in a]
    assert len(b) == len(a) + 1 and [line.rsplit(",", 1)[0] for line in b[: len(a)]] == cut
    assert b[-1].startswith("Q,80,40,7.4,0.95,12,0.4,37,,,,,,,")


def test_tab_separated_file(tmp_path):
    src = tmp_path / "gases.tsv"
    src.write_text(
        "case\tpao2_mmhg\tpaco2_mmhg\tph\tsao2\thb_g_dl\tfio2\ttemperature_c\n"
        "t1\t80\t40\t7.40\t0.95\t12\t0.4\t37\n"
    )
    run_batch(src, tmp_path / "o.tsv", stream=io.StringIO())
    (row,) = _rows(tmp_path / "o.tsv", delimiter="\t")
    assert row["case"] == "t1" and row["pao2_fio2_ratio"] == "200" and row["error"] == ""


def test_excel_byte_order_mark_is_skipped(tmp_path):
    src = tmp_path / "bom.csv"
    src.write_bytes(
        "\ufeff".encode() + b"pao2_mmhg,paco2_mmhg,ph,sao2,hb_g_dl,fio2,"
        b"temperature_c\n80,40,7.4,0.95,12,0.4,37\n"
    )
    assert run_batch(src, tmp_path / "o.csv", stream=io.StringIO()).rows_with_errors == 0


# --- progress -------------------------------------------------------------------------


def test_no_progress_when_not_a_terminal(tmp_path):
    stream = io.StringIO()
    run_batch(DATA / "batch_cohort_mmhg.csv", tmp_path / "o.csv", stream=stream)
    assert stream.getvalue() == ""


def test_progress_bar_on_a_terminal(tmp_path):
    stream = _Terminal()
    run_batch(DATA / "batch_cohort_mmhg.csv", tmp_path / "o.csv", stream=stream)
    text = stream.getvalue()
    assert "\rbatch [" in text and "9/9 rows" in text and text.endswith("\n")
    quiet = _Terminal()
    run_batch(DATA / "batch_cohort_mmhg.csv", tmp_path / "o.csv", stream=quiet, progress=False)
    assert quiet.getvalue() == ""


# --- the command ----------------------------------------------------------------------


def test_cli_success(tmp_path, capsys):
    out = tmp_path / "o.csv"
    assert main(["batch", str(DATA / "batch_cohort_mmhg.csv"), "-o", str(out)]) == 0
    err = capsys.readouterr().err
    assert "9 rows" in err and "5 with an error" in err and CAUTION in err
    assert "\r" not in err  # pytest's capture is not a terminal: no bar
    assert len(_rows(out)) == 9


def test_cli_to_standard_output(capsys):
    assert main(["batch", str(DATA / "batch_cohort_kpa.csv"), "-o", "-"]) == 0
    captured = capsys.readouterr()
    lines = captured.out.splitlines()
    assert lines[0].startswith("case;pao2_kpa;") and len(lines) == 1 + 4
    assert lines[-1].endswith(";4") and CAUTION not in captured.out
    assert "standard output" in captured.err and CAUTION in captured.err


@pytest.mark.parametrize("kind", ["missing file", "missing column"])
def test_cli_exit_2(tmp_path, capsys, kind):
    src = tmp_path / "in.csv"
    if kind == "missing column":
        src.write_text("pao2_mmhg,ph\n80,7.4\n")
    code = main(["batch", str(src), "-o", str(tmp_path / "o.csv")])
    assert code == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ")
    assert ("input file not found" if kind == "missing file" else "required column missing") in err
    assert "Traceback" not in err
    assert not (tmp_path / "o.csv").exists()


# --- files, formats, targets, signals (issues 14 and 18) -------------------------------

GOOD = (
    ",".join(("case",) + REQUIRED) + "\nc1,80,40,7.4,0.95,12,0.4,37\nc2,90,40,7.4,0.96,12,0.4,37\n"
)


def _src(tmp_path, text=GOOD, name="in.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_output_gets_the_users_usual_mode_or_the_replaced_files(tmp_path):
    import os
    import stat

    old = os.umask(0o022)
    try:
        run_batch(_src(tmp_path), tmp_path / "new.csv", stream=io.StringIO())
        assert stat.S_IMODE((tmp_path / "new.csv").stat().st_mode) == 0o644
        kept = tmp_path / "kept.csv"
        kept.write_text("old")
        kept.chmod(0o640)
        run_batch(_src(tmp_path), kept, stream=io.StringIO())
        assert stat.S_IMODE(kept.stat().st_mode) == 0o640 and kept.read_text() != "old"
    finally:
        os.umask(old)


@pytest.mark.parametrize("kind", ["fifo", "symlink", "folder", "device"])
def test_a_target_that_is_not_a_regular_file_is_refused_and_left_alone(tmp_path, kind):
    import os

    target = tmp_path / "target.csv"
    if kind == "fifo":
        os.mkfifo(target)
    elif kind == "symlink":
        (tmp_path / "real.csv").write_text("keep me")
        target.symlink_to(tmp_path / "real.csv")
    elif kind == "folder":
        target.mkdir()
    else:
        target = Path("/dev/null")
    with pytest.raises(BatchError, match="not a regular file; batch writes only to a regular"):
        run_batch(_src(tmp_path), target, stream=io.StringIO())
    if kind == "symlink":
        assert target.is_symlink() and (tmp_path / "real.csv").read_text() == "keep me"
    if kind == "device":
        assert Path("/dev/null").is_char_device()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_rows_end_only_at_newline_cr_lf_and_cr(tmp_path):
    # issue 18: U+2028, \v, \f, \x1c-\x1e and 0x85 inside a cell must not split a row.
    weird = ["a\u2028b", "c\x0bd", "e\x0cf", "g\x1ch", "i\x1dj", "k\x1el", "m\u0085n"]
    lines = [",".join(("case",) + REQUIRED)] + [f"{w},80,40,7.4,0.95,12,0.4,37" for w in weird]
    src = tmp_path / "odd.csv"
    src.write_bytes(("\r\n".join(lines[:4]) + "\r" + "\n".join(lines[4:]) + "\n").encode())
    out = tmp_path / "odd_out.csv"
    summary = run_batch(src, out, stream=io.StringIO())
    assert summary.rows == len(weird) and summary.rows_with_errors == 0
    with open(out, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    assert [r["case"] for r in rows] == weird


def test_unknown_extensions_are_refused(tmp_path):
    with pytest.raises(BatchError, match=r"unknown output file type '.xlsx'"):
        run_batch(_src(tmp_path), tmp_path / "o.xlsx", stream=io.StringIO())
    with pytest.raises(BatchError, match=r"unknown input file type '.json'"):
        run_batch(_src(tmp_path, name="in.json"), tmp_path / "o.csv", stream=io.StringIO())
    assert not (tmp_path / "o.xlsx").exists()


def test_a_hard_link_to_the_input_is_not_overwritten(tmp_path):
    import os

    src = _src(tmp_path)
    os.link(src, tmp_path / "same.csv")
    with pytest.raises(BatchError, match="overwrite the input"):
        run_batch(src, tmp_path / "same.csv", stream=io.StringIO())
    assert src.read_text() == GOOD


@pytest.mark.parametrize(
    "data, message",
    [
        (b"", "the file is empty"),
        ("\ufeff".encode("utf-16-le") + GOOD.encode("utf-16-le"), "UTF-16 text, not UTF-8"),
        (GOOD.replace("c1", "caf\xe9").encode("latin-1"), r"not UTF-8 text \(byte 0xe9"),
        (b"\x00\x01\x02binary\xff" * 50, "NUL bytes"),
        (b",".join(REQUIRED[i].encode() for i in range(7)) + b"\n", "no data rows"),
    ],
)
def test_bad_input_files_are_refused_in_one_line(tmp_path, data, message):
    src = tmp_path / "bad.csv"
    src.write_bytes(data)
    with pytest.raises(BatchError, match=message) as info:
        run_batch(src, tmp_path / "o.csv", stream=io.StringIO())
    assert "\n" not in str(info.value) and str(src) in str(info.value)
    assert list(tmp_path.iterdir()) == [src]


def test_a_fifo_input_is_refused_without_hanging(tmp_path):
    import os

    fifo = tmp_path / "gases.csv"
    os.mkfifo(fifo)
    with pytest.raises(BatchError, match="FIFO"):
        run_batch(fifo, tmp_path / "o.csv", stream=io.StringIO())


def test_parquet_in_and_out_with_the_caution_in_its_metadata(tmp_path):
    import pyarrow.parquet as pq
    from o2transit.model.batch import PARQUET_METADATA_KEYS

    out_pq = tmp_path / "derived.parquet"
    summary = run_batch(DATA / "batch_cohort_mmhg.csv", out_pq, stream=io.StringIO())
    assert summary.format == "parquet" and out_pq.read_bytes()[:4] == b"PAR1"
    table = pq.read_table(out_pq)
    meta = {k.decode(): v.decode() for k, v in pq.read_metadata(out_pq).metadata.items()}
    assert set(PARQUET_METADATA_KEYS) <= set(meta) and meta["o2transit.caution"] == CAUTION
    assert meta["o2transit.rows"] == "9" and table.num_rows == 9
    assert table.column_names == _header(DATA / "batch_cohort_mmhg.csv") + list(BATCH_OUTPUTS)
    # Parquet in, CSV out: the same numbers as the CSV path
    again = tmp_path / "again.csv"
    src = tmp_path / "gases.parquet"
    pq.write_table(table.select(_header(DATA / "batch_cohort_mmhg.csv")), src)
    run_batch(src, again, stream=io.StringIO())
    direct = tmp_path / "direct.csv"
    run_batch(DATA / "batch_cohort_mmhg.csv", direct, stream=io.StringIO())
    a, b = _rows(again), _rows(direct)
    same = [i for i, r in enumerate(b) if not r["error"].startswith("row has")]  # G is ragged
    assert len(a) == len(b) and len(same) == len(b) - 1
    for key in BATCH_OUTPUTS:
        assert [a[i][key] for i in same] == [b[i][key] for i in same], key


def test_a_kill_leaves_no_temporary_file_and_no_traceback(tmp_path):
    # SIGTERM, SIGINT and SIGHUP in the middle of a long run: non-zero, no traceback,
    # nothing left in the output folder.
    import signal
    import subprocess
    import sys
    import time

    big = tmp_path / "big.csv"
    row = "80,40,7.4,0.95,12,0.4,37\n"
    big.write_text(",".join(REQUIRED) + "\n" + row * 400_000)
    outdir = tmp_path / "out"
    outdir.mkdir()
    for sig in (signal.SIGTERM, signal.SIGINT, signal.SIGHUP):
        proc = subprocess.Popen(
            [sys.executable, "-m", "o2transit", "batch", str(big), "-o", str(outdir / "o.csv")],
            stderr=subprocess.PIPE,
        )
        deadline = time.time() + 30
        while not list(outdir.iterdir()) and time.time() < deadline and proc.poll() is None:
            time.sleep(0.02)
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=60)
        text = err.decode()
        if proc.returncode == 0:  # finished before the signal arrived: nothing to check
            (outdir / "o.csv").unlink()
            continue
        assert proc.returncode == 128 + sig, text
        assert "Traceback" not in text and "interrupted" in text
        assert list(outdir.iterdir()) == []


def test_the_output_delimiter_follows_the_output_ending(tmp_path):
    # issue 14 item 3: a tab-separated export written with `-o derived.csv` came out
    # tab-separated under a .csv name (pandas.read_csv saw one column), and a CSV input
    # written to .tsv kept its commas.
    import pandas as pd

    tsv = _src(tmp_path, GOOD.replace(",", "\t").replace("c1", "bed, 4"), name="in.tsv")
    run_batch(tsv, tmp_path / "o.csv", stream=io.StringIO())
    df = pd.read_csv(tmp_path / "o.csv")
    assert list(df["case"]) == ["bed, 4", "c2"] and list(df["pao2_fio2_ratio"]) == [200, 225]
    assert df[END_COLUMN].iloc[-1] == len(df)
    run_batch(
        _src(tmp_path, GOOD.replace("c1", "bed\t4")), tmp_path / "o.tsv", stream=io.StringIO()
    )
    back = pd.read_csv(tmp_path / "o.tsv", sep="\t")
    assert list(back["case"]) == ["bed\t4", "c2"] and list(back["pao2_fio2_ratio"]) == [200, 225]


def test_standard_output_is_comma_separated_whatever_the_input(tmp_path, capsys):
    # `-o -` is "CSV on standard output" (the help): a .tsv input gave tabs.
    import pandas as pd

    tsv = _src(tmp_path, GOOD.replace(",", "\t"), name="in.tsv")
    assert main(["batch", str(tsv), "-o", "-"]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert list(df["case"]) == ["c1", "c2"] and df[END_COLUMN].iloc[-1] == 2


def test_an_input_without_rows_writes_nothing_to_standard_output(tmp_path, capsys):
    # README: "nothing is written" on a file-level error; `-o -` still got the header line.
    src = _src(tmp_path, GOOD.splitlines()[0] + "\n")
    assert main(["batch", str(src), "-o", "-"]) == 2
    captured = capsys.readouterr()
    assert captured.out == "" and "no data rows" in captured.err


# --- the fast paths give what the plain definitions give ----------------------------------


def test_number_cells_are_told_as_the_number_pattern_tells_them():
    # _parse classifies plain decimals without the regex and sends only the other cells
    # to it; every cell must come out as the pattern and float() make it (ASCII digits).
    import re

    import pyarrow as pa
    from o2transit.model import batch as batch_module

    plain = ["7.40", "12", "5.", ".5", "0", "007.1", "1.2.3", ".", ".."]
    spelled = ["+1", "-2.5", "1e2", "2E-1", "+.5", "nan", "NaN", "-inf", "Infinity", " 7.4 "]
    other = ["\t8", "", "  ", "x", "1,5", "0x10", "\u0663", "7.4x", "e5", "1.5e", "1_0", "\u00a07"]
    cells: list[str | None] = [*plain, *spelled, *other, None]
    pattern = re.compile(batch_module._NUMBER, re.ASCII)
    for decimal_comma in (False, True):
        values, bad = batch_module._parse(pa.array(cells, type=pa.string()), decimal_comma)
        for cell, value, refused in zip(cells, values.tolist(), bad.tolist()):
            text = "" if cell is None else cell.strip()
            text = text.replace(",", ".") if decimal_comma else text
            if not text:
                assert math.isnan(value) and not refused, cell
            elif pattern.fullmatch(text):
                expected = float(text)
                assert not refused and (value == expected or math.isnan(expected)), cell
            else:
                assert refused and math.isnan(value), cell
    # a column of numbers only, some in other spellings, is read whole
    values, bad = batch_module._parse(pa.array(["1e2", "-3", "4.5", "", None]), False)
    assert values[:3].tolist() == [100.0, -3.0, 4.5] and np.isnan(values[3:]).all()
    assert not bad.any()


@pytest.mark.parametrize("chars", ['",', "\r\n\x1d\x1e", '"\t'])
def test_cells_holding_finds_each_cell_with_one_of_the_characters(chars):
    import pyarrow as pa
    from o2transit.model import batch as batch_module

    cells = [
        "",
        "a,b",
        'say "hi"',
        "tab\there",
        "line\nend",
        "\x1dmark",
        "plain",
        None,
        "é,ü",
        "\r",
        "x" * 300 + ",",
        ",",
        '"',
    ]
    arr = pa.array(cells, type=pa.string())
    for cut in (arr, arr.slice(3)):  # a slice has offsets that do not start at 0
        found = batch_module._cells_holding(cut, chars)
        expected = [c is not None and any(ch in c for ch in chars) for c in cut.to_pylist()]
        assert found.tolist() == expected


def test_blocks_and_lines_too_long_for_the_shared_memory_go_through_the_pipe(tmp_path):
    # Worker processes take blocks from and put CSV lines into memory shared with the
    # command; what does not fit is pickled instead. With room for almost nothing, the
    # bytes must be those of one worker (no shared memory at all).
    src = tmp_path / "many.csv"
    base = "80,40,7.40,0.95,12,0.4,37"
    rows = [f"bed {i},{base}" for i in range(2 * CHUNK_ROWS + 50)]
    rows[3] = "bed 3,80,40,7.40,0.95,12,4,37"
    rows[-20] = 'bed x,"80",40,7.40,0.95,12,0.4,37'  # from here on, chunks of the csv module
    src.write_text("case_label," + ",".join(REQUIRED) + "\n" + "\n".join(rows) + "\n")
    code = (
        "import sys; from o2transit.model import batch as b; from o2transit.cli import main\n"
        "if sys.argv[1] == 'small':\n"
        "    b._SLOT_IN_BYTES, b._SLOT_OUT_BYTES = 5000, 600_000\n"
        "    b._SLOT_BYTES = b._SLOT_IN_BYTES + b._SLOT_OUT_BYTES\n"
        "sys.exit(main(['batch', sys.argv[2], '-o', sys.argv[3], '--workers', sys.argv[4]]))\n"
    )
    outs = []
    for room, workers in (("usual", "1"), ("usual", "2"), ("small", "2")):
        out = tmp_path / f"o_{room}_{workers}.csv"
        _in_own_process(["-c", code, room, str(src), str(out), workers])
        outs.append(out.read_bytes())
    assert outs[0] == outs[1] == outs[2]
    got = _rows(tmp_path / "o_small_2.csv")
    assert len(got) == len(rows) and got[-1][END_COLUMN] == str(len(rows))
    assert "fio2 = 4" in got[3]["error"]


def test_a_cell_with_a_line_end_leaves_the_text_outputs_as_text(tmp_path):
    """A chunk holding a quoted cell with a line end is written cell by cell; its reasons and
    flags (which hold commas and colons) must come out quoted, not with the stand-in bytes
    Arrow's writer path uses (found in review: 0x1e and 0x1d in the output)."""
    src = tmp_path / "multiline.csv"
    src.write_text(
        "case,pao2_mmhg,paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c,svo2,pvo2_mmhg,"
        "cardiac_output_l_min\n"
        '"two\nlines",90,40,7.4,0.97,14,0.21,37,0.99,45,5\n'
        "b,90,40,7.4,0.97,14,0.21,37,0.7,38,5\n",
        encoding="utf-8",
    )
    out = tmp_path / "out.csv"
    run_batch(src, out, stream=io.StringIO())
    data = out.read_bytes()
    assert b"\x1e" not in data and b"\x1d" not in data
    rows = list(csv.DictReader(io.StringIO(data.decode("utf-8"), newline="")))
    assert [r["case"] for r in rows] == ["two\nlines", "b"]
    assert rows[0]["reasons"].startswith("CvO2 >= CaO2")
    assert "; shunt, VO2 and extraction not computed" in rows[0]["reasons"]
