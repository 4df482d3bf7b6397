"""Quick screens: what a page does so that a change shows within a frame or two.

Measured on the case screen (``bench/bench_dashboard.py``; ``TOOLCHAIN.md`` in the shared
folder): by default Panel waits 50 ms before it applies a browser change, sends every Bokeh
property change as its own message (Bokeh walks the page's models for each), keeps a busy
indicator in step, and the page rewrote its address on every change. The helpers here take
those costs away; a screen applies them in a few lines (see ``dashboard/case/app.py``):

* :func:`install` (once per server; ``dashboard.app`` does it) and :data:`SERVER_OPTIONS`
  (``pn.serve(..., **SERVER_OPTIONS)``): no MathJax or WebGL script unless a page uses it,
  compressed responses;
* :data:`TEMPLATE_OPTIONS` (``BootstrapTemplate(..., **TEMPLATE_OPTIONS)``): no busy
  indicator;
* :func:`quicken` (``quicken(template)`` once the page is built): browser changes are
  applied without the 50 ms wait, all that one change does goes out in one message;
* :func:`held` for button actions: the action on the next tick, in one message;
* :func:`soon` for a view's hand-over to its state: inside the change under way, or
  :func:`held` where no change is under way (a click);
* :class:`Deferred` for figures: the numbers of a change go first, the figures in a second
  message right after; a figure on a part of the page that is not shown waits until it is
  (:class:`Gate`);
* :func:`set_data`: a data source sends only the columns that changed, or nothing;
* :class:`Quiet`: run something (the address) once, shortly after the last of many calls;
* :func:`lazy_tab` and :func:`later_part`: a tab's content built when it is first opened,
  components made after load styled like the first ones.

Outside a served, loaded page (tests, notebooks, the page being built) every deferred or
quiet call runs at once, so a state change is visible in the views straight away.
"""

from __future__ import annotations

import math
import time
import weakref
from collections import deque
from collections.abc import Callable

import numpy as np
import panel as pn
from panel.io.state import set_curdoc
from panel.reactive import Reactive
from panel.template.base import BaseTemplate

__all__ = [
    "QUIET_MS",
    "SERVER_OPTIONS",
    "TEMPLATE_OPTIONS",
    "Deferred",
    "Gate",
    "Quiet",
    "held",
    "install",
    "later_part",
    "lazy_tab",
    "quicken",
    "serving",
    "set_data",
    "soon",
]

TEMPLATE_OPTIONS = {"busy_indicator": None}
"""Template keywords of a quick page: no busy indicator (a quarter of the server's time per
change went to keeping it in step)."""

SERVER_OPTIONS = {"compress_response": True}
"""``pn.serve`` keywords of a quick server: responses gzip-compressed (the first visit of a
page moves a third of the bytes: 1 MB instead of 3 MB of scripts and styles)."""

QUIET_MS = 300
"""How long after the last change a :class:`Quiet` call (the page address) runs [ms]."""


def serving() -> bool:
    """True inside a served page that has loaded (its websocket is open).

    Only there are updates deferred; while a page is built, and outside a server, they run at
    once.
    """
    doc = pn.state.curdoc
    return doc is not None and doc.session_context is not None and bool(pn.state.loaded)


# ---------------------------------------------------------------------- one server
_installed = False


def _page_models(roots) -> set:
    models: set = set()
    for root in roots or ():
        models |= root.references()
    return models


def _uses_mathematics(models) -> bool:
    """An HTML or Markdown pane whose text has TeX delimiters and does not disable them."""
    from bokeh.embed.util import contains_tex_string
    from panel.models.markup import HTML

    return any(
        isinstance(m, HTML)
        and not getattr(m, "disable_math", False)
        and isinstance(m.text, str)
        and contains_tex_string(m.text)
        for m in models
    )


def _unused_bundles(models) -> set[str]:
    """BokehJS bundles a page's models do not need: WebGL without a WebGL plot.

    (The table bundle cannot go: Panel's own script needs it on every page.)
    """
    from bokeh.models import Plot

    if any(isinstance(m, Plot) and m.output_backend == "webgl" for m in models):
        return set()
    return {"bokeh-gl"}


def install() -> None:
    """Once per process: a served page loads only the scripts its first content needs.

    Panel adds Bokeh's MathJax bundle (1.8 MB) to every page with an HTML pane, whatever the
    pane holds, and BokehJS's WebGL bundle (0.2 MB) to every page. After this, MathJax is
    loaded when an HTML or Markdown pane of the page has TeX delimiters (``$$...$$``,
    ``\\(...\\)``, ``\\[...\\]``) and does not disable mathematics (Bokeh's own check, math
    text in figures and axis labels, is kept), and WebGL when a figure draws with it. None of
    the o2transit screens uses either. A part added after load (a lazy tab) gets only what its
    page loaded: it must not be the first to need one of them. Idempotent.
    """
    global _installed
    if _installed:
        return
    from panel.io import resources, server

    bundle_resources = resources.bundle_resources

    def page_bundle(roots, bk_resources, *args, **kwargs):
        models = _page_models(roots)
        unused = _unused_bundles(models) if roots else set()
        components = getattr(bk_resources, "components", None)
        if unused and components is not None and hasattr(bk_resources, "clone"):
            bk_resources = bk_resources.clone(components=[c for c in components if c not in unused])
        return bundle_resources(roots, bk_resources, *args, **kwargs)

    resources._panel_use_mathjax = _uses_mathematics_of_roots
    server.bundle_resources = page_bundle
    _installed = True


def _uses_mathematics_of_roots(roots) -> bool:
    return _uses_mathematics(_page_models(roots))


# ---------------------------------------------------------------------- one change, one message
class _Everything:
    """A container that holds every name (Panel's list of changes that mark a page busy)."""

    def __contains__(self, _name) -> bool:
        return True

    def __iter__(self):
        return iter(())


_EVERYTHING = _Everything()
_RETRY_MS = 1
_MAX_WAIT_MS = 30


def _socket_busy(doc) -> bool:
    """Whether the page's websocket is being written to, or Panel still has messages queued.

    A change applied then would have its message queued behind Panel's 10 ms polling of the
    write lock (Bokeh writes the OK for the browser's own message in several steps).
    """
    try:
        from panel.io import document as panel_document

        if doc in getattr(panel_document, "_WRITE_MSGS", {}) or doc in getattr(
            panel_document, "_WRITE_BLOCK", {}
        ):
            return True
        connections = doc.session_context._session._subscribed_connections
        return any(c._socket.write_lock._block._value == 0 for c in connections)
    except (AttributeError, TypeError):
        return False


_QUEUES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _when_free(doc, run: Callable[[], None]) -> None:
    """``run()`` as soon as the websocket is free (waiting at most 30 ms), in arrival order.

    Changes and clicks share one queue per page, so a button pressed right after a value was
    typed acts on that value: Panel applies the pending change before it hands over the click,
    and the change is queued first, so it also runs first.
    """
    queue = _QUEUES.setdefault(doc, deque())
    queue.append(run)
    if len(queue) == 1:
        _drain(doc, 0)


def _drain(doc, waited_ms: int) -> None:
    queue = _QUEUES.get(doc)
    if not queue:
        return
    if waited_ms < _MAX_WAIT_MS and _socket_busy(doc):
        doc.add_timeout_callback(lambda: _drain(doc, waited_ms + _RETRY_MS), _RETRY_MS)
        return
    with set_curdoc(doc):
        while queue:
            try:
                queue[0]()
            except Exception as exc:  # noqa: BLE001 - one failing action must not stall the queue
                pn.state._handle_exception(exc)
            finally:
                queue.popleft()


_acting = 0  # > 0 while an action (one browser change, one click) runs under its hold


def _act(doc, action: Callable[[], object]) -> None:
    """Run one user action in one hold; then start the figures it left to do."""
    global _acting
    _acting += 1
    try:
        with pn.io.hold(doc):
            action()
    finally:
        _acting -= 1
    _Batch.start(doc)


def _held_change(obj: Reactive, doc) -> None:
    _when_free(doc, lambda: _act(doc, lambda: type(obj)._change_event(obj, doc)))


def _held_event(obj: Reactive, doc, event) -> None:
    """A browser event (a click, a table edit) queued behind the changes that came before it:
    a table's edit event then reads the edited value, not the one before."""
    _when_free(doc, lambda: _act(doc, lambda: type(obj)._process_bokeh_event(obj, doc, event)))


def _parts(roots):
    """Templates as their areas (a template's own ``select`` trips over its browser info)."""
    for root in roots:
        if isinstance(root, BaseTemplate):
            for area in (root.header, root.sidebar, root.main, root.modal):
                yield from area
        else:
            yield pn.panel(root)


def quicken(*roots) -> None:
    """Make the widgets (and tabs, cards...) under ``roots`` quick to answer the browser.

    A change from the browser is applied as soon as the page's connection is free, instead
    of after Panel's fixed 50 ms wait; everything it sets off (state, numbers, other widgets)
    goes out in one message instead of one per property, with no busy bookkeeping, and the
    :class:`Deferred` figures follow in a second message. ``roots``: templates, layouts or
    components; call again on parts added later (:func:`lazy_tab` does it for its tab).
    """
    for root in _parts(roots):
        for obj in root.select(Reactive):
            obj._debounce = 0
            obj._busy__ignore = _EVERYTHING
            obj._change_event = lambda doc, obj=obj: _held_change(obj, doc)
            obj._process_bokeh_event = lambda doc, event, obj=obj: _held_event(obj, doc, event)


def held(action: Callable[[], object]) -> Callable[[], None]:
    """``action`` as a button callback: run on the next tick, under the document lock, with
    all its changes in one message, figures in a second (``run = held(fn)``, then
    ``button.on_click(lambda _e: run())``)."""

    def run() -> None:
        doc = pn.state.curdoc
        _when_free(doc, lambda: _act(doc, action))

    return lambda: pn.state.execute(run, schedule=True)


def soon(action: Callable[..., object], *args) -> None:
    """Run ``action(*args)`` as part of the user action under way.

    Called from a quickened widget's watcher, it runs at once, inside that change's one hold
    (its changes go out with the change's message, its :class:`Deferred` figures after);
    called from a button click or elsewhere in a served page, it runs as :func:`held` runs
    an action; outside a served page, at once.
    """
    if _acting or not serving():
        action(*args)
    else:
        held(lambda: action(*args))()


# ---------------------------------------------------------------------- numbers first
FIGURE_DELAY_MS = 15
"""Figures are redrawn this long after the numbers were sent [ms]: by then the browser has
shown the numbers, so its canvas painting does not hold back that frame."""


class Gate:
    """Whether a part of a page (a tab) is on screen.

    :class:`Deferred` refreshes of a part that is hidden wait; :meth:`show` runs those that
    are due, in one message.
    """

    def __init__(self, shown: bool = True):
        self.shown = shown
        self._waiting: list[Deferred] = []

    def wait(self, refresh: Deferred) -> None:
        if refresh not in self._waiting:
            self._waiting.append(refresh)

    def show(self) -> None:
        self.shown = True
        waiting, self._waiting = self._waiting, []
        with pn.io.hold():
            for refresh in waiting:
                refresh.run_now()

    def hide(self) -> None:
        self.shown = False


_BATCHES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()  # document -> _Batch


class _Batch:
    """The figure refreshes a page's last action left to do: one timer, one message."""

    def __init__(self):
        self.due: list[Deferred] = []
        self.timer = False

    @classmethod
    def add(cls, doc, refresh: Deferred) -> None:
        batch = _BATCHES.setdefault(doc, cls())
        if refresh not in batch.due:
            batch.due.append(refresh)
        if not _acting:
            cls.start(doc)

    @classmethod
    def start(cls, doc) -> None:
        batch = _BATCHES.get(doc)
        if batch is None or not batch.due or batch.timer:
            return
        batch.timer = True
        doc.add_timeout_callback(lambda: _when_free(doc, batch.run), FIGURE_DELAY_MS)

    def run(self) -> None:
        self.timer = False
        due, self.due = self.due, []
        with pn.io.hold():
            for refresh in due:
                refresh.run_now()


class Deferred:
    """A view's refresh that runs after the numbers: watch with it where the refresh was.

    In a served page the call returns at once; the refresh runs :data:`FIGURE_DELAY_MS`
    after the action's numbers went out, together with every other deferred refresh of the
    page in one message, once however often it was called; behind a hidden :class:`Gate` it
    runs when the gate opens. Elsewhere it runs at once.
    """

    def __init__(self, refresh: Callable[[], object], gate: Gate | None = None):
        self._refresh = refresh
        self._gate = gate

    def __call__(self, *_events) -> None:
        if not serving():
            self._refresh()
            return
        _Batch.add(pn.state.curdoc, self)

    def run_now(self) -> None:
        if self._gate is not None and not self._gate.shown:
            self._gate.wait(self)
            return
        self._refresh()


def _same(old, new) -> bool:
    if old is new:
        return True
    if isinstance(old, np.ndarray) or isinstance(new, np.ndarray):
        a, b = np.asarray(old), np.asarray(new)
        return a.shape == b.shape and a.dtype.kind == b.dtype.kind and np.array_equal(a, b)
    if len(old) != len(new):
        return False
    for x, y in zip(old, new, strict=True):
        if x == y or (
            isinstance(x, float) and isinstance(y, float) and math.isnan(x) and math.isnan(y)
        ):
            continue
        return False
    return True


def set_data(source, data: dict) -> None:
    """Give a ``ColumnDataSource`` new ``data``, sending only the columns that changed.

    Nothing is sent when every column is as it was; when the changed columns keep their
    lengths only they are sent; otherwise (new columns, new lengths) the whole data is.
    """
    old = source.data
    if set(old) != set(data):
        source.data = data
        return
    changed = {k: v for k, v in data.items() if not _same(old[k], v)}
    if not changed:
        return
    if len(changed) < len(data) and all(len(old[k]) == len(v) for k, v in changed.items()):
        source.data.update(changed)
    else:
        source.data = data


# ---------------------------------------------------------------------- once, after the last
class Quiet:
    """Run ``action`` once, ``delay_ms`` after the last of a burst of calls.

    For work nobody waits for, such as rewriting the page address after each change. Outside
    a served, loaded page the call runs at once.
    """

    def __init__(self, action: Callable[[], object], delay_ms: int = QUIET_MS):
        self._action = action
        self._delay_ms = delay_ms
        self._due = 0.0
        self._doc = None

    def __call__(self, *_events) -> None:
        if not serving():
            self._action()
            return
        self._due = time.monotonic() + self._delay_ms / 1000.0
        if self._doc is None:
            self._doc = pn.state.curdoc
            self._doc.add_timeout_callback(self._fire, self._delay_ms)

    def _fire(self) -> None:
        left = self._due - time.monotonic()
        if left > 0.005:
            self._doc.add_timeout_callback(self._fire, int(left * 1000) + 1)
            return
        doc, self._doc = self._doc, None
        with set_curdoc(doc), pn.io.hold(doc):
            self._action()


# ---------------------------------------------------------------------- hidden tabs
def later_part():
    """Context for making components that are added to a page after it was built.

    Panel styles the parts of a page it builds first as the template's (its stylesheets are
    in the page once); a component made later, with the template's design already set, would
    carry the whole Bootstrap stylesheet in its own shadow root, which costs the browser a
    restyle of every such part (a second for the Measured gas tab). Made in this context,
    it is styled like the first parts when it is added.
    """
    return pn.config.set(design=None)


def lazy_tab(tabs: pn.Tabs, index: int, build: Callable[[Gate], object]) -> Gate:
    """Build the content of ``tabs[index]`` when that tab is first opened.

    ``tabs[index]`` is a placeholder (an empty ``pn.Column``, given a ``min_height`` so that
    its loading spinner shows); ``build(gate)`` returns the content, and may hand ``gate`` to
    its :class:`Deferred` figures so that they wait while the tab is not shown. On the first
    opening the placeholder shows Panel's spinner at once and the content follows in the
    next message. Returns the gate. If the tab is the active one when the page is built,
    the content is built with it.
    """
    gate = Gate(shown=tabs.active == index)
    holder = tabs[index]
    state = {"built": False}

    def fill() -> None:
        state["built"] = True
        with later_part():
            content = build(gate)
        holder.objects = [content]
        quicken(holder)

    def fill_shown() -> None:
        with pn.io.hold(freeze=True):
            fill()
            holder.loading = False
            if tabs.active == index:
                gate.show()

    def follow(event) -> None:
        if event.new != index:
            gate.hide()
        elif state["built"]:
            gate.show()
        elif serving():
            state["built"] = True  # a second click while it is being built builds nothing
            holder.loading = True  # sent with this change; the content comes next
            pn.state.execute(fill_shown, schedule=True)
        else:
            fill()
            gate.show()

    if gate.shown:
        fill()
    tabs.param.watch(follow, "active")
    return gate
