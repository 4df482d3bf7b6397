"""Batch: the bedside derived values for a whole table of blood gases, streamed.

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
``error`` and blank outputs; the other rows are unaffected.

Formats, chosen by the file name's ending (:data:`TEXT_SUFFIXES`, :data:`PARQUET_SUFFIXES`):

* **Delimited text** (``.csv``, ``.tsv``, ``.txt``), UTF-8 (a byte-order mark is skipped;
  other encodings are refused). Leading blank and ``#`` lines are skipped; the delimiter is
  ``,`` unless the header has none and has ``;`` or a tab; with ``;`` a decimal comma is
  read and written. The output's delimiter follows its ending: a tab for ``.tsv``, a
  comma for ``.csv`` and standard output (``;`` kept for a ``;`` input, the decimal-comma
  spreadsheets' CSV), the input's for ``.txt``. Rows end only at ``\\n``, ``\\r\\n``
  or ``\\r`` (never at the other
  characters Python's ``str.splitlines`` takes as line ends). The output is plain CSV: the
  header on line 1, no comment lines, quoting only where a cell needs it, so every reader
  takes it with its defaults. Its last column, :data:`END_COLUMN` (``rows_in_output``), is
  blank on every row except the last, which holds the number of data rows in the output:
  a reader checks that the last row's ``rows_in_output`` equals the number of rows it
  read, and so tells a complete output from one cut short (a killed run writing to
  standard output, a truncated copy).
* **Parquet** (``.parquet``, ``.pq``) through pyarrow. A Parquet output carries the
  caution, the o2transit version and the row count in its file metadata
  (:data:`PARQUET_METADATA_KEYS`); a cut Parquet file has no footer and no reader opens it.

The caution goes to standard error (the command prints it) and into Parquet metadata,
never into the CSV rows. The input is read in chunks of :data:`CHUNK_ROWS` rows and each
chunk is checked, derived and written before the next is read (two chunks at once, in
two worker processes when run as the command, on two threads otherwise), so memory stays
bounded whatever the row count.

Writing: to a regular file (a temporary file in the same folder, renamed over the target
when complete, with the mode of the file it replaces, or the user's usual mode for a new
file) or to standard output (``-``). A target that exists and is not a regular file (a
device such as ``/dev/null``, a FIFO, a symbolic link, a folder) is refused, as is the
input file itself. The temporary file is removed on any error or interruption.
"""

from __future__ import annotations

import contextlib
import csv
import io
import math
import multiprocessing as mp
import os
import stat
import sys
import tempfile
import threading
from collections.abc import Iterator, Mapping
from concurrent.futures import Executor, Future, ProcessPoolExecutor, ThreadPoolExecutor
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv
import pyarrow.parquet as pq

from . import files
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
    "reasons",
    "flags",
    "error",
)
"""Columns added to every output row by default, in order (units in the names).
``reasons`` says why a value is blank although its inputs were given (for example a
shunt the samples cannot give); ``flags`` marks values outside their usual range."""

ALL_OUTPUTS = tuple(DERIVED_FIELDS) + ("p50_insitu_reason", "notes", "reasons", "flags", "error")
"""Columns added with ``--all-columns``: every output of :func:`model.bedside.derive`."""

END_COLUMN = "rows_in_output"
"""Last column of a CSV output: blank except on the last row, which holds the row count."""

PARQUET_METADATA_KEYS = ("o2transit.caution", "o2transit.version", "o2transit.rows")
"""File metadata of a Parquet output: the caution, the version that wrote it, its rows."""

TEXT_SUFFIXES = (".csv", ".tsv", ".txt")
"""File endings read and written as delimited text."""

PARQUET_SUFFIXES = (".parquet", ".pq")
"""File endings read and written as Parquet."""

CHUNK_ROWS = 10_000
"""Rows read, computed and written together (bounds memory; one progress step each)."""

BLOCK_BYTES = 1024 * 1024
"""Bytes of delimited text read at a time."""

MAX_LINE_BYTES = 1024 * 1024
"""Longest row of a delimited text file accepted [bytes] (1 MiB)."""

MAX_CELL_CHARS = 131_072
"""Longest cell accepted [characters] (the csv module's own field limit)."""

_WORKERS = 2
"""Chunks computed at once (at most the machine's cores): worker processes from the
command, threads elsewhere (see :func:`_pool`)."""
_UTF8_BOM = b"\xef\xbb\xbf"
_NUMBER = r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$|^[+-]?([Nn][Aa][Nn]|[Ii][Nn][Ff](inity)?)$"


class BatchError(ValueError):
    """A problem with the whole file (missing file or column): nothing is written."""


@dataclass(frozen=True)
class BatchSummary:
    """What a batch run did."""

    rows: int
    rows_with_errors: int
    output: str
    format: str = "csv"


def output_delimiter(out_path, in_delimiter: str) -> str:
    """The delimiter of a delimited-text output: a tab for ``.tsv``, a comma for ``.csv``
    and standard output (``-``), ``;`` kept there when the input had ``;`` and a decimal
    comma; the input's for ``.txt``.

    Examples
    --------
    >>> output_delimiter("out.tsv", ","), output_delimiter("out.csv", "\\t")
    ('\\t', ',')
    >>> output_delimiter("out.csv", ";"), output_delimiter("-", "\\t")
    (';', ',')
    >>> output_delimiter("out.txt", "\\t")
    '\\t'
    """
    suffix = ".csv" if str(out_path) == "-" else Path(out_path).suffix.lower()
    if suffix == ".tsv":
        return "\t"
    if suffix == ".csv":
        return ";" if in_delimiter == ";" else ","
    return in_delimiter


def file_format(path, role: str = "input") -> str:
    """``"csv"`` or ``"parquet"`` from the file name's ending; :class:`BatchError` otherwise.

    Examples
    --------
    >>> file_format("gases.CSV"), file_format("out.parquet", "output")
    ('csv', 'parquet')
    """
    suffix = Path(path).suffix.lower()
    if suffix in TEXT_SUFFIXES:
        return "csv"
    if suffix in PARQUET_SUFFIXES:
        return "parquet"
    known = ", ".join(TEXT_SUFFIXES) + " (delimited text) or " + ", ".join(PARQUET_SUFFIXES)
    raise BatchError(
        f"{path}: unknown {role} file type {suffix or '(no ending)'!r}; batch "
        f"{'reads' if role == 'input' else 'writes'} {known}"
        + ("" if role == "input" else ", or '-' for CSV on standard output")
    )


# --- columns and cells -------------------------------------------------------------------


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
        shown = ", ".join(header)
        shown = shown if len(shown) <= 300 else shown[:300] + "..."
        raise BatchError(
            f"{source}: required column missing: {what} (found columns: {shown or 'none'})"
        )
    clash = [c for c in header if c in ALL_OUTPUTS or c == END_COLUMN]
    if clash:
        raise BatchError(
            f"{source}: input column {clash[0]!r} has the name of an output "
            "column; rename it (or give the original input file)"
        )
    return found


def _check_header(header: list[str], source: str) -> None:
    dup = sorted({h for h in header if h and header.count(h) > 1})
    if dup:
        raise BatchError(f"{source}: column {dup[0]!r} appears more than once")


def _as_arrow(values) -> pa.Array:
    """A column (list of str, numpy array, pandas Series, Arrow array) as one Arrow array."""
    if isinstance(values, pa.ChunkedArray):
        return values.combine_chunks() if values.num_chunks != 1 else values.chunk(0)
    if isinstance(values, pa.Array):
        return values
    arr = np.asarray(values)
    if arr.dtype.kind in "fiu":
        return pa.array(arr.astype(float, copy=False))
    if arr.dtype.kind == "b":
        return pa.array(arr)
    cells = [
        c
        if isinstance(c, str)
        else ("" if c is None or (isinstance(c, float) and math.isnan(c)) else str(c))
        for c in arr.tolist()
    ]
    return pa.array(cells, type=pa.string())


def _parse(arr: pa.Array, decimal_comma: bool) -> tuple[np.ndarray, np.ndarray]:
    """Floats of a column (NaN for blank/null/nan) and a mask of cells that are not numbers."""
    if pa.types.is_dictionary(arr.type):
        arr = arr.dictionary_decode()
    t = arr.type
    if pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_decimal(t):
        values = pc.cast(arr, pa.float64()).to_numpy(zero_copy_only=False)
        return values, np.zeros(len(arr), dtype=bool)
    if pa.types.is_null(t):
        return np.full(len(arr), np.nan), np.zeros(len(arr), dtype=bool)
    if not (pa.types.is_string(t) or pa.types.is_large_string(t)):
        # a boolean, a date, a list...: not a measurement, whatever its text
        given = pc.is_valid(arr).to_numpy(zero_copy_only=False)
        return np.full(len(arr), np.nan), given
    s = arr if _no_whitespace(arr) else pc.utf8_trim_whitespace(arr)
    if decimal_comma:
        s = pc.replace_substring(s, ",", ".")
    if _any_blank(s):
        s = pc.if_else(pc.equal(s, ""), pa.scalar(None, pa.string()), s)
    # plain decimals need no regex; the few other cells (signs, exponents, words) do
    number = _plain_decimals(s)
    odd = np.flatnonzero(~number)
    others = s.take(pa.array(odd)) if len(odd) else None
    try:
        if others is not None:
            pc.cast(others, pa.float64())  # fails as the whole column's cast would, cheaply
        values = pc.cast(s, pa.float64())
        return values.to_numpy(zero_copy_only=False), np.zeros(len(arr), dtype=bool)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        pass
    if others is not None:
        number[odd] = pc.fill_null(pc.match_substring_regex(others, _NUMBER), True).to_numpy(
            zero_copy_only=False
        )
    bad = ~number
    kept = pc.if_else(pa.array(number), s, pa.scalar(None, pa.string())) if bad.any() else s
    try:
        values = pc.cast(kept, pa.float64()).to_numpy(zero_copy_only=False)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):  # pragma: no cover - odd spellings
        out = []
        for i, c in enumerate(kept.to_pylist()):
            try:
                out.append(np.nan if c is None else float(pc.cast(pa.array([c]), pa.float64())[0]))
            except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
                out.append(np.nan)
                bad[i] = True
        values = np.array(out, dtype=float)
    return values, bad


def _text_buffers(s: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    """The cells' offsets (from 0) and their characters as bytes, without copying."""
    dtype: Any = np.int64 if pa.types.is_large_string(s.type) else np.int32
    offsets = np.frombuffer(s.buffers()[1], dtype=dtype)[s.offset : s.offset + len(s) + 1]
    data = s.buffers()[2]
    if data is None or not len(s):
        return np.zeros(len(s) + 1, dtype=np.int64), np.zeros(0, dtype=np.uint8)
    start = int(offsets[0])
    chars = np.frombuffer(data, dtype=np.uint8)[start : int(offsets[-1])]
    return offsets.astype(np.int64) - start, chars


def _no_whitespace(s: pa.Array) -> bool:
    """True when no cell can start or end with white space (printable ASCII only)."""
    _, chars = _text_buffers(s)
    return not len(chars) or (int(chars.min()) > 0x20 and int(chars.max()) < 0x7F)


def _any_blank(s: pa.Array) -> bool:
    offsets, _ = _text_buffers(s)
    return bool(np.any(offsets[1:] == offsets[:-1]))


def _plain_decimals(s: pa.Array) -> np.ndarray:
    """True where a cell is null or only digits with at most one point and at least one
    digit (each such cell matches ``_NUMBER``)."""
    offsets, chars = _text_buffers(s)
    # one running sum: characters other than digit or point above bit 32, points below
    point = chars == 46
    code = (((chars < 48) | (chars > 57)) & ~point).astype(np.int64) << 32
    code |= point
    total = np.zeros(len(chars) + 1, dtype=np.int64)
    np.cumsum(code, out=total[1:])
    per_cell = np.diff(total[offsets])
    points = per_cell & 0xFFFFFFFF
    plain = (per_cell >> 32 == 0) & (points <= 1) & (np.diff(offsets) > points)
    if s.null_count:
        plain |= s.is_null().to_numpy(zero_copy_only=False)
    return plain


def _cell_text(arr: pa.Array, i: int) -> str:
    value = arr[i].as_py()
    return value.strip() if isinstance(value, str) else str(value)


def _range_text(key: str, factor: float, unit: str) -> str:
    lo, hi, _, _ = MEASURED_LIMITS[key]
    u = f" {unit}" if unit else ""
    return f"{lo / factor:.4g}-{hi / factor:.4g}{u}"


def derive_columns(
    columns: Mapping[str, Any],
    *,
    decimal_comma: bool = False,
    errors: np.ndarray | None = None,
    source: str = "input",
):
    """Derived values and per-row errors for the columns of a table of blood gases.

    Parameters
    ----------
    columns : Mapping
        Column name -> cells, all of one length: lists of CSV text cells, numpy arrays,
        pandas Series or Arrow arrays (numbers are taken as numbers, text is parsed). Names
        as in the module docstring; other names are ignored.
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
    arrays = {name: _as_arrow(columns[name]) for _, name, _, _ in colmap.values()}
    n = len(next(iter(arrays.values())))
    errors = np.full(n, "", dtype=object) if errors is None else errors.astype(object)
    row_bad = errors != ""
    measured: dict[str, np.ndarray] = {}
    for key, (_, name, factor, unit) in colmap.items():
        cells = arrays[name]
        raw, not_number = _parse(cells, decimal_comma)
        values = raw * factor
        lo, hi, _, label = MEASURED_LIMITS[key]
        with np.errstate(invalid="ignore"):
            out_of_range = (values < lo) | (values > hi)
        u = f" {unit}" if unit else ""
        for i in np.flatnonzero(not_number).tolist():
            errors[i] = _join(
                errors[i],
                f"{name} = {_cell_text(cells, i)!r} is not a number ({label}; allowed range "
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


# --- formatting ----------------------------------------------------------------------------


def fixed_text(values, decimals: int, decimal_sep: str = ".") -> pa.Array:
    """Cells of a numeric column at ``decimals`` fixed decimals ("" for NaN), vectorised.

    Rounds half to even on the scaled value (``rint(v 10^d)``), so a shown value is within
    half a unit of the last decimal of the true one.

    Examples
    --------
    >>> fixed_text([1.25, -0.5, float("nan"), 1234.0], 1).to_pylist()
    ['1.2', '-0.5', '', '1234.0']
    """
    v = np.asarray(values, dtype=float).ravel()
    n = v.size
    finite = np.isfinite(v)
    scaled = np.where(finite, v, 0.0) * 10.0**decimals
    if n == 0 or np.abs(scaled).max() >= 1e15:  # beyond int64 digits: the slow, exact way
        cells = [
            f"{x:.{decimals}f}".replace(".", decimal_sep) if f else ""
            for x, f in zip(v.tolist(), finite.tolist())
        ]
        return pa.array(cells, type=pa.string())
    k = np.rint(scaled).astype(np.int64)
    neg = k < 0
    x = np.abs(k)
    w_int = max(len(str(int(x.max()))) - decimals, 1)
    has_neg = bool(neg.any())
    width = has_neg + w_int + (1 + decimals if decimals else 0)
    # one row of `width` characters per cell, right-aligned after spaces, spaces trimmed
    chars = np.empty((n, width), dtype=np.uint8)
    col = width - 1
    for _ in range(decimals):
        q = x // 10
        chars[:, col] = x - q * 10 + 48
        x = q
        col -= 1
    if decimals:
        chars[:, col] = ord(decimal_sep)
        col -= 1
    q = x // 10
    chars[:, col] = x - q * 10 + 48
    x = q
    col -= 1
    blanks = np.zeros(n, dtype=np.int64)  # leading zeros of the integer part
    for _ in range(w_int - 1):
        lead = x == 0
        q = x // 10
        chars[:, col] = x - q * 10 + 48 - 16 * lead  # a leading zero (48) as a space (32)
        blanks += lead
        x = q
        col -= 1
    if has_neg:
        chars[:, 0] = 32
        rows = np.flatnonzero(neg)
        chars[rows, blanks[rows]] = ord("-")  # just before the first digit
    chars[~finite] = 32
    offsets = np.arange(0, (n + 1) * width, width, dtype=np.int32)
    padded = pa.StringArray.from_buffers(n, pa.py_buffer(offsets), pa.py_buffer(chars))
    return pc.utf8_ltrim(padded, " ")


def _quoted(arr: pa.Array, delimiter: str) -> pa.Array:
    """Text cells with CSV quoting where a cell needs it; null as ""."""
    if not (pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)):
        arr = _as_text(arr)
    arr = pc.fill_null(arr, "")
    needs = pc.match_substring_regex(
        arr, '["\r\n' + ("\\t" if delimiter == "\t" else "\\" + delimiter) + "]"
    )
    if not pc.any(needs).as_py():
        return arr
    quoted = pc.binary_join_element_wise('"', pc.replace_substring(arr, '"', '""'), '"', "")
    return pc.if_else(needs, quoted, arr)


def _as_text(arr: pa.Array) -> pa.Array:
    """Any Arrow column as text (Parquet input written as CSV)."""
    try:
        return pc.cast(arr, pa.string())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return pa.array(["" if v is None else str(v) for v in arr.to_pylist()], type=pa.string())


def _text_of(values: np.ndarray) -> pa.Array:
    return pa.array(values, type=pa.string())


def _text_column(derived, key: str, delimiter: str | None = None) -> pa.Array:
    """A text output of :func:`model.bedside.derive` as Arrow, from its codes when it has
    them (a few distinct strings taken into millions of cells); with ``delimiter``, the
    strings escaped for :func:`_csv_lines` first (once per distinct string)."""
    codes = getattr(derived, "text", {}).get(key)
    if codes is None:
        return _text_of(derived[key])
    strings = pa.array(codes[1], type=pa.string())
    if delimiter is not None:
        strings = _escaped(strings, delimiter)
    return strings.take(pa.array(codes[0]))


_DELIM_MARK, _QUOTE_MARK = "\x1d", "\x1e"
"""Stand-ins for the delimiter and the quote inside quoted cells while Arrow's CSV writer
(which refuses both in unquoted output) lays out the rows; put back afterwards."""


def _escaped(arr: pa.Array, delimiter: str, plain: bool = False) -> pa.Array | None:
    """A text column ready for Arrow's writer: cells that need CSV quoting quoted with the
    stand-ins. None if a cell holds a line end or a stand-in (then the slower join is used)."""
    if not (pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)):
        arr = _as_text(arr)
    if plain:
        return arr
    if _cells_holding(arr, "\r\n" + _DELIM_MARK + _QUOTE_MARK).any():
        return None
    needs = _cells_holding(arr, '"' + delimiter)
    if not needs.any():
        return arr
    inner = pc.replace_substring(
        pc.replace_substring(arr, '"', _QUOTE_MARK * 2), delimiter, _DELIM_MARK
    )
    quoted = pc.binary_join_element_wise(_QUOTE_MARK, inner, _QUOTE_MARK, "")
    return pc.if_else(pa.array(needs), quoted, arr)


def _cells_holding(arr: pa.Array, chars: str) -> np.ndarray:
    """True where a text cell (not null) holds any of the ASCII characters ``chars``."""
    offsets, data = _text_buffers(arr)
    found = np.zeros(len(arr), dtype=bool)
    text = data.tobytes()
    present = [c for c in chars.encode("ascii") if bytes((c,)) in text]
    if present:
        hit = data == present[0]
        for c in present[1:]:
            hit |= data == c
        where = np.flatnonzero(hit)
        found[np.searchsorted(offsets, where, side="right") - 1] = True
        if arr.null_count:
            found &= arr.is_valid().to_numpy(zero_copy_only=False)
    return found


def _csv_lines(
    chunk: _Chunk,
    derived,
    errors,
    outputs,
    delimiter,
    decimal_comma,
    end: str | None,
    into: memoryview | None = None,
) -> bytes | bytearray | int:
    """The output rows of one chunk as CSV bytes: the input cells, the outputs, the end cell.
    With ``into``, the rows are written there if they fit, and their length is returned."""
    n = len(errors)
    sep = "," if decimal_comma else "."
    columns: list[pa.Array] = list(chunk.columns)
    plain = [chunk.plain] * len(columns)
    for key in outputs:
        if key == "error":
            columns.append(_text_of(errors))
            plain.append(False)
        elif derived[key].dtype == object:
            text = _text_column(derived, key, delimiter)
            columns.append(text if text is not None else _text_of(derived[key]))
            plain.append(text is not None and hasattr(derived, "text"))
        else:
            columns.append(fixed_text(derived[key], DERIVED_FIELDS[key][2], sep))
            plain.append(True)
    marker = np.full(n, "", dtype=object)
    if end is not None and n:
        marker[-1] = end
    columns.append(_text_of(marker))
    plain.append(True)
    escaped = [_escaped(c, delimiter, p) for c, p in zip(columns, plain)]
    if any(c is None for c in escaped):
        # the text outputs as they are (not with the stand-ins for Arrow's writer)
        width = len(chunk.columns)
        for k, key in enumerate(outputs):
            if key != "error" and derived[key].dtype == object:
                columns[width + k] = _text_column(derived, key)
        return _joined_lines(columns, delimiter)
    table = pa.Table.from_arrays(escaped, names=[f"c{i}" for i in range(len(escaped))])
    options = pcsv.WriteOptions(include_header=False, delimiter=delimiter, quoting_style="none")
    if into is not None:
        sink = pa.FixedSizeBufferWriter(pa.py_buffer(into))
        try:
            pcsv.write_csv(table, sink, write_options=options)
        except OSError:  # longer than the room: made apart below
            pass
        else:
            size = sink.tell()
            _put_back(np.frombuffer(into, dtype=np.uint8, count=size), delimiter)
            return size
    sink = pa.BufferOutputStream()
    pcsv.write_csv(table, sink, write_options=options)
    data = sink.getvalue()
    if not _put_back(np.frombuffer(data, dtype=np.uint8), delimiter, dry=True):
        return data.to_pybytes()
    out = bytearray(data)
    _put_back(np.frombuffer(out, dtype=np.uint8), delimiter)
    return out


def _put_back(raw: np.ndarray, delimiter: str, dry: bool = False) -> bool:
    """The quote and the delimiter in place of their stand-ins (none if ``dry``); whether
    there were any."""
    quotes = np.flatnonzero(raw == ord(_QUOTE_MARK))
    if not len(quotes):
        return False
    if not dry:
        raw[quotes] = ord('"')
        raw[np.flatnonzero(raw == ord(_DELIM_MARK))] = ord(delimiter)
    return True


def _joined_lines(columns: list[pa.Array], delimiter: str) -> bytes:
    """Rows joined cell by cell (cells with line ends, quoted the CSV way)."""
    quoted = [_quoted(c, delimiter) for c in columns]
    lines = pc.binary_join_element_wise(*quoted, delimiter)
    return _string_bytes(pc.binary_join_element_wise(lines, "", "\n"))


def _string_bytes(arr: pa.Array) -> bytes:
    """The concatenated characters of a text array (its data buffer, sliced)."""
    if pa.types.is_large_string(arr.type):
        dtype: Any = np.int64
    else:
        dtype = np.int32
    offsets = np.frombuffer(arr.buffers()[1], dtype=dtype)
    data = arr.buffers()[2]
    if data is None:
        return b""
    start, stop = int(offsets[arr.offset]), int(offsets[arr.offset + len(arr)])
    return data.to_pybytes()[start:stop] if start or stop != data.size else data.to_pybytes()


def _arrow_outputs(derived, errors, outputs) -> list[pa.Array]:
    cols = []
    for key in outputs:
        if key == "error":
            cols.append(_text_of(errors))
        elif derived[key].dtype == object:
            cols.append(_text_column(derived, key))
        else:
            cols.append(pa.array(np.asarray(derived[key], dtype=float), from_pandas=True))
    return cols


# --- reading -------------------------------------------------------------------------------


def _decoded(data: bytes, where: str, first_line: int) -> str:
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = first_line + data.count(b"\n", 0, exc.start)
        raise BatchError(
            f"{where}: not UTF-8 text (byte 0x{data[exc.start]:02x} on line {line}; latin-1 "
            "or another encoding?); save the file as UTF-8 (CSV UTF-8 in a spreadsheet)"
        ) from None


def _line_ends(data: bytes) -> np.ndarray:
    """Positions just after each ``\\n``, ``\\r\\n`` or lone ``\\r`` in ``data``."""
    arr = np.frombuffer(data, dtype=np.uint8)
    nl = arr == 10
    if b"\r" not in data:
        return np.flatnonzero(nl) + 1
    cr = arr == 13
    cr[:-1] &= ~nl[1:]  # \r\n ends at its \n
    return np.flatnonzero(nl | cr) + 1


@dataclass
class _Chunk:
    """One chunk of input rows: its columns (Arrow), per-row messages, the rows' first line."""

    columns: list[pa.Array]
    errors: np.ndarray
    line: int
    plain: bool = False
    """True when no cell can need CSV quoting (split by Arrow from a block without quotes)."""


class _ChainedReader(io.RawIOBase):
    """Bytes already read, then the rest of a file (for the csv module's text stream)."""

    def __init__(self, head: bytes, rest):
        self.head, self.rest = memoryview(head), rest

    def readable(self) -> bool:
        return True

    def readinto(self, b) -> int:
        if len(self.head):
            n = min(len(b), len(self.head))
            b[:n] = self.head[:n]
            self.head = self.head[n:]
            return n
        data = self.rest.read(len(b))
        b[: len(data)] = data
        return len(data)


@dataclass
class _Block:
    """Raw bytes of whole rows without quotes, parsed where the chunk is computed."""

    data: bytes
    line: int


@dataclass
class _Parser:
    """How the rows of one delimited text file are parsed (picklable, for worker processes)."""

    header: list[str]
    delimiter: str
    where: str

    def parse(self, piece: _Block | _Chunk) -> _Chunk | None:
        return self.arrow_block(piece.data, piece.line) if isinstance(piece, _Block) else piece

    def arrow_block(self, block: bytes, line: int) -> _Chunk | None:
        """Arrow's parser on a block without quotes (the csv module if a row is ragged);
        ``line`` is the file line of the block's first row."""
        width = len(self.header)
        names = [f"c{i}" for i in range(width)]
        try:
            table = pcsv.read_csv(
                pa.py_buffer(block),
                read_options=pcsv.ReadOptions(
                    column_names=names, block_size=1 << 20, use_threads=False
                ),
                parse_options=pcsv.ParseOptions(
                    delimiter=self.delimiter, quote_char=False, ignore_empty_lines=True
                ),
                convert_options=pcsv.ConvertOptions(
                    column_types=dict.fromkeys(names, pa.string()),
                    strings_can_be_null=False,
                    check_utf8=True,
                ),
            )
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            return self.rows_chunk(self.csv_rows(_decoded(block, self.where, line)), line)
        columns = [_as_arrow(table.column(i)) for i in range(width)]
        if not columns or not len(columns[0]):
            return None
        for c in columns:
            if pc.max(pc.binary_length(c)).as_py() > MAX_CELL_CHARS:
                raise BatchError(self.cell_too_long(line))
        blank = pc.equal(columns[0], "")
        for c in columns[1:]:
            blank = pc.and_(blank, pc.equal(c, ""))
        if pc.any(blank).as_py():
            keep = pc.invert(blank)
            columns = [pc.filter(c, keep) for c in columns]
        plain = not any(c in block for c in (_DELIM_MARK.encode(), _QUOTE_MARK.encode()))
        return _Chunk(columns, np.full(len(columns[0]), "", dtype=object), line, plain)

    def cell_too_long(self, line: int) -> str:
        return (
            f"{self.where}: not a readable CSV file (a cell near line {line} is longer "
            f"than {MAX_CELL_CHARS:,} characters, the limit for one cell)"
        )

    def csv_rows(self, text: str) -> list[list[str]]:
        try:
            return [
                r
                for r in csv.reader(io.StringIO(text, newline=""), delimiter=self.delimiter)
                if any(r)
            ]
        except csv.Error as exc:
            raise BatchError(f"{self.where}: not a readable CSV file ({exc})") from None

    def rows_chunk(self, rows: list[list[str]], line: int) -> _Chunk | None:
        """A chunk from csv-module rows: short rows padded, long ones cut with a message."""
        if not rows:
            return None
        width = len(self.header)
        errors = np.full(len(rows), "", dtype=object)
        for i, r in enumerate(rows):
            if len(r) != width:
                if len(r) > width:
                    errors[i] = (
                        f"row has {len(r)} cells but the header has {width}: values "
                        "may be shifted (an unquoted comma?)"
                    )
                rows[i] = (r + [""] * (width - len(r)))[:width]
        columns = [pa.array(list(c), type=pa.string()) for c in zip(*rows)]
        return _Chunk(columns, errors, line)


class _TextSource:
    """A delimited text file read in chunks: Arrow's parser on blocks without quotes, the
    csv module from the first quote on (quoted cells may hold delimiters and line ends)."""

    format = "csv"

    def __init__(self, path: Path):
        self.path = path
        self.where = str(path)
        self.handle, st = files.open_regular(path, BatchError, limit=None)
        self.size = max(st.st_size, 1)
        try:
            self._read_header()
        except BaseException:
            self.handle.close()
            raise

    def close(self) -> None:
        self.handle.close()

    def progress(self) -> float:
        try:
            return min(self.handle.tell() / self.size, 1.0)
        except (OSError, ValueError):
            return 0.0

    def _more(self, data: bytes) -> tuple[bytes, bool]:
        more = self.handle.read(BLOCK_BYTES)
        return data + more, not more

    def _read_header(self) -> None:
        data, eof = self._more(b"")
        for bom, name in files._BOMS:
            if data.startswith(bom):
                raise BatchError(f"{self.where}: {name} text, not UTF-8; save it as UTF-8 text")
        if data.startswith(_UTF8_BOM):
            data = data[3:]
        self.line = 1
        while True:
            ends = _line_ends(data[: MAX_LINE_BYTES + 2])
            if not len(ends) and not eof:
                if len(data) > MAX_LINE_BYTES:
                    raise BatchError(self._too_long(self.line))
                data, eof = self._more(data)
                continue
            end = int(ends[0]) if len(ends) else len(data)
            line, data = data[:end], data[end:]
            if not line:
                raise BatchError(f"{self.where}: no header line (the file is empty)")
            if line.strip() and not line.startswith(b"#"):
                break
            self.line += 1
        if b"\x00" in line:
            raise BatchError(
                f"{self.where}: holds NUL bytes (line {self.line}): a binary file or UTF-16 "
                "text, not UTF-8 text; save it as UTF-8 text"
            )
        head = _decoded(line, self.where, self.line).rstrip("\r\n")
        delimiter = ","
        if "," not in head:
            delimiter = ";" if ";" in head else ("\t" if "\t" in head else ",")
        try:
            header = [h.strip() for h in next(csv.reader([head], delimiter=delimiter))]
        except (csv.Error, StopIteration) as exc:
            raise BatchError(f"{self.where}: not a readable CSV header ({exc})") from None
        self.header, self.delimiter = header, delimiter
        self.parser = _Parser(header, delimiter, self.where)
        self.pending, self.eof = data, eof
        self.line += 1
        _check_header(header, self.where)

    def _too_long(self, line: int) -> str:
        return (
            f"{self.where}: not a readable CSV file (line {line} is longer than "
            f"{MAX_LINE_BYTES // 1024 // 1024} MiB, the limit for one row)"
        )

    def chunks(self) -> Iterator[_Chunk]:
        for piece in self.pieces():
            chunk = self.parser.parse(piece)
            if chunk is not None:
                yield chunk

    def pieces(self) -> Iterator[_Block | _Chunk]:
        """The file as raw blocks of rows without quotes (parsed later, possibly in another
        process), or as parsed chunks from the first quote on (the csv module)."""
        while True:
            data, eof = self.pending, self.eof
            while len(data) < BLOCK_BYTES and not eof:
                data, eof = self._more(data)
            if b'"' in data:
                self.pending, self.eof = data, eof
                yield from self._csv_module_chunks()
                return
            if not data:
                return
            ends = _line_ends(data)
            if len(ends) > CHUNK_ROWS:
                cut, n_ends = int(ends[CHUNK_ROWS - 1]), CHUNK_ROWS
            elif eof:
                cut, n_ends = len(data), len(ends)
            elif len(ends):
                cut, n_ends = int(ends[-1]), len(ends)
            else:
                if len(data) > MAX_LINE_BYTES:
                    raise BatchError(self._too_long(self.line))
                self.pending, self.eof = self._more(data)
                continue
            block, self.pending, self.eof = data[:cut], data[cut:], eof
            yield _Block(block, self.line)
            self.line += n_ends + (0 if block.endswith((b"\n", b"\r")) else 1)

    def _csv_module_chunks(self) -> Iterator[_Chunk]:
        raw = io.BufferedReader(_ChainedReader(self.pending, self.handle), BLOCK_BYTES)
        text = io.TextIOWrapper(raw, encoding="utf-8", errors="strict", newline="")
        reader = csv.reader(text, delimiter=self.delimiter)
        start = self.line
        rows: list[list[str]] = []
        while True:
            try:
                row = next(reader, None)
            except csv.Error as exc:
                raise BatchError(
                    f"{self.where}: not a readable CSV file (line "
                    f"{start + reader.line_num - 1}: {exc})"
                ) from None
            except UnicodeDecodeError as exc:
                raise BatchError(
                    f"{self.where}: not UTF-8 text (byte 0x{exc.object[exc.start]:02x} near "
                    f"line {start + reader.line_num}; latin-1 or another encoding?); save the "
                    "file as UTF-8 (CSV UTF-8 in a spreadsheet)"
                ) from None
            if row is not None and any(row):
                rows.append(row)
            if rows and (row is None or len(rows) == CHUNK_ROWS):
                line, self.line = self.line, start + reader.line_num
                chunk = self.parser.rows_chunk(rows, line)
                rows = []
                if chunk is not None:
                    yield chunk
            if row is None:
                return


class _ParquetSource:
    """A Parquet file read in row batches of :data:`CHUNK_ROWS`."""

    format = "parquet"
    delimiter = ","

    def __init__(self, path: Path):
        self.path, self.where = path, str(path)
        self.handle, _ = files.open_regular(path, BatchError, limit=None)
        try:
            self.file = pq.ParquetFile(self.handle)
        except (pa.ArrowException, OSError, ValueError) as exc:
            self.handle.close()
            raise BatchError(f"{self.where}: not a readable Parquet file ({exc})") from None
        self.header = list(self.file.schema_arrow.names)
        self.total = max(self.file.metadata.num_rows, 1)
        self.done = 0
        _check_header(self.header, self.where)

    def close(self) -> None:
        self.handle.close()

    def progress(self) -> float:
        return min(self.done / self.total, 1.0)

    def chunks(self) -> Iterator[_Chunk]:
        try:
            for batch in self.file.iter_batches(batch_size=CHUNK_ROWS):
                self.done += batch.num_rows
                if batch.num_rows:
                    yield _Chunk(
                        [_as_arrow(c) for c in batch.columns],
                        np.full(batch.num_rows, "", dtype=object),
                        self.done - batch.num_rows + 1,
                    )
        except (pa.ArrowException, OSError) as exc:
            raise BatchError(f"{self.where}: not a readable Parquet file ({exc})") from None


def _open_source(path: Path):
    return _ParquetSource(path) if file_format(path, "input") == "parquet" else _TextSource(path)


def read_table(path) -> tuple[list[str], list[list[str]], str]:
    """Header, data rows (text cells) and delimiter of a delimited text or Parquet file.

    Leading blank and ``#`` lines are skipped, as are blank rows; the delimiter is ","
    unless the header has none and has ";" or a tab. For small files (everything is read).
    """
    source = _open_source(Path(path))
    try:
        rows: list[list[str]] = []
        for chunk in source.chunks():
            cols = [_as_text(c).to_pylist() for c in chunk.columns]
            rows.extend([("" if v is None else v) for v in r] for r in zip(*cols))
        return source.header, rows, source.delimiter
    finally:
        source.close()


# --- writing -------------------------------------------------------------------------------


def _user_mode() -> int:
    """The mode a new file gets from this user (0666 less the umask; 0644 under umask 022)."""
    try:
        with open("/proc/self/status", encoding="ascii") as f:
            for line in f:
                if line.startswith("Umask:"):
                    return 0o666 & ~int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def _target_mode(out_path: Path) -> int:
    """Refuse a target that is not a regular file; return the mode the output gets."""
    try:
        st = os.lstat(out_path)
    except FileNotFoundError:
        return _user_mode()
    except OSError as exc:
        raise BatchError(f"{out_path}: cannot write there ({exc.strerror or exc})") from None
    if not stat.S_ISREG(st.st_mode):
        raise BatchError(
            f"{out_path}: is {files._kind(st.st_mode)}, not a regular file; batch writes only "
            "to a regular file or to standard output (-o -)"
        )
    return stat.S_IMODE(st.st_mode)


class _Output:
    """Where the rows go: standard output, or a temporary file renamed when complete."""

    def __init__(self, out_path, in_path: Path, kind: str):
        self.to_stdout = str(out_path) == "-"
        self.kind = "csv" if self.to_stdout else kind
        self.tmp: str | None = None
        self.writer: Any = None
        self.handle: Any
        if self.to_stdout:
            self.path = None
            self.handle = sys.stdout.buffer if hasattr(sys.stdout, "buffer") else None
            return
        self.path = Path(out_path)
        if self.path.parent and not self.path.parent.is_dir():
            raise BatchError(f"{self.path}: folder {self.path.parent} does not exist")
        if self.path.resolve() == in_path.resolve() or (
            self.path.exists() and os.path.samefile(self.path, in_path)
        ):
            raise BatchError(
                f"{self.path}: the output would overwrite the input; choose another name"
            )
        self.mode = _target_mode(self.path)
        try:
            fd, self.tmp = tempfile.mkstemp(
                prefix=f".{self.path.name}.", suffix=".part", dir=self.path.parent
            )
            _UNFINISHED.add(self)
            self.handle = os.fdopen(fd, "wb")
        except BaseException:  # an interruption between creating and holding the file
            self.abandon()
            raise

    def write(self, data: bytes | bytearray | memoryview) -> None:
        if self.handle is None:  # a text-only sys.stdout (tests capturing output)
            sys.stdout.write(bytes(data).decode("utf-8"))
        else:
            self.handle.write(data)

    def write_table(self, table: pa.Table, metadata: dict[str, str]) -> None:
        if self.writer is None:
            schema = table.schema.with_metadata(metadata)
            self.writer = pq.ParquetWriter(self.handle, schema)
        self.writer.write_table(table.replace_schema_metadata(self.writer.schema.metadata))

    def finish(self, rows: int) -> None:
        if self.writer is not None:
            self.writer.add_key_value_metadata({"o2transit.rows": str(rows)})
            self.writer.close()
        if self.tmp is None:
            if self.handle is not None:
                self.handle.flush()
            else:
                sys.stdout.flush()
            return
        self.handle.flush()
        os.fchmod(self.handle.fileno(), self.mode)
        self.handle.close()
        assert self.path is not None
        _target_mode(self.path)  # still not a special file at the moment of the rename
        os.replace(self.tmp, self.path)
        self.tmp = None
        _UNFINISHED.discard(self)

    def abandon(self) -> None:
        """Remove the temporary file (any error or interruption)."""
        if self.tmp is None:
            return
        with contextlib.suppress(Exception):  # a half-written file may fail to close
            self.handle.close()
        try:
            os.unlink(self.tmp)
        except FileNotFoundError:
            pass
        self.tmp = None
        _UNFINISHED.discard(self)


_UNFINISHED: set[_Output] = set()
"""Outputs whose temporary file exists and is not yet renamed: :func:`run_batch` removes
them on any exception, wherever in the run an interruption lands."""


class _Progress:
    """A one-line progress bar on a terminal; silent when ``stream`` is not a tty."""

    def __init__(self, stream, enabled: bool | None):
        self.stream = stream
        self.enabled = stream.isatty() if enabled is None else enabled

    def update(self, done: int, fraction: float, final: bool = False) -> None:
        if not self.enabled:
            return
        width = 30
        filled = int(width * (1.0 if final else fraction))
        count = f"{done:,}/{done:,} rows" if final else f"{done:,} rows, {fraction:.0%}"
        self.stream.write(f"\rbatch [{'#' * filled}{'.' * (width - filled)}] {count}")
        self.stream.flush()

    def close(self) -> None:
        if self.enabled:
            self.stream.write("\n")
            self.stream.flush()


def _with_last(items: Iterator[_Chunk]) -> Iterator[tuple[_Chunk, bool]]:
    """Each item and whether it is the last (one item read ahead)."""
    previous = None
    for item in items:
        if previous is not None:
            yield previous, False
        previous = item
    if previous is not None:
        yield previous, True


def run_batch(
    in_path,
    out_path,
    *,
    progress: bool | None = None,
    stream=None,
    all_columns: bool = False,
    workers: int | None = None,
) -> BatchSummary:
    """Compute the bedside derived values for every row of ``in_path`` into ``out_path``.

    ``out_path`` "-" writes CSV to standard output; otherwise the format follows the
    ending (:func:`file_format`). A file is written to a temporary name in the same folder
    and renamed when complete, so a failure or a kill never leaves half a file under the
    output's name; the temporary file is removed on any exception, ``KeyboardInterrupt``
    and ``SystemExit`` included. ``progress`` None shows a bar on ``stream`` (standard
    error) only when it is a terminal. ``all_columns`` adds every output of
    :func:`model.bedside.derive` (``ALL_OUTPUTS``) instead of ``BATCH_OUTPUTS``.
    ``workers`` chunks are computed at once (default: 2, at most the machine's cores); in
    a single-threaded process with fork (the command) they are worker processes, else
    threads. The output is the same whatever the number.

    Raises
    ------
    BatchError
        Missing, special, empty or unreadable file, unknown file type, missing required
        column, clashing columns, a target that is not a regular file or is the input;
        nothing is written under the output's name.

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
    if not os.path.lexists(in_path):
        raise BatchError(f"input file not found: {in_path}")
    if str(out_path) != "-":
        _target_mode(Path(out_path))  # a device, FIFO or link is refused before anything else
    out_kind = "csv" if str(out_path) == "-" else file_format(out_path, "output")
    source = _open_source(in_path)
    try:
        return _run(source, in_path, out_path, out_kind, stream, progress, all_columns, workers)
    except BaseException:
        for output in list(_UNFINISHED):
            output.abandon()
        raise
    finally:
        source.close()


@dataclass
class _Job:
    """What a worker needs to compute any chunk of one run (sent once per chunk; small)."""

    parser: _Parser | None
    header: list[str]
    outputs: tuple[str, ...]
    delimiter: str
    kind: str
    where: str
    out_delimiter: str = ","


def _compute(
    job: _Job, piece: _Block | _Chunk, into: memoryview | None = None
) -> tuple[int, int, Any]:
    """(rows, rows with an error, CSV bytes or an Arrow table) of one piece of the input;
    with ``into``, CSV lines that fit are written there and their length is returned."""
    chunk = job.parser.parse(piece) if job.parser is not None else piece
    if not isinstance(chunk, _Chunk):
        return 0, 0, None
    decimal_comma = job.delimiter == ";"
    derived, errors = derive_columns(
        dict(zip(job.header, chunk.columns)),
        decimal_comma=decimal_comma,
        errors=chunk.errors,
        source=job.where,
    )
    n_errors = int(np.count_nonzero(errors != ""))
    n = len(errors)
    if job.kind == "csv":
        return (
            n,
            n_errors,
            _csv_lines(
                chunk if job.out_delimiter == job.delimiter else replace(chunk, plain=False),
                derived,
                errors,
                job.outputs,
                job.out_delimiter,
                decimal_comma,
                None,
                into,
            ),
        )
    columns = list(chunk.columns) + _arrow_outputs(derived, errors, job.outputs)
    return n, n_errors, pa.Table.from_arrays(columns, names=job.header + list(job.outputs))


_SLOT_IN_BYTES = 4 * 1024 * 1024
_SLOT_OUT_BYTES = 16 * 1024 * 1024
_SLOT_BYTES = _SLOT_IN_BYTES + _SLOT_OUT_BYTES
"""Room for one block of input rows and for its CSV lines in the memory shared with the
worker processes."""

_SHARED: list[Any] = [None]
"""The shared memory of the run in progress (worker processes are forked with it): one
slot of :data:`_SLOT_BYTES` per chunk in flight, so that blocks and CSV lines pass
between the command and its workers without being pickled through a pipe."""


def _compute_shared(
    job: _Job, piece: _Block | _Chunk, slot: int, in_bytes: int
) -> tuple[int, int, Any]:
    """:func:`_compute` in a worker process. A block of ``in_bytes`` > 0 is read from
    shared ``slot``; CSV lines that fit go into it, and the result then holds
    (slot, length) instead of the bytes."""
    shared = _SHARED[0]
    start = slot * _SLOT_BYTES
    if in_bytes:
        piece = _Block(shared[start : start + in_bytes], piece.line)
    start += _SLOT_IN_BYTES
    room = memoryview(shared)[start : start + _SLOT_OUT_BYTES]
    n, n_errors, result = _compute(job, piece, room)
    if isinstance(result, (bytes, bytearray)) and len(result) <= _SLOT_OUT_BYTES:
        room[: len(result)] = result
        result = len(result)
    return n, n_errors, (slot, result) if isinstance(result, int) else result


def _worker_start() -> None:
    """A worker process leaves interruptions to the command (no traceback per worker)."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_DFL)


def _pool(workers: int | None) -> tuple[Executor, int]:
    """Worker processes when the caller is a plain single-threaded process on a system
    with fork (the command), else threads (a server, a notebook, a test runner): forking a
    process whose other threads may hold locks is unsafe."""
    n = workers if workers is not None else min(_WORKERS, os.cpu_count() or 1)
    n = max(int(n), 1)
    if n > 1 and "fork" in mp.get_all_start_methods() and threading.active_count() == 1:
        ctx = mp.get_context("fork")
        return ProcessPoolExecutor(max_workers=n, mp_context=ctx, initializer=_worker_start), n
    return ThreadPoolExecutor(max_workers=n, thread_name_prefix="o2transit-batch"), n


def _shared_memory(pool: Executor, n_workers: int, out_kind: str):
    """Memory shared with worker processes forked after this call (CSV output only)."""
    if out_kind != "csv" or not isinstance(pool, ProcessPoolExecutor):
        return None
    import mmap

    return mmap.mmap(-1, (n_workers + 1) * _SLOT_BYTES)


def _stop(pool: Executor) -> None:
    """Stop at once: cancel queued work and end worker processes (an interruption)."""
    with contextlib.suppress(Exception):
        pool.shutdown(wait=False, cancel_futures=True)
    for proc in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(Exception):
            proc.terminate()


def _run(
    source, in_path, out_path, out_kind, stream, progress, all_columns, workers=None
) -> BatchSummary:
    header = source.header
    _column_map(header, str(in_path))  # file-level problems before anything is written
    outputs = ALL_OUTPUTS if all_columns else BATCH_OUTPUTS
    delimiter = source.delimiter
    pool, n_workers = _pool(workers)  # before Arrow starts its threads (fork safety)
    bar = _Progress(stream, progress)
    metadata = {
        "o2transit.caution": CAUTION,
        "o2transit.version": _version(),
        "o2transit.columns_added": ",".join(outputs),
    }
    out_delimiter = output_delimiter(out_path, delimiter)
    job = _Job(
        getattr(source, "parser", None),
        header,
        outputs,
        delimiter,
        out_kind,
        str(in_path),
        out_delimiter,
    )
    names = pa.array(header + list(outputs) + [END_COLUMN], type=pa.string())
    # the header goes out with the first rows: an input without rows writes nothing at all
    head = (out_delimiter.join(_quoted(names, out_delimiter).to_pylist()) + "\n").encode()
    pieces = source.pieces() if hasattr(source, "pieces") else source.chunks()
    rows = n_errors = 0
    # each chunk's lines go out at once but its last line end waits: the last line of the
    # file gets the row count in its END_COLUMN cell first
    line_end = b""
    # nothing between creating the temporary file and the try that removes it
    try:
        output = _Output(out_path, in_path, out_kind)
    except BaseException:
        pool.shutdown(wait=False)
        raise
    try:
        bar.update(0, 0.0)
        pending: list[Future] = []
        shared = _SHARED[0] = _shared_memory(pool, n_workers, out_kind)
        slots = n_workers + 1  # chunks in flight at most (see drain)

        def drain(keep: int) -> None:
            nonlocal rows, n_errors, line_end, head
            while len(pending) > keep:
                n, e, result = pending.pop(0).result()
                if not n:
                    continue
                if output.kind == "csv":
                    if isinstance(result, tuple):
                        start = result[0] * _SLOT_BYTES + _SLOT_IN_BYTES
                        lines = memoryview(shared)[start : start + result[1]]
                    else:
                        lines = memoryview(result)
                    assert lines[-1:] == b"\n"
                    output.write(line_end + head)
                    output.write(lines[:-1])
                    line_end, head = b"\n", b""
                else:
                    output.write_table(result, metadata)
                rows += n
                n_errors += e
                bar.update(rows, source.progress())

        for i, piece in enumerate(pieces):
            if shared is None:
                pending.append(pool.submit(_compute, job, piece))
            else:
                slot, size = i % slots, 0
                if isinstance(piece, _Block) and len(piece.data) <= _SLOT_IN_BYTES:
                    size, start = len(piece.data), slot * _SLOT_BYTES
                    shared[start : start + size] = piece.data
                    piece = _Block(b"", piece.line)
                pending.append(pool.submit(_compute_shared, job, piece, slot, size))
            drain(n_workers)
        drain(0)
        if not rows:
            raise BatchError(f"{in_path}: no data rows under the header; nothing to derive")
        if line_end:
            output.write(str(rows).encode("ascii") + line_end)
        bar.update(rows, 1.0, final=True)
        bar.close()
        output.finish(rows)
    except BaseException:
        output.abandon()  # first: nothing below may stop it
        _stop(pool)
        raise
    finally:
        _SHARED[0] = None
    pool.shutdown(wait=True)
    where = "-" if output.to_stdout else str(output.path)
    return BatchSummary(rows, n_errors, where, output.kind)


def _version() -> str:
    try:
        from o2transit import __version__
    except ImportError:  # pragma: no cover - the model used outside the package
        return "unknown"
    return __version__
