"""Thin Panel views over :class:`dashboard.ascent.state.AscentWorkspace`: what they share,
the status line and the schedule list of the sidebar.

The day-table editor is in :mod:`dashboard.ascent.editor_view`, the comparison's panels (plots,
case link, summary, flags, thresholds, exports) in :mod:`dashboard.ascent.comparison_views`.
Every user action is handed to the state by :func:`later`: a browser change inside its own
one message (the page is quickened, :mod:`dashboard.responsive`), a click on the next tick
under the document lock, as the case screen's buttons are; a file is read on the next tick,
once its name has arrived (:func:`on_tick`). Views format; the state decides. Each element
carries a stable ``o2-asc-*`` CSS class for tests.
"""

from __future__ import annotations

import html
from functools import partial

import panel as pn

from ..responsive import held, serving, soon
from ..widgets import Upload
from .state import MAX_COMPARED, AscentWorkspace

PRINT_HIDDEN = "@media print { :host { display: none !important; } }"
"""Stylesheet for a control that has no place on paper (buttons, file pickers, entry)."""

MESSAGE_STYLE = {
    "background": "#fdecea",
    "color": "#7a1414",
    "padding": "4px 10px",
    "border-radius": "4px",
    "font-size": "14px",
}


def later(fn, *args) -> None:
    """Run ``fn(*args)`` within the user action under way (a browser change), else on the next
    tick with the document lock (a click); at once without a server (:func:`responsive.soon`)."""
    soon(fn, *args)


def on_tick(fn, *args) -> None:
    """Run ``fn(*args)`` on the next tick, as one action (an upload: its file name may arrive
    after its content); at once without a server."""
    if serving():
        held(partial(fn, *args))()
    else:
        fn(*args)


def schedule_options(ws: AscentWorkspace) -> dict[str, str]:
    """Schedule name -> key for pickers; a repeated name gets its key beside it."""
    out: dict[str, str] = {}
    for key, profile in ws.schedules.items():
        label = profile.name if profile.name not in out else f"{profile.name} ({key})"
        out[label] = key
    return out


class StatusLine(pn.viewable.Viewer):
    """What the last action did, or why it was refused."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._status = pn.pane.HTML(
            "",
            css_classes=["o2-asc-status"],
            sizing_mode="stretch_width",
            styles={"font-size": "14px", "color": "#46545c"},
            margin=(0, 10),
        )
        self._error = pn.pane.HTML(
            "",
            css_classes=["o2-asc-error"],
            visible=False,
            sizing_mode="stretch_width",
            styles=MESSAGE_STYLE,
        )
        ws.param.watch(self._update, ["status_message", "error_message"])
        self._update()
        self._layout = pn.Column(self._error, self._status, sizing_mode="stretch_width")

    def _update(self, *_events) -> None:
        ws = self._ws
        self._error.object = f"Not applied: {html.escape(ws.error_message)}"
        self._error.visible = bool(ws.error_message)
        self._status.object = html.escape(ws.status_message)

    def __panel__(self):
        return self._layout


class ScheduleLibrary(pn.viewable.Viewer):
    """Open schedules (the examples or a file) and choose which to compare."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._examples = pn.widgets.Button(
            label="Load the example schedules",
            color="primary",
            css_classes=["o2-asc-examples"],
            sizing_mode="stretch_width",
        )
        self._examples.on_click(lambda _e: later(ws.load_examples))
        self._upload = Upload(
            ws.open_text,
            kind="toml",
            accept=".toml",
            what="Schedule file (.toml)",
            default_name="uploaded.toml",
            css_classes=["o2-asc-open"],
            sizing_mode="stretch_width",
        )
        self._compare = pn.widgets.CheckBoxGroup(
            label="Compare",
            options={},
            value=[],
            inline=False,
            css_classes=["o2-asc-compare"],
        )
        self._compare.param.watch(self._chosen, "value")
        self._syncing = False
        ws.param.watch(self._refresh, ["schedules", "compared"])
        self._refresh()
        caption = pn.pane.HTML(
            f"<b>Compare</b> (tick 2–{MAX_COMPARED})",
            margin=(6, 10, 0, 10),
            styles={"font-size": "14px"},
        )
        self._layout = pn.Column(
            self._examples,
            pn.pane.HTML(
                "Open a schedule file (.toml, schema in scenarios/ascents/README.md):",
                margin=(6, 10, 0, 10),
                styles={"font-size": "13px"},
            ),
            self._upload,
            caption,
            self._compare,
            sizing_mode="stretch_width",
        )

    def _chosen(self, event) -> None:
        if self._syncing:
            return
        later(self._apply_choice, list(event.new))

    def _apply_choice(self, keys) -> None:
        if not self._ws.set_compared(keys):
            self._refresh()

    def _refresh(self, *_events) -> None:
        self._syncing = True
        try:
            self._compare.options = schedule_options(self._ws)
            self._compare.value = list(self._ws.compared)
        finally:
            self._syncing = False

    def __panel__(self):
        return self._layout


class UnitToggle(pn.viewable.Viewer):
    """The pressure unit of the planner (mmHg or kPa), as ``pressure_unit`` in the address,
    and which pressure model gave the numbers."""

    def __init__(self, ws: AscentWorkspace, **params):
        super().__init__(**params)
        self._ws = ws
        self._toggle = pn.widgets.RadioButtonGroup(
            options=list(ws.param.pressure_unit.objects),
            value=ws.pressure_unit,
            css_classes=["o2-asc-unit"],
            stylesheets=[PRINT_HIDDEN],
            width=150,
        )
        self._toggle.param.watch(self._chosen, "value")
        self._model = pn.pane.HTML(
            "",
            css_classes=["o2-asc-pressure-model"],
            sizing_mode="stretch_width",
            styles={"font-size": "13px", "color": "#46545c"},
        )
        ws.param.watch(self._refresh, ["pressure_unit", "compared", "schedules"])
        self._refresh()
        self._layout = pn.Row(
            pn.pane.HTML(
                "Pressures in", styles={"font-size": "14px"}, margin=(10, 4, 0, 10), width=90
            ),
            self._toggle,
            self._model,
            sizing_mode="stretch_width",
        )

    def _chosen(self, event) -> None:
        if event.new != self._ws.pressure_unit:
            later(self._ws.set_pressure_unit, event.new)

    def _refresh(self, *_events) -> None:
        from .comparison import PRESSURE_MODEL_NAMES

        ws = self._ws
        self._toggle.value = ws.pressure_unit
        models = {
            PRESSURE_MODEL_NAMES.get(
                ws.schedules[k].baseline.pressure_model, ws.schedules[k].baseline.pressure_model
            )
            for k in ws.compared
            if k in ws.schedules
        }
        if not models:
            self._model.object = ""
        elif len(models) == 1:
            self._model.object = (
                f"Barometric pressure from the {html.escape(models.pop())}, for every "
                "compared schedule."
            )
        else:  # schedules that give their own pressures beside ones that do not
            self._model.object = (
                "Barometric pressure from the "
                + html.escape(" and the ".join(sorted(models)))
                + ", as each schedule sets it."
            )

    def __panel__(self):
        return self._layout
