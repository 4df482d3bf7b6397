"""Display units of the case screen: the pressure and Hb unit chosen, and the conversions.

No Panel import. The model works in mmHg and g/dL; values cross into kPa, g/L or mmol/L
only here, on their way to and from the screen (the conversions themselves are the model's,
in ``model/units.py``).
"""

from __future__ import annotations

import numpy as np
import param

from ... import model

PRESSURE_UNITS = ("mmHg", "kPa")
HB_UNITS = ("g/dL", "g/L", "mmol/L")


class DisplayUnits(param.Parameterized):
    """The units numbers are shown and typed in; the state keeps model units."""

    pressure_unit = param.Selector(
        default="mmHg", objects=list(PRESSURE_UNITS), label="Pressure unit"
    )
    hb_unit = param.Selector(default="g/dL", objects=list(HB_UNITS), label="Hb unit")

    def pressure_to_display(self, mmhg: float) -> float:
        return float(model.mmhg_to_kpa(mmhg)) if self.pressure_unit == "kPa" else float(mmhg)

    def pressure_from_display(self, value: float) -> float:
        return float(model.kpa_to_mmhg(value)) if self.pressure_unit == "kPa" else float(value)

    def pressure_array(self, mmhg) -> np.ndarray:
        """An array of pressures [mmHg] in the display unit."""
        mmhg = np.asarray(mmhg, dtype=float)
        if self.pressure_unit == "kPa":
            return np.asarray(model.mmhg_to_kpa(mmhg), dtype=float)
        return mmhg

    def hb_to_display(self, g_dl: float) -> float:
        if self.hb_unit == "g/L":
            return float(model.hb_g_dl_to_g_l(g_dl))
        if self.hb_unit == "mmol/L":
            return float(model.hb_g_dl_to_mmol_l(g_dl))
        return float(g_dl)

    def hb_from_display(self, value: float) -> float:
        if self.hb_unit == "g/L":
            return float(model.hb_g_l_to_g_dl(value))
        if self.hb_unit == "mmol/L":
            return float(model.hb_mmol_l_to_g_dl(value))
        return float(value)

    @property
    def pressure_digits(self) -> int:
        return 1 if self.pressure_unit == "kPa" else 0
