"""Thin views of lecture mode over :class:`dashboard.lecture.state.LectureState`.

The plot (drawn by :mod:`.figures`) is here; the controls (step buttons and index, factor
chooser, sliders and combining, view, unit, the exports of :mod:`.export`, the presenter's
keys) are in :mod:`.controls`, and the lesson maker's panel in :mod:`.maker_view`.

Smooth motion: the server writes each new state, computed by the model, into a *target*
``ColumnDataSource`` that no glyph draws; a ``CustomJS`` on the target's ``data`` tweens the
drawn source in the browser from the arrays on screen to the target arrays over
:data:`GLIDE_MS` (cubic ease in-out, ``requestAnimationFrame``, arrays changed in place and
``change.emit()``, so nothing is sent back to the server). Only numbers the model computed
are interpolated; text changes at once (painted in the next frame).

Numbers first (:mod:`dashboard.responsive`): the readout's target, the title and the axes go
out with the change itself; the curves and points follow in a second message right after, and
a source whose data did not change is not sent again.
"""

from __future__ import annotations

import panel as pn
from bokeh.models import ColumnDataSource, CustomJS

from ..responsive import Deferred, set_data
from .controls import LectureControls
from .figures import apply_frame, build_figure, frame_data
from .state import LectureState

__all__ = ["GLIDE_MS", "LectureControls", "LecturePlot"]

GLIDE_MS = 350
PLOT_MIN_HEIGHT = 470
"""[px]: room for the title, a readable plot area, the legend and the caution."""

_TWEEN_JS = (
    """
const dur = GLIDE_MS;
const to = target.data;
const keys = Object.keys(to);
const now = shown.data;
if (shown._o2_raf) { cancelAnimationFrame(shown._o2_raf); shown._o2_raf = null; }
const fits = keys.every((k) => now[k] !== undefined && now[k].length === to[k].length);
if (!fits) { shown.data = Object.fromEntries(keys.map((k) => [k, Array.from(to[k])])); return; }
const start = {};
let text = false;
for (const k of keys) {
  start[k] = Array.from(now[k]);
  if (to[k].length && typeof to[k][0] !== "number") {
    for (let i = 0; i < to[k].length; i++) { text = text || now[k][i] !== to[k][i]; now[k][i] = to[k][i]; }
  }
}
// New text is painted in the coming frame, not one frame after the glide's first step.
if (text) { shown.change.emit(); }
// The clock starts at the first frame drawn, so a busy moment (a relayout) between the
// message and that frame does not eat up the glide.
let t0 = null;
function tick(t) {
  if (t0 === null) { t0 = t; }
  const u = Math.max(0, Math.min(1, (t - t0) / dur));
  const e = u < 0.5 ? 4 * u * u * u : 1 - Math.pow(-2 * u + 2, 3) / 2;
  for (const k of keys) {
    const a = start[k], b = to[k], out = now[k];
    if (!b.length || typeof b[0] !== "number") continue;
    for (let i = 0; i < b.length; i++) out[i] = u >= 1 ? b[i] : a[i] + (b[i] - a[i]) * e;
  }
  shown.change.emit();
  shown._o2_raf = u < 1 ? requestAnimationFrame(tick) : null;
}
shown._o2_raf = requestAnimationFrame(tick);
"""
).replace("GLIDE_MS", str(GLIDE_MS))


class LecturePlot(pn.viewable.Viewer):
    """The plot filling the window; glides to each new frame."""

    def __init__(self, state: LectureState, **params):
        super().__init__(**params)
        self._state = state
        data = frame_data(state.frame)
        self._targets = {
            k: ColumnDataSource(data=v, name=f"o2-{k}-target") for k, v in data.items()
        }
        self._shown = {k: ColumnDataSource(data=v, name=f"o2-{k}-shown") for k, v in data.items()}
        for k, target in self._targets.items():
            target.js_on_change(
                "data", CustomJS(args={"target": target, "shown": self._shown[k]}, code=_TWEEN_JS)
            )
        # At least this tall, so that opening the lesson maker scrolls the page rather than
        # squashing the plot.
        self.figure = build_figure(
            self._shown, state.frame, sizing_mode="stretch_both", min_height=PLOT_MIN_HEIGHT
        )
        self.figure.name = "o2-lecture-figure"
        # The caption, for the PNG export (the page shows it as HTML under the plot).
        self.caption_source = ColumnDataSource(
            data={"text": [state.frame["caption"] if state.frame else ""]}, name="o2-caption"
        )
        # The targets and the caption are drawn by nothing; holding them here puts them in
        # the document.
        self.figure.tags = [*self._targets.values(), self.caption_source]
        self._pane = pn.pane.Bokeh(
            self.figure,
            sizing_mode="stretch_both",
            min_height=PLOT_MIN_HEIGHT,
            css_classes=["o2-lecture-plot"],
        )
        self._draw = Deferred(self._draw_figure)
        state.param.watch(self._update, ["frame"])

    def _update(self, *_events) -> None:
        """The readout, title and axes at once (the numbers, and what may change the layout),
        the curves and points right after: their glide then starts on a settled layout."""
        frame = self._state.frame
        apply_frame(self.figure, frame)
        set_data(self._targets["readout"], frame_data(frame)["readout"])
        set_data(self.caption_source, {"text": [frame["caption"]]})
        self._draw()

    def _draw_figure(self) -> None:
        frame = self._state.frame
        for k, v in frame_data(frame).items():
            set_data(self._targets[k], v)

    def __panel__(self):
        return self._pane
