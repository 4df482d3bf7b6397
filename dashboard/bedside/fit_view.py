"""The fit panel of the bedside screen: verdict, fitted parameters, residuals, use it."""

from __future__ import annotations

import html

import panel as pn

from .panes import (
    ERROR_STYLE,
    NOTE_STYLE,
    OK_STYLE,
    BedsidePanel,
    action_button,
    heading,
    message_pane,
    show,
    table_pane,
)
from .state import BedsideState
from .wording import fit_words


class FitPanel(BedsidePanel):
    """Fit the model to the measurement; residuals, verdict, and making it the live case."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        self._fit = action_button(
            "Fit model to these measurements",
            "o2-bs-fit",
            state.fitting.fit_measured,
            color="primary",
            width=260,
        )
        self._use = action_button(
            "Use fitted case",
            "o2-bs-use-fit",
            state.use_fitted,
            color="success",
            width=160,
            disabled=True,
        )
        self._verdict = pn.pane.HTML(
            "", css_classes=["o2-bs-fit-verdict"], sizing_mode="stretch_width"
        )
        self._table = table_pane("o2-bs-residuals")
        self._applied = message_pane("o2-bs-fit-applied")
        self._layout = pn.Column(
            heading("3 · Fit to the patient"),
            pn.Row(self._fit, self._use),
            self._verdict,
            self._table,
            self._applied,
            sizing_mode="stretch_width",
        )
        # Every accepted measurement sets the fit anew (to None at least): watching the
        # fit's parameters even when set to an equal value follows it with one update.
        state.fitting.param.watch(
            self._update,
            ["fit", "fit_message", "fitted_applied", "applied_lever"],
            onlychanged=False,
        )
        state.case.param.watch(self._update, ["pressure_unit"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state.fitting
        fit = st.fit
        self._fit.disabled = not st.entry.measured
        self._use.disabled = fit is None
        if fit is None:
            text = st.fit_message or (
                "Fits shunt (venous admixture), VO2 when venous values are given, and a P50 "
                "offset when co-oximetry disagrees with the curve."
            )
            bad = text.startswith(("Not fitted", "Case not applied"))
            self._verdict.object = html.escape(text)
            self._verdict.styles = ERROR_STYLE if bad else NOTE_STYLE
            self._table.object = ""
            show(self._applied, "")
            return
        style = OK_STYLE if fit.consistent else ERROR_STYLE
        self._verdict.object = ("✓ " if fit.consistent else "⚠ ") + html.escape(st.fit_summary())
        self._verdict.styles = {**style, "font-weight": "600"}
        params = "".join(
            f"<tr data-key='{r.key}'><td>{html.escape(r.label)}</td>"
            f"<td class='val'>{html.escape(r.value)}</td><td>{html.escape(r.unit)}</td></tr>"
            for r in st.fitted_rows()
        )
        resid = "".join(
            f"<tr class='{'ok' if row[6] == 'match' else 'off'}' data-key='{html.escape(row[0])}'>"
            f"<td>{html.escape(row[0])} <span class='src'>{html.escape(row[4])}</span></td>"
            f"<td class='val'>{html.escape(row[1])}</td>"
            f"<td class='val'>{html.escape(row[2])}</td><td class='delta'>{html.escape(row[3])}</td>"
            f"<td class='range'>{html.escape(row[5])}</td>"
            f"<td>{'✓ match' if row[6] == 'match' else '✗ off'}</td></tr>"
            for row in st.fit_rows()
        )
        assumed = "".join(
            f"<li>{html.escape(fit_words(self._state.case, a))}</li>" for a in fit.assumptions
        )
        self._table.object = (
            "<table class='o2t'><tr><th>Fitted parameter</th><th style='text-align:right'>"
            f"Value</th><th>Unit</th></tr>{params}</table>"
            "<table class='o2t o2-bs-res' style='margin-top:8px'><tr><th>Quantity</th>"
            "<th style='text-align:right'>Measured</th><th style='text-align:right'>Model</th>"
            "<th style='text-align:right'>Model − measured</th><th></th><th></th></tr>"
            f"{resid}</table>"
            + (
                f"<div style='font-size:12px;color:#46545c'><b>Assumed:</b><ul>{assumed}</ul></div>"
                if assumed
                else ""
            )
        )
        show(
            self._applied,
            f"Fitted case kept as the baseline; live case: {st.applied_lever}."
            if st.fitted_applied and st.applied_lever
            else "Fitted case is the live case and the baseline: the Model inputs tab compares "
            "against it."
            if st.fitted_applied
            else "",
        )
