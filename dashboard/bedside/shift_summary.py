"""The plans and the shift's gases as sections of the printable summary page.

Read from :class:`dashboard.bedside.state.BedsideState` (already in display units and words);
laid out as plain HTML tables in the page's own style (``summary.PAGE_CSS``).
"""

from __future__ import annotations

import html

from .state import BedsideState


def _esc(value) -> str:
    return html.escape(str(value))


def plans_section(state: BedsideState) -> str:
    """'Plans' heading, each plan's changes, and the side-by-side table (or a line saying
    why there is none)."""
    stack = state.plan_stack
    if not stack.plans:
        return "<h2>Plans</h2><p class='meta'>No plans.</p>"
    names = stack.column_names()
    steps = "".join(
        f"<li><b>{_esc(plan.name)}</b>: {_esc('; '.join(stack.steps_text(i)) or 'no changes')}</li>"
        for i, plan in enumerate(stack.plans)
    )
    rows = stack.compare_rows()
    if not rows:
        return (
            f"<h2>Plans</h2><ul class='meta'>{steps}</ul>"
            "<p class='meta'>Not solved: the model was not fitted.</p>"
        )
    head = "".join(f"<th>{_esc(h)}</th>" for h in ["Quantity", "Unit", *names])
    body = []
    for row in rows:
        cells = []
        for j, cell in enumerate(row.cells):
            text = _esc(cell.value)
            if j and cell.delta:
                text += f" ({_esc(cell.delta)})"
            if cell.spread:
                text += f"<br><span class='src'>models {_esc(cell.spread)}</span>"
            cells.append(f"<td class='num'>{text}</td>")
        body.append(f"<tr><td>{_esc(row.label)}</td><td>{_esc(row.unit)}</td>{''.join(cells)}</tr>")
    return (
        f"<h2>Plans from the fitted case</h2><ul class='meta'>{steps}</ul>"
        f"<table class='o2-sum-plans'><tr>{head}</tr>{''.join(body)}</table>"
        "<p class='meta'>Plan columns: value (change from the patient). 'models': lowest–highest "
        "of the four curve models. PaO2 and PvO2 as read at 37 °C.</p>"
    )


def series_section(state: BedsideState) -> str:
    """'Gases through the shift' heading and the trend table (or a line saying there are none)."""
    series = state.series
    rows = series.trend_rows()
    if not rows:
        return "<h2>Gases through the shift</h2><p class='meta'>No gases of the shift kept.</p>"
    head = "".join(f"<th>{_esc(h)}</th>" for h in series.trend_head())
    body = "".join(
        f"<tr><td>{_esc(r.time)}</td><td class='num'>{_esc(r.hours)}</td>"
        + "".join(f"<td class='num'>{_esc(v)}</td>" for v in r.values)
        + f"<td>{_esc(r.points)}</td><td>{_esc(r.verdict)}</td></tr>"
        for r in rows
    )
    return (
        f"<h2>Gases through the shift</h2><table class='o2-sum-trend'><tr>{head}</tr>{body}</table>"
    )
