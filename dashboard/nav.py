"""Links between the dashboard's screens (each screen is its own page and URL path)."""

from __future__ import annotations

import panel as pn

SCREEN_TITLES: dict[str, str] = {
    "/": "Case",
    "/ascent": "Ascent planner",
    "/lecture": "Lecture",
}
"""URL path -> link text, in the order shown in every page header."""

NAV_CSS = """
.o2-nav-link { color: #ffffff; text-decoration: underline; margin-right: 1.2em; }
.o2-nav-here { color: #ffffff; font-weight: 700; margin-right: 1.2em; }
"""


def screen_links(current: str) -> pn.pane.HTML:
    """Header links to every screen; the current one is shown as plain bold text."""
    items = []
    for path, text in SCREEN_TITLES.items():
        if path == current:
            items.append(f'<span class="o2-nav-here">{text}</span>')
        else:
            items.append(f'<a class="o2-nav-link" href="{path}">{text}</a>')
    return pn.pane.HTML(
        "".join(items), css_classes=["o2-nav"], styles={"font-size": "16px"}, stylesheets=[NAV_CSS]
    )
