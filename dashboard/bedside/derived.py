"""The derived picture of an accepted gas as rows: value in display units, flag, source, note.

``model.bedside.derive`` computes the values; this module only converts, flags against
``model.bedside.USUAL_RANGES`` and names the method behind each. No Panel import here.
"""

from __future__ import annotations

import dataclasses
import math
import re

from ...model import bedside
from ..case.state import CaseState
from .display import Row
from .wording import expected_aa, in_display_units, shown_value, usual_range

FRACTION_AS_PERCENT = frozenset({"shunt_fraction", "extraction_ratio", "sao2_from_curve"})
"""Derived fractions shown in percent."""

DERIVED_SOURCES: dict[str, str] = {
    # Short citations of the method behind each derived value (full references in
    # model.bedside's docstring).
    "barometric_pressure_used_mmhg": "measured; else ICAO standard atmosphere",
    "alveolar_po2_mmhg": "alveolar gas equation, Fenn, Rahn & Otis 1946",
    "aa_gradient_mmhg": "PAO2 − PaO2",
    "aa_gradient_expected_mmhg": "Mellemgaard 1966: 2.5 + 0.21 × age (air)",
    "pao2_fio2_ratio": "PaO2 / FiO2",
    "pao2_fio2_ratio_pb_corrected": "× PB/760, Berlin definition 2012",
    "pf_category_berlin": "ARDS Definition Task Force, JAMA 2012",
    "pf_category_global2024": "Matthay et al., Am J Respir Crit Care Med 2024",
    "sao2_fio2_ratio": "Matthay et al. 2024 (SpO2/FiO2; SaO2 used)",
    "sf_category_global2024": "Matthay et al. 2024",
    "oxygenation_index": "FiO2 × mean airway pressure × 100 / PaO2",
    "sao2_from_curve": "Severinghaus 1979 with Kelman 1966 factors",
    "cao2_ml_dl": "1.34 × Hb × SaO2 + 0.003 × PaO2",
    "cco2_ml_dl": "as CaO2, at PAO2 on the curve",
    "cvo2_ml_dl": "as CaO2, venous",
    "shunt_fraction": "Berggren 1942",
    "bsa_m2": "Mosteller 1987",
    "cardiac_output_used_l_min": "measured; else CI × BSA",
    "cardiac_index_used_l_min_m2": "CO / BSA",
    "do2_ml_min": "10 × CO × CaO2",
    "do2i_ml_min_m2": "10 × CI × CaO2",
    "vo2_ml_min": "Fick 1870",
    "vo2i_ml_min_m2": "Fick 1870, per m²",
    "extraction_ratio": "(CaO2 − CvO2) / CaO2",
    "pco2_gap_mmhg": "PvCO2 − PaCO2; cut-off Ospina-Tascón 2013",
    "p50_insitu_mmhg": "single point, Hill n 2.7: Doyle 1997",
    "p50_standard_mmhg": "to pH 7.40, PCO2 40 mmHg by Kelman 1966",
    "alpha_stat_pao2_mmhg": "alpha-stat (Swan 1984): as measured",
    "alpha_stat_paco2_mmhg": "alpha-stat: as measured",
    "alpha_stat_ph": "alpha-stat: as measured",
    "ph_stat_pao2_mmhg": "Severinghaus 1979 Eq 3",
    "ph_stat_paco2_mmhg": "Bradley, Severinghaus & Stupfel 1956",
    "ph_stat_ph": "Rosenthal 1948, −0.0147/°C",
}

CATEGORY_SETS = {
    "pf_category_berlin": "berlin2012",
    "pf_category_global2024": "global2024",
    "sf_category_global2024": "global2024_sf",
}
"""Category row -> its set of labels in model.bedside.PF_CATEGORY_LABELS."""


@dataclasses.dataclass(frozen=True)
class DerivedRow(Row):
    """One derived value as shown: key, label, formatted value, unit, flag, source, note,
    and its usual range in display units ('' where none is set)."""

    flag: str
    source: str
    note: str
    usual: str = ""


def flag(key: str, value: float, derived: dict | None) -> str:
    """'▲ high' / '▼ low' against model.bedside.USUAL_RANGES, else ''.

    P/F is flagged by its Berlin category and the A-a gradient against the age-expected
    one, both read from ``derived``; without an age, against the value expected at the upper
    end of adult ages (:data:`dashboard.bedside.wording.ADULT_AGE_YEARS`), and said so.
    """
    if key.startswith("pao2_fio2_ratio"):
        codes = bedside.PF_CATEGORIES[1:]
        if str((derived or {}).get("pf_category_berlin", "")) in codes:
            return "▼ ARDS range"
        return ""
    if key == "aa_gradient_mmhg":
        expected, adult = expected_aa(derived)
        if expected is not None and value > expected:
            return "▲ above adult value (no age)" if adult else "▲ above age-expected"
        return ""
    low, high = bedside.USUAL_RANGES.get(key, (None, None, "", ""))[:2]
    if low is not None and value < low:
        return "▼ low"
    if high is not None and value > high:
        return "▲ high"
    return ""


def _shown(case: CaseState, key: str, value: float, unit: str, digits: int):
    """(value, unit, digits) of a derived value as displayed."""
    if unit == "mmHg":
        if case.pressure_unit == "kPa":
            digits = 1 if digits == 0 else 2
        return case.pressure_to_display(value), case.pressure_unit, digits
    if key in FRACTION_AS_PERCENT:
        return 100.0 * value, "%", max(digits - 2, 0)
    if key == "sao2_fio2_ratio":
        return value, "", digits  # SaO2 in % over FiO2 as a fraction: a ratio, no unit
    return value, unit.replace("m2", "m²"), digits


def _category_row(case: CaseState, key: str, label: str, code: str) -> DerivedRow:
    """An ARDS category in words; in kPa the note gives the mmHg cut-offs converted."""
    labels = bedside.PF_CATEGORY_LABELS[CATEGORY_SETS[key]]
    note, text = "", labels.get(code, code)
    if key.startswith("pf_") and case.pressure_unit == "kPa":
        kpa = ", ".join(f"{case.pressure_to_display(c):.1f}" for c in (100, 200, 300))
        note = f"cut-offs are in mmHg: 100, 200, 300 mmHg = {kpa} kPa"
        text = _PF_BOUND.sub(lambda m: f"{case.pressure_to_display(float(m.group(0))):.1f}", text)
    if key.startswith("pf_"):
        text = _PF_TAIL.sub(rf"\1 {case.pressure_unit}\2", text)
    text = text.replace("<=", "≤").replace(">=", "≥")
    return DerivedRow(key, label, text, "", "", DERIVED_SOURCES[key], note)


_PF_BOUND = re.compile(r"(?<=P/F <= )\d+|(?<=P/F above )\d+|\d+(?= < P/F)")
"""The mmHg cut-offs in a P/F category's words ('100 < P/F <= 200', 'P/F above 300')."""
_PF_TAIL = re.compile(r"(P/F (?:<=|above) \d+(?:\.\d)?)(:|,|;|\))")
"""The last cut-off of a P/F category, where its unit goes."""


def derived_rows(derived: dict | None, case: CaseState) -> list[DerivedRow]:
    """Derived values in display units with flag, short source and note.

    A value that could not be computed is left out, except the in-situ P50, which is
    kept with its refusal reason so the user sees why it is missing.
    """
    if not derived:
        return []
    rows = []
    for key, (unit, label, digits) in bedside.DERIVED_FIELDS.items():
        raw = derived.get(key)
        if key in CATEGORY_SETS:
            if raw is not None and str(raw):
                rows.append(_category_row(case, key, label, str(raw)))
            continue
        value = float(raw) if raw is not None else float("nan")
        if not math.isfinite(value):
            reason = derived.get("p50_insitu_reason") if key == "p50_insitu_mmhg" else None
            if reason:
                source = DERIVED_SOURCES[key]
                rows.append(DerivedRow(key, label, "refused", "", "", source, str(reason)))
            continue
        shown, shown_unit, shown_digits = _shown(case, key, value, unit, digits)
        rows.append(
            DerivedRow(
                key,
                in_display_units(case, label.replace("degC", "°C")),
                f"{shown:.{shown_digits}f}".replace("-", "−"),
                shown_unit,
                # Flagged as shown: a value that rounds onto a bound is not beyond it.
                flag(key, shown_value(case, key, value, shown_digits), derived),
                in_display_units(case, DERIVED_SOURCES.get(key, "")),
                "",
                usual_range(case, key, derived),
            )
        )
    return rows
