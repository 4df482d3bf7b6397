"""What the panels of the bedside screen share: styles, table CSS, headings, message panes.

No panel is built here; :class:`BedsidePanel` is the frame each of them fills in.
"""

from __future__ import annotations

import html

import panel as pn

from ..look import ACCENT, ERROR_STYLE, TABLE_CSS
from ..responsive import held
from .state import BedsideState

OK_STYLE = {"color": "#1f4d3a", "font-size": "14px", "padding": "2px 4px"}
NOTE_STYLE = {"color": "#46545c", "font-size": "13px"}
SECTION_CSS = f"""
h3.o2-bs-h {{ color: {ACCENT}; font-size: 17px; margin: 6px 0 2px 0; }}
"""
BEDSIDE_TABLE_CSS = (
    TABLE_CSS
    + """
table.o2t div.note { font-size: 12px; color: #7a1414; }
table.o2t div.src, div.src { font-size: 11px; color: #6b767e; }
table.o2t { font-size: 14px; }
table.o2t td { padding: 3px 6px; }
table.o2t td.val { font-size: 15px; white-space: nowrap; }
table.o2t td.cat { font-size: 13px; font-weight: 600; }
table.o2t tr.grp td { background: #eef3f2; font-weight: 700; font-size: 12px;
  text-transform: uppercase; letter-spacing: .04em; color: #0f5257; padding-top: 6px; }
table.o2t td:last-child { white-space: nowrap; }
table.o2t tr.best td { background: #f1f8f1; }
table.o2-bs-dt td:first-child { width: 52%; }
table.o2-bs-lv th, table.o2-bs-res th { text-transform: none; letter-spacing: 0; }
table.o2-bs-lv td.lever { min-width: 230px; font-weight: 600; }
table.o2-bs-lv td.range { font-size: 12px; white-space: normal; }
table.o2-bs-res td.range { font-size: 11px; }
table.o2t td.range { font-size: 12px; }
table.o2t tr.ok td.val { color: #1f4d3a; }
table.o2t tr.off td.val { color: #9a1b1b; }
"""
)


def heading(text: str) -> pn.pane.HTML:
    return pn.pane.HTML(
        f"<h3 class='o2-bs-h'>{html.escape(text)}</h3>",
        stylesheets=[SECTION_CSS],
        margin=(4, 10, 0, 10),
        sizing_mode="stretch_width",
    )


def action_button(label: str, css: str, action, **params) -> pn.widgets.Button:
    """A button (CSS class ``css``) that runs ``action()``.

    Clicks arrive outside the document lock and the actions edit figures and panes, so
    ``action`` runs on the next tick with the lock, all it changes sent in one message
    (:func:`dashboard.responsive.held`).
    """
    button = pn.widgets.Button(label=label, css_classes=[css], **params)
    run = held(action)
    button.on_click(lambda _event: run())
    return button


def table_pane(css: str) -> pn.pane.HTML:
    """An HTML pane for a table of the screen, with the shared table stylesheet."""
    return pn.pane.HTML(
        "", css_classes=[css], sizing_mode="stretch_width", stylesheets=[BEDSIDE_TABLE_CSS]
    )


def message_pane(css: str) -> pn.pane.HTML:
    """An outcome line, hidden while empty."""
    return pn.pane.HTML(
        "", css_classes=[css], visible=False, sizing_mode="stretch_width", styles=OK_STYLE
    )


def show(pane: pn.pane.HTML, text: str, error: bool | None = None) -> None:
    """Put ``text`` in a message pane (hidden if empty); styled as a refusal when ``error``,
    as an outcome when not, and left as it was when None."""
    pane.object = html.escape(text)
    if error is not None:
        pane.styles = ERROR_STYLE if error else OK_STYLE
    pane.visible = bool(text)


class BedsidePanel(pn.viewable.Viewer):
    """One panel of the bedside screen over the session's state; it builds ``_layout``."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state

    def __panel__(self):
        return self._layout
