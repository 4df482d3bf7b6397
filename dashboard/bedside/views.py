"""Thin Panel views of the bedside screen over :class:`dashboard.bedside.state.BedsideState`.

They format; the state decides. Button actions run on the next tick under the document lock
(``pn.state.execute(..., schedule=True)``), as in :class:`dashboard.case.views.CaseControls`,
because they edit figures and panes. Stable ``o2-bs-*`` CSS classes are hooks for tests.
"""

from __future__ import annotations

import html
import io

import panel as pn
from bokeh.models import ColumnDataSource, LabelSet

from ..look import ACCENT, ARTERIAL, INK, REFERENCE, TABLE_CSS, VENOUS
from ..widgets import saturation_figure
from .state import FORM_GROUPS, BedsideState
from .summary import summary_html

DERIVED_GROUPS: tuple[tuple[str, tuple[str, ...]], ...] = (
    (
        "Oxygenation",
        (
            "barometric_pressure_used_mmhg",
            "alveolar_po2_mmhg",
            "aa_gradient_mmhg",
            "aa_gradient_expected_mmhg",
            "pao2_fio2_ratio",
            "pao2_fio2_ratio_pb_corrected",
            "pf_category_berlin",
            "pf_category_global2024",
            "sao2_fio2_ratio",
            "sf_category_global2024",
            "oxygenation_index",
        ),
    ),
    (
        "Content and shunt",
        ("sao2_from_curve", "cao2_ml_dl", "cco2_ml_dl", "cvo2_ml_dl", "shunt_fraction"),
    ),
    (
        "Flow, delivery, uptake",
        (
            "bsa_m2",
            "cardiac_output_used_l_min",
            "cardiac_index_used_l_min_m2",
            "do2_ml_min",
            "do2i_ml_min_m2",
            "vo2_ml_min",
            "vo2i_ml_min_m2",
            "extraction_ratio",
            "pco2_gap_mmhg",
        ),
    ),
    ("P50 from the measured pair", ("p50_insitu_mmhg", "p50_standard_mmhg")),
)
"""Derived rows grouped for reading; the temperature-corrected gases get their own table."""

ERROR_STYLE = {
    "background": "#fdecea",
    "color": "#7a1414",
    "padding": "4px 10px",
    "border-radius": "4px",
    "font-size": "14px",
}
OK_STYLE = {"color": "#1f4d3a", "font-size": "14px", "padding": "2px 4px"}
NOTE_STYLE = {"color": "#46545c", "font-size": "13px"}
SECTION_CSS = f"""
h3.o2-bs-h {{ color: {ACCENT}; font-size: 17px; margin: 6px 0 2px 0; }}
"""
BEDSIDE_TABLE_CSS = (
    TABLE_CSS
    + """
table.o2t div.note { font-size: 12px; color: #7a1414; }
table.o2t div.src, div.src { font-size: 11px; color: #6b767e; }
table.o2t { font-size: 14px; }
table.o2t td { padding: 3px 6px; }
table.o2t td.val { font-size: 15px; white-space: nowrap; }
table.o2t td.cat { font-size: 13px; font-weight: 600; }
table.o2t tr.grp td { background: #eef3f2; font-weight: 700; font-size: 12px;
  text-transform: uppercase; letter-spacing: .04em; color: #0f5257; padding-top: 6px; }
table.o2t td:last-child { white-space: nowrap; }
table.o2t tr.best td { background: #f1f8f1; }
table.o2-bs-dt td:first-child { width: 52%; }
table.o2-bs-lv th, table.o2-bs-res th { text-transform: none; letter-spacing: 0; }
table.o2-bs-lv td.lever { min-width: 230px; font-weight: 600; }
table.o2-bs-lv td.range { font-size: 12px; white-space: normal; }
table.o2-bs-res td.range { font-size: 11px; }
table.o2t td.range { font-size: 12px; }
table.o2t tr.ok td.val { color: #1f4d3a; }
table.o2t tr.off td.val { color: #9a1b1b; }
"""
)


def _later(fn):
    """A button handler that runs ``fn`` on the next tick with the document lock."""
    return lambda _event: pn.state.execute(fn, schedule=True)


def _heading(text: str) -> pn.pane.HTML:
    return pn.pane.HTML(
        f"<h3 class='o2-bs-h'>{html.escape(text)}</h3>",
        stylesheets=[SECTION_CSS],
        margin=(4, 10, 0, 10),
        sizing_mode="stretch_width",
    )


def _message_pane(css: str, style: dict | None = None) -> pn.pane.HTML:
    return pn.pane.HTML(
        "", css_classes=[css], visible=False, sizing_mode="stretch_width", styles=style or OK_STYLE
    )


def _show(pane: pn.pane.HTML, text: str, style: dict | None = None) -> None:
    pane.object = html.escape(text)
    if style is not None:
        pane.styles = style
    pane.visible = bool(text)


class MeasuredEntry(pn.viewable.Viewer):
    """Typed measured values, grouped as on a gas report; Calculate checks all at once."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        self._inputs: dict[str, pn.widgets.FloatInput] = {}
        self._messages: dict[str, pn.pane.HTML] = {}
        self._cells: dict[str, pn.Column] = {}
        self._syncing = False
        cards = []
        for title, keys in FORM_GROUPS:
            cells = []
            for key in keys:
                cells.append(self._cell(key))
            extra = []
            if "altitude_m" in keys:
                extra.append(
                    pn.widgets.RadioButtonGroup.from_param(
                        state.param.pressure_source,
                        css_classes=["o2-bs-pressure-source"],
                        sizing_mode="stretch_width",
                    )
                )
            if "cardiac_output_l_min" in keys:
                extra.append(
                    pn.widgets.RadioButtonGroup.from_param(
                        state.param.flow_source,
                        css_classes=["o2-bs-flow-source"],
                        sizing_mode="stretch_width",
                    )
                )
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
        self._calculate = pn.widgets.Button(
            label="Calculate", color="primary", css_classes=["o2-bs-calculate"], width=130
        )
        self._example = pn.widgets.Button(
            label="Fill invented example", css_classes=["o2-bs-example"], width=170
        )
        self._clear = pn.widgets.Button(label="Clear", css_classes=["o2-bs-clear"], width=80)
        self._calculate.on_click(_later(state.calculate))
        self._example.on_click(_later(state.fill_example))
        self._clear.on_click(_later(state.clear_entry))
        self._status = _message_pane("o2-bs-entry-status")
        self._layout = pn.Column(
            _heading("1 · Measured values"),
            pn.pane.HTML(
                "Lactate is shown, not modelled. Leave optional fields empty.",
                styles=NOTE_STYLE,
                margin=(0, 10),
            ),
            *cards,
            pn.Row(self._calculate, self._example, self._clear),
            self._status,
            css_classes=["o2-bs-entry"],
            sizing_mode="stretch_width",
        )
        state.param.watch(self._refresh_values, ["draft_version"])
        state.case.param.watch(self._refresh_values, ["pressure_unit", "hb_unit"])
        state.param.watch(self._visibility, ["pressure_source", "flow_source"])
        state.param.watch(self._errors, ["field_errors", "entry_message"])
        self._visibility()

    def _cell(self, key: str) -> pn.Column:
        st = self._state
        required = key in st._required_keys()
        widget = pn.widgets.FloatInput(
            label=st.display_label(key),
            value=st.draft_display(key),
            placeholder="required" if required else "optional",
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
            self._state.set_draft(key, value)

    def _refresh_values(self, *_events) -> None:
        st = self._state
        self._syncing = True
        try:
            for key, widget in self._inputs.items():
                widget.label = st.display_label(key)
                shown = st.draft_display(key)
                # Panel sends None as NaN (shown as "NaN"); -inf is its own spelling of
                # an empty box.
                widget.value = float("-inf") if shown is None else shown
        finally:
            self._syncing = False

    def _visibility(self, *_events) -> None:
        active = set(self._state.active_keys())
        for key, cell in self._cells.items():
            cell.visible = key in active

    def _errors(self, *_events) -> None:
        st = self._state
        for key, msg in self._messages.items():
            text = st.field_errors.get(key, "")
            msg.object, msg.visible = html.escape(text), bool(text)
        _show(self._status, st.entry_message, ERROR_STYLE if st.field_errors else OK_STYLE)

    def __panel__(self):
        return self._layout


class DerivedTable(pn.viewable.Viewer):
    """Derived values with unit, flag and short source; notes, reasons and flags below."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        self._pane = pn.pane.HTML(
            "",
            css_classes=["o2-bs-derived"],
            sizing_mode="stretch_width",
            stylesheets=[BEDSIDE_TABLE_CSS],
        )
        self._layout = pn.Column(
            _heading("2 · Derived picture"), self._pane, sizing_mode="stretch_width"
        )
        state.param.watch(self._update, ["derived"])
        state.case.param.watch(self._update, ["pressure_unit", "hb_unit"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        rows = {r.key: r for r in st.derived_rows()}
        if not rows:
            self._pane.object = (
                "<p style='color:#46545c'>Enter the measured values and press <b>Calculate</b>.</p>"
            )
            return
        body = []
        for title, keys in DERIVED_GROUPS:
            present = [rows[k] for k in keys if k in rows]
            if not present:
                continue
            body.append(f"<tr class='grp'><td colspan='4'>{html.escape(title)}</td></tr>")
            for r in present:
                flag_cls = "flag-high" if r.flag.startswith("▲") else "flag-low" if r.flag else ""
                note = f"<div class='note'>{html.escape(r.note)}</div>" if r.note else ""
                label = (
                    f"<td>{html.escape(r.label)}<div class='src'>{html.escape(r.source)}</div>"
                    f"{note}</td>"
                )
                if "_category_" in r.key:
                    cells = f"<td class='cat' colspan='3'>{html.escape(r.value)}</td>"
                else:
                    cells = (
                        f"<td class='val'>{html.escape(r.value)}</td>"
                        f"<td>{html.escape(r.unit)}</td>"
                        f"<td><span class='flag'>{html.escape(r.flag)}</span></td>"
                    )
                body.append(
                    f"<tr class='{flag_cls or 'flag-none'}' data-key='{r.key}'>{label}{cells}</tr>"
                )
        temp = [
            (label, rows.get(a), rows.get(b))
            for label, a, b in (
                ("PaO2", "alpha_stat_pao2_mmhg", "ph_stat_pao2_mmhg"),
                ("PaCO2", "alpha_stat_paco2_mmhg", "ph_stat_paco2_mmhg"),
                ("pH", "alpha_stat_ph", "ph_stat_ph"),
            )
        ]
        temp_rows = "".join(
            f"<tr data-key='temp-{label}'><td>{label}</td>"
            f"<td class='val'>{html.escape(a.value)}</td>"
            f"<td class='val'>{html.escape(b.value)}</td><td>{html.escape(a.unit)}</td></tr>"
            for label, a, b in temp
            if a is not None and b is not None
        )
        t_c = st.measured.get("temperature_c", 37.0) if st.measured else 37.0
        temp_table = (
            "<table class='o2t o2-bs-temp' style='margin-top:8px'><tr><th>Gases</th>"
            "<th style='text-align:right'>alpha-stat (37 °C)</th>"
            f"<th style='text-align:right'>pH-stat ({t_c:.1f} °C)</th><th>Unit</th></tr>"
            f"{temp_rows}</table><div class='src'>alpha-stat: as measured (Swan 1984); "
            "pH-stat: PO2 by Severinghaus 1979 Eq 3, PCO2 by Bradley, Severinghaus &amp; "
            "Stupfel 1956, pH by Rosenthal 1948.</div>"
            if temp_rows
            else ""
        )
        extra = []
        for name, title in (
            ("flags", "Outside usual ranges"),
            ("reasons", "Not computed"),
            ("notes", "Assumed"),
        ):
            items = st.derived_text(name)
            if items:
                extra.append(
                    f"<div class='o2-bs-{name}'><b>{title}:</b> "
                    + "; ".join(html.escape(i) for i in items)
                    + "</div>"
                )
        self._pane.object = (
            "<table class='o2t o2-bs-dt'><tr><th>Quantity · method</th>"
            "<th style='text-align:right'>Value</th><th>Unit</th><th></th></tr>"
            + "".join(body)
            + "</table>"
            + temp_table
            + "<div style='font-size:13px;margin-top:6px;line-height:1.45'>"
            + "".join(extra)
            + "</div>"
        )

    def __panel__(self):
        return self._layout


class PatientCurve(pn.viewable.Viewer):
    """The fitted (else live) curve with the measured arterial and venous points on it."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        self._lines = ColumnDataSource(data={"x": [], "arterial": [], "venous": [], "standard": []})
        self._points = ColumnDataSource(data={"x": [], "y": [], "color": [], "label": []})
        fig = saturation_figure(330, "", "14px")
        fig.line(
            "x",
            "standard",
            source=self._lines,
            color=REFERENCE,
            line_dash="dotted",
            line_width=1.5,
            legend_label="standard state",
        )
        fig.line(
            "x",
            "arterial",
            source=self._lines,
            color=ARTERIAL,
            line_width=3,
            legend_label="arterial",
        )
        fig.line(
            "x", "venous", source=self._lines, color=VENOUS, line_width=2, legend_label="venous"
        )
        fig.scatter(
            "x",
            "y",
            source=self._points,
            marker="square",
            size=13,
            color="color",
            line_color="white",
            line_width=2,
            legend_label="measured",
        )
        fig.add_layout(
            LabelSet(
                x="x",
                y="y",
                text="label",
                source=self._points,
                x_offset=10,
                y_offset=-16,
                text_font_size="12px",
                text_color=INK,
            )
        )
        fig.legend.location = "bottom_right"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.8
        self._fig = fig
        self._layout = pn.Column(
            pn.pane.Bokeh(fig, sizing_mode="stretch_width"),
            css_classes=["o2-bs-curve"],
            sizing_mode="stretch_width",
        )
        state.param.watch(self._update, ["measured", "fit"])
        state.case.param.watch(self._update, ["pressure_unit", "result"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        view = st.patient_curve()
        self._fig.title.text = view["title"]
        self._fig.xaxis.axis_label = f"PO2 ({st.case.pressure_unit})"
        self._fig.x_range.end = view["x_max"]
        self._lines.data = {k: view[k] for k in ("x", "arterial", "venous", "standard")}
        xs, ys, colors, labels = [], [], [], []
        for key, color, text in (
            ("measured_arterial", ARTERIAL, "measured PaO2, SaO2"),
            ("measured_venous", VENOUS, "measured PvO2, SvO2"),
        ):
            x, y = view[key]
            if x is not None:
                xs.append(x)
                ys.append(y)
                colors.append(color)
                labels.append(text)
        self._points.data = {"x": xs, "y": ys, "color": colors, "label": labels}

    def __panel__(self):
        return self._layout


class FitPanel(pn.viewable.Viewer):
    """Fit the model to the measurement; residuals, verdict, and making it the live case."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        self._fit = pn.widgets.Button(
            label="Fit model to these measurements",
            color="primary",
            css_classes=["o2-bs-fit"],
            width=260,
        )
        self._use = pn.widgets.Button(
            label="Use fitted case",
            color="success",
            css_classes=["o2-bs-use-fit"],
            width=160,
            disabled=True,
        )
        self._fit.on_click(_later(state.fit_measured))
        self._use.on_click(_later(state.use_fitted))
        self._verdict = pn.pane.HTML(
            "", css_classes=["o2-bs-fit-verdict"], sizing_mode="stretch_width"
        )
        self._table = pn.pane.HTML(
            "",
            css_classes=["o2-bs-residuals"],
            sizing_mode="stretch_width",
            stylesheets=[BEDSIDE_TABLE_CSS],
        )
        self._applied = _message_pane("o2-bs-fit-applied")
        self._layout = pn.Column(
            _heading("3 · Fit to the patient"),
            pn.Row(self._fit, self._use),
            self._verdict,
            self._table,
            self._applied,
            sizing_mode="stretch_width",
        )
        state.param.watch(
            self._update, ["fit", "fit_message", "measured", "fitted_applied", "applied_lever"]
        )
        state.case.param.watch(self._update, ["pressure_unit"])
        self._update()

    def _update(self, *_events) -> None:
        st = self._state
        fit = st.fit
        self._fit.disabled = not st.measured
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
            _show(self._applied, "")
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
        assumed = "".join(f"<li>{html.escape(a)}</li>" for a in fit.assumptions)
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
        _show(
            self._applied,
            f"Fitted case kept as the baseline; live case: {st.applied_lever}."
            if st.fitted_applied and st.applied_lever
            else "Fitted case is the live case and the baseline: the Model inputs tab compares "
            "against it."
            if st.fitted_applied
            else "",
        )

    def __panel__(self):
        return self._layout


class WhatIfTable(pn.viewable.Viewer):
    """Ranked what-ifs from the fitted case, their settings, and applying one."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        s = state.param
        self._rank = pn.widgets.Select.from_param(
            s.rank_by, css_classes=["o2-bs-rank-by"], width=250
        )
        self._target_hb = pn.widgets.FloatInput(
            label=self._hb_label(),
            value=state.target_hb_display(),
            css_classes=["o2-bs-target-hb"],
            width=190,
        )
        self._target_hb.param.watch(self._typed_hb, "value")
        self._stored = pn.widgets.Checkbox.from_param(
            s.stored_blood, css_classes=["o2-bs-stored-blood"], align="end"
        )
        self._shunt = pn.widgets.FloatInput.from_param(
            s.shunt_change, css_classes=["o2-bs-shunt-change"], width=250
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
        self._apply = pn.widgets.Button(
            label="Apply what-if",
            color="primary",
            css_classes=["o2-bs-apply-lever"],
            align="end",
            width=140,
            disabled=True,
        )
        self._apply.on_click(_later(lambda: state.apply_lever(self._pick.value)))
        self._table = pn.pane.HTML(
            "",
            css_classes=["o2-bs-levers"],
            sizing_mode="stretch_width",
            stylesheets=[BEDSIDE_TABLE_CSS],
        )
        self._message = _message_pane("o2-bs-lever-msg")
        self._layout = pn.Column(
            _heading("4 · What-ifs from the fitted case, ranked"),
            pn.Row(self._rank, self._target_hb, self._stored),
            pn.Row(self._shunt, self._cool, self._co),
            self._table,
            pn.Row(self._pick, self._apply),
            self._message,
            sizing_mode="stretch_width",
        )
        self._order: tuple[str, ...] = ()
        state.param.watch(self._update, ["lever_table", "lever_message", "applied_lever"])
        state.param.watch(self._refresh_hb, ["target_hb_g_dl"])
        state.case.param.watch(self._refresh_hb, ["hb_unit"])
        state.case.param.watch(self._update, ["pressure_unit"])
        self._syncing = False
        self._update()

    def _hb_label(self) -> str:
        return f"Transfusion target Hb ({self._state.case.hb_unit})"

    def _typed_hb(self, event) -> None:
        if self._syncing:
            return
        if not self._state.set_target_hb_display(event.new):
            self._refresh_hb()

    def _refresh_hb(self, *_events) -> None:
        self._syncing = True
        try:
            self._target_hb.label = self._hb_label()
            self._target_hb.value = self._state.target_hb_display()
        finally:
            self._syncing = False

    def _update(self, *_events) -> None:
        st = self._state
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
        order = tuple(choices.values())
        if order != self._order:
            # A new ranking: the picker lists it in rank order with the best chosen. A
            # reordered dict compares equal to the old one and would not be sent, so the
            # options are emptied first.
            self._order = order
            self._pick.options = {}
            self._pick.options = choices
            if order:
                self._pick.value = order[0]
        self._apply.disabled = not choices
        bad = st.lever_message.startswith(("What-ifs not", "Transfusion target", "Case not"))
        _show(self._message, st.lever_message, ERROR_STYLE if bad else OK_STYLE)

    def __panel__(self):
        return self._layout


class CaseKeeping(pn.viewable.Viewer):
    """Label, notes, save (no silent overwrite), the folder's cases, open, summary page."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        s = state.param
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
        self._save = pn.widgets.Button(
            label="Save case", color="primary", css_classes=["o2-bs-save"], width=120
        )
        self._overwrite = pn.widgets.Button(
            label="Overwrite the existing file",
            color="danger",
            css_classes=["o2-bs-overwrite"],
            width=220,
            visible=False,
        )
        self._save.on_click(_later(state.save))
        self._overwrite.on_click(_later(lambda: state.save(overwrite=True)))
        self._folder = pn.pane.HTML(
            "", css_classes=["o2-bs-folder"], sizing_mode="stretch_width", styles=NOTE_STYLE
        )
        self._cases = pn.widgets.Select(
            label="Saved cases", options={}, css_classes=["o2-bs-cases"], width=330
        )
        self._open = pn.widgets.Button(
            label="Open", css_classes=["o2-bs-open"], width=80, align="end"
        )
        self._refresh = pn.widgets.Button(
            label="Refresh list", css_classes=["o2-bs-refresh"], width=110, align="end"
        )
        self._open.on_click(_later(lambda: state.open(self._cases.value)))
        self._refresh.on_click(_later(state.refresh_cases))
        self._problems = pn.pane.HTML(
            "", css_classes=["o2-bs-problems"], sizing_mode="stretch_width", visible=False
        )
        self._message = _message_pane("o2-bs-case-msg")
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
            _heading("5 · Keep the case and hand over"),
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
        state.param.watch(
            self._update, ["saved_cases", "case_problems", "case_message", "overwrite_offer"]
        )
        state.param.watch(self._label_changed, ["case_label"])
        self._update()

    def _summary_file(self):
        label = self._state.case_label.strip() or "case"
        self._download.filename = f"o2transit-summary-{label.replace(' ', '-')}.html"
        return io.BytesIO(summary_html(self._state).encode("utf-8"))

    def _label_changed(self, *_events) -> None:
        if self._state.overwrite_offer:
            self._state.overwrite_offer = ""

    def _update(self, *_events) -> None:
        st = self._state
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
        bad = st.case_message.startswith("Not ")
        _show(self._message, st.case_message, ERROR_STYLE if bad else OK_STYLE)

    def __panel__(self):
        return self._layout


class BedsideScreen(pn.viewable.Viewer):
    """The Measured gas tab: entry beside the derived picture, then fit, what-ifs, keeping."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(**params)
        self._state = state
        self._layout = pn.Column(
            pn.Row(
                pn.Column(MeasuredEntry(state), FitPanel(state), width=480),
                pn.Column(
                    DerivedTable(state),
                    PatientCurve(state),
                    sizing_mode="stretch_width",
                    min_width=440,
                ),
                sizing_mode="stretch_width",
            ),
            WhatIfTable(state),
            CaseKeeping(state),
            css_classes=["o2-bs-screen"],
            sizing_mode="stretch_width",
        )

    def __panel__(self):
        return self._layout
