"""The planner's comparison drawn: day-by-day Bokeh figures (built once, data replaced),
the legend, the side-by-side summary table and the list of flags, as HTML.

Used by the live screen (:mod:`dashboard.ascent.comparison_views`) and by the offline HTML
export (:mod:`dashboard.ascent.export`), so both show the same drawing. Schedules are told
apart by colour and by line dash; a flagged day is a triangle, an ordinary night a circle, so
neither depends on colour alone.
"""

from __future__ import annotations

import html

import numpy as np
from bokeh.models import (
    ColumnDataSource,
    DataRange1d,
    HoverTool,
    Label,
    Span,
    TapTool,
)
from bokeh.plotting import figure

from ..look import ACCENT, INK
from ..responsive import set_data

# Colour-blind-safe set (Okabe & Ito 2008, "Color universal design"), one per slot.
SLOT_COLORS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7")
SLOT_DASHES = ("solid", "dashed", "dotdash", "dotted")
SVG_DASHES = {"solid": "", "dashed": "8 5", "dotdash": "2 4 8 4", "dotted": "2 4"}
NIGHT_MARKER, FLAG_MARKER = "circle", "triangle"
READING_MARKER = "diamond"
FLAG_LINE = "#7a1414"
BAND_ALPHA = 0.16
BAND_NOTE = (
    "The shaded band is the predicted SpO2 of a resting reading at the sleeping altitude "
    "(pulse oximeter, awake, on air unless oxygen is scheduled) for about 95 % of lowlanders "
    "on this schedule, or for this person once their readings are entered. A reading at rest "
    "below the band's lower edge is unusual for this schedule: recheck it (warm hands, still, "
    "a minute of steady reading) and, if it stays low, act on it as your local protocol says. "
    "A reading within the band is not a sign of health: altitude illness is diagnosed by "
    "symptoms, not by SpO2. Readings taken asleep or just after effort run lower."
)

PANELS = (
    # key, series column, title, y-axis label, digits for the hover
    ("altitude", "sleep_altitude_m", "Sleeping altitude and the day's high point", "m", 0),
    ("pao2", "pao2", "PaO2 at night", "mmHg", 1),
    ("sao2", "sao2_pct", "SaO2 at night", "%", 1),
    ("cao2", "cao2_ml_dl", "CaO2 at night", "mL O2/dL", 1),
)
_EMPTY_POINTS = {
    "x": [],
    "y": [],
    "key": [],
    "name": [],
    "marker": [],
    "size": [],
    "fill": [],
    "line": [],
    "flags": [],
    "text": [],
}


class ComparisonFigures:
    """Four linked figures (altitude, PaO2, SaO2, CaO2) for up to four schedules.

    ``point_sources[panel]`` holds every plotted night of that panel (columns ``key`` and
    ``x`` = day say which); a tap selects rows there.
    """

    def __init__(self, width: int | None = None, height: int = 270, tap: bool = True):
        self.x_range = DataRange1d(range_padding=0.04)
        self.line_sources = {p[0]: [] for p in PANELS}
        self.point_sources = {}
        self.high_source = ColumnDataSource(
            data={"x": [], "y0": [], "y1": [], "color": [], "name": [], "text": []}
        )
        self.figures = {}
        self._lines = {p[0]: [] for p in PANELS}
        self.threshold_spans = []
        self.threshold_labels = []
        self.band_sources = []
        self.reading_source = ColumnDataSource(
            data={k: [] for k in ("x", "y", "key", "name", "fill", "text")}
        )
        for key, _col, title, unit, digits in PANELS:
            kw = {"width": width} if width else {"sizing_mode": "stretch_width"}
            fig = figure(
                height=height,
                x_range=self.x_range,
                title=title,
                toolbar_location=None,
                tools="",
                **kw,
            )
            fig.title.text_font_size = "14px"
            fig.title.text_color = INK
            fig.background_fill_color = "#f8faf9"
            fig.grid.grid_line_color = "#e2e8e6"
            fig.xaxis.axis_label = "day"
            fig.yaxis.axis_label = unit
            fig.axis.axis_label_text_font_style = "normal"
            fig.axis.major_label_text_font_size = "12px"
            fig.outline_line_color = None
            if key == "sao2":
                for slot in range(len(SLOT_COLORS)):
                    band = ColumnDataSource(data={"x": [], "y1": [], "y2": []})
                    fig.varea(
                        "x",
                        "y1",
                        "y2",
                        source=band,
                        fill_color=SLOT_COLORS[slot],
                        fill_alpha=BAND_ALPHA,
                    )
                    self.band_sources.append(band)
            for slot in range(len(SLOT_COLORS)):
                src = ColumnDataSource(data={"x": [], "y": []})
                line = fig.line(
                    "x",
                    "y",
                    source=src,
                    color=SLOT_COLORS[slot],
                    line_dash=SLOT_DASHES[slot],
                    line_width=2.5,
                )
                self.line_sources[key].append(src)
                self._lines[key].append(line)
            if key == "altitude":
                fig.segment(
                    "x",
                    "y0",
                    "x",
                    "y1",
                    source=self.high_source,
                    color="color",
                    line_width=2,
                    alpha=0.8,
                )
                highs = fig.scatter(
                    "x",
                    "y1",
                    source=self.high_source,
                    marker="dash",
                    size=14,
                    line_width=3,
                    color="color",
                )
                fig.add_tools(
                    HoverTool(
                        renderers=[highs],
                        tooltips=[("", "@name"), ("", "@text")],
                    )
                )
            points = ColumnDataSource(data=dict(_EMPTY_POINTS))
            scatter = fig.scatter(
                "x",
                "y",
                source=points,
                marker="marker",
                size="size",
                fill_color="fill",
                line_color="line",
                line_width=1.5,
                selection_line_color=INK,
                selection_line_width=3,
                nonselection_fill_alpha=0.55,
                nonselection_line_alpha=0.55,
            )
            fig.add_tools(
                HoverTool(
                    renderers=[scatter],
                    tooltips=[("", "@name"), ("", "@text"), ("", "@flags")],
                )
            )
            if tap:
                fig.add_tools(TapTool(renderers=[scatter]))
            if key == "sao2":
                logged = fig.scatter(
                    "x",
                    "y",
                    source=self.reading_source,
                    marker=READING_MARKER,
                    size=12,
                    fill_color="fill",
                    line_color=INK,
                    line_width=1.5,
                )
                fig.add_tools(
                    HoverTool(renderers=[logged], tooltips=[("", "@name"), ("", "@text")])
                )
                for _ in range(2):
                    span = Span(
                        location=np.nan,
                        dimension="width",
                        line_color=ACCENT,
                        line_dash="dashed",
                        line_width=1.5,
                    )
                    label = Label(
                        x=4,
                        y=0,
                        x_units="screen",
                        text="",
                        text_font_size="11px",
                        text_color=ACCENT,
                        y_offset=2,
                    )
                    fig.add_layout(span)
                    fig.add_layout(label)
                    self.threshold_spans.append(span)
                    self.threshold_labels.append(label)
            self.point_sources[key] = points
            self.figures[key] = fig

    def update(self, compared: list[tuple[str, dict]], thresholds_pct=(90.0, 80.0)) -> None:
        """Replace the data: ``compared`` is ``[(key, series), ...]`` (at most four), each
        series as :meth:`dashboard.ascent.state.AscentWorkspace.series` gives it (with its
        ``name`` and drawing ``slot``)."""
        pressure = compared[0][1].get("pressure_unit", "mmHg") if compared else "mmHg"
        for key, col, _title, unit, digits in PANELS:
            if key == "pao2":
                unit, digits = pressure, (2 if pressure == "kPa" else 1)
                self.figures[key].yaxis.axis_label = unit
            pts = {k: [] for k in _EMPTY_POINTS}
            drawn = {int(s["slot"]): (skey, s) for skey, s in compared}
            for slot in range(len(SLOT_COLORS)):
                src = self.line_sources[key][slot]
                if slot not in drawn:
                    set_data(src, {"x": [], "y": []})
                    continue
                skey, s = drawn[slot]
                x = [int(v) for v in s["day"]]
                y = [float(v) for v in s[col]]
                set_data(src, {"x": x, "y": y})
                color = SLOT_COLORS[slot]
                for i, (xi, yi) in enumerate(zip(x, y)):
                    flagged = bool(s["flagged"][i])
                    pts["x"].append(xi)
                    pts["y"].append(yi)
                    pts["key"].append(skey)
                    pts["name"].append(s["name"])
                    pts["marker"].append(FLAG_MARKER if flagged else NIGHT_MARKER)
                    pts["size"].append(13 if flagged else 7)
                    pts["fill"].append(color)
                    pts["line"].append(FLAG_LINE if flagged else color)
                    pts["flags"].append(f"⚠ {s['flags'][i]}" if flagged else "")
                    extra = ""
                    if key == "sao2":
                        extra = (
                            f"; predicted SpO2 {s['spo2_low_pct'][i]:.0f}-"
                            f"{s['spo2_high_pct'][i]:.0f} %"
                        )
                    pts["text"].append(
                        f"night {xi}: {_night_text(s, i)} — "
                        f"{key_text(key, yi, unit, digits)}{extra}"
                    )
            if not _same_data(self.point_sources[key].data, pts):
                set_data(self.point_sources[key], pts)
                self.point_sources[key].selected.indices = []
        drawn = {int(s["slot"]): s for _skey, s in compared}
        for slot, band in enumerate(self.band_sources):
            s = drawn.get(slot)
            set_data(
                band,
                {"x": [], "y1": [], "y2": []}
                if s is None
                else {
                    "x": [int(v) for v in s["day"]],
                    "y1": [float(v) for v in s["spo2_low_pct"]],
                    "y2": [float(v) for v in s["spo2_high_pct"]],
                },
            )
        logged = {k: [] for k in ("x", "y", "key", "name", "fill", "text")}
        for skey, s in compared:
            for i, day in enumerate(s.get("readings_day", [])):
                logged["x"].append(int(day))
                logged["y"].append(float(s["readings_spo2_pct"][i]))
                logged["key"].append(skey)
                logged["name"].append(s["name"])
                logged["fill"].append(SLOT_COLORS[int(s["slot"])])
                logged["text"].append(reading_text(s, i))
        set_data(self.reading_source, logged)
        hi = {k: [] for k in ("x", "y0", "y1", "color", "name", "text")}
        for _skey, s in compared:
            slot = int(s["slot"])
            for i in np.flatnonzero(s["high_given"]):
                hi["x"].append(int(s["day"][i]))
                hi["y0"].append(float(s["sleep_altitude_m"][i]))
                hi["y1"].append(float(s["high_altitude_m"][i]))
                hi["color"].append(SLOT_COLORS[slot])
                hi["name"].append(s["name"])
                pd = 2 if pressure == "kPa" else 1
                hi["text"].append(
                    f"day {int(s['day'][i])} high point {s['high_altitude_m'][i]:.0f} m: "
                    f"PaO2 {s['high_pao2'][i]:.{pd}f} {pressure}, SaO2 "
                    f"{s['high_sao2_pct'][i]:.1f} %"
                )
        set_data(self.high_source, hi)
        self.set_thresholds(thresholds_pct)

    def set_thresholds(self, thresholds_pct=(90.0, 80.0)) -> None:
        """Move the threshold lines of the SaO2 figure and their labels (nothing else)."""
        for span, label, t in zip(self.threshold_spans, self.threshold_labels, thresholds_pct):
            span.location = float(t)
            label.y = float(t)
            label.text = f"{t:g} %"

    def grid(self):
        """The four figures as a 2 x 2 Bokeh grid (for a standalone page)."""
        from bokeh.layouts import gridplot

        f = self.figures
        return gridplot([[f["altitude"], f["pao2"]], [f["sao2"], f["cao2"]]], toolbar_location=None)


def _same_data(old: dict, new: dict) -> bool:
    """Whether a source's data already holds ``new`` (same columns, same values)."""
    return set(old) == set(new) and all(list(old[k]) == list(new[k]) for k in new)


def reading_text(s: dict, i: int) -> str:
    """Hover text of reading ``i`` of a series: the reading beside its forecast."""
    day, alt = int(s["readings_day"][i]), float(s["readings_altitude_m"][i])
    text = f"reading day {day} at {alt:.0f} m: SpO2 {s['readings_spo2_pct'][i]:.0f} %"
    if len(s.get("readings_forecast_pct", [])) > i:
        text += (
            f"; forecast for this person {s['readings_forecast_pct'][i]:.0f} %, for a typical "
            f"lowlander {s['readings_typical_pct'][i]:.0f} %"
        )
    hr, lls = s["readings_heart_rate"][i], s["readings_lake_louise"][i]
    if hr is not None:
        text += f"; heart rate {hr:.0f}/min"
    if lls is not None:
        text += f"; Lake Louise score {lls}"
    return text


def key_text(panel: str, value: float, unit: str, digits: int) -> str:
    label = {"altitude": "sleeping", "pao2": "PaO2", "sao2": "SaO2", "cao2": "CaO2"}[panel]
    return f"{label} {value:.{digits}f} {unit}"


def _night_text(s: dict, i: int) -> str:
    fio2 = float(s["fio2"][i])
    gas = "air" if fio2 <= 0.21 else f"FiO2 {fio2:.2f}"
    return f"{float(s['sleep_altitude_m'][i]):.0f} m on {gas}"


def legend_html(entries: list[tuple[str, int]]) -> str:
    """A legend row: each schedule's colour and dash (``(name, slot)`` pairs), the
    flagged-day and high-point marks."""
    items = []
    for name, slot in entries[: len(SLOT_COLORS)]:
        dash = SVG_DASHES[SLOT_DASHES[slot]]
        items.append(
            "<span class='o2-legend-item'><svg width='46' height='14' aria-hidden='true'>"
            f"<line x1='2' y1='7' x2='44' y2='7' stroke='{SLOT_COLORS[slot]}' stroke-width='3' "
            f"stroke-dasharray='{dash}'/><circle cx='23' cy='7' r='3.5' "
            f"fill='{SLOT_COLORS[slot]}'/></svg> {html.escape(name)}</span>"
        )
    items.append(
        "<span class='o2-legend-item'><svg width='18' height='16' aria-hidden='true'>"
        f"<polygon points='9,2 16,14 2,14' fill='#9aa5a8' stroke='{FLAG_LINE}' "
        "stroke-width='1.5'/></svg> day breaking ascent-rate guidance</span>"
    )
    items.append(
        "<span class='o2-legend-item'><svg width='26' height='14' aria-hidden='true'>"
        f"<rect x='1' y='2' width='24' height='10' fill='#5b6770' fill-opacity='{BAND_ALPHA * 2}'/>"
        "</svg> predicted SpO2 at rest (band)</span>"
    )
    items.append(
        "<span class='o2-legend-item'><svg width='18' height='16' aria-hidden='true'>"
        f"<polygon points='9,2 16,8 9,14 2,8' fill='#9aa5a8' stroke='{INK}' stroke-width='1.5'/>"
        "</svg> logged reading</span>"
    )
    items.append(
        "<span class='o2-legend-item'><svg width='18' height='16' aria-hidden='true'>"
        "<line x1='9' y1='15' x2='9' y2='4' stroke='#5b6770' stroke-width='2'/>"
        "<line x1='3' y1='3' x2='15' y2='3' stroke='#5b6770' stroke-width='3'/></svg>"
        " day's high point (altitude)</span>"
    )
    return "<div class='o2-legend'>" + "".join(items) + "</div>"


LEGEND_CSS = """
.o2-legend { display: flex; flex-wrap: wrap; gap: 4px 22px; font-size: 14px; color: #1f2a30;
  align-items: center; }
.o2-legend-item { display: inline-flex; align-items: center; gap: 6px; white-space: nowrap; }
"""


SUMMARY_CSS = f"""
table.o2s {{ border-collapse: collapse; font-family: 'Liberation Sans', Arial, sans-serif;
  font-size: 14px; color: {INK}; width: 100%; }}
table.o2s th {{ text-align: right; font-weight: 600; border-bottom: 2px solid {ACCENT};
  padding: 4px 8px; vertical-align: bottom; }}
table.o2s th.what, table.o2s td.what {{ text-align: left; }}
table.o2s td {{ padding: 4px 8px; border-bottom: 1px solid #e3e6e8; text-align: right;
  font-variant-numeric: tabular-nums; }}
table.o2s td.what {{ color: #46545c; min-width: 210px; }}
table.o2s td.risk-high {{ color: #9a1b1b; font-weight: 700; }}
table.o2s td.risk-moderate {{ color: #8a5a00; font-weight: 700; }}
table.o2s td.risk-low {{ color: #1d5c3a; font-weight: 700; }}
table.o2s span.why {{ display: block; font-weight: 400; font-size: 12px; color: #5b6770; }}
table.o2s span.sw {{ display: inline-block; width: 22px; height: 4px; margin-right: 6px;
  vertical-align: middle; }}
ul.o2f {{ margin: 2px 0 8px 0; padding-left: 20px; font-size: 14px; color: {INK}; }}
ul.o2f li {{ margin: 2px 0; }}
"""


def summary_html(summaries: list[dict], thresholds_pct=(90.0, 80.0)) -> str:
    """Side-by-side summary: one column per schedule, one row per measure."""
    if not summaries:
        return "<p>No schedule compared yet.</p>"
    hi, lo = thresholds_pct
    rows = [
        ("Days in the schedule", lambda s: f"{s['days']}", "days"),
        ("Lowest night SaO2", lambda s: f"{100 * s['lowest_night_sao2']:.1f} %", "lowest"),
        (
            "Predicted SpO2 that night (band)",
            lambda s: (
                f"{100 * s['lowest_night_band'][0]:.0f}–{100 * s['lowest_night_band'][1]:.0f} %"
            ),
            "lowest_band",
        ),
        (f"Nights below {hi:g} %", lambda s: f"{s['nights_below_high']}", "below_high"),
        (f"Nights below {lo:g} %", lambda s: f"{s['nights_below_low']}", "below_low"),
        (
            f"Hypoxic burden below {hi:g} % (saturation-days)",
            lambda s: f"{s['hypoxic_burden']:.2f}",
            "burden",
        ),
        (
            "Top reached (day)",
            lambda s: f"{s['top_altitude_m']:.0f} m (day {s['days_to_top']})",
            "top",
        ),
        ("Highest night", lambda s: f"{s['highest_sleep_altitude_m']:.0f} m", "highest_night"),
        ("Guidance flags", lambda s: f"{s['flag_count']}", "flags"),
        ("Forecast for", _fit_text, "fit"),
        ("Pressures from", lambda s: html.escape(s["pressure_model"]), "pressure_model"),
    ]
    head = (
        "<tr><th class='what'>Measure</th>"
        + "".join(
            f"<th><span class='sw' style='background:{SLOT_COLORS[i]}'></span>"
            f"{html.escape(s['name'])}</th>"
            for i, s in enumerate(summaries)
        )
        + "</tr>"
    )
    body = []
    for label, fmt, key in rows:
        cells = "".join(f"<td>{fmt(s)}</td>" for s in summaries)
        body.append(f"<tr data-row='{key}'><td class='what'>{html.escape(label)}</td>{cells}</tr>")
    risk = "".join(
        f"<td class='risk-{s['risk_category']}'>{s['risk_category']}"
        f"<span class='why'>{html.escape('; '.join(s['risk_reasons']) or 'no reason found')}"
        "</span></td>"
        for s in summaries
    )
    body.append(
        f"<tr data-row='risk'><td class='what'>Risk category (guideline table)</td>{risk}</tr>"
    )
    return f"<table class='o2s'>{head}{''.join(body)}</table>"


def _fit_text(s: dict) -> str:
    fit = s.get("fit")
    if fit is None:
        return "a typical lowlander (no readings)"
    sign = "+" if fit.offset_mmhg >= 0 else "−"
    more = "less" if fit.offset_mmhg >= 0 else "more"
    text = (
        f"this person, from {fit.n} reading{'s' if fit.n != 1 else ''}: breathes {more} than "
        f"typical (PaCO2 {sign}{abs(fit.offset_mmhg):.1f} ± {fit.sd_mmhg:.1f} mmHg)"
    )
    if fit.at_limit:
        text += "; at the limit of the model: check the readings"
    return text


def flags_html(flagged: list[tuple[str, list[tuple[int, float, str]], int]]) -> str:
    """The guidance flags of each schedule: ``[(name, [(day, sleep m, text), ...], slot)]``."""
    parts = []
    for name, days, slot in flagged:
        color = SLOT_COLORS[slot % len(SLOT_COLORS)]
        title = f"<b><span style='color:{color}'>■</span> {html.escape(name)}</b>: " + (
            "no day breaks the ascent-rate guidance" if not days else f"{len(days)} day(s)"
        )
        items = "".join(
            f"<li>Day {d} (night at {h:.0f} m): {html.escape(t)}</li>" for d, h, t in days
        )
        parts.append(f"<div>{title}</div>" + (f"<ul class='o2f'>{items}</ul>" if items else ""))
    return "".join(parts) or "<p>No schedule compared yet.</p>"
