"""The case screen (``/``): the model inputs and the measured-gas tab, one case state per session."""

from __future__ import annotations

import panel as pn

from ..bedside.state import BedsideState
from ..bedside.views import BedsideScreen
from ..look import ACCENT, caution_pane
from ..nav import screen_links
from ..responsive import TEMPLATE_OPTIONS, lazy_tab, quicken
from ..urlstate import bind_url
from .figures import CascadePlot, CurvePlot
from .state import CaseState
from .views import CaseControls, InputPanel, NumbersTable

TITLE = "o2transit · oxygen path"


def page_shell() -> pn.template.BootstrapTemplate:
    """The page without its content: the template and its header links.

    A plain request gets only this; the content follows when the page connects
    (``dashboard.app``), built by :func:`create_app` into the same kind of template.
    """
    template = pn.template.BootstrapTemplate(
        title=TITLE,
        header_background=ACCENT,
        sidebar_width=340,
        collapsed_sidebar=False,
        **TEMPLATE_OPTIONS,
    )
    template.header.append(screen_links("/"))
    return template


def create_app(state: CaseState | None = None, scenario_dir=None) -> pn.template.BootstrapTemplate:
    """Page for one session: inputs in the sidebar, curves, cascade and numbers in the main area."""
    pn.extension()
    state = CaseState() if state is None else state
    template = page_shell()
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
    # Its views are built when the tab is first opened; its curve waits while it is hidden.
    bedside = BedsideState(state)
    tabs = pn.Tabs(
        ("Model inputs", model_tab),
        ("Measured gas", pn.Column(sizing_mode="stretch_width", margin=0, min_height=400)),
        css_classes=["o2-case-tabs"],
        sizing_mode="stretch_width",
    )
    lazy_tab(tabs, 1, lambda gate: BedsideScreen(bedside, gate=gate))
    template.main.append(
        pn.Column(
            caution_pane(),
            CaseControls(state, scenario_dir=scenario_dir),
            tabs,
            sizing_mode="stretch_width",
        )
    )
    quicken(template)  # browser changes at once, one message per change
    return template
