"""The ascent planner screen (``/ascent``): one independent workspace per browser session.

The address carries the compared schedules (``/ascent?schedules=fast-to-5300m,slow-to-5300m``)
and restores them on load.
"""

from __future__ import annotations

import panel as pn

from ..look import ACCENT, caution_pane
from ..nav import screen_links
from ..urlstate import read_query, show_url_messages, url_message_pane, write_query
from .state import QUERY_KEY, AscentWorkspace
from .views import (
    CaseLink,
    ComparisonPlots,
    ExportButtons,
    FlagList,
    ScheduleEditor,
    ScheduleLibrary,
    StatusLine,
    SummaryTable,
    Thresholds,
)

TITLE = "o2transit · ascent planner"


def _heading(text: str) -> pn.pane.HTML:
    return pn.pane.HTML(
        f"<h3 style='margin:10px 0 2px 0;color:{ACCENT};font-size:17px'>{text}</h3>",
        sizing_mode="stretch_width",
    )


def create_ascent_app(ws: AscentWorkspace | None = None) -> pn.template.BootstrapTemplate:
    """Page for one session: schedules and the day editor in the sidebar, the comparison in
    the main area."""
    pn.extension("tabulator")
    ws = AscentWorkspace() if ws is None else ws
    notice = url_message_pane()
    query = read_query()
    if QUERY_KEY in query:
        messages = ws.restore_selection(query[QUERY_KEY])
    else:
        # A first visit opens on the examples, so the page shows a comparison at once.
        ws.load_examples()
        messages = []
    show_url_messages(notice, messages)

    def sync_address(*_events) -> None:
        # "?schedules=" (empty) is kept, so an empty workspace reloads empty.
        write_query({QUERY_KEY: ws.selection_query()}, [QUERY_KEY])

    ws.param.watch(sync_address, ["compared"])
    sync_address()

    template = pn.template.BootstrapTemplate(
        title=TITLE, header_background=ACCENT, sidebar_width=470, collapsed_sidebar=False
    )
    template.header.append(screen_links("/ascent"))
    template.sidebar.append(
        pn.Column(
            _heading("Schedules"),
            ScheduleLibrary(ws),
            _heading("Edit a schedule"),
            ScheduleEditor(ws),
            sizing_mode="stretch_width",
        )
    )
    template.main.append(
        pn.Column(
            notice,
            caution_pane(),
            StatusLine(ws),
            ComparisonPlots(ws),
            CaseLink(ws),
            _heading("Side by side"),
            Thresholds(ws),
            SummaryTable(ws),
            _heading("Days breaking the ascent-rate guidance"),
            pn.pane.HTML(
                "Wilderness Medical Society consensus guidelines (Luks et al. 2019, 2024), in "
                "our words; night values are at rest at the sleeping altitude.",
                styles={"font-size": "13px", "color": "#46545c"},
            ),
            FlagList(ws),
            _heading("Export the comparison"),
            ExportButtons(ws),
            sizing_mode="stretch_width",
        )
    )
    return template
