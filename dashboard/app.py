"""Serve the o2transit dashboard: the screens by URL path, each a factory called once per session.

Each screen lives in its own subpackage (``case``, ``bedside``, ``ascent``, ``lecture``), with its
state and its views; ``look`` holds the palette and caution, ``widgets`` the shared figure frames,
``urlstate`` the page address, ``nav`` the header links and ``offline`` the exported pages.
"""

from __future__ import annotations

import ipaddress

import panel as pn

from .case.app import TITLE, create_app

__all__ = ["SCREENS", "TITLE", "create_app", "serve"]


def create_ascent_page() -> pn.template.BootstrapTemplate:
    """The planner page; its modules (and pandas, via the table widget) load on first visit."""
    from .ascent.app import create_ascent_app

    return create_ascent_app()


def create_lecture_page() -> pn.Column:
    """The lecture page; its modules load on first visit."""
    from .lecture.app import create_lecture_app

    return create_lecture_app()


SCREENS: dict[str, object] = {
    "/": create_app,
    "/ascent": create_ascent_page,
    "/lecture": create_lecture_page,
}
"""URL path -> session factory; the link text of each path is in ``dashboard.nav.SCREEN_TITLES``."""


def _is_loopback(address: str) -> bool:
    if address == "localhost":
        return True
    try:
        return ipaddress.ip_address(address).is_loopback
    except ValueError:
        return False


def serve(port: int = 5006, address: str = "127.0.0.1", show: bool = True, **kwargs):
    """Serve the dashboard; blocks unless ``threaded=True`` is passed (then returns the server)."""
    url = f"http://{address}:{port}/"
    print(f"o2transit dashboard at {url}", flush=True)
    if not _is_loopback(address):
        print(
            f"WARNING: listening on {address}: the page is reachable from the network, "
            "not only from this computer.",
            flush=True,
        )
    return pn.serve(
        dict(SCREENS),
        address=address,
        port=port,
        show=show,
        title=TITLE,
        websocket_origin=[f"{address}:{port}", f"localhost:{port}"],
        **kwargs,
    )
