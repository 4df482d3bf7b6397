"""Build and serve the o2transit dashboard (one independent case state per browser session)."""

from __future__ import annotations

import ipaddress

import panel as pn

from .bedside_state import BedsideState
from .bedside_views import BedsideScreen
from .nav import screen_links
from .state import CaseState
from .urlstate import bind_url
from .views import (
    ACCENT,
    CascadePlot,
    CaseControls,
    CurvePlot,
    InputPanel,
    NumbersTable,
    caution_pane,
)

TITLE = "o2transit · oxygen path"


def create_app(state: CaseState | None = None, scenario_dir=None) -> pn.template.BootstrapTemplate:
    """Page for one session: inputs in the sidebar, curves, cascade and numbers in the main area."""
    pn.extension()
    state = CaseState() if state is None else state
    template = pn.template.BootstrapTemplate(
        title=TITLE,
        header_background=ACCENT,
        sidebar_width=340,
        collapsed_sidebar=False,
    )
    template.header.append(screen_links("/"))
    bind_url(state, template)  # case from ?key=value on load; address follows every change
    template.sidebar.append(InputPanel(state))
    model_tab = pn.Column(
        pn.Row(
            pn.Column(CurvePlot(state), sizing_mode="stretch_width", min_width=420),
            pn.Column(NumbersTable(state), sizing_mode="stretch_width", min_width=420),
            sizing_mode="stretch_width",
        ),
        CascadePlot(state),
        sizing_mode="stretch_width",
    )
    # Both tabs share the one CaseState; the measured-gas tab's case folder follows
    # $O2TRANSIT_CASE_DIR, else the user's data folder (model.casebook.default_case_dir).
    measured_tab = BedsideScreen(BedsideState(state))
    tabs = pn.Tabs(
        ("Model inputs", model_tab),
        ("Measured gas", measured_tab),
        css_classes=["o2-case-tabs"],
        sizing_mode="stretch_width",
    )
    template.main.append(
        pn.Column(
            caution_pane(),
            CaseControls(state, scenario_dir=scenario_dir),
            tabs,
            sizing_mode="stretch_width",
        )
    )
    return template


def create_ascent_page() -> pn.template.BootstrapTemplate:
    """The planner page; its modules (and pandas, via the table widget) load on first visit."""
    from .ascent_app import create_ascent_app

    return create_ascent_app()


def create_lecture_page() -> pn.Column:
    """The lecture page; its modules load on first visit."""
    from .lecture_app import create_lecture_app

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
