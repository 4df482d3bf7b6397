"""The planner page's shell: the template, its print layout and its header links.

A plain request of ``/ascent`` gets only this (``dashboard.sessions``), so it imports no more
than the template needs: the planner's own modules (and pandas, for the day table) load when
the screen itself is built.
"""

from __future__ import annotations

import panel as pn

from ..look import ACCENT
from ..nav import screen_links
from ..responsive import TEMPLATE_OPTIONS

__all__ = ["PAGE_PRINT_CSS", "PRINT_CSS", "TITLE", "page_shell"]

PRINT_CSS = """
@media print {
  body { margin: 0; max-width: none; padding: 0; font-size: 11pt; }
  h1 { font-size: 18pt; }
  h2 { break-after: avoid; page-break-after: avoid; }
  table { break-inside: auto; }
  tr, .bk-root, .bk-Figure, figure { break-inside: avoid; page-break-inside: avoid; }
  .caution { background: none; border: 1px solid #b7791f; }
  .noprint { display: none !important; }
  a { color: inherit; text-decoration: none; }
}
@page { margin: 14mm; }
"""
"""Print layout of the exported page (:mod:`dashboard.ascent.export`) and, within
:data:`PAGE_PRINT_CSS`, of the live planner: no margins to waste, headings kept with what
follows, rows and figures whole."""


TITLE = "o2transit · ascent planner"

PAGE_PRINT_CSS = (
    PRINT_CSS
    + """
@media print {
  #header, #sidebar, .pn-busy-container, .o2-nav { display: none !important; }
  #main, #content, .main { margin: 0 !important; padding: 0 !important; width: 100% !important;
    max-width: none !important; }
}
"""
)
"""The live planner on paper: the comparison without the sidebar, header and controls."""


def page_shell() -> pn.template.BootstrapTemplate:
    """The page without its content: the template (with its print style and the table
    widget's script) and its header links. A plain request gets only this; the content
    follows when the page connects (``dashboard.app``)."""
    pn.extension("tabulator")
    template = pn.template.BootstrapTemplate(
        title=TITLE,
        header_background=ACCENT,
        sidebar_width=470,
        collapsed_sidebar=False,
        raw_css=[PAGE_PRINT_CSS],
        **TEMPLATE_OPTIONS,
    )
    template.header.append(screen_links("/ascent"))
    return template
