"""Batch: the bedside derived values for a whole table of blood gases (CSV in, CSV out).

Input columns (header names exact, any order; extra columns are passed through):

* required: ``pao2_mmhg, paco2_mmhg, ph, sao2, hb_g_dl, fio2, temperature_c``;
* optional: ``pb_mmhg, age_years, pvo2_mmhg, svo2, pvco2_mmhg, cardiac_output_l_min``
  and any other key of :data:`model.bedside.MEASURED_LIMITS` under its own name
  (``cohb_fraction, methb_fraction, lactate_mmol_l, altitude_m,
  mean_airway_pressure_cmh2o, cardiac_index_l_min_m2, height_cm, weight_kg``,
  ``barometric_pressure_mmhg``);
* unit variants (``COLUMN_VARIANTS``): ``pao2_kpa, paco2_kpa, pvo2_kpa, pvco2_kpa,
  pb_kpa`` [kPa], ``hb_g_l`` [g/L], ``sao2_percent, svo2_percent, fio2_percent`` [%].
  One quantity in one column only: giving ``pao2_mmhg`` and ``pao2_kpa`` is an error.

A blank cell (or ``nan``) means "not given". Each output row keeps the input cells and
adds the derived values (``BATCH_OUTPUTS``, blank where not computable), the P/F
categories, ``p50_insitu_reason``, ``notes``, ``flags`` and ``error``. A row with a cell
that is not a number, out of range or missing where required gets its message in
``error`` and blank outputs; the other rows are unaffected. The first line of the output
is a ``#`` comment carrying the caution; the reader here skips leading ``#`` lines, so an
output can be read back.

Files with ``;`` or tab as the separator are accepted; with ``;`` a decimal comma is
accepted in the input and used in the output. Excel's UTF-8 byte-order mark is skipped.
"""

from __future__ import annotations

import csv
import io
import math
import os
import sys
import tempfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .bedside import DERIVED_FIELDS, MEASURED_LIMITS, REQUIRED_MEASURED, derive
from .caution import CAUTION
from .units import UnitVariant, unit_variants

COLUMN_VARIANTS: dict[str, UnitVariant] = {
    # pb_* are the short column names of the barometric pressure
    "pb_mmhg": UnitVariant("barometric_pressure_mmhg", 1.0, "mmHg"),
    "pb_kpa": unit_variants("pb_mmhg")["pb_kpa"]._replace(key="barometric_pressure_mmhg"),
    **unit_variants("pao2_mmhg"),
    **unit_variants("paco2_mmhg"),
    **unit_variants("pvo2_mmhg"),
    **unit_variants("pvco2_mmhg"),
    **unit_variants("hb_g_dl", ("_g_l",)),
    **unit_variants("sao2", ("_percent",)),
    **unit_variants("svo2", ("_percent",)),
    **unit_variants("fio2", ("_percent",)),
}
"""Input column -> (measured key, factor to the model's unit, the column's unit)."""

BATCH_OUTPUTS = (
    "barometric_pressure_used_mmhg",
    "alveolar_po2_mmhg",
    "aa_gradient_mmhg",
    "aa_gradient_expected_mmhg",
    "pao2_fio2_ratio",
    "pao2_fio2_ratio_pb_corrected",
    "pf_category_berlin",
    "pf_category_global2024",
    "sf_category_global2024",
    "oxygenation_index",
    "cao2_ml_dl",
    "cvo2_ml_dl",
    "shunt_fraction",
    "do2_ml_min",
    "do2i_ml_min_m2",
    "vo2_ml_min",
    "extraction_ratio",
    "pco2_gap_mmhg",
    "p50_insitu_mmhg",
    "p50_standard_mmhg",
    "ph_stat_pao2_mmhg",
    "ph_stat_paco2_mmhg",
    "ph_stat_ph",
    "p50_insitu_reason",
    "notes",
    "flags",
    "error",
)
"""Columns added to every output row by default, in order (units in the names)."""

ALL_OUTPUTS = tuple(DERIVED_FIELDS) + ("p50_insitu_reason", "notes", "reasons", "flags", "error")
"""Columns added with ``--all-columns``: every output of :func:`model.bedside.derive`."""

CHUNK_ROWS = 10_000
"""Rows computed together (bounds memory; one progress step each)."""


class BatchError(ValueError):
    """A problem with the whole file (missing file or column): nothing is written."""


@dataclass(frozen=True)
class BatchSummary:
    """What a batch run did."""

    rows: int
    rows_with_errors: int
    output: str


def _column_map(header: list[str], source: str) -> dict[str, tuple[int, str, float, str]]:
    """Measured key -> (column index, column name, factor, unit of the column)."""
    found: dict[str, tuple[int, str, float, str]] = {}
    for i, name in enumerate(header):
        if name in MEASURED_LIMITS:
            key, factor, unit = name, 1.0, MEASURED_LIMITS[name][2]
        elif name in COLUMN_VARIANTS:
            key, factor, unit = COLUMN_VARIANTS[name]
        else:
            continue
        if key in found:
            raise BatchError(
                f"{source}: columns {found[key][1]!r} and {name!r} both give "
                f"{MEASURED_LIMITS[key][3]}; keep one"
            )
        found[key] = (i, name, factor, unit)
    missing = [k for k in REQUIRED_MEASURED if k not in found]
    if missing:
        alts = {
            k: [k] + [c for c, (key, _, _) in COLUMN_VARIANTS.items() if key == k] for k in missing
        }
        what = "; ".join(" or ".join(alts[k]) for k in missing)
        raise BatchError(
            f"{source}: required column missing: {what} (found columns: "
            f"{', '.join(header) or 'none'})"
        )
    clash = [c for c in header if c in ALL_OUTPUTS]
    if clash:
        raise BatchError(
            f"{source}: input column {clash[0]!r} has the name of an output "
            "column; rename it (or give the original input file)"
        )
    return found


def _parse(cells: Sequence[str], decimal_comma: bool) -> tuple[np.ndarray, np.ndarray]:
    """Floats of the cells (NaN for blank/nan) and a mask of cells that are not numbers."""
    if decimal_comma:
        cells = [c.replace(",", ".") for c in cells]
    filled = ["nan" if not c or c.isspace() else c for c in cells]
    bad = np.zeros(len(filled), dtype=bool)
    try:
        return np.array(filled, dtype=float), bad
    except ValueError:
        pass
    values = []
    for i, c in enumerate(filled):
        try:
            values.append(float(c))
        except ValueError:
            values.append(math.nan)
            bad[i] = True
    return np.array(values, dtype=float), bad


def _range_text(key: str, factor: float, unit: str) -> str:
    lo, hi, _, _ = MEASURED_LIMITS[key]
    u = f" {unit}" if unit else ""
    return f"{lo / factor:.4g}-{hi / factor:.4g}{u}"


def derive_columns(
    columns: Mapping[str, Sequence[str]],
    *,
    decimal_comma: bool = False,
    errors: np.ndarray | None = None,
    source: str = "input",
):
    """Derived values and per-row errors for columns of CSV text cells.

    Parameters
    ----------
    columns : Mapping
        CSV column name -> cells (str), all of one length; names as in the module
        docstring, other names are ignored.
    decimal_comma : bool
        Accept "7,35" for 7.35.
    errors : ndarray of object, optional
        Messages already known per row (e.g. a malformed row); such rows are blanked.
    source : str
        Name of the input for :class:`BatchError` messages.

    Returns
    -------
    (dict, ndarray)
        ``derived`` as from :func:`model.bedside.derive` (NaN/"" on every row with an
        error) and ``errors``, an object array of messages ("" for a good row).

    Raises
    ------
    BatchError
        A required column is missing or two columns give the same quantity.

    Examples
    --------
    >>> d, e = derive_columns({"pao2_kpa": ["8.0", "x"], "paco2_kpa": ["5.3", "5.3"],
    ...     "ph": ["7.40", "7.40"], "sao2": ["0.92", "0.92"], "hb_g_l": ["120", "120"],
    ...     "fio2": ["0.4", "0.4"], "temperature_c": ["37", "37"]})
    >>> d["pao2_fio2_ratio"].round(1).tolist(), e.tolist()
    ([150.0, nan], ['', "pao2_kpa = 'x' is not a number (PaO2; allowed range 1.333-99.99 kPa)"])
    """
    colmap = _column_map(list(columns), source)
    n = len(next(iter(columns.values()))) if columns else 0
    errors = np.full(n, "", dtype=object) if errors is None else errors.astype(object)
    row_bad = errors != ""
    measured: dict[str, np.ndarray] = {}
    for key, (_, name, factor, unit) in colmap.items():
        cells = columns[name]
        raw, not_number = _parse(cells, decimal_comma)
        values = raw * factor
        lo, hi, _, label = MEASURED_LIMITS[key]
        with np.errstate(invalid="ignore"):
            out_of_range = (values < lo) | (values > hi)
        u = f" {unit}" if unit else ""
        for i in np.flatnonzero(not_number).tolist():
            errors[i] = _join(
                errors[i],
                f"{name} = {cells[i].strip()!r} is not a number ({label}; allowed range "
                f"{_range_text(key, factor, unit)})",
            )
        for i in np.flatnonzero(out_of_range).tolist():
            hint = ""
            if unit == "" and hi <= 1.0 and raw[i] > 1.0:
                hint = f"; give a fraction, or use a {name}_percent column"
            errors[i] = _join(
                errors[i],
                f"{name} = {raw[i]:g}{u} is outside the allowed range "
                f"{_range_text(key, factor, unit)} ({label}){hint}",
            )
        if key in REQUIRED_MEASURED:
            missing = np.isnan(values) & ~not_number
            for i in np.flatnonzero(missing).tolist():
                errors[i] = _join(
                    errors[i],
                    f"{name} is missing ({label}, required; allowed range "
                    f"{_range_text(key, factor, unit)})",
                )
            row_bad |= missing
        row_bad |= not_number | out_of_range
        measured[key] = values
    if "cohb_fraction" in measured or "methb_fraction" in measured:
        total = np.nan_to_num(measured.get("cohb_fraction", np.zeros(n))) + np.nan_to_num(
            measured.get("methb_fraction", np.zeros(n))
        )
        for i in np.flatnonzero((total >= 1.0) & ~row_bad).tolist():
            errors[i] = _join(errors[i], "cohb_fraction + methb_fraction must stay below 1")
        row_bad |= total >= 1.0
    clean: dict[str, Any] = {k: np.where(row_bad, np.nan, v) for k, v in measured.items()}
    try:
        derived = derive(**clean)
    except ValueError:  # a combination derive refuses that the checks above missed
        derived = _derive_row_by_row(clean, errors)
    return derived, errors


def _join(old: str, new: str) -> str:
    return new if not old else f"{old}; {new}"


def _derive_row_by_row(clean: dict[str, np.ndarray], errors: np.ndarray):
    n = len(errors)
    nan_row: dict[str, Any] = dict.fromkeys(clean, np.nan)
    parts = []
    for i in range(n):
        row = {k: v[i] for k, v in clean.items()}
        try:
            parts.append(derive(**row))
        except ValueError as exc:
            errors[i] = _join(errors[i], str(exc))
            parts.append(derive(**nan_row))
    return {k: np.array([p[k] for p in parts], dtype=parts[0][k].dtype) for k in parts[0]}


def _format_column(values: np.ndarray, decimals: int, decimal_comma: bool) -> list[str]:
    """Cells of a numeric column at fixed decimals; "" for NaN."""
    finite = np.isfinite(values)
    if not finite.any():
        return [""] * len(values)
    if decimals == 0:
        out = list(map(str, np.rint(np.where(finite, values, 0.0)).astype(np.int64).tolist()))
    else:
        out = list(map(f"%.{decimals}f".__mod__, values.tolist()))
        if decimal_comma:
            out = [c.replace(".", ",") for c in out]
    for i in np.flatnonzero(~finite).tolist():
        out[i] = ""
    return out


def _quoted(cells: Sequence[str], delimiter: str) -> Sequence[str]:
    """The cells with CSV quoting where a cell needs it (checked once per column)."""
    joined = "\x00".join(cells)
    if not (delimiter in joined or '"' in joined or "\n" in joined or "\r" in joined):
        return cells
    return [
        '"' + c.replace('"', '""') + '"'
        if (delimiter in c or '"' in c or "\n" in c or "\r" in c)
        else c
        for c in cells
    ]


def _output_lines(inputs, derived, errors, outputs, delimiter, decimal_comma, raw=None) -> str:
    """Output rows: the input cells (or their unquoted raw lines), then the outputs."""
    columns = [_quoted(c, delimiter) for c in inputs] if raw is None else [raw]
    for key in outputs:
        if key == "error":
            columns.append(_quoted(errors.tolist(), delimiter))
        elif derived[key].dtype == object:
            columns.append(_quoted(derived[key].tolist(), delimiter))
        else:
            columns.append(_format_column(derived[key], DERIVED_FIELDS[key][2], decimal_comma))
    return "\n".join(map(delimiter.join, zip(*columns))) + "\n"


class _Progress:
    """A one-line progress bar on a terminal; silent when ``stream`` is not a tty."""

    def __init__(self, total: int, stream, enabled: bool | None):
        self.total, self.stream = total, stream
        self.enabled = stream.isatty() if enabled is None else enabled

    def update(self, done: int) -> None:
        if not self.enabled:
            return
        width = 30
        filled = int(width * done / max(self.total, 1))
        self.stream.write(
            f"\rbatch [{'#' * filled}{'.' * (width - filled)}] {done:,}/{self.total:,} rows"
        )
        self.stream.flush()

    def close(self) -> None:
        if self.enabled:
            self.stream.write("\n")
            self.stream.flush()


def read_table(path) -> tuple[list[str], list[list[str]], str]:
    """Header, data rows and delimiter of a CSV file.

    Leading blank and ``#`` lines are skipped, as are blank rows; the delimiter is ","
    unless the header has none and has ";" or a tab.
    """
    header, rows, delimiter, _ = _read_table(path)
    return header, rows, delimiter


def _read_table(path) -> tuple[list[str], list[list[str]], str, list[str] | None]:
    """As :func:`read_table`, plus the raw text of each row when no cell is quoted."""
    path = Path(path)
    if not path.is_file():
        raise BatchError(
            f"input file not found: {path}" + ("" if not path.exists() else " (not a regular file)")
        )
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        text = path.read_text(encoding="latin-1")
    offset = 0
    while offset < len(text):
        end = text.find("\n", offset)
        end = len(text) if end < 0 else end + 1
        line = text[offset:end]
        if line.strip() and not line.startswith("#"):
            break
        offset = end
    if offset >= len(text):
        raise BatchError(f"{path}: no header line (the file is empty)")
    head = line
    delimiter = ","
    if "," not in head:
        delimiter = ";" if ";" in head else ("\t" if "\t" in head else ",")
    body = text[offset:]
    lines = None
    if '"' not in body:  # no quoting anywhere: a plain split is the CSV parse
        raw = body.splitlines()
        header = [h.strip() for h in raw[0].split(delimiter)]
        rows = [line.split(delimiter) for line in raw[1:]]
        keep = list(map(any, rows))
        if all(keep):
            lines = raw[1:]
        else:
            lines = [line for line, k in zip(raw[1:], keep) if k]
            rows = [r for r, k in zip(rows, keep) if k]
    else:
        reader = csv.reader(io.StringIO(body), delimiter=delimiter)
        try:
            header = [h.strip() for h in next(reader)]
            rows = [r for r in reader if any(r)]
        except csv.Error as exc:
            raise BatchError(
                f"{path}: not a readable CSV file (line {reader.line_num}: {exc})"
            ) from None
    dup = sorted({h for h in header if h and header.count(h) > 1})
    if dup:
        raise BatchError(f"{path}: column {dup[0]!r} appears more than once")
    return header, rows, delimiter, lines


def run_batch(
    in_path, out_path, *, progress: bool | None = None, stream=None, all_columns: bool = False
) -> BatchSummary:
    """Compute the bedside derived values for every row of ``in_path`` into ``out_path``.

    ``out_path`` "-" writes to standard output. A file is written to a temporary name and
    renamed, so a failure never leaves half a file. ``progress`` None shows a bar on
    ``stream`` (standard error) only when it is a terminal. ``all_columns`` adds every
    output of :func:`model.bedside.derive` (``ALL_OUTPUTS``) instead of ``BATCH_OUTPUTS``.

    Raises
    ------
    BatchError
        Missing or empty file, missing required column, clashing columns; nothing written.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "in.csv").write_text("pao2_mmhg,paco2_mmhg,ph,sao2,hb_g_dl,fio2,temperature_c"
    ...                               "\\n80,40,7.4,0.95,12,0.4,37\\n80,40,7.4,0.95,12,4,37\\n")
    >>> run_batch(d / "in.csv", d / "out.csv").rows_with_errors
    1
    >>> import shutil; shutil.rmtree(d)
    """
    stream = sys.stderr if stream is None else stream
    in_path = Path(in_path)
    header, rows, delimiter, lines = _read_table(in_path)
    _column_map(header, str(in_path))  # file-level problems before anything is written
    outputs = ALL_OUTPUTS if all_columns else BATCH_OUTPUTS
    decimal_comma = delimiter == ";"
    to_stdout = str(out_path) == "-"
    if not to_stdout:
        out_path = Path(out_path)
        if out_path.resolve() == in_path.resolve():
            raise BatchError(
                f"{out_path}: the output would overwrite the input; choose another name"
            )
        if not out_path.parent.is_dir():
            raise BatchError(f"{out_path}: folder {out_path.parent} does not exist")
    bar = _Progress(len(rows), stream, progress)
    width = len(header)
    n_errors = 0
    if to_stdout:
        handle, tmp = sys.stdout, None
    else:
        fd, tmp = tempfile.mkstemp(prefix=f".{out_path.name}.", dir=out_path.parent)
        handle = os.fdopen(fd, "w", encoding="utf-8", newline="")
    try:
        handle.write(f"# o2transit batch. {CAUTION}\n")
        handle.write(delimiter.join(_quoted(header + list(outputs), delimiter)) + "\n")
        bar.update(0)
        for start in range(0, len(rows), CHUNK_ROWS):
            chunk = rows[start : start + CHUNK_ROWS]
            raw = None if lines is None else lines[start : start + CHUNK_ROWS]
            errors = np.full(len(chunk), "", dtype=object)
            lengths = np.fromiter(map(len, chunk), dtype=np.int64, count=len(chunk))
            for i in np.flatnonzero(lengths != width).tolist():
                r = chunk[i]
                if len(r) > width:
                    errors[i] = (
                        f"row has {len(r)} cells but the header has {width}: values "
                        "may be shifted (an unquoted comma?)"
                    )
                chunk[i] = (r + [""] * (width - len(r)))[:width]
                if raw is not None:
                    raw[i] = delimiter.join(chunk[i])
            inputs = list(zip(*chunk))
            derived, errors = derive_columns(
                dict(zip(header, inputs)),
                decimal_comma=decimal_comma,
                errors=errors,
                source=str(in_path),
            )
            n_errors += int(np.count_nonzero(errors != ""))
            handle.write(
                _output_lines(inputs, derived, errors, outputs, delimiter, decimal_comma, raw)
            )
            bar.update(start + len(chunk))
        bar.close()
        if tmp is not None:
            handle.close()
            os.replace(tmp, out_path)
            tmp = None
        else:
            handle.flush()
    finally:
        if tmp is not None:
            handle.close()
            os.unlink(tmp)
    return BatchSummary(len(rows), n_errors, "-" if to_stdout else str(out_path))
