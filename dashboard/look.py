"""The dashboard's look, in one place: palette, table CSS and the caution every page shows.

Colours are our own: oxygenated blood an ember orange, deoxygenated a slate violet, the
reference state graphite. Every screen imports them from here.
"""

from __future__ import annotations

import html

import panel as pn

from ..model.caution import CAUTION

__all__ = [
    "ACCENT",
    "ARTERIAL",
    "CAUTION",
    "ERROR_STYLE",
    "INK",
    "REFERENCE",
    "TABLE_CSS",
    "VENOUS",
    "caution_pane",
]

# Our palette: oxygenated ember, deoxygenated slate-violet, graphite for reference.
ARTERIAL = "#c2410c"
VENOUS = "#4c3f91"
REFERENCE = "#8a8f98"
INK = "#1f2a30"
ACCENT = "#0f5257"

ERROR_STYLE = {
    "background": "#fdecea",
    "color": "#7a1414",
    "padding": "4px 10px",
    "border-radius": "4px",
    "font-size": "14px",
}
"""How every screen shows a refusal (a bad entry, upload or address value): one style."""

TABLE_CSS = f"""
table.o2t {{ border-collapse: collapse; font-family: 'Liberation Sans', Arial, sans-serif;
  font-size: 15px; color: {INK}; width: 100%; }}
table.o2t th {{ text-align: left; font-weight: 600; border-bottom: 2px solid {ACCENT};
  padding: 4px 8px; font-size: 13px; text-transform: uppercase; letter-spacing: .04em; }}
table.o2t td {{ padding: 4px 8px; border-bottom: 1px solid #e3e6e8; }}
table.o2t td.val {{ font-variant-numeric: tabular-nums; font-weight: 700; font-size: 17px;
  text-align: right; }}
table.o2t td.delta {{ font-variant-numeric: tabular-nums; text-align: right; color: #46545c; }}
table.o2t td.range {{ color: #5b6770; font-size: 13px; }}
table.o2t tr.flag-high td.val, table.o2t tr.flag-low td.val {{ color: #9a1b1b; }}
table.o2t span.flag {{ font-weight: 700; color: #9a1b1b; white-space: nowrap; }}
table.o2t tr.flag-low span.flag {{ color: #1b4f9a; }}
table.o2t tr.flag-low td.val {{ color: #1b4f9a; }}
"""


def caution_pane() -> pn.pane.HTML:
    """The caution shown on every page."""
    return pn.pane.HTML(
        f"<div>⚠ {html.escape(CAUTION)}</div>",
        css_classes=["o2-caution"],
        sizing_mode="stretch_width",
        styles={
            "background": "#fff6dc",
            "border-left": "5px solid #b7791f",
            "padding": "6px 12px",
            "font-size": "14px",
            "color": INK,
        },
    )
