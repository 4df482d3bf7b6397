"""o2transit's physiology model: oxygen from inspired air to venous blood.

One module per stage, in the order oxygen travels: ``air`` -> ``lungs`` ->
``dissociation``, ``content``, ``acid_base`` (blood) -> ``circulation`` (and tissue);
``transport`` runs the chain. Everything is pure and numpy-vectorised.
"""

from .acid_base import base_excess, bicarbonate, blood_co2_content, ph_from_base_excess
from .air import PRESSURE_MODELS, barometric_pressure, inspired_po2, water_vapour_pressure
from .ascent import AscentDay, AscentError, AscentProfile, load_ascent, run_ascent
from .bedside import MEASURED_LIMITS, check_measured, derive
from .casebook import (
    IDENTIFIER_WARNING,
    CaseFileError,
    CaseRecord,
    default_case_dir,
    list_cases,
    open_case,
    save_case,
)
from .circulation import (
    body_surface_area,
    extraction_ratio,
    oxygen_delivery,
    venous_content_fick,
    vo2_at_temperature,
)
from .content import HUFNER_ML_G, O2_SOLUBILITY_ML_DL_MMHG, oxygen_content
from .dissociation import (
    CURVE_ALIASES,
    CURVES,
    NORMAL_DPG_MMOL_L,
    SHORT_NAMES,
    STANDARD_P50_MMHG,
    canonical_curve,
    p50,
    po2_from_saturation,
    saturation,
)
from .fitting import FitResult, Residual, fit_case
from .levers import LeverOutcome, one_change, rank_levers
from .limits import INPUT_CHOICES, INPUT_LIMITS
from .lungs import aa_gradient, alveolar_po2, end_capillary_po2, mix_by_content, po2_from_content
from .scenario import Scenario, ScenarioError, load_scenario
from .transport import CASE_INPUTS, BloodState, TransportResult, solve_transport
from .units import (
    UNIT_VARIANTS,
    UnitVariant,
    hb_g_dl_to_g_l,
    hb_g_dl_to_mmol_l,
    hb_g_l_to_g_dl,
    hb_mmol_l_to_g_dl,
    kpa_to_mmhg,
    mmhg_to_kpa,
    unit_variants,
)

__all__ = [
    "CASE_INPUTS",
    "CURVES",
    "CURVE_ALIASES",
    "HUFNER_ML_G",
    "IDENTIFIER_WARNING",
    "INPUT_CHOICES",
    "INPUT_LIMITS",
    "MEASURED_LIMITS",
    "NORMAL_DPG_MMOL_L",
    "O2_SOLUBILITY_ML_DL_MMHG",
    "PRESSURE_MODELS",
    "SHORT_NAMES",
    "STANDARD_P50_MMHG",
    "UNIT_VARIANTS",
    "AscentDay",
    "AscentError",
    "AscentProfile",
    "BatchError",
    "BloodState",
    "CaseFileError",
    "CaseRecord",
    "FitResult",
    "LeverOutcome",
    "Residual",
    "Scenario",
    "ScenarioError",
    "TransportResult",
    "UnitVariant",
    "aa_gradient",
    "alveolar_po2",
    "barometric_pressure",
    "base_excess",
    "bicarbonate",
    "blood_co2_content",
    "body_surface_area",
    "canonical_curve",
    "check_measured",
    "default_case_dir",
    "derive",
    "derive_frame",
    "end_capillary_po2",
    "extraction_ratio",
    "fit_case",
    "hb_g_dl_to_g_l",
    "hb_g_dl_to_mmol_l",
    "hb_g_l_to_g_dl",
    "hb_mmol_l_to_g_dl",
    "inspired_po2",
    "kpa_to_mmhg",
    "list_cases",
    "load_ascent",
    "load_scenario",
    "mix_by_content",
    "mmhg_to_kpa",
    "one_change",
    "open_case",
    "oxygen_content",
    "oxygen_delivery",
    "p50",
    "ph_from_base_excess",
    "po2_from_content",
    "po2_from_saturation",
    "rank_levers",
    "run_ascent",
    "run_batch",
    "saturation",
    "save_case",
    "solve_transport",
    "unit_variants",
    "venous_content_fick",
    "vo2_at_temperature",
    "water_vapour_pressure",
]

_LAZY = {"BatchError": ".batch", "run_batch": ".batch", "derive_frame": ".cohort"}
"""Names whose modules load Arrow (a tenth of a second): imported on first use, so the
dashboard, which never uses them, starts without them."""


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name], __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))
