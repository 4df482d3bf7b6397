"""How sure: the spread between the curve models, and analyser tolerances carried through.

Two sources of doubt in a bedside reading, each computed, not guessed:

1. **Between the curve models.** The four shipped dissociation curves (:mod:`model.dissociation`)
   agree at the standard state and part where the bedside reads them: on the steep part of
   the curve and at extreme pH and temperature. :func:`curve_band` gives each curve's
   saturation over a PO2 grid under one set of conditions (the band is their lowest and
   highest), and :func:`reading_spread` the range of SaO2, in-vivo P50 and O2 extracted per
   litre, ``10 (CaO2 - CvO2)``, when each curve reads the same arterial and venous PO2.
2. **Analyser tolerances.** Every measured value is off by up to its tolerance
   (:data:`TOLERANCE_SETS`). :func:`tolerance_ranges` takes every combination of each
   measured value at its low end, as measured and at its high end (``3^k`` gases for ``k``
   values with a tolerance, k <= 8), derives them all in one vectorised call of
   :func:`model.bedside.derive` and returns the lowest and highest shunt fraction (Berggren),
   VO2 (Fick) and in-situ P50 (single point). The grid includes the corners, where a
   monotonic output takes its extremes, and the middle of every edge, where one that turns
   inside the box is caught better than by the corners alone.

A tolerance is ``max(absolute, relative x value)``. Cardiac output is not an analyser value
and is taken as given (a thermodilution output is itself uncertain by some 10-20 %, from
memory; it scales VO2 in proportion).

References
----------
1. Westgard JO. Basic Planning for Quality, lesson QP-11: blood gas applications
   (westgard.com; quotes the US CLIA '88 criteria for acceptable performance in proficiency
   testing, 42 CFR 493.931: pH +/-0.04, PCO2 +/-5 mmHg or +/-8 % (greater), PO2 +/-3 SD, and
   estimates +/-3 SD of PO2 as about +/-16.5 % from a 1999 CAP survey; read there).
2. 42 CFR 493.941 (CLIA '88, haematology): haemoglobin +/-7 % (from memory).
3. CLSI C46-A2, Blood Gas and pH Analysis and Related Measurements, 2009 (defines the
   quantities; gives no single SO2 tolerance; from memory).
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping, Sequence
from typing import NamedTuple

import numpy as np

from .bedside import MEASURED_LIMITS, derive
from .content import oxygen_content
from .dissociation import p50, saturation

SPREAD_CURVES = ("severinghaus1979", "dash2016", "siggaard_andersen1990", "hill1910")
"""The curve models compared (canonical names of :data:`model.dissociation.CURVES`)."""


class Tolerance(NamedTuple):
    """± ``max(absolute, relative * value)`` in the unit of the measured key."""

    absolute: float
    relative: float = 0.0


TOLERANCE_SETS: dict[str, dict] = {
    "clia1988": {
        "label": "US CLIA '88 proficiency-testing limits",
        "source": (
            "42 CFR 493.931 as quoted by Westgard, QP-11: pH ±0.04, PCO2 ±5 mmHg or ±8 %, "
            "PO2 ±3 SD taken as ±16.5 % (Westgard's estimate); Hb ±7 % (42 CFR 493.941, "
            "from memory); SO2 is not graded by CLIA: ±1 % saturation, the co-oximeter "
            "accuracy the fit also uses (common practice)"
        ),
        "tolerances": {
            "pao2_mmhg": Tolerance(0.0, 0.165),
            "pvo2_mmhg": Tolerance(0.0, 0.165),
            "paco2_mmhg": Tolerance(5.0, 0.08),
            "pvco2_mmhg": Tolerance(5.0, 0.08),
            "ph": Tolerance(0.04),
            "hb_g_dl": Tolerance(0.0, 0.07),
            "sao2": Tolerance(0.01),
            "svo2": Tolerance(0.01),
        },
    },
    "repeatability": {
        "label": "analyser repeatability",
        "source": (
            "common practice, as model.fitting states it: PO2 about 1 mmHg, SO2 about 0.5 %; "
            "PCO2 1 mmHg, pH 0.01 and Hb 0.1 g/dL from memory"
        ),
        "tolerances": {
            "pao2_mmhg": Tolerance(1.0),
            "pvo2_mmhg": Tolerance(1.0),
            "paco2_mmhg": Tolerance(1.0),
            "pvco2_mmhg": Tolerance(1.0),
            "ph": Tolerance(0.01),
            "hb_g_dl": Tolerance(0.1),
            "sao2": Tolerance(0.005),
            "svo2": Tolerance(0.005),
        },
    },
}
"""Named tolerance sets: label, source (the standard and how it was read) and a
:class:`Tolerance` per measured key (units of the key; saturations as fractions)."""

DEFAULT_TOLERANCES = "clia1988"

TOLERANCE_OUTPUTS = ("shunt_fraction", "vo2_ml_min", "p50_insitu_mmhg")
"""Outputs of :func:`model.bedside.derive` whose range :func:`tolerance_ranges` returns."""


class Range(NamedTuple):
    """A value and the lowest and highest it takes; ``refused`` counts the cases (of
    ``cases``) for which it could not be computed."""

    value: float
    low: float
    high: float
    refused: int = 0
    cases: int = 1


def curve_band(po2_mmhg, conditions: Mapping, curves: Sequence[str] = SPREAD_CURVES) -> dict:
    """Saturation of each curve model over ``po2_mmhg`` under one set of conditions [-].

    ``conditions`` are keywords of :func:`model.saturation` (a result's
    ``arterial_conditions``); its ``curve`` is replaced by each of ``curves`` in turn. The
    band is the element-wise lowest and highest.

    Returns
    -------
    dict
        ``by_curve`` (curve -> ndarray), ``low`` and ``high`` (ndarray, shape of ``po2_mmhg``).

    Examples
    --------
    >>> band = curve_band([20.0, 40.0, 100.0], {"ph": 7.20, "temperature_c": 39.0})
    >>> bool((band["high"] - band["low"]).max() > 0.01)
    True
    """
    po2 = np.asarray(po2_mmhg, dtype=float)
    cond = {k: v for k, v in dict(conditions).items() if k != "curve"}
    by_curve = {c: np.asarray(saturation(po2, **cond, curve=c), dtype=float) for c in curves}
    stack = np.stack(list(by_curve.values()))
    return {"by_curve": by_curve, "low": stack.min(axis=0), "high": stack.max(axis=0)}


def reading_spread(
    pao2_mmhg,
    pvo2_mmhg,
    hb_g_dl,
    arterial_conditions: Mapping,
    venous_conditions: Mapping,
    curves: Sequence[str] = SPREAD_CURVES,
) -> dict:
    """SaO2, in-vivo P50 and O2 extracted per litre as each curve model reads them.

    Each curve reads the same arterial and venous PO2 (at the patient's temperature) under
    the case's conditions: ``SaO2 = S(PaO2)``, ``P50 = P50(arterial conditions)``,
    ``extracted = 10 (C(Hb, S(PaO2), PaO2) - C(Hb, S(PvO2), PvO2))`` [mL O2/L].

    Parameters
    ----------
    pao2_mmhg, pvo2_mmhg : float
        Arterial and mixed venous PO2 [mmHg].
    hb_g_dl : float
        Haemoglobin [g/dL].
    arterial_conditions, venous_conditions : Mapping
        Keywords of :func:`model.saturation` (``TransportResult.arterial_conditions``...).
    curves : sequence of str
        Curve models compared.

    Returns
    -------
    dict
        ``sao2``, ``p50_mmhg``, ``o2_extracted_ml_per_l``: each a dict of ``by_curve``,
        ``low`` and ``high``.

    Examples
    --------
    >>> cond = {"ph": 7.25, "temperature_c": 39.0}
    >>> out = reading_spread(60.0, 35.0, 8.5, cond, cond)
    >>> out["sao2"]["low"] < out["sao2"]["high"]
    True
    """
    art = {k: v for k, v in dict(arterial_conditions).items() if k != "curve"}
    ven = {k: v for k, v in dict(venous_conditions).items() if k != "curve"}
    dys = {k: art.get(k, 0.0) for k in ("cohb_fraction", "methb_fraction")}
    dys = {k: 0.0 if v is None else v for k, v in dys.items()}
    out: dict[str, dict] = {"sao2": {}, "p50_mmhg": {}, "o2_extracted_ml_per_l": {}}
    for c in curves:
        sa = float(saturation(pao2_mmhg, **art, curve=c))
        sv = float(saturation(pvo2_mmhg, **ven, curve=c))
        ca = oxygen_content(hb_g_dl, sa, pao2_mmhg, **dys)
        cv = oxygen_content(hb_g_dl, sv, pvo2_mmhg, **dys)
        out["sao2"][c] = sa
        out["p50_mmhg"][c] = float(p50(**art, curve=c))
        out["o2_extracted_ml_per_l"][c] = float(10.0 * (ca - cv))
    return {
        k: {"by_curve": v, "low": min(v.values()), "high": max(v.values())} for k, v in out.items()
    }


def tolerance_of(key: str, value: float, tolerances: str = DEFAULT_TOLERANCES) -> float:
    """The ± tolerance of one measured value [unit of the key]; 0 when the set has none.

    Examples
    --------
    >>> round(tolerance_of("paco2_mmhg", 80.0), 2)  # 8 % of 80 is above 5 mmHg
    6.4
    """
    table = _tolerance_table(tolerances)
    if key not in table:
        return 0.0
    tol = table[key]
    return max(tol.absolute, tol.relative * abs(float(value)))


def _tolerance_table(name: str) -> dict:
    if name not in TOLERANCE_SETS:
        raise ValueError(
            f"tolerance set {name!r} is unknown; choose one of {', '.join(TOLERANCE_SETS)}"
        )
    return TOLERANCE_SETS[name]["tolerances"]


def tolerance_grid(measured: Mapping, tolerances: str = DEFAULT_TOLERANCES) -> dict:
    """Every combination of each toleranced value at its low end, as given and high end.

    Values are kept inside :data:`model.bedside.MEASURED_LIMITS` (a saturation never above
    1). Returns measured key -> 1-d array of ``3^k`` values (k = values with a tolerance);
    keys without one are repeated.

    Examples
    --------
    >>> grid = tolerance_grid({"pao2_mmhg": 80.0, "fio2": 0.4, "sao2": 0.95})
    >>> len(grid["fio2"]), sorted(set(grid["sao2"].round(3).tolist()))
    (9, [0.94, 0.95, 0.96])
    """
    _tolerance_table(tolerances)
    given = {k: float(v) for k, v in measured.items() if v is not None}
    varied = [k for k in given if tolerance_of(k, given[k], tolerances) > 0.0]
    steps = np.array(list(itertools.product((-1.0, 0.0, 1.0), repeat=len(varied))))
    steps = steps.reshape(-1, len(varied)) if varied else np.zeros((1, 0))
    n = steps.shape[0]
    grid = {}
    for key, value in given.items():
        if key in varied:
            col = value + steps[:, varied.index(key)] * tolerance_of(key, value, tolerances)
            lo, hi = MEASURED_LIMITS[key][:2]
            grid[key] = np.clip(col, lo, hi)
        else:
            grid[key] = np.full(n, value)
    return grid


def tolerance_ranges(
    measured: Mapping,
    tolerances: str = DEFAULT_TOLERANCES,
    outputs: Sequence[str] = TOLERANCE_OUTPUTS,
) -> dict[str, Range]:
    """Lowest and highest derived values over every gas within the analyser tolerances.

    Parameters
    ----------
    measured : Mapping
        A measured gas (keys of :data:`model.bedside.MEASURED_LIMITS`, ``None`` = not given).
    tolerances : str
        A key of :data:`TOLERANCE_SETS`.
    outputs : sequence of str
        Numeric outputs of :func:`model.bedside.derive`.

    Returns
    -------
    dict of Range
        Per output: the value as measured, the lowest and highest over the grid of
        :func:`tolerance_grid`, and how many of its gases could not give one (e.g. the
        single-point P50 refused where SaO2 passes 0.97).

    Examples
    --------
    >>> gas = {"pao2_mmhg": 82.0, "paco2_mmhg": 38.0, "ph": 7.25, "sao2": 0.93,
    ...        "hb_g_dl": 8.5, "fio2": 0.6, "temperature_c": 39.0, "svo2": 0.6,
    ...        "pvo2_mmhg": 36.0, "cardiac_output_l_min": 7.0}
    >>> r = tolerance_ranges(gas)["shunt_fraction"]
    >>> r.low < r.value < r.high, r.cases
    (True, 2187)
    """
    grid = tolerance_grid(measured, tolerances)
    derived = derive(**grid)
    given = {k: v for k, v in measured.items() if v is not None}
    centre = derive(**given)
    out = {}
    for name in outputs:
        values = np.asarray(derived[name], dtype=float)
        ok = np.isfinite(values)
        value = float(centre[name])
        if ok.any():
            low, high = float(values[ok].min()), float(values[ok].max())
        else:
            low = high = float("nan")
        out[name] = Range(value, low, high, int((~ok).sum()), int(values.size))
    return out
