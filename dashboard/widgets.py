"""Widgets and figure frames shared by more than one screen: the SO2 frame, and the one upload
control every screen that takes a file uses (:class:`Upload`: a stated size limit, checked in
the browser and on the server, and one message naming the file for every refusal)."""

from __future__ import annotations

import csv
import html
import io
import json
import logging
from collections.abc import Callable

import panel as pn
from bokeh.models import CustomJS, Range1d
from bokeh.plotting import figure

from ..model.files import MAX_NESTING, MAX_TEXT_BYTES, decode_text, nesting_depth, parse_toml
from .look import ERROR_STYLE, INK
from .responsive import held, serving

log = logging.getLogger(__name__)


def saturation_figure(height: int, title: str, title_size: str) -> figure:
    """An empty SO2-against-PO2 frame in the dashboard's look (0-150 mmHg, 0-102 %).

    No toolbar is shown, so only the tool active without one (dragging pans) is made: the
    others could not be switched on and would only add models to every page.
    """
    fig = figure(
        height=height,
        sizing_mode="stretch_width",
        toolbar_location=None,
        tools="pan",
        x_range=Range1d(0, 150),
        y_range=Range1d(0, 102),
        title=title,
    )
    fig.title.text_font_size = title_size
    fig.title.text_color = INK
    fig.yaxis.axis_label = "SO2 (%)"
    fig.background_fill_color = "#fbfaf7"
    fig.grid.grid_line_color = "#ebe7df"
    return fig


# ---------------------------------------------------------------------- uploads
MAX_UPLOAD_BYTES = MAX_TEXT_BYTES
"""Largest file any upload control takes [bytes]: 1 MiB, the limit of the project's file
reader (:data:`model.files.MAX_TEXT_BYTES`); the example schedules and workspaces are a few
kB. Checked in the browser before anything is sent (the live connection closes, with no
word, on a message over 20 MiB) and again on the server."""

MAX_CSV_FIELD_CHARS = 131_072
"""Longest CSV field read [characters]: Python's csv module's default limit, past which its
reader raises."""

UPLOAD_KINDS = ("toml", "json", "csv")

_UPLOAD_CLASS = "o2-upload"
_LIMIT_CLASS = "o2-upload-max-"


class UploadError(ValueError):
    """An uploaded file that cannot be used; the message names the file and the problem."""


def size_text(n_bytes: float) -> str:
    """``1048576`` -> ``'1.0 MiB'`` (bytes, KiB, MiB, GiB).

    >>> size_text(1024 * 1024), size_text(900)
    ('1.0 MiB', '900 bytes')
    """
    for unit in ("bytes", "KiB", "MiB"):
        if n_bytes < 1024:
            return f"{n_bytes:.0f} {unit}" if unit == "bytes" else f"{n_bytes:.1f} {unit}"
        n_bytes /= 1024
    return f"{n_bytes:.1f} GiB"


def check_upload(data: bytes | None, filename: str, kind: str, limit: int = MAX_UPLOAD_BYTES):
    """Raise :class:`UploadError` (one line: the file and the problem) unless ``data`` is a
    usable file of ``kind`` (``toml``, ``json`` or ``csv``).

    Refused: no bytes or blank text, more than ``limit`` bytes, bytes that are not UTF-8 text
    (binary, UTF-16, latin-1: :func:`model.files.decode_text`), TOML or JSON that does not
    parse or nests deeper than :data:`model.files.MAX_NESTING` levels, a CSV field longer than
    :data:`MAX_CSV_FIELD_CHARS` characters. What the file says is the screen's to check.

    >>> check_upload(b"", "days.csv", "csv")
    Traceback (most recent call last):
    ...
    o2transit.dashboard.widgets.UploadError: days.csv: the file is empty
    """
    if kind not in UPLOAD_KINDS:
        raise ValueError(f"upload kind {kind!r} is not one of {', '.join(UPLOAD_KINDS)}")
    if not data:
        raise UploadError(f"{filename}: the file is empty")
    if len(data) > limit:
        raise UploadError(
            f"{filename}: the file is {size_text(len(data))}, over the limit of "
            f"{size_text(limit)} for an upload"
        )
    text = decode_text(bytes(data), filename, UploadError)
    if kind == "toml":
        parse_toml(text, filename, UploadError)
    elif kind == "json":
        try:
            parsed = json.loads(text)
        except RecursionError:
            parsed = None
            deep = True
        except ValueError as exc:
            raise UploadError(f"{filename}: not valid JSON ({exc})") from None
        else:
            deep = nesting_depth(parsed) > MAX_NESTING
        if deep:
            raise UploadError(  # the words of model.files for TOML
                f"{filename}: tables or arrays nested deeper than {MAX_NESTING} levels (the "
                "allowed maximum)"
            )
    else:
        reader = csv.reader(io.StringIO(text))
        try:
            for row in reader:
                if any(len(field) > MAX_CSV_FIELD_CHARS for field in row):
                    raise csv.Error("field larger than field limit")
        except csv.Error as exc:
            if "field larger than field limit" in str(exc):
                raise UploadError(
                    f"{filename}: a field on line {reader.line_num} is longer than "
                    f"{MAX_CSV_FIELD_CHARS:,} characters"
                ) from None
            raise UploadError(
                f"{filename}: not valid CSV on line {reader.line_num} ({exc})"
            ) from None


UPLOAD_GUARD_JS = r"""
if (window.__o2UploadGuard) { return; }
window.__o2UploadGuard = true;
function sizeText(n) {
  for (const unit of ["bytes", "KiB", "MiB"]) {
    if (n < 1024) { return unit === "bytes" ? n.toFixed(0) + " bytes" : n.toFixed(1) + " " + unit; }
    n /= 1024;
  }
  return n.toFixed(1) + " GiB";
}
// A file input fires "input" (which crosses shadow roots) before "change" (which Bokeh reads
// the file on): a file over its control's limit is stopped here, and nothing is sent.
document.addEventListener("input", (e) => {
  const el = e.composedPath()[0];
  if (!el || el.type !== "file") { return; }
  const root = el.getRootNode();
  const host = root.host;
  if (!host) { return; }
  const cls = [...host.classList].find(c => c.startsWith(LIMIT_CLASS));
  if (!cls) { return; }
  const limit = Number(cls.slice(LIMIT_CLASS.length));
  const old = root.querySelector(".o2-upload-refused");
  if (old) { old.remove(); }
  const big = [...(el.files || [])].filter(f => f.size > limit);
  if (!big.length) { return; }
  root.addEventListener("change", (c) => { c.stopImmediatePropagation(); }, {capture: true, once: true});
  const note = document.createElement("div");
  note.className = "o2-upload-refused";
  note.setAttribute("role", "alert");
  note.style.cssText = "display:block;color:#7a1414;background:#fdecea;padding:4px 8px;" +
    "margin-top:4px;font-size:14px;border-radius:4px;white-space:normal;" +
    "overflow-wrap:anywhere;box-sizing:border-box;max-width:100%";
  note.textContent = big.map(f => f.name + ": the file is " + sizeText(f.size) +
    ", over the limit of " + sizeText(limit) + " for an upload; nothing was sent").join("; ");
  (el.parentElement && el.parentElement !== root ? el.parentElement : el).insertAdjacentElement("afterend", note);
  el.value = "";
}, true);
"""


def _upload_guard_code() -> str:
    return f"const LIMIT_CLASS = {json.dumps(_LIMIT_CLASS)};\n" + UPLOAD_GUARD_JS


def _guard_session(context) -> None:
    context._document.js_on_event("document_ready", CustomJS(code=_upload_guard_code()))


_guard_installed = False


def install_upload_guard() -> None:
    """Once per server process, before serving: every page stops a file over its upload
    control's limit in the browser. Idempotent."""
    global _guard_installed
    if not _guard_installed:
        pn.state.on_session_created(_guard_session)
        _guard_installed = True


class Upload(pn.viewable.Viewer):
    """A file upload control with its size limit stated beside it and checked twice.

    In the browser, a file over ``limit`` is stopped before it is read (see
    :func:`install_upload_guard`); on the server every file goes through
    :func:`check_upload` before ``on_file(data, filename)`` sees it. A refusal, or an error
    ``on_file`` did not expect, is shown under the control (``.o2-upload-msg``), naming the
    file; the control is cleared so that the same file can be chosen again.

    ``css_classes`` go on the file picker itself (the stable hooks of tests); ``what`` names
    the file in the hint (``"schedule file (.toml)"``).
    """

    def __init__(
        self,
        on_file: Callable[[bytes, str], object],
        *,
        kind: str,
        accept: str,
        what: str,
        css_classes: list[str] | tuple[str, ...] = (),
        limit: int = MAX_UPLOAD_BYTES,
        default_name: str = "uploaded file",
        **widget_options,
    ):
        super().__init__()
        if kind not in UPLOAD_KINDS:
            raise ValueError(f"upload kind {kind!r} is not one of {', '.join(UPLOAD_KINDS)}")
        self._on_file, self._kind, self._limit = on_file, kind, limit
        self._default_name = default_name
        self.file_input = pn.widgets.FileInput(
            accept=accept,
            multiple=False,
            css_classes=[*css_classes, _UPLOAD_CLASS, f"{_LIMIT_CLASS}{limit}"],
            **widget_options,
        )
        self.hint = pn.pane.HTML(
            f"{html.escape(what)}: at most {size_text(limit)}, UTF-8 text",
            css_classes=["o2-upload-limit"],
            styles={"font-size": "12px", "color": "#5b6770"},
            margin=(0, 10, 2, 10),
        )
        self.message = pn.pane.HTML(
            "",
            visible=False,
            css_classes=["o2-upload-msg"],
            sizing_mode="stretch_width",
            styles=dict(ERROR_STYLE),
            margin=(2, 10),
        )
        self._pending = False
        # an empty file arrives as no value with a file name: watch both
        self.file_input.param.watch(self._chosen, ["value", "filename"])
        self._layout = pn.Column(
            self.file_input, self.hint, self.message, sizing_mode="stretch_width", margin=0
        )

    def __panel__(self):
        return self._layout

    def _chosen(self, *_events) -> None:
        # the file name may arrive after the content: read both on the next tick, once
        if not serving():
            self._take()
        elif not self._pending:
            self._pending = True
            held(self._take)()

    def _take(self) -> None:
        self._pending = False
        data, name = self.file_input.value, self.file_input.filename
        if data is None and not name:  # cleared
            return
        self.receive(data, name)

    def receive(self, data: bytes | None, filename: str | None) -> bool:
        """Check ``data`` and hand it to ``on_file``; False (and the message shown) if refused."""
        name = filename or self._default_name
        try:
            check_upload(data, name, self._kind, self._limit)
            self._on_file(bytes(data or b""), name)
        except UploadError as exc:
            return self._refuse(str(exc))
        except Exception as exc:  # noqa: BLE001 - one line on the page, no traceback
            log.warning("upload %s could not be read: %s: %s", name, type(exc).__name__, exc)
            return self._refuse(f"{name}: could not be read ({type(exc).__name__}: {exc})")
        self.message.visible = False
        return True

    def _refuse(self, text: str) -> bool:
        self.message.object = f"<b>File not used.</b> {html.escape(text)}"
        self.message.visible = True
        if serving():
            self.file_input.clear()
        return False
