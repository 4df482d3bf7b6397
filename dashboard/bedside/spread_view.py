"""The 'how sure' panel of the bedside screen: ranges from the analyser tolerances and from
the curve models (watches ``state.doubt``)."""

from __future__ import annotations

import html

import panel as pn

from .panes import BedsidePanel, heading, table_pane
from .state import BedsideState


class HowSurePanel(BedsidePanel):
    """Shunt, VO2 and in-situ P50 over the analyser tolerances; SaO2, P50 and O2 extracted
    per litre over the four curve models."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        doubt = state.doubt
        self._set = pn.widgets.Select.from_param(
            doubt.param.tolerance_set, css_classes=["o2-bs-tolerance-set"], width=300
        )
        self._table = table_pane("o2-bs-how-sure")
        self._layout = pn.Column(
            heading("How sure"),
            self._set,
            self._table,
            sizing_mode="stretch_width",
        )
        doubt.param.watch(self._update, ["tolerance", "curve_spread"])
        state.case.param.watch(self._update, ["pressure_unit"])
        self._update()

    def _rows(self, rows, title: str) -> str:
        if not rows:
            return ""
        body = "".join(
            f"<tr data-key='{r.key}'><td>{html.escape(r.label)}"
            f"<div class='src'>{html.escape(r.note)}</div></td>"
            f"<td class='val'>{html.escape(r.value)}</td>"
            f"<td class='delta'>{html.escape(r.low)}–{html.escape(r.high)}</td>"
            f"<td>{html.escape(r.unit)}</td></tr>"
            for r in rows
        )
        return f"<tr class='grp'><td colspan='4'>{html.escape(title)}</td></tr>{body}"

    def _update(self, *_events) -> None:
        doubt = self._state.doubt
        tol = doubt.tolerance_rows()
        curve = doubt.curve_rows()
        if not tol and not curve:
            self._table.object = (
                "<p style='color:#46545c'>Calculate a measured gas to see how far the numbers "
                "move within the analyser tolerances; fit it to compare the curve models.</p>"
            )
            return
        self._table.object = (
            "<table class='o2t o2-bs-doubt'><tr><th>Quantity</th>"
            "<th style='text-align:right'>Value</th><th style='text-align:right'>Range</th>"
            "<th>Unit</th></tr>"
            + self._rows(tol, "Within the analyser tolerances (every combination)")
            + self._rows(curve, "Between the four curve models (fitted case)")
            + "</table>"
            + f"<div class='src'>{html.escape(doubt.source())}</div>"
        )
