"""Serial gases: one patient's blood gases through a shift, each derived and fitted in turn.

An ICU patient has a gas every few hours. A :class:`Gas` is one of them: the clock time it
was drawn and its measured values (keys of :data:`model.bedside.MEASURED_LIMITS`).
:func:`trend` derives every gas of a series in one vectorised call of
:func:`model.bedside.derive`, fits each with :func:`model.fitting.fit_case` (or takes a fit
already made) and returns the trend: P/F, shunt (fitted, and Berggren's from the measured
contents), DO2, in-vivo P50 and the measured arterial and venous points as they lie on the
patient's curve (PO2 moved to the patient's temperature, Severinghaus 1979 Eq 3).

Times are clock times ``HH:MM`` (a time earlier than the one before is taken to be after
midnight) or dates and times ``YYYY-MM-DD HH:MM``; a series is kept in the order entered.
:func:`read_gas_csv` reads a pasted table: a ``time`` column and measured columns named as
in ``o2transit batch`` (:data:`model.batch.COLUMN_VARIANTS` for kPa, g/L and %).

References
----------
1. Severinghaus JW. Simple, accurate equations for human blood O2 dissociation
   computations. J Appl Physiol 1979; 46:599-602 (Eq 3, PO2 against temperature).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .bedside import MEASURED_LIMITS, check_measured, derive, temperature_corrected_po2

MAX_GASES = 48
"""Gases in one series (two days at one an hour)."""

TIME_MAX_CHARS = 16

_CLOCK = re.compile(r"^([01]?\d|2[0-3])[:.h]([0-5]\d)$")
_STAMP = re.compile(r"^(\d{4}-\d{2}-\d{2})[ T]([01]?\d|2[0-3]):([0-5]\d)$")

TREND_KEYS = (
    "pao2_fio2_ratio",
    "shunt_fitted",
    "shunt_berggren",
    "do2_ml_min",
    "p50_invivo_mmhg",
    "p50_insitu_mmhg",
    "vo2_ml_min",
    "arterial_po2_mmhg",
    "arterial_so2",
    "venous_po2_mmhg",
    "venous_so2",
    "temperature_c",
)
"""Columns of :attr:`Trend.values`: P/F [mmHg]; shunt fitted to the gas and by Berggren from
its contents [-]; DO2 [mL/min] of the fitted case; in-vivo P50 [mmHg] of the fitted case's
arterial blood (its pH, PCO2 and temperature) and in-situ P50 by the single-point method
(37 degC frame); Fick VO2 [mL/min] of the fitted case; the measured points at the patient's
temperature [mmHg, -]; temperature [degC]."""


@dataclass(frozen=True)
class Gas:
    """One gas of the series: when it was drawn and what was measured (model units)."""

    time: str
    measured: dict


@dataclass(frozen=True)
class Trend:
    """A series derived and fitted: per gas its time, elapsed hours, derivation and fit.

    ``values`` holds one float array per :data:`TREND_KEYS` (NaN where not computable);
    ``fits`` a ``FitResult`` or None per gas and ``fit_errors`` why not ("" when fitted).
    """

    gases: tuple[Gas, ...]
    hours: np.ndarray
    values: dict
    derived: dict = field(repr=False)
    fits: tuple = field(repr=False)
    fit_errors: tuple[str, ...] = ()


def check_time(text) -> str:
    """A gas's time as typed, stripped; ValueError unless ``HH:MM`` or ``YYYY-MM-DD HH:MM``.

    Examples
    --------
    >>> check_time(" 6:05 ")
    '06:05'
    """
    if not isinstance(text, str):
        raise ValueError(f"time = {text!r} must be text such as 06:00")  # noqa: TRY004
    s = text.strip()
    clock = _CLOCK.match(s)
    if clock:
        return f"{int(clock.group(1)):02d}:{clock.group(2)}"
    stamp = _STAMP.match(s)
    if stamp:
        try:
            dt.date.fromisoformat(stamp.group(1))
        except ValueError:
            raise ValueError(f"time = {s!r}: {stamp.group(1)} is not a date") from None
        return f"{stamp.group(1)} {int(stamp.group(2)):02d}:{stamp.group(3)}"
    raise ValueError(
        f"time = {s!r} is not a time; give the clock time HH:MM (e.g. 06:00) or YYYY-MM-DD HH:MM"
    )


def elapsed_hours(times: Sequence[str]) -> np.ndarray:
    """Hours from the first gas, in the order given.

    A clock time earlier than the one before it is taken to be on the next day; a date and
    time is absolute (and must not be earlier than the gas before it).

    Examples
    --------
    >>> elapsed_hours(["22:00", "02:30", "06:00"]).tolist()
    [0.0, 4.5, 8.0]
    """
    out = []
    last: float | None = None
    for raw in times:
        text = check_time(raw)
        if " " in text:
            day, clock = text.split(" ")
            stamp = dt.datetime.fromisoformat(f"{day}T{clock}")
            hours = stamp.timestamp() / 3600.0
            if last is not None and hours < last:
                raise ValueError(f"time = {text!r} is earlier than the gas before it")
        else:
            h, m = (int(p) for p in text.split(":"))
            hours = h + m / 60.0
            if last is not None:
                day_start = last - (last % 24.0)
                hours += day_start
                while hours < last:
                    hours += 24.0
        out.append(hours)
        last = hours
    arr = np.asarray(out, dtype=float)
    return arr - arr[0] if arr.size else arr


def check_gas(gas: Gas) -> Gas:
    """``gas`` with its time and measured values checked (ValueError naming the fault)."""
    time = check_time(gas.time)
    try:
        measured = {k: v for k, v in check_measured(gas.measured).items() if v is not None}
    except ValueError as exc:
        raise ValueError(f"gas at {time}: {exc}") from None
    return Gas(time, measured)


def check_series(gases: Sequence[Gas]) -> tuple[Gas, ...]:
    """Every gas checked, at most :data:`MAX_GASES`, times in order."""
    if len(gases) > MAX_GASES:
        raise ValueError(f"{len(gases)} gases given; a series holds at most {MAX_GASES}")
    checked = tuple(check_gas(g) for g in gases)
    elapsed_hours([g.time for g in checked])
    return checked


def _column_units() -> dict[str, tuple[str, float, str]]:
    from .batch import COLUMN_VARIANTS

    cols = {k: (k, 1.0, v[2]) for k, v in MEASURED_LIMITS.items()}
    cols.update({name: (v.key, v.factor, v.unit) for name, v in COLUMN_VARIANTS.items()})
    return cols


def read_gas_csv(text: str) -> list[Gas]:
    """Gases from pasted CSV text: a ``time`` column and measured columns.

    Column names are those of ``o2transit batch``: the keys of
    :data:`model.bedside.MEASURED_LIMITS` and their unit variants (``pao2_kpa``, ``hb_g_l``,
    ``sao2_percent``...). ``,``, ``;`` or tab separate cells (with ``;`` a decimal comma is
    read); blank cells are "not given"; other columns are refused by name.

    Raises
    ------
    ValueError
        No header or no time column, an unknown or repeated column, a cell that is not a
        number, or a value out of range: the message names the line, the column, the value
        and the allowed range with its unit.

    Examples
    --------
    >>> rows = read_gas_csv("time,pao2_kpa,paco2_kpa,ph,sao2_percent,hb_g_l,fio2,temperature_c\\n"
    ...                     "06:00,10.9,5.1,7.25,93,85,0.6,39")
    >>> rows[0].time, round(rows[0].measured["pao2_mmhg"], 1), rows[0].measured["hb_g_dl"]
    ('06:00', 81.8, 8.5)
    """
    lines = [ln for ln in str(text).splitlines() if ln.strip() and not ln.startswith("#")]
    if not lines:
        raise ValueError("no gases: paste a header line (time, pao2_mmhg, ...) and one row a gas")
    head = lines[0]
    delimiter = "," if "," in head else ";" if ";" in head else "\t" if "\t" in head else ","
    decimal_comma = delimiter == ";"
    rows = list(csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter))
    header = [h.strip() for h in rows[0]]
    units = _column_units()
    if "time" not in header:
        raise ValueError(f"no 'time' column (found columns: {', '.join(header)})")
    seen: dict[str, str] = {}
    for name in header:
        if name == "time":
            continue
        if name not in units:
            raise ValueError(
                f"column {name!r} is not a measured value; use the names of o2transit batch "
                "(pao2_mmhg or pao2_kpa, sao2 or sao2_percent, hb_g_dl or hb_g_l, ...)"
            )
        key = units[name][0]
        if key in seen:
            raise ValueError(f"columns {seen[key]!r} and {name!r} both give {key}; keep one")
        seen[key] = name
    gases = []
    for line_no, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            raise ValueError(f"line {line_no}: {len(row)} cells for {len(header)} columns")
        measured: dict[str, float] = {}
        time = ""
        for name, cell in zip(header, row):
            cell = cell.strip()
            if name == "time":
                time = cell
                continue
            if not cell:
                continue
            key, factor, unit = units[name]
            lo, hi, _, label = MEASURED_LIMITS[key]
            u = f" {unit}" if unit else ""
            allowed = f"allowed range {lo / factor:.4g}-{hi / factor:.4g}{u}"
            try:
                value = float(cell.replace(",", ".") if decimal_comma else cell)
            except ValueError:
                raise ValueError(
                    f"line {line_no}: {name} = {cell!r} is not a number ({label}; {allowed})"
                ) from None
            if not math.isfinite(value) or not lo <= value * factor <= hi:
                raise ValueError(
                    f"line {line_no}: {name} = {cell}{u} is outside the {allowed} ({label})"
                )
            measured[key] = value * factor
        try:
            gases.append(check_gas(Gas(time, measured)))
        except ValueError as exc:
            raise ValueError(f"line {line_no}: {exc}") from None
    return list(check_series(gases))


def derive_series(gases: Sequence[Gas]) -> dict:
    """:func:`model.bedside.derive` of every gas in one vectorised call (NaN = not given)."""
    keys = sorted({k for g in gases for k in g.measured})
    columns: dict[str, Any] = {
        k: np.array([g.measured.get(k, np.nan) for g in gases], dtype=float) for k in keys
    }
    return derive(**columns)


def trend(
    gases: Sequence[Gas],
    *,
    curve: str = "severinghaus",
    fits: Sequence | None = None,
    fit: Callable | None = None,
) -> Trend:
    """Derive and fit every gas of a series; the trend of the shift.

    Parameters
    ----------
    gases : sequence of Gas
        In the order they were drawn (:func:`check_series`).
    curve : str
        Dissociation curve of the fits.
    fits : sequence, optional
        A ``FitResult`` (or None) per gas already made; None entries are fitted here.
    fit : callable, optional
        ``fit(measured, curve=...)``; :func:`model.fitting.fit_case` by default.

    Returns
    -------
    Trend

    Examples
    --------
    >>> base = {"pao2_mmhg": 82.0, "paco2_mmhg": 38.0, "ph": 7.25, "sao2": 0.93,
    ...         "hb_g_dl": 8.5, "fio2": 0.6, "temperature_c": 39.0}
    >>> t = trend([Gas("06:00", base), Gas("10:00", {**base, "fio2": 0.5})])
    >>> t.hours.tolist(), [round(v) for v in t.values["pao2_fio2_ratio"]]
    ([0.0, 4.0], [137, 164])
    """
    gases = check_series(gases)
    if fit is None:
        from .fitting import fit_case

        fit = fit_case
    known = list(fits) if fits is not None else [None] * len(gases)
    if len(known) != len(gases):
        raise ValueError(f"{len(known)} fits given for {len(gases)} gases")
    n = len(gases)
    nan = np.full(n, np.nan)
    values = {k: nan.copy() for k in TREND_KEYS}
    if not n:
        return Trend((), np.zeros(0), values, {}, (), ())
    derived = derive_series(gases)
    results, errors = [], []
    for gas, made in zip(gases, known):
        if made is None:
            try:
                made = fit(gas.measured, curve=curve)
            except (ValueError, ArithmeticError) as exc:
                made = None
                errors.append(str(exc))
            else:
                errors.append("")
        else:
            errors.append("")
        results.append(made)
    for i, (gas, made) in enumerate(zip(gases, results)):
        m = gas.measured
        t = m["temperature_c"]
        values["temperature_c"][i] = t
        values["arterial_po2_mmhg"][i] = float(temperature_corrected_po2(m["pao2_mmhg"], t))
        values["arterial_so2"][i] = m["sao2"]
        if "pvo2_mmhg" in m and "svo2" in m:
            values["venous_po2_mmhg"][i] = float(temperature_corrected_po2(m["pvo2_mmhg"], t))
            values["venous_so2"][i] = m["svo2"]
        if made is not None:
            r = made.result
            values["shunt_fitted"][i] = float(made.fitted["shunt_fraction"])
            values["do2_ml_min"][i] = float(r.do2_ml_min)
            values["p50_invivo_mmhg"][i] = float(r.arterial.p50_mmhg)
            values["vo2_ml_min"][i] = float(r.vo2_ml_min)
    values["pao2_fio2_ratio"] = np.asarray(derived["pao2_fio2_ratio"], dtype=float)
    values["shunt_berggren"] = np.asarray(derived["shunt_fraction"], dtype=float)
    values["p50_insitu_mmhg"] = np.asarray(derived["p50_insitu_mmhg"], dtype=float)
    hours = elapsed_hours([g.time for g in gases])
    return Trend(gases, hours, values, derived, tuple(results), tuple(errors))


def gas_table(gas: Gas) -> dict:
    """A gas as plain data for a file: ``time`` and ``measured``."""
    gas = check_gas(gas)
    return {"time": gas.time, "measured": dict(gas.measured)}


def gas_from_table(table: Mapping) -> Gas:
    """The gas of :func:`gas_table`'s data, checked (ValueError naming the fault)."""
    if not isinstance(table, Mapping) or not isinstance(table.get("measured"), Mapping):
        raise ValueError("a gas must be a table with a time and a [measured] table")  # noqa: TRY004
    unknown = set(table) - {"time", "measured"}
    if unknown:
        raise ValueError(f"gas has unknown key(s) {', '.join(sorted(unknown))}")
    time: Any = table.get("time")
    return check_gas(Gas(time, dict(table["measured"])))
