"""The case inputs along the oxygen path: bounded, documented parameters in model units.

No Panel import. Each numeric input's bounds are the model's own validation limits
(``model.INPUT_LIMITS``), so a value the screen takes is one the model accepts on its own;
:meth:`CaseInputs.model_inputs` turns the inputs into ``model.solve_transport`` keywords
(the switches pick barometric pressure or altitude, pH or base excess, a P50 or none).
"""

from __future__ import annotations

import param

from ... import model
from ...model.dissociation import SHORT_NAMES

CURVE_LABELS = {
    "Severinghaus 1979": "severinghaus",
    "Dash 2016": "dash",
    "Hill (n 2.7, P50 26.8)": "hill",
    "Siggaard-Andersen 1990": "siggaard_andersen1990",
}
CURVE_ALIASES = SHORT_NAMES  # canonical name -> the short name the selector uses
"""Curve names scenario files may use for the dashboard's own."""

# Inputs handed to model.solve_transport under the same name.
MODEL_INPUTS = (
    "altitude_m",
    "pressure_model",
    "fio2",
    "paco2_mmhg",
    "rq",
    "shunt_fraction",
    "diffusing_capacity_ml_min_mmhg",
    "capillary_volume_ml",
    "hb_g_dl",
    "temperature_c",
    "dpg_mmol_l",
    "cohb_fraction",
    "methb_fraction",
    "curve",
    "cardiac_output_l_min",
    "vo2_ml_min",
    "vo2_temperature_scaling",
)
CASE_INPUTS = (
    *MODEL_INPUTS,
    "use_pressure_override",
    "barometric_pressure_mmhg",
    "acid_base_input",
    "ph",
    "base_excess_mmol_l",
    "use_p50_override",
    "p50_mmhg",
    "height_cm",
    "weight_kg",
)


def _num(name: str, default: float, label: str, doc: str, step: float):
    """A bounded input whose bounds are the model's own validation limits."""
    lo, hi = model.INPUT_LIMITS[name][:2]
    return param.Number(
        default=default, bounds=(float(lo), float(hi)), label=label, doc=doc, step=step
    )


class CaseInputs(param.Parameterized):
    """Inputs of one case, grouped along the oxygen path (air, lungs, blood, circulation)."""

    # --- Air
    altitude_m = _num("altitude_m", 0.0, "Altitude (m)", "Altitude above sea level [m].", 100.0)
    use_pressure_override = param.Boolean(
        default=False,
        label="Enter barometric pressure instead of altitude",
        doc="Use barometric_pressure_mmhg rather than the pressure from altitude.",
    )
    barometric_pressure_mmhg = _num(
        "barometric_pressure_mmhg",
        760.0,
        "Barometric pressure (mmHg)",
        "Ambient pressure when entered directly [mmHg].",
        5.0,
    )
    pressure_model = param.Selector(
        default="mountain",
        objects=["mountain", "standard"],
        label="Pressure–altitude model",
        doc="'mountain' (West 1996, measured on high ranges; the default for a place on a "
        "mountain) or the ICAO 'standard' atmosphere.",
    )
    fio2 = _num(
        "fio2",
        0.21,
        "Model FiO2 (fraction)",
        "Inspired O2 fraction of the model case, dry gas [-]; the measured gas has its own.",
        0.01,
    )

    # --- Lungs
    paco2_mmhg = _num("paco2_mmhg", 40.0, "PaCO2 (mmHg)", "Arterial = alveolar PCO2 [mmHg].", 1.0)
    rq = _num("rq", 0.8, "Respiratory quotient (-)", "CO2 output / O2 uptake [-].", 0.05)
    shunt_fraction = _num(
        "shunt_fraction",
        0.02,
        "Shunt (fraction of output)",
        "Venous admixture Qs/Qt [-].",
        0.01,
    )
    diffusing_capacity_ml_min_mmhg = _num(
        "diffusing_capacity_ml_min_mmhg",
        30.0,
        "O2 diffusing capacity (mL/min/mmHg)",
        "Lung O2 diffusing capacity [mL/min/mmHg].",
        1.0,
    )
    capillary_volume_ml = _num(
        "capillary_volume_ml",
        75.0,
        "Pulmonary capillary volume (mL)",
        "Blood volume in the lung capillaries [mL].",
        5.0,
    )

    # --- Blood
    hb_g_dl = _num("hb_g_dl", 15.0, "Model Hb (g/dL)", "Haemoglobin of the model case [g/dL].", 0.1)
    temperature_c = _num("temperature_c", 37.0, "Temperature (°C)", "Blood temperature [°C].", 0.1)
    acid_base_input = param.Selector(
        default="pH",
        objects=["pH", "base excess"],
        label="Acid–base given as",
        doc="Give arterial pH, or base excess (pH then follows from PaCO2).",
    )
    ph = _num("ph", 7.40, "Arterial pH (-)", "Arterial pH [-].", 0.01)
    base_excess_mmol_l = _num(
        "base_excess_mmol_l",
        0.0,
        "Base excess (mmol/L)",
        "Base excess [mmol/L].",
        0.5,
    )
    dpg_mmol_l = _num(
        "dpg_mmol_l",
        5.0,
        "2,3-DPG (mmol/L)",
        "Red-cell 2,3-DPG [mmol/L]; 5.0 is normal.",
        0.1,
    )
    cohb_fraction = _num(
        "cohb_fraction",
        0.0,
        "COHb (fraction)",
        "Carboxyhaemoglobin fraction of total Hb [-].",
        0.01,
    )
    methb_fraction = _num(
        "methb_fraction",
        0.0,
        "MetHb (fraction)",
        "Methaemoglobin fraction of total Hb [-].",
        0.01,
    )
    use_p50_override = param.Boolean(
        default=False, label="Set standard P50", doc="Override the standard-state P50 of the curve."
    )
    p50_mmhg = _num(
        "p50_mmhg",
        26.8,
        "Standard P50 (mmHg)",
        "Standard-state P50 when overridden [mmHg].",
        0.1,
    )
    curve = param.Selector(
        default="severinghaus",
        objects=CURVE_LABELS,
        label="Dissociation curve",
        doc="Model of the O2 dissociation curve.",
    )

    # --- Circulation & demand
    cardiac_output_l_min = _num(
        "cardiac_output_l_min",
        5.0,
        "Cardiac output (L/min)",
        "Cardiac output [L/min].",
        0.1,
    )
    vo2_ml_min = _num("vo2_ml_min", 250.0, "VO2 (mL/min)", "Whole-body O2 uptake [mL/min].", 10.0)
    vo2_temperature_scaling = param.Boolean(
        default=False,
        label="Scale VO2 with temperature",
        doc="Let the model scale VO2 with body temperature.",
    )
    height_cm = param.Number(
        default=None,
        allow_None=True,
        bounds=(50.0, 250.0),
        label="Height (cm)",
        doc="Height for BSA and DO2I [cm]; optional.",
    )
    weight_kg = param.Number(
        default=None,
        allow_None=True,
        bounds=(2.0, 350.0),
        label="Weight (kg)",
        doc="Weight for BSA and DO2I [kg]; optional.",
    )

    def model_inputs(self) -> dict:
        """Keyword arguments for model.solve_transport from the current inputs."""
        kw = {name: getattr(self, name) for name in MODEL_INPUTS}
        if self.use_pressure_override:
            kw["barometric_pressure_mmhg"] = self.barometric_pressure_mmhg
        if self.acid_base_input == "pH":
            kw["ph"] = self.ph
        else:
            kw["base_excess_mmol_l"] = self.base_excess_mmol_l
        if self.use_p50_override:
            kw["p50_mmhg"] = self.p50_mmhg
        return kw
