"""The ascent planner screen (``/ascent``): one independent workspace per browser session.

The address carries the compared schedules: unedited examples by name
(``/ascent?schedules=fast-to-5300m,slow-to-5300m``), edited, copied or uploaded ones and any
readings in ``plan`` (:mod:`dashboard.ascent.sharing`), and the pressure unit in
``pressure_unit``; it is rewritten shortly after the last of a burst of changes and
restores the comparison on load.
"""

from __future__ import annotations

import panel as pn

from ..look import ACCENT, caution_pane
from ..responsive import Quiet, quicken
from ..urlstate import read_query, show_url_messages, url_message_pane, write_query
from .comparison_views import (
    CaseLink,
    ComparisonPlots,
    ExportButtons,
    FlagList,
    SharePanel,
    SummaryTable,
    Thresholds,
)
from .editor_view import ScheduleEditor
from .readings_view import ReadingsPanel
from .shell import page_shell
from .state import PLAN_KEY, QUERY_KEY, UNIT_KEY, AscentWorkspace
from .views import ScheduleLibrary, StatusLine, UnitToggle


def _heading(text: str) -> pn.pane.HTML:
    return pn.pane.HTML(
        f"<h3 style='margin:10px 0 2px 0;color:{ACCENT};font-size:17px'>{text}</h3>",
        sizing_mode="stretch_width",
    )


def create_ascent_app(ws: AscentWorkspace | None = None) -> pn.template.BootstrapTemplate:
    """Page for one session: schedules, the day editor and the readings in the sidebar, the
    comparison in the main area."""
    pn.extension("tabulator")
    ws = AscentWorkspace() if ws is None else ws
    notice = url_message_pane()
    query = read_query()
    if QUERY_KEY in query or PLAN_KEY in query:
        messages = ws.restore_address(query)
    else:
        # A first visit opens on the examples, so the page shows a comparison at once.
        messages = ws.restore_address(query)  # neither key: the unit and unknown keys
        ws.load_examples()
    show_url_messages(notice, messages)

    def sync_address(*_events) -> None:
        # "?schedules=" (empty) is kept, so an empty workspace reloads empty.
        write_query(ws.address_query(), [PLAN_KEY, UNIT_KEY, QUERY_KEY])

    # written once, shortly after the last change of a burst
    ws.param.watch(Quiet(sync_address), ["compared", "schedules", "readings", "pressure_unit"])
    sync_address()

    template = page_shell()
    template.sidebar.append(
        pn.Column(
            _heading("Schedules"),
            ScheduleLibrary(ws),
            _heading("Edit a schedule"),
            ScheduleEditor(ws),
            _heading("Readings logged on the way"),
            ReadingsPanel(ws),
            sizing_mode="stretch_width",
        )
    )
    template.main.append(
        pn.Column(
            notice,
            caution_pane(),
            StatusLine(ws),
            UnitToggle(ws),
            ComparisonPlots(ws),
            CaseLink(ws),
            _heading("Side by side"),
            Thresholds(ws),
            SummaryTable(ws),
            _heading("Days breaking the ascent-rate guidance"),
            pn.pane.HTML(
                "Wilderness Medical Society consensus guidelines (Luks et al. 2019, 2024), in "
                "our words; night values are at rest, awake, at the sleeping altitude.",
                styles={"font-size": "13px", "color": "#46545c"},
            ),
            FlagList(ws),
            _heading("Share the comparison"),
            SharePanel(ws),
            _heading("Export the comparison"),
            ExportButtons(ws),
            sizing_mode="stretch_width",
        )
    )
    quicken(template)  # browser changes at once, one message per change
    return template
