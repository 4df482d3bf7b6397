"""The lecture frame: everything the plot shows for one case against the reference case.

No Panel import and no physiology of its own: the curves and points come from the two
cases' :meth:`~dashboard.case.state.CaseState.curve_view`, the unloading at the tissue PO2
from :func:`model.saturation` and :func:`model.oxygen_content` on the case's own arterial
conditions. Pressures are in the case's display unit.
"""

from __future__ import annotations

import numpy as np

from ... import model
from ..case.state import CaseState


def _p(x) -> float:
    return float(np.asarray(x))


def unloaded_ml_per_l(result, tissue_mmhg: float) -> tuple[float, float]:
    """(SO2 at the tissue PO2 [-], O2 given up per litre from arterial to tissue [mL/L])."""
    cond = result.arterial_conditions
    so2 = _p(model.saturation(tissue_mmhg, **cond))
    content = _p(
        model.oxygen_content(
            result.hb_g_dl,
            so2,
            tissue_mmhg,
            cohb_fraction=cond["cohb_fraction"],
            methb_fraction=cond["methb_fraction"],
        )
    )
    return so2, 10.0 * (_p(result.arterial.o2_content_ml_dl) - content)


def build_frame(
    case: CaseState, ref: CaseState, tissue_mmhg: float, heading: str, caption: str, tag: str
) -> dict:
    """The frame of ``case`` against ``ref`` at ``tissue_mmhg``, with its texts."""
    now, base = case.result, ref.result
    view, ref_view = case.curve_view(), ref.curve_view()
    so2_t, unloaded = unloaded_ml_per_l(now, tissue_mmhg)
    so2_t_ref, unloaded_ref = unloaded_ml_per_l(base, tissue_mmhg)
    p50_now = _p(now.arterial.p50_mmhg)
    p50_ref = _p(base.arterial.p50_mmhg)
    to = case.pressure_to_display
    return {
        "heading": heading,
        "caption": caption,
        "tag": tag,
        "unit": case.pressure_unit,
        "digits": case.pressure_digits,
        "x": np.asarray(view["x"], dtype=float),
        "current": np.asarray(view["arterial"], dtype=float),
        "reference": np.asarray(ref_view["arterial"], dtype=float),
        "x_max": case.x_max_display(),
        "loading": view["loading"],
        "reference_loading": ref_view["loading"],
        "tissue_po2": to(tissue_mmhg),
        "tissue_so2": 100.0 * so2_t,
        "reference_tissue_so2": 100.0 * so2_t_ref,
        "p50": to(p50_now),
        "reference_p50": to(p50_ref),
        "p50_shift": to(p50_now) - to(p50_ref),
        "unloaded_ml_per_l": unloaded,
        "reference_unloaded_ml_per_l": unloaded_ref,
        "unloaded_change_ml_per_l": unloaded - unloaded_ref,
        "arterial_so2": 100.0 * _p(now.arterial.so2),
        "arterial_content_ml_dl": _p(now.arterial.o2_content_ml_dl),
        "hb_g_dl": _p(now.hb_g_dl),
        "do2_ml_min": _p(now.do2_ml_min),
    }
