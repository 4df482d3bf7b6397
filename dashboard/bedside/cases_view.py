"""The case-keeping panel of the bedside screen: label, notes, save, open, summary page."""

from __future__ import annotations

import html
import io

import panel as pn

from .panes import ERROR_STYLE, NOTE_STYLE, BedsidePanel, action_button, heading, message_pane, show
from .state import BedsideState
from .summary import summary_html


class CaseKeeping(BedsidePanel):
    """Label, notes, save (no silent overwrite), the folder's cases, open, summary page."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        s = state.cases.param
        self._label = pn.widgets.TextInput.from_param(
            s.case_label, css_classes=["o2-bs-label"], width=330, placeholder="e.g. bed 4 day 2"
        )
        self._warning = pn.pane.HTML(
            f"⚠ {html.escape(state.identifier_warning)}",
            css_classes=["o2-bs-id-warning"],
            sizing_mode="stretch_width",
            styles={"font-size": "12px", "color": "#7a4b00"},
        )
        self._notes = pn.widgets.TextAreaInput.from_param(
            s.notes, css_classes=["o2-bs-notes"], sizing_mode="stretch_width", height=90
        )
        self._save = action_button(
            "Save case", "o2-bs-save", state.save, color="primary", width=120
        )
        self._overwrite = action_button(
            "Overwrite the existing file",
            "o2-bs-overwrite",
            lambda: state.save(overwrite=True),
            color="danger",
            width=220,
            visible=False,
        )
        self._folder = pn.pane.HTML(
            "", css_classes=["o2-bs-folder"], sizing_mode="stretch_width", styles=NOTE_STYLE
        )
        self._cases = pn.widgets.Select(
            label="Saved cases", options={}, css_classes=["o2-bs-cases"], width=330
        )
        self._open = action_button(
            "Open", "o2-bs-open", lambda: state.open(self._cases.value), width=80, align="end"
        )
        self._refresh = action_button(
            "Refresh list", "o2-bs-refresh", state.refresh_cases, width=110, align="end"
        )
        self._problems = pn.pane.HTML(
            "", css_classes=["o2-bs-problems"], sizing_mode="stretch_width", visible=False
        )
        self._message = message_pane("o2-bs-case-msg")
        self._download = pn.widgets.FileDownload(
            callback=self._summary_file,
            filename="o2transit-summary.html",
            label="Download summary page (HTML)",
            color="success",
            css_classes=["o2-bs-summary-download"],
            width=260,
            embed=False,
        )
        self._open_tab = pn.pane.HTML(
            "", css_classes=["o2-bs-summary-link"], margin=(12, 10), styles=NOTE_STYLE
        )
        self._layout = pn.Column(
            heading("7 · Keep the case and hand over"),
            pn.Row(self._label, self._save, self._overwrite),
            self._warning,
            self._notes,
            self._message,
            pn.Row(self._cases, self._open, self._refresh),
            self._folder,
            self._problems,
            pn.Row(self._download, self._open_tab),
            sizing_mode="stretch_width",
        )
        state.cases.param.watch(
            self._update, ["saved_cases", "case_problems", "case_message", "overwrite_offer"]
        )
        state.cases.param.watch(self._label_changed, ["case_label"])
        self._update()

    def _summary_file(self):
        label = self._state.case_label.strip() or "case"
        self._download.filename = f"o2transit-summary-{label.replace(' ', '-')}.html"
        return io.BytesIO(summary_html(self._state).encode("utf-8"))

    def _label_changed(self, *_events) -> None:
        if self._state.cases.overwrite_offer:
            self._state.cases.overwrite_offer = ""

    def _update(self, *_events) -> None:
        st = self._state.cases
        choices = st.case_choices()
        current = self._cases.value
        self._cases.options = choices
        if current in choices.values():
            self._cases.value = current
        self._open.disabled = not choices
        self._folder.object = (
            f"Case folder: <code>{html.escape(str(st.case_dir))}</code> · "
            f"{len(st.saved_cases)} case(s)"
        )
        if st.case_problems:
            items = "".join(f"<li>{html.escape(p)}</li>" for p in st.case_problems)
            self._problems.object = f"<b>Files that could not be read:</b><ul>{items}</ul>"
            self._problems.styles = {**ERROR_STYLE, "font-size": "12px"}
            self._problems.visible = True
        else:
            self._problems.visible = False
        self._overwrite.visible = bool(st.overwrite_offer)
        bad = st.case_message.startswith("Not ") or "⚠" in st.case_message
        show(self._message, st.case_message, error=bad)
