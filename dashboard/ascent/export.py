"""Exports of the planner's comparison: a CSV table and a standalone HTML page.

Both carry the caution. The HTML page holds its scripts and styles inline (Bokeh ``INLINE``
resources), so it opens on a computer without internet; it has the figures, the summary
table, the flags, the schedules' day tables and the date it was made.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
import io

from bokeh.embed import components

from ...model.ascent_report import DAY_COLUMNS, day_rows
from ..look import ACCENT, CAUTION, INK
from ..offline import inline_resources
from .figures import (
    LEGEND_CSS,
    SUMMARY_CSS,
    ComparisonFigures,
    flags_html,
    legend_html,
    summary_html,
)
from .state import AscentWorkspace


def _key(fraction: float) -> str:
    """0.9 -> '0_90' (the model's own naming of thresholds in its summary)."""
    return f"{fraction:.2f}".replace(".", "_")


def _now(when: dt.datetime | None) -> dt.datetime:
    return (when or dt.datetime.now(dt.UTC)).replace(microsecond=0)


def _cell(value) -> str:
    if isinstance(value, float):
        return format(value, ".6g")
    return "" if value is None else str(value)


def summary_columns(ws: AscentWorkspace) -> tuple[str, ...]:
    hi, lo = ws.thresholds
    return (
        "days",
        "lowest_night_sao2",
        f"nights_below_{_key(hi)}",
        f"nights_below_{_key(lo)}",
        f"hypoxic_burden_below_{_key(hi)}_saturation_days",
        "days_to_top",
        "top_altitude_m",
        "highest_sleep_altitude_m",
        "flag_count",
        "risk_category",
        "risk_reasons",
    )


def comparison_csv(ws: AscentWorkspace, when: dt.datetime | None = None) -> str:
    """One table: a ``note`` row (caution, date), then per compared schedule one ``day`` row
    per day and one ``summary`` row. Empty cells where a column does not apply."""
    scols = summary_columns(ws)
    header = ("record", "schedule_key", "schedule", *DAY_COLUMNS, "flags", *scols, "note")
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=header, lineterminator="\n")
    w.writeheader()
    w.writerow(
        {
            "record": "note",
            "note": f"o2transit ascent comparison made {_now(when).isoformat()}. {CAUTION}",
        }
    )
    for key in ws.compared:
        r = ws.results[key]
        for row in day_rows(r):
            w.writerow(
                {
                    "record": "day",
                    "schedule_key": key,
                    "schedule": r.profile.name,
                    **{k: _cell(v) for k, v in row.items()},
                }
            )
        s = ws.summary(key)
        values = (
            s["days"],
            s["lowest_night_sao2"],
            s["nights_below_high"],
            s["nights_below_low"],
            s["hypoxic_burden"],
            s["days_to_top"],
            s["top_altitude_m"],
            s["highest_sleep_altitude_m"],
            s["flag_count"],
            s["risk_category"],
            "; ".join(s["risk_reasons"]),
        )
        w.writerow(
            {
                "record": "summary",
                "schedule_key": key,
                "schedule": r.profile.name,
                **{k: _cell(v) for k, v in zip(scols, values)},
            }
        )
    return out.getvalue()


PAGE_CSS = f"""
body {{ font-family: 'Liberation Sans', Arial, sans-serif; color: {INK}; margin: 24px auto;
  max-width: 1180px; padding: 0 16px; }}
h1 {{ color: {ACCENT}; font-size: 24px; margin-bottom: 4px; }}
h2 {{ color: {ACCENT}; font-size: 18px; margin-top: 26px; border-bottom: 1px solid #cfd8d6; }}
.caution {{ background: #fff6dc; border-left: 5px solid #b7791f; padding: 6px 12px; }}
.meta {{ color: #5b6770; font-size: 13px; }}
table.days {{ border-collapse: collapse; font-size: 12px; margin-bottom: 14px; }}
table.days th, table.days td {{ border-bottom: 1px solid #e3e6e8; padding: 2px 6px;
  text-align: right; font-variant-numeric: tabular-nums; }}
table.days td.f {{ text-align: left; color: #7a1414; }}
"""


def _day_table(ws: AscentWorkspace, key: str) -> str:
    r = ws.results[key]
    head = (
        "<tr><th>day</th><th>sleep m</th><th>high m</th><th>FiO2</th><th>PB mmHg</th>"
        "<th>PaCO2 mmHg</th><th>PaO2 mmHg</th><th>SaO2 %</th><th>Hb g/dL</th>"
        "<th>CaO2 mL/dL</th><th>DO2 mL/min</th><th>high-point SaO2 %</th>"
        "<th style='text-align:left'>flags</th></tr>"
    )
    rows = []
    for d in day_rows(r):
        rows.append(
            f"<tr><td>{d['day']}</td><td>{d['sleep_altitude_m']:.0f}</td>"
            f"<td>{d['high_altitude_m']:.0f}</td><td>{d['fio2']:.2f}</td>"
            f"<td>{d['barometric_pressure_mmhg']:.1f}</td><td>{d['paco2_mmhg']:.1f}</td>"
            f"<td>{d['pao2_mmhg']:.1f}</td><td>{100 * d['sao2']:.1f}</td>"
            f"<td>{d['hb_g_dl']:.1f}</td><td>{d['cao2_ml_dl']:.1f}</td>"
            f"<td>{d['do2_ml_min']:.0f}</td><td>{100 * d['high_sao2']:.1f}</td>"
            f"<td class='f'>{html.escape(d['flags'])}</td></tr>"
        )
    return f"<table class='days'>{head}{''.join(rows)}</table>"


def comparison_html(ws: AscentWorkspace, when: dt.datetime | None = None) -> str:
    """A standalone page of the comparison that works offline (scripts inline)."""
    figs = ComparisonFigures(width=560, height=280, tap=False)
    compared = [(k, ws.series(k)) for k in ws.compared]
    figs.update(compared, (ws.threshold_high_pct, ws.threshold_low_pct))
    script, div = components(figs.grid())
    names = [ws.results[k].profile.name for k in ws.compared]
    entries = [(s["name"], s["slot"]) for _k, s in compared]
    made = _now(when)
    tables = "".join(
        f"<h3>{html.escape(ws.results[k].profile.name)}</h3>"
        + (
            f"<p class='meta'>{html.escape(ws.results[k].profile.description)}</p>"
            if ws.results[k].profile.description
            else ""
        )
        + _day_table(ws, k)
        for k in ws.compared
    )
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>o2transit ascent comparison: {html.escape(" / ".join(names))}</title>
{inline_resources()}
<style>{PAGE_CSS}{LEGEND_CSS}{SUMMARY_CSS}</style>
</head>
<body>
<h1>Ascent comparison</h1>
<p class="meta">Made by o2transit on {made.strftime("%Y-%m-%d %H:%M UTC")}.
Night values at rest at the sleeping altitude; SaO2 thresholds {ws.threshold_high_pct:g} % and
{ws.threshold_low_pct:g} %.</p>
<p class="caution">⚠ {html.escape(CAUTION)}</p>
<h2>Summary</h2>
{summary_html([ws.summary(k) for k in ws.compared], (ws.threshold_high_pct, ws.threshold_low_pct))}
<h2>Day by day</h2>
{legend_html(entries)}
{div}
<h2>Days breaking the ascent-rate guidance</h2>
<p class="meta">Wilderness Medical Society consensus guidelines (Luks et al., Wilderness Environ
Med 2019;30(4S):S3-S18 and 2024;35(1S):2S-19S), in our words.</p>
{flags_html(ws.flag_list())}
<h2>Day tables</h2>
{tables}
{script}
</body>
</html>
"""
