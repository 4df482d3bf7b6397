"""Cases that are kept: one readable TOML file per case in a local folder.

A case file holds the measured values, the fit (inputs, fitted parameters, residuals)
and free-text notes, under a label chosen by the user — never a name or any other
identifier (:data:`IDENTIFIER_WARNING`). Files are written atomically: the text goes to a
temporary file in the same folder, is flushed and synced to disk, and only then takes the
case's name (``os.link`` when nothing may be overwritten, ``os.replace`` when the user
asked to overwrite). A crash at any point leaves either the old file or the new one,
never a half-written case; a leftover temporary file (``.<name>.*.tmp``) is ignored when
cases are listed.

File layout (format version 1)::

    # o2transit case file ...
    [case]
    label = "bed 4, day 2"
    saved_at = 2026-12-02T15:30:00Z
    format_version = 1

    [measured]           # keys of model.bedside.MEASURED_LIMITS, units in the names
    pao2_mmhg = 68.0
    ...

    [fit]                # optional
    consistent = true
    messages = [...]
    assumptions = [...]
    [fit.inputs]         # keywords of model.solve_transport
    [fit.fitted]         # fitted parameters
    [[fit.residuals]]    # quantity, measured, model, difference, unit

    [[plans]]            # optional: named stacks of changes (model.plans), in order
    name = "blood and oxygen"
    changes = [          # kind, value (in the kind's unit), stored_blood; applied in order
        { kind = "hb", value = 10.0, stored_blood = false },
    ]

    [[gases]]            # optional: the gases of a shift (model.series), in order
    time = "06:00"
    [gases.measured]     # keys as in [measured]

    [notes]
    text = \"\"\"free text\"\"\"

Files without ``[[plans]]`` or ``[[gases]]`` (saved before they existed) open with none;
a version that does not know them ignores them.

The folder is :func:`default_case_dir` unless the caller names another.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import math
import os
import re
import sys
import tempfile
import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import tomli_w

from . import files
from .bedside import check_measured
from .limits import INPUT_CHOICES, INPUT_LIMITS, check_range
from .plans import MAX_PLANS, Plan, plan_from_table, plan_table
from .series import Gas, check_series, gas_from_table, gas_table
from .transport import CASE_INPUTS

FORMAT_VERSION = 1
CASE_DIR_ENV = "O2TRANSIT_CASE_DIR"
LABEL_MAX_CHARS = 60
NOTES_MAX_CHARS = 20000
LABEL_PUNCTUATION = " -_.,()#:+/"

IDENTIFIER_WARNING = (
    "Label cases by bed, day or teaching topic only (for example 'bed 4 day 2' or "
    "'ARDS teaching case'). Do not store names, initials with dates of birth, hospital or "
    "record numbers, or any other detail that identifies a person — in the label or in the "
    "notes. Case files are plain text on this computer and are not protected."
)
"""Shown beside every place a label or note is typed."""

_FILE_HEADER = (
    "# o2transit case file: an aid for education and planning, not a medical record.\n"
    "# Readable TOML; measured values and fit in the units named by each key.\n"
    "# No names or identifiers belong here.\n\n"
)
_TMP_SUFFIX = ".tmp"


class CaseFileError(ValueError):
    """A case that cannot be saved or opened; the message names the file and the reason."""


@dataclass(frozen=True)
class CaseRecord:
    """A case read back from its file.

    ``measured`` holds only the values given (floats); ``fit_inputs`` and ``fitted`` are
    empty when the case was saved without a fit; ``residuals`` are dicts with
    ``quantity``, ``measured``, ``model``, ``difference`` and ``unit``. Numbers in the
    ``[fit]`` table are stored to 6 significant digits.
    """

    label: str
    saved_at: dt.datetime
    measured: dict
    fit_inputs: dict
    fitted: dict
    notes: str
    path: Path
    residuals: list = field(default_factory=list)
    fit_consistent: bool | None = None
    fit_messages: list = field(default_factory=list)
    fit_assumptions: list = field(default_factory=list)
    plans: list[Plan] = field(default_factory=list)
    gases: list[Gas] = field(default_factory=list)


def default_case_dir() -> Path:
    """Folder for case files: ``$O2TRANSIT_CASE_DIR`` if set, else the user's data folder.

    Linux and other Unix: ``$XDG_DATA_HOME/o2transit/cases`` (``~/.local/share`` when
    ``XDG_DATA_HOME`` is unset or not absolute, per the XDG Base Directory
    specification); macOS: ``~/Library/Application Support/o2transit/cases``; Windows:
    ``%LOCALAPPDATA%\\o2transit\\cases``. The folder is not created here.

    Examples
    --------
    >>> default_case_dir().parts[-2:]
    ('o2transit', 'cases')
    """
    override = os.environ.get(CASE_DIR_ENV, "").strip()
    if override:
        return Path(override).expanduser()
    home = Path.home()
    if sys.platform.startswith("win"):
        base = os.environ.get("LOCALAPPDATA") or str(home / "AppData" / "Local")
        return Path(base) / "o2transit" / "cases"
    if sys.platform == "darwin":
        return home / "Library" / "Application Support" / "o2transit" / "cases"
    xdg = os.environ.get("XDG_DATA_HOME", "")
    base = Path(xdg) if xdg and Path(xdg).is_absolute() else home / ".local" / "share"
    return base / "o2transit" / "cases"


def check_label(label) -> str:
    """Validate a case label; return it stripped, or raise CaseFileError saying why.

    1-60 characters: letters, digits, spaces and ``- _ . , ( ) # : + /``. A run of six or
    more digits is refused, since it looks like a record number.

    Examples
    --------
    >>> check_label("  bed 4, day 2 ")
    'bed 4, day 2'
    """
    if not isinstance(label, str):
        raise CaseFileError(f"label = {label!r} must be text")
    text = " ".join(label.split())
    if not 1 <= len(text) <= LABEL_MAX_CHARS:
        raise CaseFileError(
            f"label must be 1-{LABEL_MAX_CHARS} characters long (it has {len(text)})"
        )
    bad = sorted({c for c in text if not (c.isalnum() or c in LABEL_PUNCTUATION)})
    if bad:
        raise CaseFileError(
            f"label {text!r} contains {''.join(bad)!r}; use letters, digits, spaces and "
            f"{LABEL_PUNCTUATION.strip()}"
        )
    if re.search(r"\d{6,}", text):
        raise CaseFileError(
            f"label {text!r} contains a long number, which looks like a record number. "
            + IDENTIFIER_WARNING
        )
    return text


def label_slug(label: str) -> str:
    """File stem for a label: ASCII lower case, words joined by '-'.

    A label with no Latin letters or digits gets ``case-`` and 10 hex digits of its
    SHA-256, so different labels in other scripts get different files.

    Examples
    --------
    >>> label_slug("Bed 4, day 2 (ARDS)")
    'bed-4-day-2-ards'
    """
    ascii_text = unicodedata.normalize("NFKD", label).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^a-z0-9]+", "-", ascii_text.lower()).strip("-")
    if not slug:  # no Latin letters or digits: a stable name from the label itself
        slug = "case-" + hashlib.sha256(label.encode("utf-8")).hexdigest()[:10]
    return slug[:LABEL_MAX_CHARS]


def case_path(directory, label: str) -> Path:
    """Where :func:`save_case` puts the case with this label."""
    return Path(directory) / f"{label_slug(check_label(label))}.toml"


def _plain(value, digits: int | None = None):
    """Numbers, text, booleans, lists and dicts TOML can hold (numpy scalars made floats).

    ``digits`` rounds floats to that many significant digits, for reading.
    """
    if isinstance(value, Mapping):
        return {str(k): _plain(v, digits) for k, v in value.items() if v is not None}
    if isinstance(value, (list, tuple)):
        return [_plain(v, digits) for v in value]
    if isinstance(value, (bool, str, int)):
        return value
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise CaseFileError(f"cannot store {value!r} in a case file") from None
    if not math.isfinite(number):
        raise CaseFileError(f"cannot store the non-finite number {number!r} in a case file")
    return float(f"{number:.{digits}g}") if digits else number


def _fit_table(fit) -> dict:
    rows = []
    for r in fit.residuals:
        is_record = dataclasses.is_dataclass(r) and not isinstance(r, type)
        row = dataclasses.asdict(r) if is_record else dict(r)
        rows.append(
            {k: row[k] for k in ("quantity", "measured", "model", "difference", "unit") if k in row}
        )
    return _plain(
        {
            "consistent": bool(fit.consistent),
            "messages": list(fit.messages),
            "assumptions": list(getattr(fit, "assumptions", [])),
            "inputs": dict(fit.inputs),
            "fitted": dict(fit.fitted),
            "residuals": rows,
        },
        digits=6,
    )


def _write_bytes(handle, data: bytes) -> None:
    """Write all of ``data`` to an open binary file (one place, so tests can break it)."""
    handle.write(data)


def _atomic_write(target: Path, data: bytes, *, overwrite: bool) -> None:
    """Write ``data`` to ``target`` so that readers see the old file or the new, never half."""
    fd, tmp_name = tempfile.mkstemp(
        prefix=f".{target.stem}.", suffix=_TMP_SUFFIX, dir=target.parent
    )
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as handle:
            _write_bytes(handle, data)
            handle.flush()
            os.fsync(handle.fileno())
        if overwrite:
            os.replace(tmp, target)
        else:
            try:
                os.link(tmp, target)  # fails if target exists: no silent overwrite, no race
            except FileExistsError:
                raise CaseFileError(_exists_message(target)) from None
            except OSError:  # file systems without hard links
                if target.exists():
                    raise CaseFileError(_exists_message(target)) from None
                os.replace(tmp, target)
    finally:
        tmp.unlink(missing_ok=True)
    _sync_directory(target.parent)


def _sync_directory(directory: Path) -> None:
    """Make the rename itself durable (POSIX); a no-op where directories cannot be opened."""
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _exists_message(target: Path) -> str:
    return (
        f"{target}: a case file with this name already exists; choose another label or "
        "save again with overwrite"
    )


def save_case(
    directory,
    label: str,
    measured: Mapping,
    fit=None,
    notes: str = "",
    *,
    overwrite: bool = False,
    plans=(),
    gases=(),
) -> Path:
    """Save one case as ``<label-slug>.toml`` in ``directory``; return the path.

    Parameters
    ----------
    directory : path-like
        Case folder (created if missing), e.g. :func:`default_case_dir`.
    label : str
        See :func:`check_label` and :data:`IDENTIFIER_WARNING`.
    measured : Mapping
        Measured values (validated by :func:`model.bedside.check_measured`; None = not
        given, and not written).
    fit : model.fitting.FitResult or None
        Stored as ``[fit]`` (inputs, fitted, residuals summary, messages).
    notes : str
        Free text, up to 20000 characters.
    overwrite : bool
        Replace an existing file of the same name; otherwise refuse.
    plans : sequence of model.plans.Plan
        Stored as ``[[plans]]`` (checked by :func:`model.plans.check_plan`).
    gases : sequence of model.series.Gas
        The shift's gases, stored as ``[[gases]]`` (checked by
        :func:`model.series.check_series`).

    Raises
    ------
    CaseFileError
        Invalid label or notes, a file of that name already exists (and not
        ``overwrite``), or the folder cannot be written (the reason is given).
    ValueError
        A measured value out of range (field, value, range, unit). A bad plan or gas, or
        more than ``model.plans.MAX_PLANS`` plans, is a CaseFileError naming it.

    Examples
    --------
    >>> import tempfile
    >>> folder = tempfile.mkdtemp()
    >>> m = {"pao2_mmhg": 80, "paco2_mmhg": 40, "ph": 7.4, "sao2": 0.95, "hb_g_dl": 12,
    ...      "fio2": 0.4, "temperature_c": 37}
    >>> save_case(folder, "bed 4 day 2", m).name
    'bed-4-day-2.toml'
    >>> open_case(Path(folder) / "bed-4-day-2.toml").measured["pao2_mmhg"]
    80.0
    """
    text = check_label(label)
    if not isinstance(notes, str):
        raise CaseFileError(f"notes = {notes!r} must be text")
    if len(notes) > NOTES_MAX_CHARS:
        raise CaseFileError(f"notes are {len(notes)} characters; at most {NOTES_MAX_CHARS}")
    checked = {k: v for k, v in check_measured(measured).items() if v is not None}
    doc: dict = {
        "case": {
            "label": text,
            "saved_at": dt.datetime.now(dt.UTC).replace(microsecond=0),
            "format_version": FORMAT_VERSION,
        },
        "measured": checked,
    }
    if fit is not None:
        doc["fit"] = _fit_table(fit)
    try:
        if len(plans) > MAX_PLANS:
            raise ValueError(f"{len(plans)} plans; a case keeps at most {MAX_PLANS}")
        if plans:
            doc["plans"] = _plain([plan_table(plan) for plan in plans])
        if gases:
            doc["gases"] = _plain([gas_table(gas) for gas in check_series(list(gases))])
    except ValueError as exc:
        raise CaseFileError(f"not saved: {exc}") from None
    doc["notes"] = {"text": notes}
    data = (_FILE_HEADER + tomli_w.dumps(doc, multiline_strings=True)).encode("utf-8")
    folder = Path(directory).expanduser()
    target = folder / f"{label_slug(text)}.toml"
    try:
        folder.mkdir(parents=True, exist_ok=True)
        if target.exists() and not overwrite:
            raise CaseFileError(_exists_message(target))
        _atomic_write(target, data, overwrite=overwrite)
    except CaseFileError:
        raise
    except OSError as exc:
        raise CaseFileError(f"{target}: cannot save the case ({exc.strerror or exc})") from None
    return target


def _table(data: dict, key: str, where: Path, *, required: bool) -> dict:
    value = data.get(key)
    if value is None:
        if required:
            raise CaseFileError(f"{where}: missing the [{key}] table")
        return {}
    if not isinstance(value, dict):
        raise CaseFileError(f"{where}: {key} must be a table [{key}]")
    return value


def _numbers(table: dict, where: Path, name: str, allowed=None) -> dict:
    out = {}
    for key, value in table.items():
        if allowed is not None and key not in allowed:
            raise CaseFileError(f"{where}: [{name}] unknown key {key!r}")
        if key in INPUT_CHOICES and name == "fit.inputs":
            out[key] = value
            continue
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise CaseFileError(f"{where}: [{name}] {key} = {value!r} must be a number")
        out[key] = float(value)
    return out


def open_case(path) -> CaseRecord:
    """Read one case file back.

    Raises
    ------
    CaseFileError
        Unreadable, special (FIFO, device), empty, oversized or non-UTF-8 file (a byte-order
        mark is skipped), not valid TOML or nested too deep (:mod:`model.files`), a newer
        format version, missing or wrong tables, a bad label, or a measured value out of
        range; the message names the file and the reason, in one line.
    """
    p = Path(path)
    try:  # the one safe reader: no hang on a FIFO, no endless /dev/zero, no deep nesting
        text = files.read_text(p, CaseFileError)
    except CaseFileError as exc:
        reason = str(exc).removeprefix(f"{p}: ")
        if not reason.startswith("cannot read the file"):
            reason = f"cannot read the file: {reason}"
        raise CaseFileError(f"{p}: {reason}") from None
    try:
        data = files.parse_toml(text, str(p), CaseFileError)
    except CaseFileError as exc:
        raise CaseFileError(f"{exc}; the file may be damaged") from None
    head = _table(data, "case", p, required=True)
    version = head.get("format_version")
    if version != FORMAT_VERSION:
        raise CaseFileError(
            f"{p}: format_version = {version!r}; this version of o2transit reads "
            f"format {FORMAT_VERSION}"
        )
    try:
        label = check_label(head.get("label"))
    except CaseFileError as exc:
        raise CaseFileError(f"{p}: {exc}") from None
    saved_at = head.get("saved_at")
    if not isinstance(saved_at, dt.datetime):
        raise CaseFileError(f"{p}: [case] saved_at = {saved_at!r} must be a date and time")
    measured_raw = _table(data, "measured", p, required=True)
    try:
        checked = check_measured(measured_raw)
    except ValueError as exc:
        raise CaseFileError(f"{p}: [measured] {exc}") from None
    measured = {k: v for k, v in checked.items() if v is not None}
    fit = _table(data, "fit", p, required=False)
    fit_inputs = _numbers(
        _table(fit, "inputs", p, required=False),
        p,
        "fit.inputs",
        set(CASE_INPUTS),
    )
    for key, value in fit_inputs.items():
        if key in INPUT_LIMITS:
            try:
                check_range(key, value)
            except ValueError as exc:
                raise CaseFileError(f"{p}: [fit.inputs] {exc}") from None
    fitted = _numbers(_table(fit, "fitted", p, required=False), p, "fit.fitted")
    residuals = fit.get("residuals", [])
    if not isinstance(residuals, list) or not all(isinstance(r, dict) for r in residuals):
        raise CaseFileError(f"{p}: [[fit.residuals]] must be a list of tables")
    consistent = fit.get("consistent")
    if consistent is not None and not isinstance(consistent, bool):
        raise CaseFileError(f"{p}: [fit] consistent = {consistent!r} must be true or false")
    texts = {}
    for key in ("messages", "assumptions"):
        texts[key] = fit.get(key, [])
        if not isinstance(texts[key], list) or not all(isinstance(m, str) for m in texts[key]):
            raise CaseFileError(f"{p}: [fit] {key} must be a list of text")
    notes = _table(data, "notes", p, required=False).get("text", "")
    if not isinstance(notes, str):
        raise CaseFileError(f"{p}: [notes] text must be text")
    plans = [_entry(p, "plans", i, plan_from_table, t) for i, t in _tables(data, "plans", p)]
    gases = [_entry(p, "gases", i, gas_from_table, t) for i, t in _tables(data, "gases", p)]
    if len(plans) > MAX_PLANS:
        raise CaseFileError(f"{p}: {len(plans)} [[plans]]; a case keeps at most {MAX_PLANS}")
    try:
        check_series(gases)
    except ValueError as exc:
        raise CaseFileError(f"{p}: [[gases]] {exc}") from None
    return CaseRecord(
        label=label,
        saved_at=saved_at,
        measured=measured,
        fit_inputs=fit_inputs,
        fitted=fitted,
        notes=notes,
        path=p,
        residuals=residuals,
        fit_consistent=consistent,
        fit_messages=texts["messages"],
        fit_assumptions=texts["assumptions"],
        plans=plans,
        gases=gases,
    )


def _tables(data: dict, key: str, where: Path) -> list[tuple[int, dict]]:
    """The numbered tables of an optional ``[[key]]`` array (none when absent)."""
    value = data.get(key, [])
    if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
        raise CaseFileError(f"{where}: [[{key}]] must be a list of tables")
    return list(enumerate(value, start=1))


def _entry(where: Path, key: str, number: int, read, table: dict):
    try:
        return read(table)
    except ValueError as exc:
        raise CaseFileError(f"{where}: [[{key}]] number {number}: {exc}") from None


def list_cases(directory) -> tuple[list[CaseRecord], list[str]]:
    """Every case in ``directory``, newest first, and a message per file that cannot be read.

    A damaged file never stops the others from loading; temporary files left by an
    interrupted save are skipped. A folder that does not exist yet holds no cases.

    Examples
    --------
    >>> import tempfile
    >>> list_cases(Path(tempfile.mkdtemp()) / "none-yet")
    ([], [])
    """
    folder = Path(directory).expanduser()
    if not folder.is_dir():
        return [], []
    records, problems = [], []
    for path in sorted(folder.glob("*.toml")):
        if path.name.startswith("."):
            continue
        try:
            records.append(open_case(path))
        except CaseFileError as exc:
            problems.append(str(exc))
    records.sort(
        key=lambda r: (
            r.saved_at.timestamp()
            if r.saved_at.tzinfo
            else r.saved_at.replace(tzinfo=dt.UTC).timestamp(),
            r.label,
        ),
        reverse=True,
    )
    return records, problems
