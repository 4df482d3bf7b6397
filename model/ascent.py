"""Ascent schedules: day-by-day acclimatization, the O2 chain each night and high point,
ascent-rate guidance checks and a summary for comparing schedules.

A schedule (``scenarios/ascents/*.toml``) is a person's sea-level baseline and one entry per
day: the sleeping altitude, optionally the highest altitude reached that day and the FiO2
breathed (or a nasal-cannula O2 flow). :func:`run_ascent` steps the acclimatization state of
:mod:`model.acclimatization` night by night and solves the whole chain
(:func:`model.solve_transport`) for all nights, the edges of the predicted SpO2 band and the
high points in one vectorised call; pressures come from the schedule's own pressure model
(``mountain`` by default) and the record says which. :func:`forecast_points` gives the
forecast for an oximeter reading on a given day and altitude, with a person's offset.
"""

from __future__ import annotations

import contextlib
import csv
import dataclasses
import io
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .acclimatization import (
    HCO3_FLOOR_MMOL_L,
    VENTILATION_SD_MMHG,
    acclimatization_step,
    baseline_state,
    cardiac_output,
    dpg_p50_ratio,
    equivalent_altitude,
    fio2_from_flow,
    high_point_paco2,
    ph_henderson_hasselbalch,
    respiratory_exchange_ratio,
)
from .air import PRESSURE_MODELS, barometric_pressure, inspired_po2
from .dissociation import NORMAL_DPG_MMOL_L, p50
from .files import read_text
from .limits import INPUT_LIMITS
from .scenario import ScenarioError, read_toml
from .transport import TransportResult, solve_transport

GUIDANCE_ALTITUDE_M = 3000.0
"""Sleeping altitude above which the ascent-rate rules apply [m] (Luks et al. 2019/2024)."""
MAX_GAIN_M = 500.0
"""Largest allowed rise in sleeping altitude in one day above 3000 m [m]; exactly 500 passes."""
MAX_GAIN_DAYS_IN_A_ROW = 3
"""Days of gain in a row above 3000 m before a day without gain is due (the 4th day)."""
EXTRA_DAY_PER_M = 1000.0
"""One extra (no-gain) day per this much sleeping altitude gained above 3000 m [m]."""
SATURATION_THRESHOLDS = (0.90, 0.80)
"""Night SaO2 thresholds counted in the summary [-]; 0.90 is also the burden threshold."""

_REFERENCES = """
    References
    ----------
    1. Luks AM, Auerbach PS, Freer L, et al. Wilderness Medical Society clinical practice
       guidelines for the prevention and treatment of acute altitude illness: 2019 update.
       Wilderness Environ Med 2019; 30(4S):S3-S18.
    2. Luks AM, Beidleman BA, Freer L, et al. Wilderness Medical Society clinical practice
       guidelines for the prevention, diagnosis, and treatment of acute altitude illness:
       2024 update. Wilderness Environ Med 2024; 35(1S):2S-19S.
"""

_BASELINE_KEYS = ("hb_g_dl", "paco2_mmhg", "cardiac_output_l_min", "vo2_ml_min")
_AGE_RANGE = (1.0, 110.0)
_FLOW_RANGE = (0.0, 15.0)
_MAX_DAYS = 400
CSV_COLUMNS = ("day", "sleep_altitude_m", "high_altitude_m", "fio2")


class AscentError(ScenarioError):
    """An ascent file that cannot be used; the message says where and why."""


@dataclass(frozen=True)
class Baseline:
    """The person at sea level before the trip (same key names as the scenario files).

    ``age_years`` is kept with the schedule for the record; the model does not use it yet.
    """

    hb_g_dl: float = 15.0
    paco2_mmhg: float = 40.0
    cardiac_output_l_min: float = 5.0
    vo2_ml_min: float = 250.0
    age_years: float | None = None
    pressure_model: str = "mountain"


@dataclass(frozen=True)
class AscentDay:
    """One day: where the night is spent, the day's high point, the FiO2 breathed.

    ``high_altitude_m`` None means the day's high point is the sleeping altitude. ``fio2``
    applies to the night and to the high point.
    """

    sleep_altitude_m: float
    high_altitude_m: float | None = None
    fio2: float = 0.21


@dataclass(frozen=True)
class AscentProfile:
    """A named schedule of days for one person."""

    name: str
    days: tuple[AscentDay, ...]
    baseline: Baseline = field(default_factory=Baseline)
    description: str = ""
    path: str = ""


@dataclass(frozen=True)
class AscentResult:
    """Day-by-day results of :func:`run_ascent`; arrays have one entry per day.

    ``night`` and ``high`` are :class:`model.TransportResult` for the nights and the high
    points; ``flags`` one list of plain-language notes per day; ``summary`` a dict.
    ``sao2_low`` and ``sao2_high`` are the edges of the predicted band of a resting reading
    at the sleeping altitude (:data:`BAND_Z` SDs of the person offset, see
    :func:`run_ascent`); ``standard_p50_mmhg`` the night's standard P50 with its 2,3-DPG;
    ``rq`` the exchange ratio used in the alveolar gas equation.
    """

    profile: AscentProfile
    sleep_altitude_m: np.ndarray
    high_altitude_m: np.ndarray
    fio2: np.ndarray
    equivalent_altitude_m: np.ndarray
    night: TransportResult
    high: TransportResult
    dpg_mmol_l: np.ndarray
    hco3_mmol_l: np.ndarray
    flags: list
    summary: dict
    sao2_low: np.ndarray
    sao2_high: np.ndarray
    standard_p50_mmhg: np.ndarray
    rq: np.ndarray
    person_offset_mmhg: float = 0.0
    offset_sd_mmhg: float = VENTILATION_SD_MMHG
    reading_sd_pct: float = 0.0

    def to_dict(self) -> dict:
        """JSON-ready record: ``name``, ``days`` (one dict per day) and ``summary``."""
        n, h = self.night, self.high
        days = []
        for i in range(self.sleep_altitude_m.size):
            days.append(
                {
                    "day": i + 1,
                    "sleep_altitude_m": float(self.sleep_altitude_m[i]),
                    "high_altitude_m": float(self.high_altitude_m[i]),
                    "fio2": float(self.fio2[i]),
                    "equivalent_altitude_m": float(self.equivalent_altitude_m[i]),
                    "barometric_pressure_mmhg": float(n.barometric_pressure_mmhg[i]),
                    "inspired_po2_mmhg": float(n.inspired_po2_mmhg[i]),
                    "paco2_mmhg": float(n.arterial.pco2_mmhg[i]),
                    "ph": float(n.arterial.ph[i]),
                    "base_excess_mmol_l": float(n.arterial.base_excess_mmol_l[i]),
                    "pao2_mmhg": float(n.arterial.po2_mmhg[i]),
                    "alveolar_po2_mmhg": float(n.alveolar_po2_mmhg[i]),
                    "sao2": float(n.arterial.so2[i]),
                    "sao2_low": float(self.sao2_low[i]),
                    "sao2_high": float(self.sao2_high[i]),
                    "hb_g_dl": float(n.hb_g_dl[i]),
                    "cao2_ml_dl": float(n.arterial.o2_content_ml_dl[i]),
                    "do2_ml_min": float(n.do2_ml_min[i]),
                    "pvo2_mmhg": float(n.venous.po2_mmhg[i]),
                    "svo2": float(n.venous.so2[i]),
                    "dpg_mmol_l": float(self.dpg_mmol_l[i]),
                    "standard_p50_mmhg": float(self.standard_p50_mmhg[i]),
                    "rq": float(self.rq[i]),
                    "high_point": {
                        "barometric_pressure_mmhg": float(h.barometric_pressure_mmhg[i]),
                        "paco2_mmhg": float(h.arterial.pco2_mmhg[i]),
                        "pao2_mmhg": float(h.arterial.po2_mmhg[i]),
                        "sao2": float(h.arterial.so2[i]),
                        "cao2_ml_dl": float(h.arterial.o2_content_ml_dl[i]),
                        "do2_ml_min": float(h.do2_ml_min[i]),
                        "pvo2_mmhg": float(h.venous.po2_mmhg[i]),
                    },
                    "flags": list(self.flags[i]),
                }
            )
        return {
            "name": self.profile.name,
            "file": self.profile.path,
            "pressure_model": self.profile.baseline.pressure_model,
            "band": {
                "person_offset_mmhg": self.person_offset_mmhg,
                "offset_sd_mmhg": self.offset_sd_mmhg,
                "reading_sd_pct": self.reading_sd_pct,
                "z": BAND_Z,
            },
            "days": days,
            "summary": dict(self.summary),
        }


class _Skip(Exception):
    """One problem recorded: the rest of this key or day is skipped, the file goes on."""


class _Problems:
    """Every problem of one file, each line starting with the file (``fail`` records one
    and skips what depends on it); :meth:`done` raises them all at once."""

    def __init__(self, where: str):
        self.where = where
        self.lines: list[str] = []

    def __call__(self, msg: str):
        self.lines.append(f"{self.where}: {msg}")
        raise _Skip

    @contextlib.contextmanager
    def each(self):
        """Go on after a problem inside the block (the next key, the next day)."""
        try:
            yield
        except _Skip:
            pass

    def done(self) -> None:
        if self.lines:
            raise AscentError("\n".join(self.lines), tuple(self.lines))


def _number(fail, label, raw, lo, hi, unit):
    if isinstance(raw, bool) or not isinstance(raw, (int, float)):
        fail(f"{label} = {raw!r} must be a number")
    if not lo <= float(raw) <= hi:
        fail(f"{label} = {raw!r} is outside the allowed range {lo:g}-{hi:g} {unit}".rstrip())
    return float(raw)


def _day_from_mapping(entry, label, fail: _Problems) -> AscentDay | None:
    """One day, or None with its problems recorded in ``fail`` (all of them)."""
    if not isinstance(entry, dict):
        with fail.each():
            fail(f"{label} must be a table [[day]]")
        return None
    before = len(fail.lines)
    allowed = ("sleep_altitude_m", "high_altitude_m", "fio2", "o2_flow_l_min")
    for key in entry:
        if key not in allowed:
            with fail.each():
                fail(f"{label} unknown key {key!r}; allowed: {', '.join(allowed)}")
    lo, hi, unit, _ = INPUT_LIMITS["altitude_m"]
    sleep = high = None
    with fail.each():
        if "sleep_altitude_m" not in entry:
            fail(f"{label} sleep_altitude_m is missing (sleeping altitude, m)")
        sleep = _number(fail, f"{label} sleep_altitude_m", entry["sleep_altitude_m"], lo, hi, unit)
    with fail.each():
        if "high_altitude_m" in entry:
            high = _number(fail, f"{label} high_altitude_m", entry["high_altitude_m"], lo, hi, unit)
            if sleep is not None and high < sleep:
                fail(
                    f"{label} high_altitude_m = {entry['high_altitude_m']!r} is below the "
                    f"sleeping altitude {sleep:g} m; the allowed range is {sleep:g}-{hi:g} m"
                )
    fio2 = 0.21
    with fail.each():
        if "fio2" in entry and "o2_flow_l_min" in entry:
            fail(f"{label} fio2 and o2_flow_l_min are both given; keep one")
        if "fio2" in entry:
            fio2 = _number(fail, f"{label} fio2", entry["fio2"], 0.21, 1.0, "")
        if "o2_flow_l_min" in entry:
            flow = _number(
                fail, f"{label} o2_flow_l_min", entry["o2_flow_l_min"], *_FLOW_RANGE, "L/min"
            )
            fio2 = round(float(fio2_from_flow(flow)), 6)
    if len(fail.lines) > before or sleep is None:
        return None
    return AscentDay(sleep, high, fio2)


def ascent_from_mapping(data: dict, where: str = "<ascent>") -> AscentProfile:
    """Validate a parsed ascent mapping (as from TOML) and build an :class:`AscentProfile`.

    Every problem in the mapping is reported at once (``AscentError.problems``, one line
    each, naming file, key or day, value, range and unit).

    Raises
    ------
    AscentError
        Unknown key, wrong type, value out of range (naming file, key, value, range and
        unit), no days, or a high point below the night's altitude.

    Examples
    --------
    >>> p = ascent_from_mapping({"name": "x", "day": [{"sleep_altitude_m": 2800},
    ...                                             {"sleep_altitude_m": 3300, "o2_flow_l_min": 1}]})
    >>> len(p.days), p.days[1].fio2
    (2, 0.25)
    >>> try:
    ...     ascent_from_mapping({"baseline": {"hb_g_dl": 99}, "day": [{"sleep_altitude_m": -1e6}]})
    ... except AscentError as e:
    ...     len(e.problems)
    2
    """
    fail = _Problems(where)
    for key in data:
        if key not in ("name", "description", "baseline", "day"):
            with fail.each():
                fail(f"unknown key {key!r}; allowed: name, description, [baseline], [[day]]")
    for key in ("name", "description"):
        if key in data and not isinstance(data[key], str):
            with fail.each():
                fail(f"{key} = {data[key]!r} must be text")
    raw = data.get("baseline", {})
    if not isinstance(raw, dict):
        with fail.each():
            fail("baseline must be a table [baseline]")
        raw = {}
    base: dict = {}
    for key, value in raw.items():
        with fail.each():
            if key in _BASELINE_KEYS:
                lo, hi, unit, _ = INPUT_LIMITS[key]
                base[key] = _number(fail, f"[baseline] {key}", value, lo, hi, unit)
            elif key == "age_years":
                base[key] = _number(fail, "[baseline] age_years", value, *_AGE_RANGE, "years")
            elif key == "pressure_model":
                if value not in PRESSURE_MODELS:
                    fail(
                        f"[baseline] pressure_model = {value!r} is not one of "
                        f"{', '.join(PRESSURE_MODELS)}"
                    )
                base[key] = value
            else:
                fail(
                    f"[baseline] unknown key {key!r}; allowed: "
                    f"{', '.join(_BASELINE_KEYS + ('age_years', 'pressure_model'))}"
                )
    entries = data.get("day", [])
    days: list[AscentDay | None] = []
    with fail.each():
        if not isinstance(entries, list) or not entries:
            fail("no days: give one [[day]] table per day with sleep_altitude_m")
        if len(entries) > _MAX_DAYS:
            fail(f"{len(entries)} days is outside the allowed range 1-{_MAX_DAYS} days")
        days = [_day_from_mapping(e, f"[[day]] {i + 1}", fail) for i, e in enumerate(entries)]
    fail.done()
    return AscentProfile(
        name=data.get("name") or where,
        days=tuple(d for d in days if d is not None),
        baseline=Baseline(**base),
        description=data.get("description", ""),
        path=where,
    )


def load_ascent(path) -> AscentProfile:
    """Read and validate one ascent file: a schedule (``.toml``) or a day table (``.csv``).

    A ``.csv`` file is the day table of :func:`days_from_csv`; its person is the default
    sea-level :class:`Baseline` and its name the file's stem. Any other ending is refused.

    Raises
    ------
    AscentError
        Unreadable file, unknown ending, TOML or CSV problem, or any problem of
        :func:`ascent_from_mapping`.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix == ".csv":
        return AscentProfile(name=p.stem, days=read_days_csv(p), path=str(p))
    if suffix != ".toml":
        raise AscentError(
            f"{p}: unknown file type {p.suffix or '(none)'!r}; a schedule is a .toml file "
            f"or a .csv day table ({','.join(CSV_COLUMNS)})"
        )
    return ascent_from_mapping(read_toml(p, AscentError), str(p))


def days_from_csv(text: str, where: str = "<csv>") -> tuple[AscentDay, ...]:
    """Days from CSV text with the columns ``day,sleep_altitude_m,high_altitude_m,fio2``.

    ``high_altitude_m`` and ``fio2`` may be empty; ``day`` must count 1, 2, 3... in order.
    Rows may end in ``\\n``, ``\\r\\n`` or ``\\r``; every problem is reported at once.

    Examples
    --------
    >>> days_from_csv("day,sleep_altitude_m,high_altitude_m,fio2\\n1,2800,,\\n")
    (AscentDay(sleep_altitude_m=2800.0, high_altitude_m=None, fio2=0.21),)
    """
    fail = _Problems(where)
    text = text.replace("\r\n", "\n").replace("\r", "\n")
    try:
        rows = list(csv.reader(io.StringIO(text, newline="")))
    except csv.Error as exc:
        raise AscentError(f"{where}: not a readable CSV day table ({exc})") from None
    rows = [r for r in rows if any(c.strip() for c in r)]
    header = tuple(c.strip() for c in rows[0]) if rows else None
    if header != CSV_COLUMNS:
        found = ",".join(header) if header else "nothing"
        raise AscentError(f"{where}: the header must be {','.join(CSV_COLUMNS)} (found {found})")
    entries: list[tuple[str, dict]] = []
    for i, cells in enumerate(rows[1:]):
        label = f"row {i + 1}"
        with fail.each():
            if len(cells) > len(CSV_COLUMNS):
                fail(f"{label} has {len(cells)} cells; the header has {len(CSV_COLUMNS)}")
            row = dict(zip(CSV_COLUMNS, [c.strip() for c in cells] + [""] * len(CSV_COLUMNS)))
            if row["day"] != str(i + 1):
                with fail.each():
                    fail(
                        f"{label} day = {row['day']!r} must be {i + 1} (days count 1, 2, 3... in order)"
                    )
            before = len(fail.lines)
            entry = {}
            for key in CSV_COLUMNS[1:]:
                if row[key] == "":
                    continue
                try:
                    entry[key] = float(row[key])
                except ValueError:
                    with fail.each():
                        fail(f"{label} {key} = {row[key]!r} must be a number")
            if len(fail.lines) == before:  # the cells read: now the day's own checks
                entries.append((label, entry))
    if not rows[1:]:
        with fail.each():
            fail("no days after the header")
    days = [_day_from_mapping(e, label, fail) for label, e in entries]
    fail.done()
    return tuple(d for d in days if d is not None)


def days_to_csv(days) -> str:
    """CSV text of days with the columns ``day,sleep_altitude_m,high_altitude_m,fio2``.

    Examples
    --------
    >>> print(days_to_csv([AscentDay(2800.0, 3100.0)]).strip())
    day,sleep_altitude_m,high_altitude_m,fio2
    1,2800,3100,0.21
    """
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for i, d in enumerate(days):
        high = "" if d.high_altitude_m is None else f"{d.high_altitude_m:g}"
        w.writerow([i + 1, f"{d.sleep_altitude_m:g}", high, f"{d.fio2:g}"])
    return out.getvalue()


def read_days_csv(path) -> tuple[AscentDay, ...]:
    """Read days from a CSV file (see :func:`days_from_csv`) through the one safe reader,
    :func:`model.files.read_text` (special files, empty, oversized, not UTF-8 refused)."""
    p = Path(path)
    return days_from_csv(read_text(p, AscentError), str(p))


def guidance_flags(sleep_altitude_m) -> list[list[str]]:
    """Per-day notes where a schedule breaks the published ascent-rate guidance.

    Two rules of the Wilderness Medical Society consensus guidelines [1, 2], worded by us:

    1. Above 3000 m, sleeping altitude should rise by no more than about 500 m a day. We
       flag a day whose night is above 3000 m and more than 500 m above the previous night;
       exactly 500 m passes (the 2024 table puts "<= 500 m/day" in the low-risk column).
    2. A rest day (no gain in sleeping altitude) every 3-4 days. We take the longer end:
       once nights are above 3000 m, the 4th gain in a row is flagged (and the 5th, ...).
       A night at the same altitude or lower is a rest day and restarts the count.

    The first day has no previous night in the schedule, so its rise is judged by the risk
    category (:func:`risk_category`), not here.

    Parameters
    ----------
    sleep_altitude_m : array_like
        Sleeping altitude of each day [m].

    Returns
    -------
    list of list of str
        One list per day, empty when the day keeps to both rules.
    {refs}
    Examples
    --------
    >>> guidance_flags([2800, 3400, 3900, 4400, 4900])[1]
    ['sleeping altitude rose 600 m to 3400 m in one day; above 3000 m the guideline keeps the rise to 500 m']
    >>> guidance_flags([2800, 3300, 3800, 4300, 4800])[4]
    ['4th night in a row higher than the one before above 3000 m; the guideline asks for a night without gain every 3 to 4 days']
    """
    h = np.asarray(sleep_altitude_m, dtype=float).ravel()
    flags: list[list[str]] = [[] for _ in h]
    run = 0
    for i in range(1, h.size):
        gain = h[i] - h[i - 1]
        above = h[i] > GUIDANCE_ALTITUDE_M
        if not above or gain <= 0.0:
            run = 0
            continue
        run += 1
        if gain > MAX_GAIN_M:
            flags[i].append(
                f"sleeping altitude rose {gain:.0f} m to {h[i]:.0f} m in one day; "
                f"above {GUIDANCE_ALTITUDE_M:.0f} m the guideline keeps the rise to "
                f"{MAX_GAIN_M:.0f} m"
            )
        if run > MAX_GAIN_DAYS_IN_A_ROW:
            flags[i].append(
                f"{_ordinal(run)} night in a row higher than the one before above "
                f"{GUIDANCE_ALTITUDE_M:.0f} m; the guideline asks for a night "
                "without gain every 3 to 4 days"
            )
    return flags


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def risk_category(sleep_altitude_m) -> tuple[str, list[str]]:
    """Risk category of a whole schedule ("low", "moderate", "high") and the reasons.

    The 2024 risk table [2], farthest-right column hit, for a person with no history of
    altitude illness (not in the file) starting below 1200 m:

    * first night (day 1 of the schedule): below 2800 m low, 2800-3500 m moderate, above
      3500 m high;
    * ascent rate above 3000 m: every rise <= 500 m a day and an extra day without gain for
      every 1000 m gained above 3000 m -> low; a rise > 500 m with the extra days ->
      moderate; a rise > 500 m without them -> high. Our choices where the table is silent:
      exactly 500 m counts as low; rises <= 500 m without the extra days -> moderate. The
      extra days are counted as nights above 3000 m without gain; each must come before the
      schedule climbs on past the next 1000 m step.
    {refs}
    Examples
    --------
    >>> risk_category([3000])[0], risk_category([3600])[0]
    ('moderate', 'high')
    >>> risk_category([2500, 2900, 3300, 3700, 3700, 4100, 4500, 4500])[0]
    'low'
    """
    h = np.asarray(sleep_altitude_m, dtype=float).ravel()
    order = {"low": 0, "moderate": 1, "high": 2}
    cat, reasons = "low", []
    first = h[0]
    if first > 3500.0:
        cat = "high"
        reasons.append(f"first night at {first:.0f} m, above 3500 m")
    elif first >= 2800.0:
        cat = "moderate"
        reasons.append(f"first night at {first:.0f} m, between 2800 and 3500 m")
    big = any(h[i] > GUIDANCE_ALTITUDE_M and h[i] - h[i - 1] > MAX_GAIN_M for i in range(1, h.size))
    gained, rests, short = 0.0, 0, False
    for i in range(1, h.size):
        if h[i] > GUIDANCE_ALTITUDE_M and h[i] <= h[i - 1]:
            rests += 1
            continue
        step = max(0.0, h[i] - max(h[i - 1], GUIDANCE_ALTITUDE_M))
        if step > 0.0 and rests < int(gained // EXTRA_DAY_PER_M):
            short = True
        gained += step
    rate = "low"
    if big:
        rate = "high" if short else "moderate"
        reasons.append(
            "sleeping altitude rises more than 500 m in a day above 3000 m"
            + (" without an extra day per 1000 m" if short else ", with an extra day per 1000 m")
        )
    elif short:
        rate = "moderate"
        reasons.append("no extra day without gain for each 1000 m above 3000 m")
    if order[rate] > order[cat]:
        cat = rate
    return cat, reasons


guidance_flags.__doc__ = (guidance_flags.__doc__ or "").replace("{refs}", _REFERENCES)
risk_category.__doc__ = (risk_category.__doc__ or "").replace("{refs}", _REFERENCES)


BAND_Z = 2.0
"""Half-width of the predicted SpO2 band in SDs of the person offset: the band holds about
95 % of lowlanders (our choice of width)."""


def run_ascent(
    profile: AscentProfile,
    *,
    person_offset_mmhg: float = 0.0,
    offset_sd_mmhg: float = VENTILATION_SD_MMHG,
    reading_sd_pct: float = 0.0,
    **transport_kw,
) -> AscentResult:
    """Acclimatization and the whole O2 chain for every night and high point of a schedule.

    Night ``d``: the acclimatization state is stepped once at the night's inspired PO2 (with
    any supplemental O2) and its equivalent altitude on air (plasma volume, Hb mass, cardiac
    output), from a lowlander's sea-level state before day 1; the chain is solved at rest,
    awake, at the sleeping altitude with that state's PaCO2, pH, 2,3-DPG (as a standard P50,
    :func:`model.acclimatization.dpg_p50_ratio`), Hb, cardiac output and exchange ratio
    (:func:`model.acclimatization.respiratory_exchange_ratio`). High point of day ``d``: the
    morning's state (after night ``d - 1``) taken within hours to the higher altitude
    (:func:`model.acclimatization.high_point_paco2`, acute buffering of HCO3) with the
    cardiac output of a fresh gain; also at rest. VO2 stays at the baseline value.

    The band: the same schedule for a person whose ventilatory offset is ``BAND_Z`` SDs
    (``offset_sd_mmhg``) above and below ``person_offset_mmhg``; with ``reading_sd_pct`` the
    scatter of one oximeter reading is added in quadrature (for a band fitted to readings).
    Where the chain cannot solve a band edge (that person has no answer at that altitude,
    e.g. delivery below VO2 at the low edge), the edge is drawn at 0 (low) or 1 (high).

    Parameters
    ----------
    profile : AscentProfile
    person_offset_mmhg : float
        The person's PaCO2 at altitude above the typical lowlander's [mmHg] (0: typical; a
        value fitted to their readings by :func:`model.ascent_report.fit_person_offset`).
    offset_sd_mmhg : float
        SD of that offset [mmHg]: between people :data:`VENTILATION_SD_MMHG`, after a fit
        the fit's own.
    reading_sd_pct : float
        SD of one reading about the person's true value [SpO2 points].
    **transport_kw
        Passed to :func:`model.solve_transport` (e.g. ``shunt_fraction``, ``curve``);
        ``p50_mmhg`` is the person's standard P50 at normal 2,3-DPG, ``rq`` the metabolic
        quotient the exchange ratio rises from.

    Returns
    -------
    AscentResult
        With ``summary``: ``lowest_night_sao2`` [-], ``nights_below_0_90`` and
        ``nights_below_0_80``, ``hypoxic_burden_saturation_days`` (sum over nights of
        ``max(0, 0.90 - SaO2)`` times one day [saturation-days]), ``days_to_top`` (first day
        whose high point reaches the schedule's highest altitude), ``top_altitude_m``,
        ``highest_sleep_altitude_m``, ``flag_count``, ``risk_category``, ``risk_reasons``.

    Raises
    ------
    ValueError
        When the chain cannot be solved on some day (e.g. too little alveolar O2).

    Notes
    -----
    Guidance checks: :func:`guidance_flags`, :func:`risk_category`. The field data behind
    each part and the known gaps are in :mod:`model.acclimatization`. "Night" values are
    those of a person at rest and awake at the sleeping altitude (a reading at camp);
    saturation during sleep is lower and not modelled.

    Examples
    --------
    >>> r = run_ascent(AscentProfile("sea level", (AscentDay(0.0),) * 3))
    >>> r.summary["flag_count"], round(float(r.night.arterial.pco2_mmhg[-1]), 1)
    (0, 40.0)
    """
    return run_ascents(
        [profile],
        person_offset_mmhg=person_offset_mmhg,
        offset_sd_mmhg=offset_sd_mmhg,
        reading_sd_pct=reading_sd_pct,
        **transport_kw,
    )[0]


def _per_profile(value, n: int, name: str) -> np.ndarray:
    a = np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()
    if not np.all(np.isfinite(a)):
        raise ValueError(f"{name} must be finite numbers")
    return a


def _tables(profiles) -> dict:
    """Day tables of the schedules side by side (a shorter one padded with its last day)."""
    n_days = [len(p.days) for p in profiles]
    width = max(n_days)

    def table(get):
        rows = [[get(d) for d in p.days] for p in profiles]
        return np.array([r + [r[-1]] * (width - len(r)) for r in rows], dtype=float)

    sleep = table(lambda d: d.sleep_altitude_m)
    high = table(lambda d: d.sleep_altitude_m if d.high_altitude_m is None else d.high_altitude_m)
    fio2 = table(lambda d: d.fio2)
    pb_n, pb_h = np.empty_like(sleep), np.empty_like(sleep)
    h_n, h_h = np.empty_like(sleep), np.empty_like(sleep)
    x_home = np.empty(len(profiles))
    for j, p in enumerate(profiles):
        model = p.baseline.pressure_model
        pb_n[j] = barometric_pressure(sleep[j], model=model)
        pb_h[j] = barometric_pressure(high[j], model=model)
        x_home[j] = inspired_po2(0.21, barometric_pressure(0.0, model=model))
        o2 = fio2[j] > 0.21  # equivalent altitudes only where O2 is added (a bisection each)
        for h, out in ((sleep[j], h_n), (high[j], h_h)):
            out[j] = h
            if np.any(o2):
                eq = equivalent_altitude(h[o2], fio2[j][o2], pressure_model=model, air_fio2=0.21)
                out[j][o2] = np.minimum(h[o2], eq)
    x_n = inspired_po2(fio2, pb_n)
    return {
        "n_days": n_days,
        "width": width,
        "sleep": sleep,
        "high": high,
        "fio2": fio2,
        "pb_n": pb_n,
        "pb_h": pb_h,
        "h_n": h_n,
        "h_h": h_h,
        "x_n": x_n,
        "x_h": inspired_po2(fio2, pb_h),
        "x_prev": np.concatenate([x_home[:, None], x_n[:, :-1]], axis=1),
    }


_NIGHT_KEYS = ("paco2_mmhg", "ph", "dpg_mmol_l", "hb_g_dl", "cardiac_output_l_min", "hco3_mmol_l")
_MORNING_KEYS = (
    "ventilation_offset_mmhg",
    "hco3_mmol_l",
    "dpg_mmol_l",
    "hb_g_dl",
    "cardiac_output_l_min",
)


def _baselines(profiles, name: str) -> np.ndarray:
    return np.array([getattr(p.baseline, name) for p in profiles], dtype=float)


def _acclimatize(profiles, t: dict, offsets: np.ndarray, copies: int):
    """Night and morning states, rows = ``copies`` stacked copies of the profiles, each row
    with its own person offset; arrays (rows, days)."""
    rep = (copies, 1)
    x_n, h_n = np.tile(t["x_n"], rep), np.tile(t["h_n"], rep)
    paco2_0 = np.tile(_baselines(profiles, "paco2_mmhg"), copies)
    hb_0 = np.tile(_baselines(profiles, "hb_g_dl"), copies)
    co_0 = np.tile(_baselines(profiles, "cardiac_output_l_min"), copies)
    base = {
        "baseline_paco2_mmhg": paco2_0,
        "baseline_hb_g_dl": hb_0,
        "baseline_cardiac_output_l_min": co_0,
        "person_offset_mmhg": offsets,
    }
    state = baseline_state(paco2_0, hb_0, co_0)
    night = {k: np.empty(x_n.shape) for k in _NIGHT_KEYS}
    morning = {k: np.empty(x_n.shape) for k in _MORNING_KEYS}
    for i in range(t["width"]):
        for k in _MORNING_KEYS:
            morning[k][:, i] = getattr(state, k)
        state = acclimatization_step(state, x_n[:, i], h_n[:, i], **base)
        for k in _NIGHT_KEYS:
            night[k][:, i] = getattr(state, k)
    return night, morning


def _acute(morning: dict, x_prev, x_a, h_a, paco2_0, co_0, offsets) -> dict:
    """Chain state at a point reached within hours of the morning (a high point, a reading)."""
    paco2 = high_point_paco2(x_a, x_prev, morning["ventilation_offset_mmhg"], paco2_0, offsets)
    hco3 = np.maximum(
        HCO3_FLOOR_MMOL_L, np.minimum(morning["hco3_mmol_l"], 24.0 + 0.2 * (paco2 - paco2_0))
    )
    return {
        "paco2_mmhg": paco2,
        "ph": ph_henderson_hasselbalch(hco3, paco2),
        "dpg_mmol_l": morning["dpg_mmol_l"],
        "hb_g_dl": morning["hb_g_dl"],
        "cardiac_output_l_min": np.maximum(
            cardiac_output(co_0, h_a, 0.0), morning["cardiac_output_l_min"]
        ),
    }


def _solve(parts: list[dict], transport_kw: dict):
    """One :func:`model.solve_transport` over the concatenated rows of ``parts``; each part
    holds ``barometric_pressure_mmhg``, ``fio2``, ``vo2_ml_min`` and the state keys. The
    2,3-DPG acts through the standard P50 (:func:`model.acclimatization.dpg_p50_ratio`)."""
    kw = dict(transport_kw)
    kw.pop("dpg_mmol_l", None)
    curve = kw.get("curve", "severinghaus")
    base_p50 = kw.pop("p50_mmhg", None)
    if base_p50 is None:
        base_p50 = float(p50(curve=curve))
    rq = kw.pop("rq", 0.8)
    cat = {k: np.concatenate([np.ravel(p[k]) for p in parts]) for k in parts[0]}
    dpg = cat.pop("dpg_mmol_l")
    cat["p50_mmhg"] = base_p50 * dpg_p50_ratio(dpg)
    cat["dpg_mmol_l"] = np.full(dpg.shape, NORMAL_DPG_MMOL_L)
    cat["rq"] = respiratory_exchange_ratio(cat["paco2_mmhg"], rq=rq)
    res = solve_transport(**cat, **kw)
    return res, dpg, cat["p50_mmhg"], cat["rq"]


def run_ascents(
    profiles,
    *,
    person_offset_mmhg=0.0,
    offset_sd_mmhg=VENTILATION_SD_MMHG,
    reading_sd_pct=0.0,
    **transport_kw,
) -> list[AscentResult]:
    """:func:`run_ascent` for several schedules at once (one chain solve for all of them).

    The schedules are stepped side by side, day by day (a shorter one is padded with its
    last day and the padding dropped), and every night, band edge and high point of every
    schedule goes through one vectorised :func:`model.solve_transport` call.
    ``person_offset_mmhg``, ``offset_sd_mmhg`` and ``reading_sd_pct`` are one value for all
    or one per schedule.

    Examples
    --------
    >>> a = AscentProfile("a", (AscentDay(2800.0), AscentDay(3300.0)))
    >>> b = AscentProfile("b", (AscentDay(3600.0),))
    >>> [r.summary["risk_category"] for r in run_ascents([a, b])]
    ['moderate', 'high']
    """
    profiles = list(profiles)
    n = len(profiles)
    offset = _per_profile(person_offset_mmhg, n, "person_offset_mmhg")
    sd = _per_profile(offset_sd_mmhg, n, "offset_sd_mmhg")
    reading_sd = _per_profile(reading_sd_pct, n, "reading_sd_pct")
    t = _tables(profiles)
    # rows: the person, then the band's low-SpO2 edge (higher PaCO2), then its high edge
    offsets = np.concatenate([offset, offset + BAND_Z * sd, offset - BAND_Z * sd])
    night, morning = _acclimatize(profiles, t, offsets, 3)
    width, n_days = t["width"], t["n_days"]
    valid = np.arange(width)[None, :] < np.array(n_days)[:, None]
    valid3 = np.tile(valid, (3, 1))
    central = {k: v[:n] for k, v in morning.items()}
    day = _acute(
        central,
        t["x_prev"],
        t["x_h"],
        t["h_h"],
        _baselines(profiles, "paco2_mmhg")[:, None],
        _baselines(profiles, "cardiac_output_l_min")[:, None],
        offset[:, None],
    )
    vo2 = np.broadcast_to(_baselines(profiles, "vo2_ml_min")[:, None], t["sleep"].shape)

    def part(state, rows_valid, reps):
        out = {k: state[k][rows_valid] for k in _NIGHT_KEYS[:-1]}
        out["barometric_pressure_mmhg"] = np.tile(t["pb_n"], (reps, 1))[rows_valid]
        out["fio2"] = np.tile(t["fio2"], (reps, 1))[rows_valid]
        out["vo2_ml_min"] = np.tile(vo2, (reps, 1))[rows_valid]
        return out

    nights = part(night, valid3, 3)
    highs = {k: day[k][valid] for k in _NIGHT_KEYS[:-1]}
    highs.update(
        barometric_pressure_mmhg=t["pb_h"][valid], fio2=t["fio2"][valid], vo2_ml_min=vo2[valid]
    )
    total = int(valid.sum())
    edge_failed = np.zeros(3 * total, dtype=bool)
    try:
        res, _dpg, p50_std, rq = _solve([nights, highs], transport_kw)
    except ValueError as exc:
        central = {k: v[:total] for k, v in nights.items()}
        try:
            _solve([central, highs], transport_kw)
        except ValueError:
            raise ValueError(
                _unsolvable(profiles, t, valid, [nights, highs], transport_kw, exc)
            ) from None
        # only band edges failed: a person that far from typical has no answer there; such an
        # edge is solved with the typical person's inputs and then drawn at the band's limit
        for i in range(total, 3 * total):
            try:
                _solve([{k: v[i : i + 1] for k, v in nights.items()}], transport_kw)
            except ValueError:
                edge_failed[i] = True
        nights = {k: np.where(edge_failed, np.tile(v[:total], 3), v) for k, v in nights.items()}
        res, _dpg, p50_std, rq = _solve([nights, highs], transport_kw)
    sao2_all = np.asarray(res.arterial.so2, dtype=float)
    results, start = [], 0
    for j, (p, m) in enumerate(zip(profiles, n_days)):
        rows = slice(start, start + m)
        mid = sao2_all[rows]
        low = sao2_all[total + start : total + start + m]
        high = sao2_all[2 * total + start : 2 * total + start + m]
        low = np.where(edge_failed[total + start : total + start + m], 0.0, low)
        high = np.where(edge_failed[2 * total + start : 2 * total + start + m], 1.0, high)
        if reading_sd[j] > 0.0:
            spread = BAND_Z * reading_sd[j] / 100.0
            low = mid - np.hypot(mid - low, spread)
            high = mid + np.hypot(high - mid, spread)
        results.append(
            _result(
                p,
                t["sleep"][j, :m],
                t["high"][j, :m],
                t["fio2"][j, :m],
                t["h_n"][j, :m],
                _take(res, rows),
                _take(res, slice(3 * total + start, 3 * total + start + m)),
                night["dpg_mmol_l"][j, :m],
                night["hco3_mmol_l"][j, :m],
                {
                    "sao2_low": np.clip(low, 0.0, 1.0),
                    "sao2_high": np.clip(high, 0.0, 1.0),
                    "standard_p50_mmhg": p50_std[rows],
                    "rq": rq[rows],
                    "person_offset_mmhg": float(offset[j]),
                    "offset_sd_mmhg": float(sd[j]),
                    "reading_sd_pct": float(reading_sd[j]),
                },
            )
        )
        start += m
    return results


_DERIVED = {
    "hb_g_dl": ("haemoglobin", "hb_g_dl"),
    "paco2_mmhg": ("PaCO2", "paco2_mmhg"),
    "ph": ("arterial pH", "paco2_mmhg"),
    "cardiac_output_l_min": ("cardiac output", "cardiac_output_l_min"),
}
"""Chain inputs the ascent derives each day: what to call them and the baseline key they
follow from (None: none of the person's own)."""


def _unsolvable(profiles, t: dict, valid, parts: list[dict], transport_kw: dict, exc) -> str:
    """Why the chain refused a schedule, naming the day and the value the model derived (not
    the baseline the user gave), found by checking the rows one at a time; only run once the
    vectorised solve has failed."""
    labels = []
    for kind in ("night", "low edge of the band", "high edge of the band", "high point"):
        for j in range(len(profiles)):
            labels += [(j, d + 1, kind) for d in range(t["width"]) if valid[j, d]]
    rows = {k: np.concatenate([np.ravel(part[k]) for part in parts]) for k in parts[0]}
    # the typical person's nights and high points first: a band edge is blamed only when they
    # all solve
    order = sorted(range(len(labels)), key=lambda k: "edge" in labels[k][2])
    for i in order:
        j, day, kind = labels[i]
        p = profiles[j]
        alt = t["high" if kind == "high point" else "sleep"][j, day - 1]
        where = f"{p.name}: day {day} ({kind} at {alt:.0f} m)"
        for key, (name, base_key) in _DERIVED.items():
            lo, hi, unit, _ = INPUT_LIMITS[key]
            v = float(rows[key][i])
            if lo <= v <= hi:
                continue
            u = f" {unit}" if unit else ""
            text = (
                f"{where}: the {name} the model derives for this day, {v:.3g}{u}, is "
                f"outside the range the chain accepts, {lo:g}-{hi:g}{u}"
            )
            if base_key is not None:
                b = float(getattr(p.baseline, base_key))
                bu = f" {INPUT_LIMITS[base_key][2]}"
                text += (
                    f"; it follows from the baseline {base_key} = {b:g}{bu} and the "
                    "acclimatization to the schedule"
                )
                if key == "hb_g_dl" and v > hi:
                    mine = [k for k, lab in enumerate(labels) if lab[0] == j]
                    rise = max(float(rows[key][k]) for k in mine) / b
                    text += (
                        f" (the rise at altitude leaves no room: a baseline up to about "
                        f"{np.floor(10.0 * hi / rise) / 10.0:.1f} g/dL fits this schedule)"
                    )
            elif kind != "night":
                text += "; a person this far from typical is beyond what the model describes"
            return text
        one = {k: np.asarray(v)[i : i + 1] for k, v in rows.items()}
        try:
            _solve([one], transport_kw)
        except ValueError as row_exc:
            reason = str(row_exc)
            if "vo2_ml_min exceeds" in reason:
                reason = (
                    "at rest the O2 the model delivers cannot meet the baseline vo2_ml_min = "
                    f"{p.baseline.vo2_ml_min:g} mL/min (too high, too fast or too little O2 "
                    "for this model)"
                )
            return f"{where}: {reason}"
    return str(exc)


def forecast_points(
    profile: AscentProfile,
    day,
    altitude_m,
    person_offset_mmhg=0.0,
    **transport_kw,
) -> np.ndarray:
    """SaO2 [-] of a schedule's person at rest on ``day`` (1-based) at ``altitude_m`` on air.

    The morning state of that day (after night ``day - 1``) taken within hours to the
    altitude, as a high point is (:func:`run_ascent`): the forecast an oximeter reading
    taken that day at that altitude is compared with. ``person_offset_mmhg`` may be a 1-D
    array of offsets; the result then has one row per offset.

    Raises
    ------
    ValueError
        A day outside the schedule, or a chain that cannot be solved.

    Examples
    --------
    >>> p = AscentProfile("x", (AscentDay(2800.0), AscentDay(3400.0)))
    >>> s = forecast_points(p, [2], [3400.0], [0.0, 3.0])
    >>> s.shape, bool(s[0, 0] > s[1, 0])
    ((2, 1), True)
    """
    days = np.asarray(day, dtype=int).ravel()
    alt = np.asarray(altitude_m, dtype=float).ravel()
    offsets = np.atleast_1d(np.asarray(person_offset_mmhg, dtype=float))
    n = len(profile.days)
    if days.size and (days.min() < 1 or days.max() > n):
        bad = days[(days < 1) | (days > n)][0]
        raise ValueError(f"day = {bad} is outside the allowed range 1-{n} (days of the schedule)")
    t = _tables([profile])
    k = offsets.size
    _night, morning = _acclimatize([profile], t, offsets, k)
    i = days - 1
    model = profile.baseline.pressure_model
    pb = barometric_pressure(alt, model=model)
    x_a = inspired_po2(0.21, pb)
    rows = {key: v[:, i] for key, v in morning.items()}
    b = profile.baseline
    state = _acute(
        rows,
        t["x_prev"][0, i][None, :],
        x_a[None, :],
        alt[None, :],
        b.paco2_mmhg,
        b.cardiac_output_l_min,
        offsets[:, None],
    )
    shape = (k, days.size)
    point = {key: np.broadcast_to(v, shape) for key, v in state.items()}
    point.update(
        barometric_pressure_mmhg=np.broadcast_to(pb, shape),
        fio2=np.full(shape, 0.21),
        vo2_ml_min=np.full(shape, b.vo2_ml_min),
    )
    res, *_ = _solve([point], transport_kw)
    sao2 = np.asarray(res.arterial.so2, dtype=float).reshape(shape)
    return sao2 if np.ndim(person_offset_mmhg) else sao2[0]


def _result(profile, sleep, high, fio2, h_eq, night_res, high_res, dpg, hco3, band) -> AscentResult:
    flags = guidance_flags(sleep)
    cat, reasons = risk_category(sleep)
    sao2 = night_res.arterial.so2
    top = float(high.max())
    summary = {
        "lowest_night_sao2": float(sao2.min()),
        "nights_below_0_90": int(np.sum(sao2 < SATURATION_THRESHOLDS[0])),
        "nights_below_0_80": int(np.sum(sao2 < SATURATION_THRESHOLDS[1])),
        "hypoxic_burden_saturation_days": float(np.sum(np.maximum(0.0, 0.90 - sao2))),
        "days_to_top": int(np.argmax(high >= top)) + 1,
        "top_altitude_m": top,
        "highest_sleep_altitude_m": float(sleep.max()),
        "flag_count": int(sum(len(f) for f in flags)),
        "risk_category": cat,
        "risk_reasons": reasons,
    }
    return AscentResult(
        profile=profile,
        sleep_altitude_m=sleep,
        high_altitude_m=high,
        fio2=fio2,
        equivalent_altitude_m=h_eq,
        night=night_res,
        high=high_res,
        dpg_mmol_l=dpg,
        hco3_mmol_l=hco3,
        flags=flags,
        summary=summary,
        sao2_low=band["sao2_low"],
        sao2_high=band["sao2_high"],
        standard_p50_mmhg=band["standard_p50_mmhg"],
        rq=band["rq"],
        person_offset_mmhg=band["person_offset_mmhg"],
        offset_sd_mmhg=band["offset_sd_mmhg"],
        reading_sd_pct=band["reading_sd_pct"],
    )


def _take(result, idx):
    """The rows ``idx`` of every array in a TransportResult (nested BloodStates too)."""

    def cut(obj):
        if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
            return dataclasses.replace(
                obj,
                **{
                    f.name: cut(getattr(obj, f.name))
                    for f in dataclasses.fields(obj)
                    if f.name not in ("arterial_conditions", "venous_conditions")
                },
            )
        if isinstance(obj, np.ndarray) and obj.ndim == 1:
            return obj[idx]
        return obj

    return cut(result)


def _band(day: dict) -> str:
    return f"{100 * day['sao2_low']:.0f}-{100 * day['sao2_high']:.0f}"


def format_ascent(record: dict) -> str:
    """A schedule's JSON-ready record (:meth:`AscentResult.to_dict`) as a text table."""
    head = (
        f"{'day':>3} {'sleep m':>7} {'high m':>7} {'FiO2':>5} {'PB':>6} {'PaCO2':>5} "
        f"{'pH':>5} {'PaO2':>5} {'SaO2':>6} {'SpO2 band':>9} {'Hb':>5} {'CaO2':>5} {'DO2':>6} "
        f"{'high SaO2':>9}  flags"
    )
    units = (
        f"{'':>3} {'m':>7} {'m':>7} {'-':>5} {'mmHg':>6} {'mmHg':>5} {'-':>5} {'mmHg':>5} "
        f"{'%':>6} {'%':>9} {'g/dL':>5} {'mL/dL':>5} {'mL/min':>6} {'%':>9}"
    )
    model = record.get("pressure_model", "")
    lines = [f"{record['name']}  ({record['file']}; pressures: {model} model)", head, units]
    for d in record["days"]:
        lines.append(
            f"{d['day']:>3} {d['sleep_altitude_m']:>7.0f} {d['high_altitude_m']:>7.0f} "
            f"{d['fio2']:>5.2f} {d['barometric_pressure_mmhg']:>6.1f} {d['paco2_mmhg']:>5.1f} "
            f"{d['ph']:>5.3f} {d['pao2_mmhg']:>5.1f} {100 * d['sao2']:>6.1f} "
            f"{_band(d):>9} {d['hb_g_dl']:>5.1f} "
            f"{d['cao2_ml_dl']:>5.1f} {d['do2_ml_min']:>6.0f} {100 * d['high_point']['sao2']:>9.1f}"
            f"  {'; '.join(d['flags'])}"
        )
    s = record["summary"]
    lines += [
        (
            f"  lowest night SaO2 {100 * s['lowest_night_sao2']:.1f} %; nights below 90 % "
            f"{s['nights_below_0_90']}, below 80 % {s['nights_below_0_80']}; hypoxic burden "
            f"{s['hypoxic_burden_saturation_days']:.2f} saturation-days"
        ),
        f"  top {s['top_altitude_m']:.0f} m on day {s['days_to_top']}; {s['flag_count']} "
        f"flag(s); risk category {s['risk_category']}"
        + (f" ({'; '.join(s['risk_reasons'])})" if s["risk_reasons"] else ""),
    ]
    return "\n".join(lines)
