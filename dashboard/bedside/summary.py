"""One printable page of a bedside case: standalone HTML that works without a network.

Everything it shows is read from :class:`dashboard.bedside.state.BedsideState` (already in
display units and words); this module only lays it out. The curve is a Bokeh figure with
BokehJS written into the file (inline resources, core library only), so the page opens from a USB
stick on a unit computer with no internet; the print stylesheet fits it on A4 paper.
"""

from __future__ import annotations

import datetime as dt
import html

from bokeh.embed import components
from bokeh.models import Range1d
from bokeh.plotting import figure
from bokeh.resources import Resources

from ..look import ACCENT, ARTERIAL, CAUTION, INK, REFERENCE, VENOUS
from .shift_summary import plans_section, series_section
from .state import BedsideState
from .wording import fit_words, flag_items, in_display_units

BOKEH_JS = Resources(mode="inline", components=["bokeh"])
"""Only the core BokehJS library, written into the page (no widgets, tables, GL, MathJax)."""

PAGE_CSS = f"""
body {{ font-family: 'Liberation Sans', Arial, sans-serif; color: {INK}; margin: 18px 28px;
  font-size: 14px; }}
h1 {{ font-size: 22px; color: {ACCENT}; margin: 0 0 4px 0; }}
h2 {{ font-size: 16px; color: {ACCENT}; border-bottom: 2px solid {ACCENT}; margin: 16px 0 6px 0;
  padding-bottom: 2px; }}
.meta {{ color: #46545c; margin-bottom: 8px; }}
.caution {{ background: #fff6dc; border-left: 5px solid #b7791f; padding: 6px 12px; }}
table {{ border-collapse: collapse; width: 100%; font-size: 13px; }}
th {{ text-align: left; border-bottom: 1px solid {ACCENT}; padding: 3px 6px; font-size: 12px; }}
td {{ padding: 3px 6px; border-bottom: 1px solid #e3e6e8; vertical-align: top; }}
td.num {{ text-align: right; font-variant-numeric: tabular-nums; font-weight: 700; }}
td.src {{ color: #5b6770; font-size: 12px; }}
.flag {{ color: #9a1b1b; font-weight: 700; }}
.cols {{ display: flex; gap: 24px; }}
.cols > div {{ flex: 1; min-width: 0; }}
.notes {{ white-space: pre-wrap; border: 1px solid #d5dadd; padding: 6px 10px; }}
.plot {{ width: 640px; max-width: 100%; }}
@media print {{
  @page {{ size: A4; margin: 12mm; }}
  body {{ margin: 0; font-size: 11px; }}
  table {{ font-size: 11px; }}
  h2 {{ break-after: avoid; }}
  tr, .plot {{ break-inside: avoid; }}
  .noprint {{ display: none; }}
}}
"""


def _esc(value) -> str:
    return html.escape(str(value))


def _table(head: list[str], rows: list[list[str]], num_cols: set[int], cls: str) -> str:
    if not rows:
        return "<p class='meta'>None.</p>"
    th = "".join(f"<th>{_esc(h)}</th>" for h in head)
    body = []
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            klass = " class='num'" if i in num_cols else ""
            cells.append(f"<td{klass}>{cell}</td>")
        body.append(f"<tr>{''.join(cells)}</tr>")
    return f"<table class='{cls}'><tr>{th}</tr>{''.join(body)}</table>"


def curve_figure(state: BedsideState):
    """The patient's curve with the measured points, as a standalone Bokeh figure."""
    view = state.patient_curve()
    fig = figure(
        width=640,
        height=360,
        toolbar_location=None,
        output_backend="svg",
        x_range=Range1d(0, view["x_max"]),
        y_range=Range1d(0, 102),
        title=view["title"],
    )
    fig.xaxis.axis_label = view["x_label"]
    fig.yaxis.axis_label = "SO2 (%)"
    fig.line(
        view["x"],
        view["standard"],
        color=REFERENCE,
        line_dash="dotted",
        line_width=1.5,
        legend_label="standard state",
    )
    fig.line(view["x"], view["arterial"], color=ARTERIAL, line_width=3, legend_label="arterial")
    if view["venous"] is not None:
        fig.line(view["x"], view["venous"], color=VENOUS, line_width=2, legend_label="venous")
    for (x, y), color, label in (
        (view["measured_arterial"], ARTERIAL, "measured arterial" + view["moved"]),
        (view["measured_venous"], VENOUS, "measured venous" + view["moved"]),
    ):
        if x is not None and y is not None:
            fig.scatter(
                [x],
                [y],
                size=12,
                color=color,
                line_color="white",
                marker="square",
                legend_label=label,
            )
    fig.legend.location = "bottom_right"
    fig.legend.label_text_font_size = "11px"
    return fig


def summary_html(state: BedsideState, when: dt.datetime | None = None) -> str:
    """The whole summary page as one HTML string (BokehJS inline; no external requests)."""
    when = when or dt.datetime.now().astimezone()
    label = state.case_label.strip() or "(no label)"
    measured = _table(
        ["Measured", "Value", "Unit"],
        [[_esc(r.label), _esc(r.value), _esc(r.unit)] for r in state.measured_rows()],
        {1},
        "o2-sum-measured",
    )
    derived = _table(
        ["Derived", "Value", "Unit", "", "Source"],
        [
            [
                _esc(r.label),
                _esc(r.value),
                _esc(r.unit),
                f"<span class='flag'>{_esc(r.flag)}</span>"
                + (f" {_esc(r.note)}" if r.note else ""),
                f"<span class='src'>{_esc(r.source)}</span>",
            ]
            for r in state.derived_rows()
        ],
        {1},
        "o2-sum-derived",
    )
    fit_text = _esc(state.fit_summary()) if state.fit is not None else "Not fitted."
    fitted = _table(
        ["Fitted parameter", "Value", "Unit"],
        [[_esc(r.label), _esc(r.value), _esc(r.unit)] for r in state.fitted_rows()],
        {1},
        "o2-sum-fitted",
    )
    fit = _table(
        ["Quantity", "Measured", "Model", "Model − measured", "Unit", "", ""],
        [[_esc(c) for c in r] for r in state.fit_rows()],
        {1, 2, 3},
        "o2-sum-fit",
    )
    assumed = "".join(
        f"<li>{_esc(fit_words(state.case, a))}</li>"
        for a in (state.fit.assumptions if state.fit is not None else [])
    )
    reasons, notes_assumed = state.derived_text("reasons"), state.derived_text("notes")
    lists = "".join(
        f"<p class='meta'><b>{title}:</b> {_esc('; '.join(items))}</p>"
        for title, items in (
            (
                "Outside usual ranges",
                flag_items(
                    state.case, state.measured, state.derived_rows(), state.derived_text("flags")
                ),
            ),
            ("Not computed", [in_display_units(state.case, t) for t in reasons]),
            ("Assumed", [in_display_units(state.case, t) for t in notes_assumed]),
        )
        if items
    )
    head = state.lever_head()
    levers = _table(
        head,
        [[_esc(c) for c in r] for r in state.lever_rows()],
        set(range(2, len(head) - 1)),
        "o2-sum-levers",
    )
    live = state.case.scenario_name
    script, div = components(curve_figure(state))
    notes = (
        f"<div class='notes'>{_esc(state.notes)}</div>"
        if state.notes.strip()
        else "<p class='meta'>No notes.</p>"
    )
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>o2transit case summary · {_esc(label)}</title>
<style>{PAGE_CSS}</style>
{BOKEH_JS.render_js()}
</head><body>
<h1>o2transit · case summary</h1>
<div class="meta">Case: <b>{_esc(label)}</b> · printed {_esc(when.strftime("%Y-%m-%d %H:%M %Z"))}
· pressures in {_esc(state.case.pressure_unit)}, Hb in {_esc(state.case.hb_unit)}</div>
<div class="caution">⚠ {_esc(CAUTION)}</div>
<div class="cols"><div>
<h2>Measured values</h2>{measured}
</div><div>
<h2>Derived values</h2>{derived}
{lists}
</div></div>
<h2>Fit of the model to the measurements</h2>
<p>{fit_text}</p>
{fitted}
{fit}
{f"<ul class='meta'>{assumed}</ul>" if assumed else ""}
<h2>Patient's curve</h2>
<div class="plot">{div}</div>
<h2>What-ifs from the fitted case (ranked by {_esc(state.rank_label())})</h2>
{levers}
<p class='meta'>Live case when printed: {_esc(live or "as entered on the Model inputs tab")}.</p>
{plans_section(state)}
{series_section(state)}
<h2>Notes</h2>
{notes}
<p class="meta">Made with o2transit, an open-source physiology model. {_esc(CAUTION)}</p>
{script}
</body></html>
"""
