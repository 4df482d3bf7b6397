"""The lecture plot: the column data of a frame, and the figure drawn from it.

Built for a projector: large type, thick lines, white ground. The colours and names are the
case screen's (:mod:`dashboard.look`): the case's arterial blood and its arterial point in
``ARTERIAL``, its venous blood and the tissue point in ``VENOUS``, the reference in
``REFERENCE``, the extraction bar in ``INK``. Series that matter differ in colour *and* in
line or marker (the reference a dotted line and hollow square, the arterial curve thick and
solid, the venous curve thin, the arterial point a circle, the tissue point a filled
square), so they stay apart for colour-blind viewers and in greyscale.

The plot shows saturation (%) or O2 content (mL O2/dL) against PO2, as the frame's
``view`` says; :func:`frame_data` picks the frame's numbers for it (no arithmetic beyond
placing labels). The figure is drawn once from one ``ColumnDataSource`` per name in
:data:`SOURCE_NAMES`; a new frame only replaces their data.
"""

from __future__ import annotations

from bokeh.core.properties import value
from bokeh.models import (
    CDSView,
    ColumnDataSource,
    FixedTicker,
    IndexFilter,
    LabelSet,
    Legend,
    LegendItem,
    Range1d,
    Title,
)
from bokeh.plotting import figure

from ..case.formatting import fmt
from ..look import ARTERIAL, CAUTION, INK, REFERENCE, VENOUS

PAPER = "#ffffff"
FONT = "'Liberation Sans', Arial, sans-serif"
TITLE_PX = (24, 40)
"""Smallest and largest title size [px]; long titles are set smaller to fit 1024 px."""

SOURCE_NAMES = (
    "curves",
    "arterial",
    "tissue",
    "tissue_line",
    "p50",
    "bar",
    "bridge",
    "readout",
)

SATURATION_TICKS = [0, 25, 50, 75, 100]
LEGEND_ORDER = ("reference", "arterial", "venous", "arterial_point", "tissue_point", "bar")
AXIS_LABELS = {"saturation": "SO2 (%)", "content": "O2 content (mL O2/dL)"}
LEGEND_TEXT = {
    "reference": "reference: resting adult",
    "arterial": "arterial conditions",
    "venous": "venous conditions",
    "arterial_point": "loading (arterial)",
    "held": "unloading: tissue",
    "venous_point": "unloading: venous",
    "bar": "O2 extracted per litre",
}
"""Legend words, the case screen's where it has them; the tissue point's entry says where it
is read (:func:`tissue_label`)."""


def _y(frame: dict) -> dict[str, float | object]:
    """The frame's numbers on the plot's vertical axis (SO2 % or content mL/dL)."""
    if frame["view"] == "content":
        return {
            "reference": frame["reference_content"],
            "current": frame["current_content"],
            "venous": frame["venous_content"],
            "arterial": frame["arterial_content_ml_dl"],
            "tissue": frame["tissue_content_ml_dl"],
            "reference_tissue": frame["reference_tissue_content_ml_dl"],
            "p50": frame["p50_content_ml_dl"],
            "top": frame["y_max_content"],
        }
    return {
        "reference": frame["reference"],
        "current": frame["current"],
        "venous": frame["venous"],
        "arterial": frame["loading"][1],
        "tissue": frame["tissue_so2"],
        "reference_tissue": frame["reference_tissue_so2"],
        "p50": frame["p50_so2"],
        "top": 102.0,
    }


def tissue_label(frame: dict) -> str:
    """'unloading: tissue PO2 held at 40' or 'unloading: venous PO2 30 by Fick' (its legend
    entry).

    Held, the PO2 is the lecturer's choice, to show what the curve alone does at one PO2;
    venous, it is the mixed venous PO2 the case's VO2 and cardiac output give.
    """
    shown = fmt(frame["tissue_po2"], frame["digits"])
    if frame["tissue_point"] == "venous":
        return f"{LEGEND_TEXT['venous_point']} PO2 {shown} by Fick"
    return f"{LEGEND_TEXT['held']} PO2 held at {shown}"


def readout_lines(frame: dict) -> list[str]:
    """The two lines written on the plot: P50 and its shift, O2 extracted per litre."""
    unit, d = frame["unit"], frame["digits"] + 1
    return [
        (
            f"P50 {fmt(frame['p50'], d)} {unit}:  {fmt(frame['p50_shift'], d, True)} {unit}"
            "  vs reference"
        ),
        (
            f"O2 extracted per litre:  {fmt(frame['extracted_ml_per_l'], 0)} mL/L,  "
            f"{fmt(frame['extracted_change_ml_per_l'], 1, True)} mL/L vs reference"
        ),
    ]


def frame_data(frame: dict) -> dict[str, dict]:
    """Column data of each plot source from a state frame (choosing and placing only)."""
    y = _y(frame)
    d = frame["digits"] + 1
    xt, xt_ref = frame["tissue_po2"], frame["reference_tissue_po2"]
    xa, ya = frame["loading"][0], y["arterial"]
    x_right = 0.975 * frame["x_max"]
    return {
        "curves": {
            "x": frame["x"],
            "reference": y["reference"],
            "current": y["current"],
            "venous": y["venous"],
        },
        "arterial": {"x": [xa], "y": [ya]},
        # row 0: the reference's tissue point, row 1: the case's
        "tissue": {"x": [xt_ref, xt], "y": [y["reference_tissue"], y["tissue"]]},
        "tissue_line": {"x0": [xt], "y0": [0.0], "x1": [xt], "y1": [y["top"]]},
        "p50": {
            "x": [frame["p50"]],
            "y": [y["p50"]],
            "x0": [frame["reference_p50"]],
            "label": [f"P50 {fmt(frame['p50'], d)}"],
        },
        "bar": {
            "x0": [xt],
            "y0": [y["tissue"]],
            "x1": [xt],
            "y1": [ya],
            "ym": [0.5 * (y["tissue"] + ya)],
            "label": [f"{fmt(frame['extracted_ml_per_l'], 0)} mL/L"],
        },
        "bridge": {"x0": [xa], "y0": [ya], "x1": [xt], "y1": [ya]},
        "readout": {
            "x": [x_right, x_right],
            "y": [0.0, 0.0],
            "dy": [58, 14],
            "text": readout_lines(frame),
        },
    }


def figure_title(frame: dict) -> str:
    return f"{frame['tag']} · {frame['heading']}" if frame["tag"] else frame["heading"]


def title_font_size(text: str) -> str:
    """A size at which ``text`` fits about 1000 px (bold sans about 0.56 em a character)."""
    lo, hi = TITLE_PX
    return f"{max(lo, min(hi, int(1000 / (0.56 * max(len(text), 1)))))}px"


def apply_frame(fig, frame: dict) -> None:
    """Title, axes, ranges and legend words of ``fig`` for ``frame`` (not its data)."""
    view = frame["view"]
    fig.title.text = figure_title(frame)
    fig.title.text_font_size = title_font_size(fig.title.text)
    fig.xaxis.axis_label = f"PO2 ({frame['unit']})"
    fig.x_range.end = frame["x_max"]
    fig.yaxis.axis_label = AXIS_LABELS[view]
    top = _y(frame)["top"]
    fig.y_range.end = top
    ticks = SATURATION_TICKS if view == "saturation" else list(range(0, int(top) + 1, 5))
    fig.yaxis[0].ticker.ticks = ticks
    # the legend is one of the figure's side panels (no walk of every model, as select does)
    legend = next(r for r in fig.below if getattr(r, "name", None) == "o2-lecture-legend")
    legend.items[LEGEND_ORDER.index("tissue_point")].label = value(tissue_label(frame))


def build_figure(sources: dict[str, ColumnDataSource], frame: dict, **kwargs):
    """The lecture plot drawn from ``sources`` (one per name in :data:`SOURCE_NAMES`)."""
    fig = _blank_figure(frame, **kwargs)
    lines = _draw_curves(fig, sources)
    marks = _draw_points(fig, sources)
    _draw_labels(fig, sources)
    _draw_readout(fig, sources["readout"])
    renderers = {
        "reference": lines["reference"],
        "arterial": lines["arterial"],
        "venous": lines["venous"],
        "arterial_point": marks["arterial"],
        "tissue_point": marks["tissue"],
        "bar": marks["bar"],
    }
    items = [
        LegendItem(
            label=LEGEND_TEXT["held" if k == "tissue_point" else k], renderers=[renderers[k]]
        )
        for k in LEGEND_ORDER
    ]
    fig.add_layout(
        Legend(
            items=items,
            ncols=3,
            location="center",
            orientation="horizontal",
            label_text_font_size="19px",
            label_text_color=INK,
            label_text_font=FONT,
            glyph_width=40,
            glyph_height=24,
            label_height=24,
            spacing=10,
            padding=2,
            margin=0,
            border_line_color=None,
            name="o2-lecture-legend",
        ),
        "below",
    )
    # The caution is part of the figure (lines under the legend), so every export carries
    # it; two lines, so that it fits a 1024 px screen.
    first, _, rest = CAUTION.partition(". ")
    for text in (f"⚠ {first}." if rest else f"⚠ {first}", rest):
        if text:
            fig.add_layout(
                Title(
                    text=text,
                    text_font_size="14px",
                    text_color="#4a4a4a",
                    text_font_style="normal",
                    text_font=FONT,
                    standoff=2,
                    padding=4,
                ),
                "below",
            )
    apply_frame(fig, frame)
    return fig


def _blank_figure(frame: dict, **kwargs):
    """Ranges, title, axes and grid in projector type; nothing drawn yet."""
    fig = figure(
        x_range=Range1d(0, frame["x_max"]),
        y_range=Range1d(0, 102),
        toolbar_location=None,
        title=figure_title(frame),
        background_fill_color=PAPER,
        border_fill_color=PAPER,
        outline_line_color=None,
        min_border_left=90,
        min_border_bottom=60,
        **kwargs,
    )
    fig.title.text_color = INK
    fig.title.text_font = FONT
    fig.yaxis.ticker = FixedTicker(ticks=SATURATION_TICKS)
    for axis in (fig.xaxis, fig.yaxis):
        axis.axis_label_text_font_size = "26px"
        axis.axis_label_text_font_style = "bold"
        axis.axis_label_text_color = INK
        axis.axis_label_text_font = FONT
        axis.major_label_text_font_size = "22px"
        axis.major_label_text_color = INK
        axis.axis_line_width = 2
        axis.major_tick_line_width = 2
        axis.axis_line_color = INK
        axis.major_tick_line_color = INK
        axis.minor_tick_line_color = None
    fig.grid.grid_line_color = "#e4e4e4"
    fig.grid.grid_line_width = 1.5
    return fig


def _draw_curves(fig, sources: dict[str, ColumnDataSource]) -> dict:
    """The reference curve, the tissue PO2 line, the venous and arterial curves."""
    c = sources["curves"]
    reference = fig.line(
        "x", "reference", source=c, color=REFERENCE, line_width=4, line_dash=[3, 7]
    )
    fig.segment(
        "x0",
        "y0",
        "x1",
        "y1",
        source=sources["tissue_line"],
        color=VENOUS,
        line_width=3,
        line_dash=[14, 8],
        alpha=0.7,
    )
    venous = fig.line("x", "venous", source=c, color=VENOUS, line_width=3, alpha=0.9)
    arterial = fig.line("x", "current", source=c, color=ARTERIAL, line_width=7)
    return {"reference": reference, "venous": venous, "arterial": arterial}


def _draw_points(fig, sources: dict[str, ColumnDataSource]) -> dict:
    """The P50 bar and diamond, the extraction bar, the tissue points (reference, case) and
    the arterial point."""
    p = sources["p50"]
    fig.segment("x0", "y", "x", "y", source=p, color=INK, line_width=3)
    fig.scatter("x", "y", source=p, marker="diamond", size=26, color=INK, line_color=PAPER)
    fig.segment(
        "x0", "y0", "x1", "y1", source=sources["bridge"], color=INK, line_width=2, line_dash=[6, 5]
    )
    bar = fig.segment("x0", "y0", "x1", "y1", source=sources["bar"], color=INK, line_width=7)
    _, tissue = (
        fig.scatter(
            "x",
            "y",
            source=sources["tissue"],
            view=CDSView(filter=IndexFilter([row])),
            marker="square",
            size=size,
            line_width=3,
            fill_color=fill,
            line_color=line,
        )
        for row, size, fill, line in ((0, 24, PAPER, REFERENCE), (1, 26, VENOUS, PAPER))
    )
    arterial = fig.scatter(
        "x",
        "y",
        source=sources["arterial"],
        marker="circle",
        size=30,
        color=ARTERIAL,
        line_color=PAPER,
        line_width=3,
    )
    return {"tissue": tissue, "arterial": arterial, "bar": bar}


def _label_set(source: ColumnDataSource, size: str, color: str, **kwargs) -> LabelSet:
    """Bold projector text from ``source``; ``kwargs`` place it."""
    return LabelSet(
        source=source,
        text_font_size=size,
        text_color=color,
        text_font_style="bold",
        text_font=value(FONT),
        **kwargs,
    )


def _draw_labels(fig, sources: dict[str, ColumnDataSource]) -> None:
    """'P50 …' below and right of the diamond (where the curve is not), the amount
    extracted left of the bar."""
    fig.add_layout(
        _label_set(
            sources["p50"],
            "22px",
            INK,
            x="x",
            y="y",
            text="label",
            x_offset=16,
            y_offset=-14,
            text_baseline="top",
            background_fill_color=PAPER,
            background_fill_alpha=0.85,
        )
    )
    fig.add_layout(
        _label_set(
            sources["bar"],
            "24px",
            INK,
            x="x0",
            y="ym",
            text="label",
            x_offset=-20,
            text_align="right",
            text_baseline="middle",
            background_fill_color=PAPER,
            background_fill_alpha=0.85,
        )
    )


def _draw_readout(fig, source: ColumnDataSource) -> None:
    """The two lines of P50 shift and O2 extracted per litre, right-aligned at the bottom."""
    fig.add_layout(
        _label_set(
            source,
            "26px",
            INK,
            x="x",
            y="y",
            text="text",
            y_offset="dy",
            text_align="right",
            text_baseline="bottom",
            background_fill_color=PAPER,
            background_fill_alpha=0.9,
        )
    )
