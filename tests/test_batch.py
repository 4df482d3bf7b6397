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
    assert header == inputs + list(BATCH_OUTPUTS)
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


def test_caution_is_the_first_line(cohort):
    _, _, out = cohort
    first = out.read_text().splitlines()[0]
    assert first.startswith("#") and CAUTION in first


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
    assert header[-len(ALL_OUTPUTS) :] == list(ALL_OUTPUTS)
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
    assert len(b) == len(a) + 1 and b[: len(a)] == a
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
    assert lines[0].startswith("# o2transit batch") and len(lines) == 2 + 4
    assert "standard output" in captured.err


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
