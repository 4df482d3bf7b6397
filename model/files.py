"""Reading the user's files safely: one gate that every loader goes through.

A file named on the command line or in the dashboard may be anything: a FIFO with no
writer, ``/dev/zero``, a folder, a binary, a UTF-16 or latin-1 export, an empty file, a
TOML file nested 2,000 levels deep. Each of those is refused here with one line naming
the file and the problem, raised as the loader's own error class (a ``ValueError``), and
nothing ever blocks or reads without bound:

* ``stat`` comes before ``open``: only a regular file is opened, and it is opened
  non-blocking, then checked again on the open descriptor (a swap between the two calls
  is caught);
* empty files and files over the stated size limit are refused before reading
  (:data:`MAX_TEXT_BYTES` for scenario, ascent and lesson files); reading stops one byte
  past the limit, so a file that grows while it is read cannot exhaust memory;
* text must be UTF-8; a UTF-8 byte-order mark (Excel, Notepad) is accepted and dropped;
  UTF-16/32, NUL bytes and invalid UTF-8 are refused with the byte and line;
* TOML nested deeper than :data:`MAX_NESTING` tables or arrays is refused (Python's own
  parser would otherwise stop with a ``RecursionError``).
"""

from __future__ import annotations

import errno
import os
import stat
import tomllib
from collections.abc import Iterable
from pathlib import Path
from typing import BinaryIO

MAX_TEXT_BYTES = 1024 * 1024
"""Largest scenario, ascent or lesson file read [bytes] (1 MiB; the examples are < 10 kB)."""

MAX_NESTING = 32
"""Deepest nesting of tables and arrays accepted in a TOML file [levels]."""

_BOMS = (
    (b"\x00\x00\xfe\xff", "UTF-32"),
    (b"\xff\xfe\x00\x00", "UTF-32"),
    (b"\xfe\xff", "UTF-16"),
    (b"\xff\xfe", "UTF-16"),
)
_SAVE_AS = "save it as UTF-8 text"


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISLNK(mode):
        return "a symbolic link"
    return "not a regular file"


def _size_text(n: float) -> str:
    for unit in ("bytes", "KiB", "MiB", "GiB"):
        if n < 1024 or unit == "GiB":
            return f"{n:.0f} {unit}" if unit == "bytes" else f"{n:.1f} {unit}"
        n /= 1024
    return f"{n:.1f} GiB"  # pragma: no cover


def _cannot_read(path: Path, exc: OSError) -> str:
    return f"{path}: cannot read the file ({exc.strerror or exc})"


def open_regular(
    path, error: type[ValueError], *, limit: int | None = MAX_TEXT_BYTES
) -> tuple[BinaryIO, os.stat_result]:
    """Open ``path`` for reading in binary after checking it is a regular, non-empty file
    no larger than ``limit`` bytes (None: no limit). Never blocks on a FIFO or device.

    Raises ``error`` with one line naming the file and the problem.
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except OSError as exc:
        raise error(_cannot_read(p, exc)) from None
    if not stat.S_ISREG(st.st_mode):
        raise error(f"{p}: cannot read the file: it is {_kind(st.st_mode)}, not a regular file")
    if st.st_size == 0:
        raise error(f"{p}: the file is empty")
    if limit is not None and st.st_size > limit:
        raise error(
            f"{p}: the file is {_size_text(st.st_size)}, over the limit of "
            f"{_size_text(limit)} for this kind of file"
        )
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(p, flags)
    except OSError as exc:
        raise error(_cannot_read(p, exc)) from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):  # swapped for something else since the stat
            raise error(f"{p}: cannot read the file: it is {_kind(st.st_mode)}, not a regular file")
        if getattr(os, "O_NONBLOCK", 0):
            os.set_blocking(fd, True)
        return os.fdopen(fd, "rb"), st
    except BaseException:
        os.close(fd)
        raise


def read_bytes(path, error: type[ValueError], *, limit: int = MAX_TEXT_BYTES) -> bytes:
    """The bytes of a regular, non-empty file of at most ``limit`` bytes (see
    :func:`open_regular`)."""
    p = Path(path)
    handle, _ = open_regular(p, error, limit=limit)
    with handle:
        try:
            data = handle.read(limit + 1)
        except OSError as exc:
            if exc.errno == errno.EISDIR:  # pragma: no cover - caught by the stat above
                raise error(f"{p}: cannot read the file: it is a folder") from None
            raise error(_cannot_read(p, exc)) from None
    if len(data) > limit:
        raise error(f"{p}: the file grew past the limit of {_size_text(limit)} while read")
    if not data:
        raise error(f"{p}: the file is empty")
    return data


def decode_text(data: bytes, where: str, error: type[ValueError]) -> str:
    """``data`` as UTF-8 text without a leading byte-order mark, or ``error`` saying why not.

    Examples
    --------
    >>> decode_text(b"\\xef\\xbb\\xbfname = 'x'", "f.toml", ValueError)
    "name = 'x'"
    >>> decode_text(b"name = 'caf\\xe9'", "f.toml", ValueError)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    ValueError: f.toml: not UTF-8 text (byte 0xe9 on line 1; latin-1 ...
    """
    for bom, name in _BOMS:
        if data.startswith(bom):
            raise error(f"{where}: {name} text, not UTF-8; {_SAVE_AS}")
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    nul = data.find(b"\x00")
    if nul >= 0:
        line = data.count(b"\n", 0, nul) + 1
        raise error(
            f"{where}: holds NUL bytes (line {line}): a binary file or UTF-16 text, not "
            f"UTF-8 text; {_SAVE_AS}"
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise error(
            f"{where}: not UTF-8 text (byte 0x{data[exc.start]:02x} on line {line}; latin-1 "
            f"or another encoding?); {_SAVE_AS}"
        ) from None
    if not text.strip():
        raise error(f"{where}: the file is empty (blank space only)")
    return text


def read_text(path, error: type[ValueError], *, limit: int = MAX_TEXT_BYTES) -> str:
    """A regular file's UTF-8 text (byte-order mark dropped), with every refusal of
    :func:`read_bytes` and :func:`decode_text`."""
    return decode_text(read_bytes(path, error, limit=limit), str(path), error)


def nesting_depth(value: object) -> int:
    """How deep tables (dicts) and arrays (lists) nest in ``value``; 0 for a scalar.

    Iterative, so it cannot itself run out of stack.

    Examples
    --------
    >>> nesting_depth({"a": [1, {"b": 2}]})
    3
    """
    deepest, stack = 0, [(value, 0)]
    while stack:
        v, depth = stack.pop()
        children: Iterable[object]
        if isinstance(v, dict):
            children = v.values()
        elif isinstance(v, list):
            children = v
        else:
            continue
        depth += 1
        deepest = max(deepest, depth)
        stack.extend((c, depth) for c in children)
    return deepest


def parse_toml(text: str, where: str, error: type[ValueError]) -> dict:
    """Parsed TOML, or ``error`` naming ``where``: a syntax error, a number Python cannot
    hold, or nesting deeper than :data:`MAX_NESTING`."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"{where}: not valid TOML ({exc})") from None
    except RecursionError:
        raise error(_too_deep(where)) from None
    except ValueError as exc:  # e.g. an integer of more than 4,300 digits
        raise error(f"{where}: not valid TOML ({exc})") from None
    if nesting_depth(data) > MAX_NESTING:
        raise error(_too_deep(where))
    return data


def _too_deep(where: str) -> str:
    return (
        f"{where}: tables or arrays nested deeper than {MAX_NESTING} levels (the allowed maximum)"
    )


def read_toml(path, error: type[ValueError], *, limit: int = MAX_TEXT_BYTES) -> dict:
    """Parse a TOML file, raising ``error`` with the path and the problem in one line.

    Refuses what :func:`read_text` refuses (special files, empty, over ``limit`` bytes,
    not UTF-8) and what :func:`parse_toml` refuses (syntax, nesting).
    """
    return parse_toml(read_text(path, error, limit=limit), str(path), error)
