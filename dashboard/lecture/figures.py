"""The lecture plot: its palette, the column data of a frame, and the figure drawn from it.

Built for a projector: large type, thick lines, white ground and near-black ink. The two
series that matter differ in colour *and* in line or marker (the reference is a thin grey
dotted line, the case a thick solid vermilion line; the arterial point a blue circle, the
tissue point a vermilion square), so they stay apart for colour-blind viewers and in
greyscale. The figure is drawn once from one ``ColumnDataSource`` per name in
:data:`SOURCE_NAMES`; a new frame only replaces their data (:func:`frame_data`).
"""

from __future__ import annotations

from bokeh.core.properties import value
from bokeh.models import (
    CDSView,
    ColumnDataSource,
    IndexFilter,
    LabelSet,
    Legend,
    LegendItem,
    Range1d,
    Title,
)
from bokeh.plotting import figure

from ..case.formatting import fmt
from ..look import CAUTION

INK = "#111111"
PAPER = "#ffffff"
CASE = "#c2410c"  # vermilion: the case's curve and its tissue point
REFERENCE = "#8d8d8d"  # mid grey, dotted, thinner: the standard curve
POINT = "#1d4e89"  # deep blue: the arterial point and the tissue PO2 line
FONT = "'Liberation Sans', Arial, sans-serif"

SOURCE_NAMES = ("curves", "arterial", "tissue", "tissue_line", "p50", "readout")


def frame_data(frame: dict) -> dict[str, dict]:
    """Column data of each plot source from a state frame (formatting only)."""
    unit, d = frame["unit"], frame["digits"] + 1
    xt, yt, yt_ref = frame["tissue_po2"], frame["tissue_so2"], frame["reference_tissue_so2"]
    x_right = 0.975 * frame["x_max"]
    readout = [
        (
            f"P50 {fmt(frame['p50'], d)} {unit}:  {fmt(frame['p50_shift'], d, True)} {unit}"
            "  vs reference"
        ),
        (
            f"O2 unloaded at {fmt(xt, d - 1)} {unit}:  "
            f"{fmt(frame['unloaded_ml_per_l'], 0)} mL/L,  "
            f"{fmt(frame['unloaded_change_ml_per_l'], 1, True)} vs reference"
        ),
    ]
    return {
        "curves": {
            "x": frame["x"],
            "reference": frame["reference"],
            "current": frame["current"],
        },
        "arterial": {"x": [frame["loading"][0]], "y": [frame["loading"][1]]},
        "tissue": {"x": [xt, xt], "y": [yt_ref, yt]},
        "tissue_line": {
            "x0": [xt],
            "y0": [0.0],
            "x1": [xt],
            "y1": [100.0],
            "label": [f"tissue PO2 {fmt(xt, d - 1)}"],
        },
        "p50": {
            "x": [frame["p50"]],
            "y": [50.0],
            "x0": [frame["reference_p50"]],
            "label": [f"P50 {fmt(frame['p50'], d)}"],
        },
        "readout": {"x": [x_right, x_right], "y": [0.0, 0.0], "dy": [58, 14], "text": readout},
    }


def figure_title(frame: dict) -> str:
    return f"{frame['tag']} · {frame['heading']}" if frame["tag"] else frame["heading"]


def build_figure(sources: dict[str, ColumnDataSource], frame: dict, **kwargs):
    """The lecture plot drawn from ``sources`` (one per name in :data:`SOURCE_NAMES`)."""
    fig = _blank_figure(frame, **kwargs)
    reference_line, case_line = _draw_curves(fig, sources)
    tissue_mark, arterial_mark = _draw_points(fig, sources)
    _draw_labels(fig, sources)
    _draw_readout(fig, sources["readout"])
    fig.add_layout(
        Legend(
            items=[
                LegendItem(label="standard (reference)", renderers=[reference_line]),
                LegendItem(label="this case", renderers=[case_line]),
                LegendItem(label="arterial point", renderers=[arterial_mark]),
                LegendItem(label="at the tissue PO2", renderers=[tissue_mark]),
            ],
            location="center_right",
            label_text_font_size="24px",
            label_text_color=INK,
            label_text_font=FONT,
            glyph_width=56,
            glyph_height=30,
            background_fill_alpha=0.9,
            border_line_color=None,
        )
    )
    # The caution is part of the figure (a line under the axis), so every export carries it.
    fig.add_layout(
        Title(
            text=f"⚠ {CAUTION}",
            text_font_size="15px",
            text_color="#555555",
            text_font_style="normal",
            text_font=FONT,
        ),
        "below",
    )
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
        min_border_bottom=80,
        **kwargs,
    )
    fig.title.text_font_size = "40px"
    fig.title.text_color = INK
    fig.title.text_font = FONT
    fig.xaxis.axis_label = f"PO2 ({frame['unit']})"
    fig.yaxis.axis_label = "SO2 (%)"
    for axis in (fig.xaxis, fig.yaxis):
        axis.axis_label_text_font_size = "28px"
        axis.axis_label_text_font_style = "bold"
        axis.axis_label_text_color = INK
        axis.axis_label_text_font = FONT
        axis.major_label_text_font_size = "24px"
        axis.major_label_text_color = INK
        axis.axis_line_width = 2
        axis.major_tick_line_width = 2
        axis.axis_line_color = INK
        axis.major_tick_line_color = INK
        axis.minor_tick_line_color = None
    fig.grid.grid_line_color = "#e4e4e4"
    fig.grid.grid_line_width = 1.5
    fig.yaxis.ticker = [0, 25, 50, 75, 100]
    return fig


def _draw_curves(fig, sources: dict[str, ColumnDataSource]):
    """The reference curve, the tissue PO2 line and the case's curve; (reference, case)."""
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
        color=POINT,
        line_width=3,
        line_dash=[14, 8],
        alpha=0.8,
    )
    case = fig.line("x", "current", source=c, color=CASE, line_width=7)
    return reference, case


def _draw_points(fig, sources: dict[str, ColumnDataSource]):
    """The P50 bar and diamond, the tissue points (reference, case) and the arterial point;
    (the case's tissue point, the arterial point)."""
    p = sources["p50"]
    fig.segment("x0", "y", "x", "y", source=p, color=INK, line_width=3)
    fig.scatter("x", "y", source=p, marker="diamond", size=26, color=INK, line_color=PAPER)
    # Row 0 of the tissue source is the reference's point, row 1 the case's.
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
        for row, size, fill, line in ((0, 24, PAPER, REFERENCE), (1, 26, CASE, PAPER))
    )
    arterial = fig.scatter(
        "x",
        "y",
        source=sources["arterial"],
        marker="circle",
        size=28,
        color=POINT,
        line_color=PAPER,
        line_width=3,
    )
    return tissue, arterial


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
    """'P50 …' beside the diamond, 'tissue PO2 …' at the top of its line."""
    fig.add_layout(
        _label_set(
            sources["p50"], "24px", INK, x="x", y="y", text="label", x_offset=18, y_offset=-34
        )
    )
    fig.add_layout(
        _label_set(
            sources["tissue_line"],
            "22px",
            POINT,
            x="x1",
            y="y1",
            text="label",
            x_offset=8,
            y_offset=-2,
            text_baseline="top",
            background_fill_color=PAPER,
            background_fill_alpha=0.85,
        )
    )


def _draw_readout(fig, source: ColumnDataSource) -> None:
    """The two lines of P50 shift and unloading, right-aligned at the bottom."""
    fig.add_layout(
        _label_set(
            source,
            "28px",
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
