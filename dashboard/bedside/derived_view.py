"""The derived picture of the bedside screen: grouped table, temperature table, notes."""

from __future__ import annotations

import html

import panel as pn

from .panes import BedsidePanel, heading, table_pane
from .state import BedsideState
from .wording import flag_items, in_display_units

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


class DerivedTable(BedsidePanel):
    """Derived values with unit, flag and short source; notes, reasons and flags below."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        self._pane = table_pane("o2-bs-derived")
        self._layout = pn.Column(
            heading("2 · Derived picture"), self._pane, sizing_mode="stretch_width"
        )
        state.entry.param.watch(self._update, ["derived"])
        state.case.param.watch(self._update, ["pressure_unit", "hb_unit"])
        self._update()

    def _update(self, *_events) -> None:
        entry = self._state.entry
        rows = {r.key: r for r in entry.derived_rows()}
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
            body.append(f"<tr class='grp'><td colspan='5'>{html.escape(title)}</td></tr>")
            for r in present:
                flag_cls = "flag-high" if r.flag.startswith("▲") else "flag-low" if r.flag else ""
                note = f"<div class='note'>{html.escape(r.note)}</div>" if r.note else ""
                label = (
                    f"<td>{html.escape(r.label)}<div class='src'>{html.escape(r.source)}</div>"
                    f"{note}</td>"
                )
                if "_category_" in r.key:
                    cells = f"<td class='cat' colspan='4'>{html.escape(r.value)}</td>"
                else:
                    cells = (
                        f"<td class='val'>{html.escape(r.value)}</td>"
                        f"<td>{html.escape(r.unit)}</td>"
                        "<td class='range' style='white-space:nowrap'>"
                        f"{html.escape(r.usual)}</td>"
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
        t_c = (entry.measured or {}).get("temperature_c", 37.0)
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
            items = [in_display_units(self._state.case, i) for i in entry.derived_text(name)]
            if name == "flags":
                items = flag_items(
                    self._state.case, entry.measured, list(rows.values()), entry.derived_text(name)
                )
            if items:
                extra.append(
                    f"<div class='o2-bs-{name}'><b>{title}:</b> "
                    + "; ".join(html.escape(i) for i in items)
                    + "</div>"
                )
        self._pane.object = (
            "<table class='o2t o2-bs-dt'><tr><th>Quantity · method</th>"
            "<th style='text-align:right'>Value</th><th>Unit</th><th>Usual</th><th></th></tr>"
            + "".join(body)
            + "</table>"
            + temp_table
            + "<div style='font-size:13px;margin-top:6px;line-height:1.45'>"
            + "".join(extra)
            + "</div>"
        )
