"""The lecture frame: everything the plot shows for one case against the reference case.

No Panel import and no physiology of its own: the curves and points come from the two
cases' results and :meth:`~dashboard.case.state.CaseState.curve_view`, saturations from
:func:`model.saturation` and contents from :func:`model.oxygen_content`. Pressures are in
the case's display unit, saturations in %, contents in mL O2/dL.

**O2 extracted per litre** (the case screen's words and meaning): blood leaves the lung at
its arterial point and gives up ``10 (CaO2 - Ct)`` mL O2 per litre, where ``Ct`` is the
content at the tissue point read on the case's *venous* curve (the blood under the solve's
venous pH, PCO2 and temperature, i.e. with its Bohr shift). The tissue point is either

* **held**: a tissue PO2 the lecturer chooses (the lesson step's, or the slider's), to show
  what the curve alone does at one PO2; or
* **venous**: the mixed venous PO2 of the case's own solve, where VO2 and cardiac output
  set the extraction by Fick; then the amount is the case screen's number exactly.

The reference is read the same way at its own tissue point.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ... import model
from ..case.state import CaseState
from .stack import Share

CONTENT_STEP_ML_DL = 5.0
"""The content axis ends on a multiple of this, at least :data:`CONTENT_AXIS_MIN_ML_DL`."""
CONTENT_AXIS_MIN_ML_DL = 25.0


def _p(x) -> float:
    return float(np.asarray(x))


@dataclasses.dataclass(frozen=True)
class TissuePoint:
    """Where the extraction is read: ``"held"`` at ``po2_mmhg`` or ``"venous"`` (the solve's)."""

    point: str = "held"
    po2_mmhg: float = 40.0

    def po2_of(self, result) -> float:
        """The tissue PO2 of ``result`` [mmHg]."""
        return _p(result.venous.po2_mmhg) if self.point == "venous" else float(self.po2_mmhg)


def _content(result, conditions: dict, so2, po2_mmhg):
    return np.asarray(
        model.oxygen_content(
            result.hb_g_dl,
            so2,
            po2_mmhg,
            cohb_fraction=conditions["cohb_fraction"],
            methb_fraction=conditions["methb_fraction"],
        ),
        dtype=float,
    )


def tissue_reading(result, tissue_mmhg: float) -> dict:
    """The tissue point of ``result`` at ``tissue_mmhg`` on its venous curve.

    Keys: ``so2`` [-], ``content_ml_dl`` [mL O2/dL], ``extracted_ml_per_l`` [mL O2/L].
    """
    cond = result.venous_conditions
    so2 = _p(model.saturation(tissue_mmhg, **cond))
    content = _p(_content(result, cond, so2, tissue_mmhg))
    return {
        "so2": so2,
        "content_ml_dl": content,
        "extracted_ml_per_l": 10.0 * (_p(result.arterial.o2_content_ml_dl) - content),
    }


def content_curves(state: CaseState) -> dict[str, np.ndarray]:
    """O2 content [mL O2/dL] on the case's PO2 grid, arterial and venous conditions."""
    r, curves = state.result, state.curves
    grid = curves["po2_mmhg"]
    return {
        "arterial": _content(r, r.arterial_conditions, curves["arterial"], grid),
        "venous": _content(r, r.venous_conditions, curves["venous"], grid),
    }


def build_frame(
    case: CaseState,
    ref: CaseState,
    tissue: TissuePoint,
    texts: dict[str, str],
    view: str = "saturation",
    shares: list[Share] | None = None,
) -> dict:
    """The frame of ``case`` against ``ref``; ``texts`` holds heading, caption and tag."""
    now, base = case.result, ref.result
    v, ref_view = case.curve_view(), ref.curve_view()
    content, ref_content = content_curves(case), content_curves(ref)
    t_mmhg, t_ref_mmhg = tissue.po2_of(now), tissue.po2_of(base)
    at, at_ref = tissue_reading(now, t_mmhg), tissue_reading(base, t_ref_mmhg)
    p50_now, p50_ref = _p(now.arterial.p50_mmhg), _p(base.arterial.p50_mmhg)
    p50_so2 = v["arterial_p50"][1] / 100.0
    p50_content = _p(_content(now, now.arterial_conditions, p50_so2, p50_now))
    to = case.pressure_to_display
    tallest = max(
        float(np.max(content["arterial"])),
        float(np.max(ref_content["arterial"])),
        _p(now.arterial.o2_content_ml_dl),
    )
    step = CONTENT_STEP_ML_DL
    y_max_content = max(CONTENT_AXIS_MIN_ML_DL, step * np.ceil(1.04 * tallest / step))
    shown_shares = [
        {"key": s.key, "label": s.label, "shift": to(s.p50_shift_mmhg)} for s in shares or []
    ]
    total = to(p50_now) - to(p50_ref)
    return {
        "heading": texts["heading"],
        "caption": texts["caption"],
        "tag": texts["tag"],
        "view": view,
        "unit": case.pressure_unit,
        "digits": case.pressure_digits,
        "x": np.asarray(v["x"], dtype=float),
        "x_max": case.x_max_display(),
        # saturation [%] under arterial and venous conditions; the reference's arterial curve
        "current": np.asarray(v["arterial"], dtype=float),
        "venous": np.asarray(v["venous"], dtype=float),
        "reference": np.asarray(ref_view["arterial"], dtype=float),
        # the same curves as O2 content [mL O2/dL]
        "current_content": content["arterial"],
        "venous_content": content["venous"],
        "reference_content": ref_content["arterial"],
        "y_max_content": float(y_max_content),
        "loading": v["loading"],
        "reference_loading": ref_view["loading"],
        "arterial_so2": 100.0 * _p(now.arterial.so2),
        "arterial_content_ml_dl": _p(now.arterial.o2_content_ml_dl),
        "reference_arterial_content_ml_dl": _p(base.arterial.o2_content_ml_dl),
        "tissue_point": tissue.point,
        "tissue_po2": to(t_mmhg),
        "tissue_so2": 100.0 * at["so2"],
        "tissue_content_ml_dl": at["content_ml_dl"],
        "reference_tissue_po2": to(t_ref_mmhg),
        "reference_tissue_so2": 100.0 * at_ref["so2"],
        "reference_tissue_content_ml_dl": at_ref["content_ml_dl"],
        "p50": to(p50_now),
        "p50_so2": 100.0 * p50_so2,
        "p50_content_ml_dl": p50_content,
        "reference_p50": to(p50_ref),
        "p50_shift": total,
        "shares": shown_shares,
        "interaction": total - sum(s["shift"] for s in shown_shares) if shown_shares else 0.0,
        "extracted_ml_per_l": at["extracted_ml_per_l"],
        "reference_extracted_ml_per_l": at_ref["extracted_ml_per_l"],
        "extracted_change_ml_per_l": at["extracted_ml_per_l"] - at_ref["extracted_ml_per_l"],
        "venous_po2": to(_p(now.venous.po2_mmhg)),
        "hb_g_dl": _p(now.hb_g_dl),
        "do2_ml_min": _p(now.do2_ml_min),
    }
