"""The what-if panel of the bedside screen: settings, ranked table, apply one."""

from __future__ import annotations

import html

import panel as pn

from .panes import BedsidePanel, action_button, heading, message_pane, show, table_pane
from .plans_compare_view import LeverToPlan
from .state import BedsideState


class WhatIfTable(BedsidePanel):
    """Ranked what-ifs from the fitted case, their settings, and applying one."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        s = state.plans.param
        self._rank = pn.widgets.Select.from_param(
            s.rank_by, css_classes=["o2-bs-rank-by"], width=250
        )
        self._target_hb = pn.widgets.FloatInput(
            label=self._hb_label(),
            value=state.plans.target_hb_display(),
            css_classes=["o2-bs-target-hb"],
            width=190,
        )
        self._target_hb.param.watch(self._typed_hb, "value")
        self._stored = pn.widgets.Checkbox.from_param(
            s.stored_blood, css_classes=["o2-bs-stored-blood"], align="end"
        )
        self._shunt = pn.widgets.FloatInput.from_param(
            s.shunt_change_points, css_classes=["o2-bs-shunt-change"], width=250
        )
        self._cool = pn.widgets.FloatInput.from_param(
            s.cooling_to_c, css_classes=["o2-bs-cool-to"], width=150
        )
        self._co = pn.widgets.FloatInput.from_param(
            s.cardiac_output_factor, css_classes=["o2-bs-co-factor"], width=170
        )
        self._pick = pn.widgets.Select(
            label="What-if to apply", options={}, css_classes=["o2-bs-lever-pick"], width=360
        )
        self._apply = action_button(
            "Apply what-if",
            "o2-bs-apply-lever",
            lambda: state.apply_lever(self._pick.value),
            color="primary",
            align="end",
            width=140,
            disabled=True,
        )
        self._table = table_pane("o2-bs-levers")
        self._message = message_pane("o2-bs-lever-msg")
        self._layout = pn.Column(
            heading("4 · What-ifs from the fitted case, ranked"),
            pn.Row(self._rank, self._target_hb, self._stored),
            pn.Row(self._shunt, self._cool, self._co),
            self._table,
            pn.Row(self._pick, self._apply, LeverToPlan(state, self._pick)),
            self._message,
            sizing_mode="stretch_width",
        )
        self._order: tuple[str, ...] = ()
        state.plans.param.watch(self._update, ["lever_table", "lever_message"])
        state.plans.param.watch(self._refresh_hb, ["target_hb_g_dl"])
        state.case.param.watch(self._refresh_hb, ["hb_unit"])
        state.case.param.watch(self._update, ["pressure_unit", "hb_unit"])
        self._syncing = False
        self._update()

    def _hb_label(self) -> str:
        return f"Transfusion target Hb ({self._state.case.hb_unit})"

    def _typed_hb(self, event) -> None:
        if self._syncing:
            return
        if not self._state.plans.set_target_hb_display(event.new):
            self._refresh_hb()

    def _refresh_hb(self, *_events) -> None:
        self._syncing = True
        try:
            self._target_hb.label = self._hb_label()
            self._target_hb.value = self._state.plans.target_hb_display()
        finally:
            self._syncing = False

    def _update(self, *_events) -> None:
        st = self._state.plans
        rows = st.lever_rows()
        if not rows:
            self._table.object = (
                "<p style='color:#46545c'>Fit the model to a measured gas: the what-ifs are "
                "predicted from the fitted case.</p>"
            )
        else:
            head = st.lever_head()
            th = "".join(
                f"<th style='text-align:{'right' if 1 < i < 7 else 'left'}'>{html.escape(h)}</th>"
                for i, h in enumerate(head)
            )
            body = []
            for i, row in enumerate(rows):
                cls = "best" if i == 0 else ""
                cells = "".join(
                    f"<td class='delta'>{html.escape(c)}</td>"
                    if 1 < j < 7
                    else f"<td class='range'>{html.escape(c)}</td>"
                    if j == 7
                    else f"<td class='lever'>{html.escape(c)}</td>"
                    if j == 1
                    else f"<td>{html.escape(c)}</td>"
                    for j, c in enumerate(row)
                )
                body.append(f"<tr class='{cls}' data-key='{st.lever_table[i].key}'>{cells}</tr>")
            self._table.object = f"<table class='o2t o2-bs-lv'><tr>{th}</tr>{''.join(body)}</table>"
        choices = st.lever_choices()
        order = tuple(choices.items())  # labels too: they follow the display units
        if order != self._order:
            # A new ranking: the picker lists it in rank order with the best chosen. A
            # reordered dict compares equal to the old one and would not be sent, so the
            # options are emptied first.
            self._order = order
            self._pick.options = {}
            self._pick.options = choices
            if order:
                self._pick.value = order[0][1]
        self._apply.disabled = not choices
        bad = st.lever_message.startswith(("What-ifs not", "Transfusion target", "Case not"))
        show(self._message, st.lever_message, error=bad)
