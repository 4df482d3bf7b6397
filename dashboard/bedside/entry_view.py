"""The measured-values form of the bedside screen (watches ``state.entry``)."""

from __future__ import annotations

import html

import panel as pn

from .entry import FORM_GROUPS, required_keys
from .panes import NOTE_STYLE, BedsidePanel, action_button, heading, message_pane, show
from .state import BedsideState

SOURCE_PICKERS = (
    ("altitude_m", "pressure_source", "o2-bs-pressure-source"),
    ("cardiac_output_l_min", "flow_source", "o2-bs-flow-source"),
)
"""(field the picker stands above, parameter of the entry, CSS class) of the two pickers
that choose which of a pair of fields is typed."""


class MeasuredEntry(BedsidePanel):
    """Typed measured values, grouped as on a gas report; Calculate checks all at once."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        entry = self._entry = state.entry
        self._required = frozenset(required_keys())
        self._inputs: dict[str, pn.widgets.FloatInput] = {}
        self._messages: dict[str, pn.pane.HTML] = {}
        self._cells: dict[str, pn.Column] = {}
        self._syncing = False
        cards = []
        for title, keys in FORM_GROUPS:
            cells = []
            for key in keys:
                cells.append(self._cell(key))
            extra = [
                pn.widgets.RadioButtonGroup.from_param(
                    entry.param[name], css_classes=[css], sizing_mode="stretch_width"
                )
                for first, name, css in SOURCE_PICKERS
                if first in keys
            ]
            cards.append(
                pn.Card(
                    *extra,
                    pn.GridBox(*cells, ncols=2, sizing_mode="stretch_width"),
                    title=title,
                    collapsed=False,
                    sizing_mode="stretch_width",
                    header_background="#e6efee",
                    margin=(3, 2),
                )
            )
        self._calculate = action_button(
            "Calculate", "o2-bs-calculate", entry.calculate, color="primary", width=130
        )
        self._example = action_button(
            "Fill invented example", "o2-bs-example", entry.fill_example, width=170
        )
        self._clear = action_button("Clear", "o2-bs-clear", entry.clear_entry, width=80)
        self._status = message_pane("o2-bs-entry-status")
        self._layout = pn.Column(
            heading("1 · Measured values"),
            pn.pane.HTML(
                "Lactate is shown, not modelled. Leave optional fields empty. FiO2 and Hb "
                "here are the patient's measurement; the Model inputs sidebar holds the model "
                "case, which <b>Use fitted case</b> fills from this gas.",
                styles=NOTE_STYLE,
                margin=(0, 10),
            ),
            *cards,
            pn.Row(self._calculate, self._example, self._clear),
            self._status,
            css_classes=["o2-bs-entry"],
            sizing_mode="stretch_width",
        )
        entry.param.watch(self._refresh_values, ["draft_version"])
        state.case.param.watch(self._refresh_values, ["pressure_unit", "hb_unit"])
        entry.param.watch(self._visibility, ["pressure_source", "flow_source"])
        entry.param.watch(self._errors, ["field_errors", "entry_message"])
        self._visibility()

    def _cell(self, key: str) -> pn.Column:
        widget = pn.widgets.FloatInput(
            label=self._state.display_label(key),
            value=self._entry.draft_display(key),
            placeholder="required" if key in self._required else "optional",
            css_classes=["o2-bs-in", f"o2-bs-in-{key}"],
            sizing_mode="stretch_width",
            margin=(2, 6),
        )
        msg = pn.pane.HTML(
            "",
            visible=False,
            css_classes=["o2-bs-msg", f"o2-bs-msg-{key}"],
            styles={"color": "#9a1b1b", "font-size": "12px"},
            margin=(0, 6, 4, 6),
        )
        widget.param.watch(lambda e, k=key: self._typed(k, e.new), "value")
        self._inputs[key], self._messages[key] = widget, msg
        cell = pn.Column(widget, msg, margin=0, sizing_mode="stretch_width")
        self._cells[key] = cell
        return cell

    def _typed(self, key: str, value) -> None:
        if not self._syncing:
            self._entry.set_draft(key, value)

    def _refresh_values(self, *_events) -> None:
        self._syncing = True
        try:
            for key, widget in self._inputs.items():
                widget.label = self._state.display_label(key)
                shown = self._entry.draft_display(key)
                # Panel sends None as NaN (shown as "NaN"); -inf is its own spelling of
                # an empty box.
                widget.value = float("-inf") if shown is None else shown
        finally:
            self._syncing = False

    def _visibility(self, *_events) -> None:
        active = set(self._entry.active_keys())
        for key, cell in self._cells.items():
            cell.visible = key in active

    def _errors(self, *_events) -> None:
        entry = self._entry
        for key, msg in self._messages.items():
            text = entry.field_errors.get(key, "")
            msg.object, msg.visible = html.escape(text), bool(text)
        show(self._status, entry.entry_message, error=bool(entry.field_errors))
