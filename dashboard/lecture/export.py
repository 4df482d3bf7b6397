"""Exports of the lecture view: the PNG the browser draws, and a standalone HTML page.

The PNG is made in the browser from the plot as drawn, with the step's caption wrapped
underneath (:func:`png_js`, the code of a ``js_on_click``); the HTML page is built here from
the state's frame with Bokeh inlined (:func:`standalone_html`), so it opens without a
network. Both carry the caution, which is part of the figure.
"""

from __future__ import annotations

import html

from bokeh.layouts import column
from bokeh.models import ColumnDataSource, Div

from ..case.formatting import fmt
from ..look import INK
from ..offline import offline_file_html
from .figures import FONT, build_figure, frame_data, tissue_label
from .state import LectureState

_PNG_TEMPLATE = """
// The plot as drawn, with the step's caption (the caption source) wrapped
// underneath, so the image says what the lecturer said.
const view = Bokeh.index.find_one(fig);
if (view === null) { return; }
const plot = view.export("png").canvas;
const scale = plot.width / view.bbox.width;
const text = caption.data.text.length ? String(caption.data.text[0]) : "";
const size = Math.round(24 * scale), line = Math.round(32 * scale), pad = Math.round(24 * scale);
const probe = document.createElement("canvas").getContext("2d");
probe.font = size + "px " + FONT_CSS;
const lines = [];
let current = "";
for (const word of text.split(/\\s+/).filter((w) => w.length)) {
  const trial = current ? current + " " + word : word;
  if (current && probe.measureText(trial).width > plot.width - 2 * pad) {
    lines.push(current);
    current = word;
  } else {
    current = trial;
  }
}
if (current) { lines.push(current); }
const out = document.createElement("canvas");
out.width = plot.width;
out.height = plot.height + (lines.length ? lines.length * line + pad : 0);
const ctx = out.getContext("2d");
ctx.fillStyle = "#ffffff";
ctx.fillRect(0, 0, out.width, out.height);
ctx.drawImage(plot, 0, 0);
ctx.fillStyle = INK_CSS;
ctx.font = size + "px " + FONT_CSS;
ctx.textBaseline = "top";
lines.forEach((text, i) => ctx.fillText(text, pad, plot.height + i * line + pad / 2));
out.toBlob((blob) => {
  const a = document.createElement("a");
  a.href = URL.createObjectURL(blob);
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(a.href), 10000);
}, "image/png");
"""


def png_js() -> str:
    """Browser code saving the plot and caption as a PNG; args ``fig``, ``caption``, ``name``."""
    return _PNG_TEMPLATE.replace("FONT_CSS", repr(FONT)).replace("INK_CSS", repr(INK))


def standalone_html(state: LectureState) -> str:
    """The current view as one offline HTML page (Bokeh resources inlined, no links out)."""
    frame = state.frame
    data = frame_data(frame)
    sources = {k: ColumnDataSource(data=v) for k, v in data.items()}
    fig = build_figure(sources, frame, width=1280, height=720)
    numbers = (
        f"Arterial SO2 {frame['arterial_so2']:.1f} %, CaO2 {frame['arterial_content_ml_dl']:.1f} "
        f"mL/dL, Hb {frame['hb_g_dl']:.1f} g/dL, DO2 {frame['do2_ml_min']:.0f} mL/min; "
        f"{tissue_label(frame)} {frame['unit']}. "
        f"Reference P50 {fmt(frame['reference_p50'], frame['digits'] + 1)} {frame['unit']}; "
        f"reference O2 extracted per litre {frame['reference_extracted_ml_per_l']:.0f} mL/L."
    )
    caption = Div(
        text=(
            f'<p style="font: 26px {FONT}; color: {INK}; max-width: 1240px">'
            f"{html.escape(frame['caption'])}</p>"
            f'<p style="font: 20px {FONT}; color: {INK}">{html.escape(numbers)}</p>'
        ),
        width=1280,
        margin=(0, 20),
    )
    # The caution is part of the figure (a line under the axis), as in the PNG.
    return offline_file_html(column(fig, caption), title=f"o2transit · {frame['heading']}")
