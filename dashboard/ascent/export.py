"""Exports of the planner's comparison: two CSV tables and a standalone HTML page.

All carry the caution. :func:`comparison_csv` is the full-precision record with the
model's own column names (fractions, mmHg); :func:`comparison_table_csv` is the table a
reader opens in a spreadsheet: SaO2 and the predicted SpO2 in %, pressures in the chosen
unit, values rounded as the screen shows them and column names in words. The HTML page holds
its scripts and styles inline (Bokeh ``INLINE`` resources), so it opens on a computer without
internet; it has the figures, the summary table, the flags, the schedules' day tables, the
readings, the date it was made and a print layout.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
import io

from bokeh.embed import components

from ...model.ascent_report import DAY_COLUMNS, day_rows
from ...model.units import MMHG_PER_KPA
from ..look import ACCENT, CAUTION, INK
from ..offline import inline_resources
from .comparison import PRESSURE_MODEL_NAMES
from .figures import (
    BAND_NOTE,
    LEGEND_CSS,
    SUMMARY_CSS,
    ComparisonFigures,
    flags_html,
    legend_html,
    summary_html,
)
from .shell import PRINT_CSS
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


def _table_columns(unit: str) -> list[tuple[str, str, object]]:
    """(heading, day_rows key or callable, digits or formatter) of the reader's table."""
    k = 1.0 if unit == "mmHg" else MMHG_PER_KPA
    pd = 1 if unit == "mmHg" else 2

    def press(key):
        return lambda d: f"{d[key] / k:.{pd}f}"

    def pct(key, digits):
        return lambda d: f"{100 * d[key]:.{digits}f}"

    def num(key, digits):
        return lambda d: f"{d[key]:.{digits}f}"

    return [
        ("Day", lambda d: str(d["day"])),
        ("Sleeping altitude (m)", num("sleep_altitude_m", 0)),
        ("High point of the day (m)", num("high_altitude_m", 0)),
        ("FiO2 (fraction of O2 breathed)", num("fio2", 2)),
        (f"Barometric pressure ({unit})", press("barometric_pressure_mmhg")),
        (f"Inspired PO2 ({unit})", press("inspired_po2_mmhg")),
        (f"PaCO2 at rest ({unit})", press("paco2_mmhg")),
        ("Arterial pH", num("ph", 3)),
        (f"PaO2 at rest ({unit})", press("pao2_mmhg")),
        ("SaO2 at rest, model (%)", pct("sao2", 1)),
        ("Predicted SpO2 at rest, low edge (%)", pct("sao2_low", 0)),
        ("Predicted SpO2 at rest, high edge (%)", pct("sao2_high", 0)),
        ("Haemoglobin (g/dL)", num("hb_g_dl", 1)),
        ("Arterial O2 content (mL/dL)", num("cao2_ml_dl", 1)),
        ("O2 delivery (mL/min)", num("do2_ml_min", 0)),
        ("SaO2 at the day's high point (%)", pct("high_sao2", 1)),
        ("Ascent-rate guidance notes", lambda d: d["flags"]),
    ]


def comparison_table_csv(ws: AscentWorkspace, when: dt.datetime | None = None) -> str:
    """The compared schedules day by day for a reader: one row per schedule and day, values
    rounded as on screen, SaO2 and SpO2 in %, pressures in ``ws.pressure_unit``; a last row
    holds the caution, the date and the pressure model of each schedule."""
    cols = _table_columns(ws.pressure_unit)
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(["Schedule", *[c[0] for c in cols]])
    models = []
    for key in ws.compared:
        r = ws.results[key]
        models.append(
            f"{r.profile.name}: {PRESSURE_MODEL_NAMES.get(r.profile.baseline.pressure_model, '?')}"
        )
        for d in day_rows(r):
            w.writerow([r.profile.name, *[fmt(d) for _h, fmt in cols]])
    note = (
        f"o2transit ascent comparison made {_now(when).isoformat()}. Predicted SpO2: about "
        f"95 % of resting readings on this schedule. Pressures: {'; '.join(models)}. {CAUTION}"
    )
    w.writerow(["Note", *[""] * (len(cols) - 1), note])
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
    cols = _table_columns(ws.pressure_unit)
    head = "".join(
        f"<th{' style=text-align:left' if i == len(cols) - 1 else ''}>{html.escape(h)}</th>"
        for i, (h, _f) in enumerate(cols)
    )
    rows = []
    for d in day_rows(r):
        cells = [fmt(d) for _h, fmt in cols]
        rows.append(
            "<tr>"
            + "".join(f"<td>{html.escape(c)}</td>" for c in cells[:-1])
            + f"<td class='f'>{html.escape(cells[-1])}</td></tr>"
        )
    return f"<table class='days'><tr>{head}</tr>{''.join(rows)}</table>"


def _readings_table(ws: AscentWorkspace, key: str) -> str:
    readings = ws.readings.get(key, ())
    fit = ws.fits.get(key)
    if not readings or fit is None:
        return ""
    head = (
        "<tr><th>Day</th><th>Altitude (m)</th><th>SpO2 read (%)</th><th>Forecast, this "
        "person (%)</th><th>Forecast, typical lowlander (%)</th><th>Heart rate (/min)</th>"
        "<th>Lake Louise score</th></tr>"
    )
    rows = "".join(
        f"<tr><td>{x.day}</td><td>{x.altitude_m:.0f}</td><td>{x.spo2_pct:.0f}</td>"
        f"<td>{fit.fitted_pct[i]:.0f}</td><td>{fit.typical_pct[i]:.0f}</td>"
        f"<td>{'' if x.heart_rate_min is None else f'{x.heart_rate_min:.0f}'}</td>"
        f"<td>{'' if x.lake_louise_score is None else x.lake_louise_score}</td></tr>"
        for i, x in enumerate(readings)
    )
    return (
        f"<p class='meta'>Readings logged on the way:</p><table class='days'>{head}{rows}</table>"
    )


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
        + f"<p class='meta'>Pressures from the "
        f"{html.escape(PRESSURE_MODEL_NAMES.get(ws.results[k].profile.baseline.pressure_model, '?'))}"
        f"; pressures in {ws.pressure_unit}.</p>" + _day_table(ws, k) + _readings_table(ws, k)
        for k in ws.compared
    )
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>o2transit ascent comparison: {html.escape(" / ".join(names))}</title>
{inline_resources()}
<style>{PAGE_CSS}{LEGEND_CSS}{SUMMARY_CSS}{PRINT_CSS}</style>
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
<p class="meta">{html.escape(BAND_NOTE)}</p>
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
