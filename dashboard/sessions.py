"""Sessions that cost little: a plain request gets the page's shell, the screen is built when
the page connects, and what a closed session held is given back.

Bokeh builds a whole session for every plain HTTP GET of a page, whether or not a browser
ever opens its live connection (a crawler, a link preview, ``curl``, a reload cut short), and
keeps it until the unused-session lifetime has passed. Measured on the case screen before this
module (``bench/bench_load.py``): about 0.9 s of server CPU per GET, 1.5 s on the planner.
Here a GET builds only the shell (the template or outer column, its header links, an
"Opening" line: a few hundredths of a second), and the screen itself is built when the page,
its scripts loaded and its live connection open, asks for its document (PULL-DOC): under the
document's lock, into the shell's holders, before the reply is made, so the screen goes out
in the reply and the browser renders the page once. A request that never connects costs the
shell only. The screen's parts are made in :func:`dashboard.responsive.later_part`, as a
lazy tab's are, so that they are styled like the rest of the page and every stylesheet
comes from this server.

Measured in ``bench/bench_load.py`` (shared 2-core machine, so read ratios): a plain GET of
the case screen cost about 0.9 s of server CPU before and a few hundredths after.

A session's document is destroyed ``unused_session_lifetime_milliseconds``
(:data:`SESSION_OPTIONS`) after its page closed; then the garbage collector runs once
(Panel's and param's objects hold each other in cycles) and the C allocator is asked to
hand its free memory back to the system (``malloc_trim``, glibc only), coalesced so that
50 closing pages cost one pass. Objects made before the first session (imports) are frozen
out of the collector's sight (:func:`freeze_startup_objects`, called by ``serve``).

Outside a served page (tests, notebooks, ``server_doc`` on a bare document) a factory builds
the whole screen at once, as before.
"""

from __future__ import annotations

import asyncio
import ctypes
import ctypes.util
import gc
import logging
import time
import weakref
from collections import Counter
from collections.abc import Callable

import panel as pn
from panel.io.state import set_curdoc
from tornado.ioloop import IOLoop
from tornado.web import OutputTransform

from .responsive import later_part

__all__ = [
    "BUILDS",
    "SESSION_OPTIONS",
    "RequestActivity",
    "column_page",
    "freeze_startup_objects",
    "release_memory",
    "template_page",
]

log = logging.getLogger(__name__)

BUILDS: Counter = Counter()
"""Screen name -> how many times the whole screen was built (the tests count them)."""

SESSION_OPTIONS = {
    # Bokeh's defaults (17 s, 15 s) keep a closed page's session up to 32 s; a page whose
    # GET was served but which has not connected yet is also "unused", so the lifetime
    # must cover a slow browser's start-up on a loaded machine: 15 s is kept.
    "check_unused_sessions_milliseconds": 3000,
    "unused_session_lifetime_milliseconds": 15000,
}
"""``pn.serve`` keywords: how often unused sessions are looked for [ms], and how long a session
with no open page is kept [ms]."""

RELEASE_DELAY_S = 1.0
"""A closed session's memory is given back this long after the (last) session was destroyed [s]."""

OPENING_TEXT = "Opening the screen…"

_libc = None
_release_due = False


def _trim_malloc() -> None:
    """Ask glibc to return freed heap pages to the system (a no-op where there is no glibc)."""
    global _libc
    if _libc is None:
        try:
            _libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
            _libc.malloc_trim.argtypes = [ctypes.c_size_t]
        except (OSError, AttributeError):
            _libc = False
    if _libc:
        _libc.malloc_trim(0)


def release_memory() -> None:
    """Collect the cycles closed sessions left and give the freed memory back."""
    global _release_due
    _release_due = False
    gc.collect()
    _trim_malloc()


def freeze_startup_objects() -> None:
    """Move every object alive now (modules, classes, the shared caches filled at import) out
    of the garbage collector's sight, once, before any session exists.

    A session's build allocates enough to set off several full collections, each of which
    walked every object of the process; after this they walk only what sessions made
    (about a quarter of a lecture screen's build time, measured in ``bench/bench_load.py``).
    Nothing frozen here is garbage: a session's objects are made later and stay collectable.
    """
    gc.collect()
    gc.freeze()


def _session_destroyed(_context) -> None:
    global _release_due
    if _release_due:
        return
    _release_due = True
    try:
        IOLoop.current().call_later(RELEASE_DELAY_S, release_memory)
    except RuntimeError:  # no loop running (a test destroying a document by hand)
        release_memory()


def _served_doc():
    doc = pn.state.curdoc
    if doc is None or doc.session_context is None:
        return None
    return doc


def _opening() -> pn.pane.HTML:
    return pn.pane.HTML(
        OPENING_TEXT,
        css_classes=["o2-opening"],
        styles={"color": "#46545c", "font-size": "15px"},
        margin=(12, 16),
    )


_PENDING = "_o2transit_build"
"""The attribute of a served document that holds its screen's build until the page pulls it
(on the document itself: a weak-keyed table would keep every never-connected document alive,
since the build refers to its page's models and they to their document)."""


def _build_when_connected(
    doc, name: str, build: Callable[[], object], fill, modules: tuple[str, ...] = ()
) -> None:
    def run() -> None:
        BUILDS[name] += 1
        # Panel puts off changes to a rendered model until the page has reported itself
        # ready; here the page has not even got the document yet, so they are made at once
        # and go out in the document itself.
        connected = pn.state._connected.get(doc)
        pn.state._connected[doc] = True
        try:
            with set_curdoc(doc):
                try:
                    with later_part():
                        page = build()
                    with doc.models.freeze():
                        fill(page)
                except Exception:  # the page gets one line, the log the details
                    log.exception("building the %s screen failed", name)
                    fill(None)
        finally:
            if connected is None:
                pn.state._connected.pop(doc, None)
            else:
                pn.state._connected[doc] = connected

    _install()
    _quiet_loop()
    doc.on_session_destroyed(_session_destroyed)
    setattr(doc, _PENDING, run)
    if _navigating(doc):  # a browser: it connects as soon as its scripts have loaded
        preload(modules)
        _build_ahead(doc)


def preload(modules: tuple[str, ...]) -> None:
    """Import ``modules`` in a thread of their own, once, so that a screen whose page is
    loading its scripts finds its modules imported when it is built (0.3-0.4 s for the
    planner's, pandas among them, measured on this 2-core machine). An import already under
    way is simply waited for by the build (Python's import lock)."""
    import sys
    import threading

    todo = tuple(m for m in modules if m not in sys.modules and m not in _PRELOADING)
    if not todo:
        return
    _PRELOADING.update(todo)

    def load() -> None:
        import importlib

        for name in todo:
            try:
                importlib.import_module(name)
            except Exception:  # the build imports it again and reports the failure
                log.exception("importing %s ahead of its screen failed", name)

    threading.Thread(target=load, name="o2transit-preload", daemon=True).start()


_PRELOADING: set[str] = set()


_AHEAD: dict[int, float] = {}
"""Documents whose screen is being built ahead of their page's connection (id -> when it was
asked, monotonic s)."""
AHEAD_STALE_S = 10.0
"""An :data:`_AHEAD` entry this old (its server stopped while it waited) no longer holds the
next build ahead back [s]."""


def _navigating(doc) -> bool:
    """Whether the GET that made ``doc`` is a browser opening the page as a whole document
    (``Sec-Fetch-Dest: document``, sent by browsers since 2020, not by ``curl``, link
    previewers or scripts): such a page connects in the next second, almost always."""
    request = getattr(getattr(doc, "session_context", None), "request", None)
    headers = getattr(request, "headers", None) or {}  # none: a test's bare document
    return str(headers.get("Sec-Fetch-Dest", "")).lower() == "document"


def _build_ahead(doc) -> None:
    """Build a browser's screen while the browser loads its scripts, when the server is
    otherwise idle: right after the shell has gone out, on the server's event loop, so the
    page's document is ready (or nearly) when it asks for it.

    Between the shell's reply and the page's request for its document a browser spends
    0.4-0.7 s loading and starting its scripts (measured with ``latency_harness.py`` on this
    2-core machine), the server doing nothing; the screen's build (0.3-1.5 s) fits there.
    Only one screen is built ahead at a time, so a class opening the page together still gets
    every shell at once; the others are built when their pages connect, as before. A page
    that connects while its screen is still waiting to be built ahead builds it then
    (whichever comes first pops the build: it runs once)."""
    now = time.monotonic()
    for stale in [k for k, t in _AHEAD.items() if now - t > AHEAD_STALE_S]:
        _AHEAD.pop(stale, None)
    if _AHEAD:
        return
    key = id(doc)
    _AHEAD[key] = now
    ref = weakref.ref(doc)

    def locked(d, session) -> None:
        # a page already connected gets its screen in the reply to its request for the
        # document (the build's changes would otherwise go to it as patches first)
        if session.connection_count:
            return
        run = d.__dict__.pop(_PENDING, None)
        if run is not None:
            run()

    async def ahead() -> None:
        try:
            # the browser fetches the page's scripts and styles first: while any of them is
            # being served the build waits, so that they are not held up behind it
            deadline = time.monotonic() + AHEAD_WAIT_S
            while time.monotonic() < deadline:
                if time.monotonic() - RequestActivity.last >= AHEAD_IDLE_S:
                    break
                await asyncio.sleep(0.02)
            d = ref()
            session = getattr(getattr(d, "session_context", None), "_session", None)
            if d is None or session is None or session.destroyed:
                return  # gone already, or built when (if) its page connects
            # the session's document lock, as every change to a served document takes
            await session.with_document_locked(locked, d, session)
        except Exception:  # the page still builds its screen when it connects
            log.exception("building a screen ahead of its page failed")
        finally:
            _AHEAD.pop(key, None)

    try:
        # call_later, not add_callback: the shell's reply is written first
        IOLoop.current().call_later(0.01, ahead)
    except RuntimeError:  # pragma: no cover - no loop
        _AHEAD.pop(key, None)


AHEAD_IDLE_S = 0.06
"""A screen is built ahead once no request has been served for this long [s]."""

AHEAD_WAIT_S = 2.0
"""...or once this long has passed since its shell went out [s] (a page that connects first
builds its screen itself)."""


class RequestActivity(OutputTransform):
    """Notes when the server last started or wrote a response (:attr:`last`, monotonic s):
    a screen is built ahead of its page only while the server has nothing else to serve."""

    last = 0.0

    def __init__(self, request) -> None:
        super().__init__(request)
        RequestActivity.last = time.monotonic()

    def transform_first_chunk(self, status_code, headers, chunk, finishing):
        RequestActivity.last = time.monotonic()
        return status_code, headers, chunk

    def transform_chunk(self, chunk, finishing):
        RequestActivity.last = time.monotonic()
        return chunk


_installed = False


def _install() -> None:
    """Build a pending screen when its page asks for the document (PULL-DOC), under the
    document's lock, before the reply is made: the screen goes out in the reply itself, so
    the browser renders the page once. While the screen is built the session has no
    subscribers, so none of the building goes out as patches the page could not place."""
    global _installed
    if _installed:
        return
    from bokeh.server import session as bokeh_session

    @bokeh_session._needs_document_lock
    def _handle_pull(self, message, connection):
        run = self.document.__dict__.pop(_PENDING, None)
        if run is not None:
            subscribed, self._subscribed_connections = self._subscribed_connections, set()
            try:
                run()
            finally:
                self._subscribed_connections = subscribed
        return connection.protocol.create("PULL-DOC-REPLY", message.header["msgid"], self.document)

    bokeh_session.ServerSession._handle_pull = _handle_pull
    _quiet_closed_pages()
    _installed = True


_quiet_loops: weakref.WeakSet = weakref.WeakSet()


def _quiet_loop() -> None:
    """On this server's event loop, a write to a page that has gone is not reported.

    Tornado writes each frame of a message in a task of its own; a frame whose page went
    away while the server was busy fails with ``WebSocketClosedError``, and when nothing
    awaits that task any more (its session was closed and its writer cancelled), asyncio
    logs "Task exception was never retrieved" with a traceback. That failure is the page's
    closing, not a fault: it is dropped here; every other report goes to the handler that
    was there before.
    """
    from tornado.iostream import StreamClosedError
    from tornado.websocket import WebSocketClosedError

    try:
        loop = IOLoop.current().asyncio_loop  # type: ignore[attr-defined]
    except (RuntimeError, AttributeError):
        return
    if loop in _quiet_loops:
        return
    previous = loop.get_exception_handler()

    def handler(loop, context) -> None:
        if isinstance(context.get("exception"), (WebSocketClosedError, StreamClosedError)):
            log.debug("a write to a page that had gone failed: %s", context.get("message"))
            return
        if previous is not None:
            previous(loop, context)
        else:
            loop.default_exception_handler(context)

    loop.set_exception_handler(handler)
    _quiet_loops.add(loop)


def _quiet_closed_pages() -> None:
    """A page that went away while its update was being written costs nothing and says
    nothing: Panel checks that the connection is open before it writes, but a connection
    whose browser vanished (no close handshake) is found closed only by the write itself,
    which then raised ``WebSocketClosedError`` out of Panel's write task, or left a frame's
    failed write unread when the task was cancelled with the session (a server traceback
    each, under load). Such a write now sends nothing and says nothing; the session is let
    go as any closed page's is."""
    from panel.io import document as panel_document
    from tornado.iostream import StreamClosedError
    from tornado.websocket import WebSocketClosedError

    write = panel_document.dispatch_tornado
    if getattr(write, "o2_quiet", False):
        return

    def seen(future) -> None:
        # A frame's write that failed because the page had gone is looked at here, so that
        # it is not reported later as "Task exception was never retrieved" when Panel's
        # write task was cancelled with the session before it awaited every frame.
        if future.cancelled():
            return
        exc = future.exception()
        if exc is not None and not isinstance(exc, (WebSocketClosedError, StreamClosedError)):
            log.warning("writing to a page failed: %s", exc)

    def dispatch_tornado(conn, events=None, msg=None):
        try:
            futures = write(conn, events, msg)
        except WebSocketClosedError:
            log.debug("a page closed while its update was written; nothing sent")
            return []
        for future in futures:
            future.add_done_callback(seen)
        return futures

    dispatch_tornado.o2_quiet = True  # type: ignore[attr-defined]
    panel_document.dispatch_tornado = dispatch_tornado


def _failed() -> pn.pane.HTML:
    return pn.pane.HTML(
        "This screen could not be opened; the server's log says why. Reload the page to try again.",
        css_classes=["o2-opening-failed"],
        styles={"color": "#a3261b", "font-size": "15px"},
        margin=(12, 16),
    )


def template_page(
    name: str,
    shell: Callable[[], object],
    build: Callable[[], object],
    modules: tuple[str, ...] = (),
):
    """A session factory for a screen whose page is a template.

    ``shell()`` returns the template with its header and nothing else; ``build()`` the whole
    screen in a template of the same kind, whose sidebar and main area are moved into the
    shell's when the page connects. ``modules`` are imported (:func:`preload`) as soon as a
    browser asks for the page.
    """

    def page():
        doc = _served_doc()
        if doc is None:
            BUILDS[name] += 1
            return build()
        template = shell()
        side = pn.Column(sizing_mode="stretch_width", margin=0)
        main = pn.Column(_opening(), sizing_mode="stretch_width", margin=0)
        template.sidebar.append(side)
        template.main.append(main)

        def fill(built) -> None:
            if built is None:
                main.objects = [_failed()]
                return
            side.objects = list(built.sidebar)
            main.objects = list(built.main)

        _build_when_connected(doc, name, build, fill, modules)
        return template

    page.__doc__ = build.__doc__
    return page


def column_page(
    name: str,
    shell: Callable[..., object],
    build: Callable[[], object],
    modules: tuple[str, ...] = (),
):
    """A session factory for a screen whose page is one column: ``shell()`` returns it
    empty, ``build()`` the whole screen, whose parts move into the shell on connection;
    ``modules`` as for :func:`template_page`."""

    def page():
        doc = _served_doc()
        if doc is None:
            BUILDS[name] += 1
            return build()
        column = shell(_opening())

        def fill(built) -> None:
            column.objects = [_failed()] if built is None else list(built.objects)

        _build_when_connected(doc, name, build, fill, modules)
        return column

    page.__doc__ = build.__doc__
    return page
