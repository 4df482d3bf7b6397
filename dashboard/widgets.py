"""Widgets and figure frames shared by more than one screen."""

from __future__ import annotations

from bokeh.models import Range1d
from bokeh.plotting import figure

from .look import INK


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
