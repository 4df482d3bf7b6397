"""The factors lecture mode moves one at a time, each with its range, step and caption.

No Panel import. A :class:`Factor` knows which case inputs move it alone, how its value is
shown (pressures in the chosen unit, fractions in %), how a slider for it is set, and how
its value is written in and read back from the page address. Values are kept in the
model's units; a ``units`` argument is the :class:`~dashboard.case.units.DisplayUnits` of
the case being shown.
"""

from __future__ import annotations

import dataclasses

from ... import model
from ..case.formatting import quoted
from ..case.units import DisplayUnits

FETAL_P50_MMHG = 19.0
"""Standard-state P50 of fetal blood [mmHg]. From memory: typical fetal values are about
19-20 mmHg (the Siggaard-Andersen 1990 tanh model gives about 20 mmHg for all-fetal Hb)."""


@dataclasses.dataclass(frozen=True)
class Factor:
    """One factor the lecturer can move alone; ``values`` are model units of ``name``."""

    key: str
    label: str
    unit: str  # the model unit; "pressure" means mmHg shown in the display unit
    reference: float
    lo: float
    hi: float
    step: float
    caption: str
    percent: bool = False  # shown ×100 with a % sign
    choices: tuple[tuple[str, float], ...] = ()  # a two-state factor instead of a range

    def inputs(self, value: float, base_excess_mmol_l: float = 0.0) -> dict:
        """CaseState inputs (scenario key names) that move this factor alone.

        PCO2 moves at a constant base excess (the reference case's), so the pH follows it.
        """
        if self.key == "fetal":
            return {"p50_mmhg": FETAL_P50_MMHG} if value >= 0.5 else {}
        if self.key == "paco2_mmhg":
            return {"paco2_mmhg": value, "base_excess_mmol_l": base_excess_mmol_l}
        return {self.key: value}

    # ------------------------------------------------------------------ on screen
    def to_shown(self, value: float, units: DisplayUnits) -> float:
        if self.unit == "pressure":
            return units.pressure_to_display(value)
        return 100.0 * value if self.percent else value

    def from_shown(self, value: float, units: DisplayUnits) -> float:
        if self.unit == "pressure":
            return units.pressure_from_display(value)
        return value / 100.0 if self.percent else value

    def control(self, value: float, units: DisplayUnits) -> dict:
        """The slider at ``value`` in display units: label, unit, lo, hi, step, value,
        reference, choices."""
        unit = units.pressure_unit if self.unit == "pressure" else self.unit
        step = self.step
        if self.unit == "pressure" and units.pressure_unit == "kPa":
            step = 0.1
        elif self.percent:
            step = 100.0 * self.step
        return {
            "label": self.label,
            "unit": unit,
            "lo": self.to_shown(self.lo, units),
            "hi": self.to_shown(self.hi, units),
            "step": step,
            "value": self.to_shown(value, units),
            "reference": self.to_shown(self.reference, units),
            "choices": self.choices,
        }

    def heading(self, value: float, units: DisplayUnits) -> str:
        """'pH 7.20', 'PCO2 5.3 kPa', 'Fetal Hb: fetal blood'."""
        if self.choices:
            shown = {v: k for k, v in self.choices}[round(value)]
            return f"{self.label}: {shown} blood"
        c = self.control(value, units)
        digits = 2 if c["step"] < 0.1 else (1 if c["step"] < 1 else 0)
        unit = f" {c['unit']}" if c["unit"] else ""
        return f"{self.label} {c['value']:.{digits}f}{unit}"

    # ------------------------------------------------------------------ page address
    def query_text(self, value: float) -> str:
        """The value as written in the page address (model units)."""
        if self.choices:
            return "true" if value >= 0.5 else "false"
        return format(value, ".10g")

    def parse(self, raw: str) -> tuple[float | None, str]:
        """(value, '') from the page address text, or (None, why it cannot be used)."""
        if self.choices:
            word = raw.strip().lower()
            if word in ("true", "1", "yes", "fetal"):
                return 1.0, ""
            if word in ("false", "0", "no", "adult"):
                return 0.0, ""
            return None, f"{self.key} = {quoted(raw)} must be true or false; adult blood is shown"
        unit = "mmHg" if self.unit == "pressure" else ("" if self.percent else self.unit)
        unit = f" {unit}" if unit else ""
        try:
            value = float(raw)
        except ValueError:
            value = float("nan")
        if not self.lo <= value <= self.hi:
            return None, (
                f"{self.label}: {self.key} = {quoted(raw)} is outside the allowed range "
                f"{self.lo:g}–{self.hi:g}{unit}; the reference {self.reference:g}{unit} is used"
            )
        return value, ""


FACTORS: dict[str, Factor] = {
    f.key: f
    for f in (
        Factor(
            "ph",
            "pH",
            "",
            7.40,
            6.90,
            7.70,
            0.01,
            "Only the pH moves; PCO2, temperature and everything else stay as at rest.",
        ),
        Factor(
            "paco2_mmhg",
            "PCO2",
            "pressure",
            40.0,
            20.0,
            80.0,
            1.0,
            "Only PCO2 moves, at the resting base excess, so the pH follows the CO2. In "
            "the lung more CO2 also leaves less room for O2 in alveolar gas: the arterial "
            "point falls.",
        ),
        Factor(
            "temperature_c",
            "Temperature",
            "°C",
            37.0,
            33.0,
            42.0,
            0.1,
            "Only the blood temperature moves; pH and PCO2 stay as given.",
        ),
        Factor(
            "dpg_mmol_l",
            "2,3-DPG",
            "mmol/L",
            model.NORMAL_DPG_MMOL_L,
            0.0,
            10.0,
            0.1,
            "Only red-cell 2,3-DPG moves; 5 mmol/L is normal, stored blood has little.",
        ),
        Factor(
            "cohb_fraction",
            "COHb",
            "%",
            0.0,
            0.0,
            0.5,
            0.01,
            "Only the COHb fraction moves: fewer sites carry O2, and those left hold it tighter.",
            percent=True,
        ),
        Factor(
            "fetal",
            "Fetal Hb",
            "",
            0.0,
            0.0,
            1.0,
            1.0,
            f"Fetal blood, modelled as a standard P50 of {FETAL_P50_MMHG:g} mmHg (a typical "
            "value); all else as in the adult.",
            choices=(("adult", 0.0), ("fetal", 1.0)),
        ),
    )
}
