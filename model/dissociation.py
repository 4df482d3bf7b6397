"""Stage 3a, blood: the oxygen-haemoglobin dissociation curve.

Four published curves, selected by name, each under pH, PCO2, temperature,
2,3-DPG, carbon monoxide and methaemoglobin:

* ``"severinghaus1979"`` (alias ``"severinghaus"``): Severinghaus' equation for the
  standard curve, applied to Kelman's virtual PO2;
* ``"dash2016"`` (alias ``"dash"``): Dash, Korman and Bassingthwaighte's Hill form with a
  PO2-dependent Hill coefficient and a P50 made of independent multiplicative factors;
* ``"siggaard_andersen1990"``: the tanh equation of Siggaard-Andersen and
  Siggaard-Andersen;
* ``"hill1910"`` (alias ``"hill"``): the Hill equation, n = 2.7.

``p50_mmhg`` overrides the curve's *standard-state* P50 (fetal blood, haemoglobin
variants, stored blood); the condition factors still act on top of it.

Carbon monoxide follows Haldane's first law with the Siggaard-Andersen and
Fogh-Andersen formulation: the curve holds for total ligand saturation at the
"equivalent" pressure ``PO2 + M PCO``, which shifts the remaining haemoglobin left.
Saturations returned are *functional*, O2Hb / (O2Hb + HHb).

References
----------
1. Severinghaus JW. Simple, accurate equations for human blood O2 dissociation
   computations. J Appl Physiol 1979; 46:599-602.
2. Kelman GR. Digital computer subroutine for the conversion of oxygen tension into
   saturation. J Appl Physiol 1966; 21:1375-1376.
3. Ellis RK. Determination of PO2 from saturation. J Appl Physiol 1989; 67:902.
4. Dash RK, Korman B, Bassingthwaighte JB. Simple accurate mathematical models of
   blood HbO2 and HbCO2 dissociation curves at varied physiological conditions:
   evaluation and comparison with other models. Eur J Appl Physiol 2016; 116:97-113.
5. Siggaard-Andersen O, Siggaard-Andersen M. The oxygen status algorithm: a computer
   program for calculating and displaying pH and blood gas data. Scand J Clin Lab
   Invest 1990; 50 Suppl 203:29-45.
6. Siggaard-Andersen O, Siggaard-Andersen M, Fogh-Andersen N. The TANH-equation
   modified for the hemoglobin, oxygen, and carbon monoxide equilibrium. Scand J Clin
   Lab Invest 1993; 53 Suppl 214:113-119.
7. Hill AV. The possible effects of the aggregation of the molecules of haemoglobin on
   its dissociation curves. J Physiol 1910; 40:iv-vii.
8. Lykkeboe G, Johansen K. A cladistic analysis of oxygen dissociation curves of
   vertebrate bloods. Respir Physiol 1978; 35:119-127 (human n = 2.7).
"""

from __future__ import annotations

import math

import numpy as np

from .units import MMHG_PER_KPA

CURVE_ALIASES = {"severinghaus": "severinghaus1979", "dash": "dash2016", "hill": "hill1910"}
"""Short name -> canonical curve name (author and year), for the curves that have one."""

SHORT_NAMES = {canonical: short for short, canonical in CURVE_ALIASES.items()}
"""Canonical curve name -> its short name: :data:`CURVE_ALIASES` read the other way."""

NORMAL_DPG_MMOL_L = 5.0
"""Normal red-cell 2,3-DPG [mmol/L] (Siggaard-Andersen 1990 reference value)."""

STANDARD_P50_MMHG = {
    "severinghaus1979": float(
        np.cbrt(11700.0 + np.sqrt(11700.0**2 + 50.0**3))
        - np.cbrt(np.sqrt(11700.0**2 + 50.0**3) - 11700.0)
    ),  # Eq 1 of [1]: 26.856
    "dash2016": 26.8,  # P50,S of [4]
    "siggaard_andersen1990": 26.840,  # tanh model at a = b = 0, [5]; made exact below
    "hill1910": 26.8,
}
"""Each curve's own P50 at pH 7.40, PCO2 40 mmHg, 37 degC, normal DPG [mmHg]."""

CURVES = tuple(
    n for canonical in STANDARD_P50_MMHG for n in (SHORT_NAMES.get(canonical), canonical) if n
)
"""Every accepted curve name: each canonical name of :data:`STANDARD_P50_MMHG`, after its
short name where it has one."""

DASH2016 = {
    "alpha": 2.82,
    "beta": 1.20,
    "gamma_mmhg": 29.25,
    "p50_mmhg": 26.8,
    "dpg_rbc_m": 4.65e-3,
}
"""Dash et al. 2016 [4], Table 1: Hill coefficient nH = alpha - beta 10^(-PO2/gamma)."""

HILL_N = 2.7
"""Human Hill coefficient over S 0.36-0.98 (Lykkeboe & Johansen 1978 [8])."""

_SA_DLNP50_DA = 1.121  # p50 = 3.578 kPa exp(1.121 a), [5]
_DPG_LN_PER_MMOL = 0.06 * _SA_DLNP50_DA  # DPG term of the tanh model's a, [5]
_METHB_LN = -0.7 * _SA_DLNP50_DA  # MetHb term of the tanh model's a, [6]
_LN10 = math.log(10.0)
_LN7 = math.log(7.0)
_DASH_K = DASH2016["beta"] * _LN10 / DASH2016["gamma_mmhg"]  # dnH/dp = _DASH_K 10^(-p/gamma)
_HALDANE_ITERATIONS = 60  # safeguarded Newton; bisection alone would reach 2^-60
_HALDANE_TOL = 1e-13  # last Newton step in total saturation [-]

_LIMITS = {
    "ph": (6.5, 8.0, ""),
    "pco2_mmhg": (1.0, 200.0, "mmHg"),
    "temperature_c": (15.0, 45.0, "degC"),
    "dpg_mmol_l": (0.0, 20.0, "mmol/L"),
    "cohb_fraction": (0.0, 0.9, ""),
    "methb_fraction": (0.0, 0.9, ""),
    "p50_mmhg": (5.0, 80.0, "mmHg"),
}


def _check(name, value, m=np):
    lo, hi, unit = _LIMITS[name]
    bad = (value < lo) | (value > hi)
    if m.any(bad):
        v = np.asarray(value)[np.asarray(bad)].ravel()[0]
        raise ValueError(
            f"{name} = {v:g} is outside the allowed range {lo:g}-{hi:g} {unit}".rstrip()
        )


def canonical_curve(name: str) -> str:
    """The canonical name (author and year) of a curve given by either of its names.

    Raises
    ------
    ValueError
        An unknown name; the message lists :data:`CURVES`.

    Examples
    --------
    >>> canonical_curve("dash"), canonical_curve("siggaard_andersen1990")
    ('dash2016', 'siggaard_andersen1990')
    """
    canonical = CURVE_ALIASES.get(name, name)
    if canonical not in STANDARD_P50_MMHG:
        raise ValueError(f"curve {name!r} is unknown; choose one of {CURVES}")
    return canonical


def _conditions(
    ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve, m=np
):
    """Canonical name and validated conditions (keys of :data:`_CONDITION_KEYS`).

    ``m`` is numpy for arrays or :mod:`model.floats` for one case of floats.
    """
    name = canonical_curve(curve)
    dpg = NORMAL_DPG_MMOL_L if dpg_mmol_l is None else dpg_mmol_l
    p50_std = STANDARD_P50_MMHG[name] if p50_mmhg is None else p50_mmhg
    vals = [
        m.asarray(v, dtype=float)
        for v in (ph, pco2_mmhg, temperature_c, dpg, cohb_fraction, methb_fraction, p50_std)
    ]
    for key, v in zip(_LIMITS, vals):
        _check(key, v, m)
    if m.any(vals[4] + vals[5] >= 1.0):
        raise ValueError("cohb_fraction + methb_fraction must stay below 1")
    return name, dict(zip(_CONDITION_KEYS, vals))


_CONDITION_KEYS = ("ph", "pco2", "t", "dpg", "fco", "fmet", "p50std")
"""Short names of the conditions inside this module, in the order of :data:`_LIMITS`."""


def _ln_shift(name, c, m=np):
    """ln of the factor by which the curve's P50 moves away from its standard value.

    ``m`` is numpy for arrays or :mod:`model.floats` for one case of floats.
    """
    fmet = _METHB_LN * c["fmet"]
    override = m.log(c["p50std"] / STANDARD_P50_MMHG[name])
    if name in ("severinghaus1979", "hill1910"):
        # Kelman's virtual-PO2 factors, [2]; DPG and MetHb terms of the tanh model, [5, 6]
        log10 = (
            -0.024 * (37.0 - c["t"]) - 0.40 * (c["ph"] - 7.40) - 0.06 * m.log10(40.0 / c["pco2"])
        )
        return _LN10 * log10 + _DPG_LN_PER_MMOL * (c["dpg"] - NORMAL_DPG_MMOL_L) + fmet + override
    if name == "dash2016":
        return m.log(_dash_p50(c) / DASH2016["p50_mmhg"]) + fmet + override
    # siggaard_andersen1990: handled inside its own equation; only the override shifts x.
    return override


def _dash_p50(c):
    """Eq 9a-d and 10 of Dash et al. 2016 [4]: P50 under the given conditions [mmHg]."""
    p50s = DASH2016["p50_mmhg"]
    d_ph = (0.795 * c["ph"] + 1.357) - 7.24  # red-cell pH, Siggaard-Andersen 1971 as used in [4]
    d_co2 = c["pco2"] - 40.0
    d_dpg = DASH2016["dpg_rbc_m"] * (c["dpg"] / NORMAL_DPG_MMOL_L - 1.0)
    d_t = c["t"] - 37.0
    p_ph = p50s - 25.535 * d_ph + 10.646 * d_ph**2 - 1.764 * d_ph**3
    p_co2 = p50s + 0.1273 * d_co2 + 1.083e-4 * d_co2**2
    p_dpg = p50s + 795.63 * d_dpg - 19660.89 * d_dpg**2
    p_t = p50s + 1.435 * d_t + 4.163e-2 * d_t**2 + 6.86e-4 * d_t**3
    return p50s * (p_ph / p50s) * (p_co2 / p50s) * (p_dpg / p50s) * (p_t / p50s)


def _sa_a_b(c, m=np):
    a = (
        -0.88 * (c["ph"] - 7.40)
        + 0.048 * m.log(c["pco2"] / MMHG_PER_KPA / 5.33)
        - 0.7 * c["fmet"]
        + 0.06 * (c["dpg"] - NORMAL_DPG_MMOL_L)
    )
    b = 0.055 * (c["t"] - 37.0)
    return a, b


def _converged(step, tol, m):
    """True when no step is above tol (NaN counts as converged)."""
    return not m.any(abs(step) > tol)


def _constants(name, c, shift, m):
    """The parts of :func:`_total_formula` that depend only on the conditions."""
    if name in ("severinghaus1979", "hill1910"):
        return {"e": m.exp(-shift)}
    if name == "dash2016":
        p50 = DASH2016["p50_mmhg"] * m.exp(shift)
        return {"p50": p50, "lp50": m.log(p50)}
    a, b = _sa_a_b(c, m)
    return {"shift": shift, "x0": _LN7 + a + b, "h": 3.5 + a}


def _total_formula(name, p, k, m):
    """Total-ligand saturation at p [mmHg]; ``k`` from :func:`_constants`, ``m`` numpy or
    :mod:`model.floats`."""
    if name == "severinghaus1979":
        x = p * k["e"]
        cubic = x * (x * x + 150.0)
        return cubic / (cubic + 23400.0)  # Eq 1 of [1], rearranged
    if name == "hill1910":
        x = p * k["e"] / STANDARD_P50_MMHG["hill1910"]
        xn = x**HILL_N
        return xn / (1.0 + xn)
    if name == "dash2016":
        nh = DASH2016["alpha"] - DASH2016["beta"] * 10.0 ** (-p / DASH2016["gamma_mmhg"])
        xn = (p / k["p50"]) ** nh
        return xn / (1.0 + xn)
    x = m.log(p / MMHG_PER_KPA) - k["shift"]
    x0 = k["x0"]
    y = 1.8747 + (x - x0) + k["h"] * m.tanh(0.5343 * (x - x0))
    return 1.0 / (1.0 + m.exp(-y))


def _total_slope(name, p, s, k, m):
    """Analytic dS/dp of :func:`_total_formula` at p [1/mmHg], given s = S(p) (Newton only)."""
    if name == "severinghaus1979":
        e = k["e"]
        x = p * e
        den = x * (x * x + 150.0) + 23400.0
        return 23400.0 * (3.0 * x * x + 150.0) * e / (den * den)
    if name == "hill1910":
        return HILL_N * s * (1.0 - s) / p
    if name == "dash2016":
        decay = 10.0 ** (-p / DASH2016["gamma_mmhg"])
        nh = DASH2016["alpha"] - DASH2016["beta"] * decay
        return s * (1.0 - s) * (nh / p + _DASH_K * decay * (m.log(p) - k["lp50"]))
    th = m.tanh(0.5343 * (m.log(p / MMHG_PER_KPA) - k["shift"] - k["x0"]))
    return s * (1.0 - s) * (1.0 + k["h"] * 0.5343 * (1.0 - th * th)) / p


def _total_inverse(name, s, c, shift, m=np):
    """Pressure [mmHg] at which the curve's total-ligand saturation equals s (0 < s < 1)."""
    with m.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return _inverse_formula(name, s, c, shift, m)


def _inverse_formula(name, s, c, shift, m):
    if name == "severinghaus1979":
        # Ellis 1989 [3]: exact Cardano root of x^3 + 150 x = 23400/(1/S - 1),
        # x = A - B with A = cbrt(b + r), B = cbrt(r - b) = 50 / A since (r + b)(r - b) = 50^3
        # (one cube root fewer, and no cancellation in r - b as S -> 1)
        bb = 11700.0 * s / (1.0 - s)
        a = m.cbrt(bb + m.sqrt(bb * bb + 50.0**3))
        return (a - 50.0 / a) * m.exp(shift)
    if name == "hill1910":
        return STANDARD_P50_MMHG["hill1910"] * m.exp(shift) * (s / (1.0 - s)) ** (1.0 / HILL_N)
    y = m.log(s / (1.0 - s))
    if name == "siggaard_andersen1990":
        a, b = _sa_a_b(c, m)
        x0 = _LN7 + a + b
        h = 3.5 + a
        u = (y - 1.8747) / (1.0 + h * 0.5343)  # start on the steepest line
        for _ in range(60):
            th = m.tanh(0.5343 * u)
            f = u + h * th - (y - 1.8747)
            du = f / (1.0 + h * 0.5343 * (1.0 - th**2))
            u = u - du
            if _converged(du, 1e-13, m):
                break
        return m.exp(u + x0 + shift) * MMHG_PER_KPA
    # dash2016: Newton in ln p on y(ln p) = nH(p) (ln p - ln p50)
    p50 = DASH2016["p50_mmhg"] * m.exp(shift)
    lp50 = m.log(p50)
    lp = lp50 + y / 2.7
    for _ in range(60):
        p = m.exp(lp)
        decay = 10.0 ** (-p / DASH2016["gamma_mmhg"])
        nh = DASH2016["alpha"] - DASH2016["beta"] * decay
        f = nh * (lp - lp50) - y
        df = nh + _DASH_K * decay * p * (lp - lp50)
        step = m.clip(f / df, -2.0, 2.0)
        lp = lp - step
        if _converged(step, 1e-13, m):
            break
    return m.exp(lp)


def _broadcast(first, c):
    """Broadcast the first argument to the joint shape; conditions keep their own shapes
    (they broadcast inside the arithmetic, so scalar conditions cost nothing per point)."""
    first = np.asarray(first, dtype=float)
    shape = np.broadcast_shapes(first.shape, *(v.shape for v in c.values()))
    return (first if first.shape == shape else np.broadcast_to(first, shape)), c


def saturation(
    po2_mmhg,
    *,
    ph=7.40,
    pco2_mmhg=40.0,
    temperature_c=37.0,
    dpg_mmol_l=None,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    p50_mmhg=None,
    curve="severinghaus",
):
    """Functional O2 saturation of haemoglobin at a PO2 [-].

    Severinghaus 1979 Eq 1, ``S = 1 / (23400 / (x^3 + 150 x) + 1)`` with Kelman's
    virtual PO2 ``x = PO2 10^(0.024 (37 - T) + 0.40 (pH - 7.40) + 0.06 log10(40 / PCO2))``;
    or the Dash 2016, Siggaard-Andersen 1990 or Hill curve (module docstring).

    Parameters
    ----------
    po2_mmhg : array_like
        O2 tension [mmHg], >= 0.
    ph : array_like
        Plasma pH at body temperature [-].
    pco2_mmhg : array_like
        CO2 tension [mmHg].
    temperature_c : array_like
        Blood temperature [degC].
    dpg_mmol_l : array_like or None
        Red-cell 2,3-DPG [mmol/L]; None means normal (5.0).
    cohb_fraction, methb_fraction : array_like
        Carboxy- and methaemoglobin as fractions of total haemoglobin [-].
    p50_mmhg : array_like or None
        Standard-state P50 override [mmHg] (e.g. 20 for fetal blood).
    curve : str
        One of ``CURVES``.

    Returns
    -------
    ndarray
        Functional saturation O2Hb / (O2Hb + HHb) [-], broadcast over all arguments.

    Notes
    -----
    Severinghaus Eq 1 fits the standard curve within 0.0055 S. The DPG effect for the
    Severinghaus and Hill curves uses the tanh model's DPG term (0.06 per mmol/L in a).
    For the Dash curve, DPG is scaled to its 4.65 mM standard. CO: Haldane's first
    law, valid up to about 30 % COHb (Siggaard-Andersen 1993), solved for the total
    saturation by Newton's method inside a bisection bracket (to 1e-13).

    Examples
    --------
    >>> round(float(saturation(40.0)), 5)
    0.74946
    >>> float(saturation(40.0, ph=7.2)) < float(saturation(40.0))
    True
    """
    name, c = _conditions(
        ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve
    )
    p, c = _broadcast(po2_mmhg, c)
    if np.any(p < 0):
        raise ValueError(
            f"po2_mmhg = {p[p < 0].ravel()[0]:g} is outside the allowed range 0-inf mmHg"
        )
    return PreparedCurve(name, c).saturation(p)


class PreparedCurve:
    """A curve with its conditions validated once, for inner loops of the chain.

    Use :func:`prepare_curve`; evaluation skips validation and broadcasting checks. ``m``
    is numpy for arrays or :mod:`model.floats` for one case of floats (the same equations
    and Newton steps either way).
    """

    def __init__(self, name, c, m=np):
        self.name, self.c, self.m = name, c, m
        self.shift = _ln_shift(name, c, m)
        self.k = _constants(name, c, self.shift, m)
        self.sco = c["fco"] / (1.0 - c["fmet"])
        self.has_co = bool(m.any(self.sco > 0))
        self._last = None  # (PO2, total saturation) of the last CO solve

    def saturation(self, p):
        """Functional saturation at p [mmHg] (see :func:`saturation`)."""
        with self.m.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return self._saturation(p)

    def _saturation(self, p):
        # callers hold errstate(divide, invalid, over = "ignore")
        name, k, sco, m = self.name, self.k, self.sco, self.m
        if not self.has_co:
            return _total_formula(name, p, k, m)
        # Haldane: total saturation u solves F(u) = u - S(PO2 u / (u - sCO)) = 0 on (sCO, 1];
        # F rises with u, so Newton is kept inside a bisection bracket.
        p = m.asarray(p, dtype=float)
        lo, hi = sco * m.ones_like(p), m.ones_like(p * sco)
        last = self._last
        if last is not None and (m is not np or last[0].shape == p.shape):
            # inner loops ask at nearby pressures: start there (Newton ends at the same root)
            near = abs(p - last[0]) <= 0.25 * p
            if m.all(near):
                u = last[1]
            else:
                u = m.where(near, last[1], sco + (1.0 - sco) * _total_formula(name, p, k, m))
        else:
            u = sco + (1.0 - sco) * _total_formula(name, p, k, m)
        u = m.where((u > lo) & (u < hi), u, 0.5 * (lo + hi))
        moves = m.where(m.isnan(p) | (p <= 0) | (sco <= 0), 0.0, 1.0)  # 0: answered below
        for _ in range(_HALDANE_ITERATIONS):
            d = u - sco
            q = p * u / d
            t = _total_formula(name, q, k, m)
            f = u - t
            above = f > 0
            hi = m.where(above, u, hi)
            lo = m.where(above, lo, u)
            # (p / d) (sCO / d), not p sCO / d^2: d^2 underflows to 0 when PO2 and sCO are tiny
            # df >= 1 wherever the case moves (the curve rises), so f = 0 gives new = u
            df = 1.0 + _total_slope(name, q, t, k, m) * (p / d) * (sco / d)
            new = u - f / df
            inside = (new >= lo) & (new <= hi)  # False for NaN too
            new = m.where(inside, new, 0.5 * (lo + hi))
            step = (new - u) * moves  # NaN where not moving counts as converged too
            u = new
            if not m.any(abs(step) > _HALDANE_TOL):
                break
        self._last = (p, u)
        so2 = (u - sco) / (1.0 - sco)
        if not m.all(sco > 0):
            so2 = m.where(sco > 0, so2, _total_formula(name, p, k, m))
        if m.any((p <= 0) | m.isnan(p)):
            so2 = m.where(p <= 0, 0.0, m.where(m.isnan(p), m.nan, so2))
        return so2

    def slope(self, p):
        """dS/dPO2 by a central difference [1/mmHg]."""
        with self.m.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return self._slope(p)

    def _slope(self, p):
        # callers hold errstate(divide, invalid, over = "ignore")
        m = self.m
        h = m.maximum(1e-4 * p, 1e-6)
        lo = m.maximum(p - h, 0.0)
        return (self._saturation(p + h) - self._saturation(lo)) / (p + h - lo)

    def inverse(self, s):
        """PO2 [mmHg] at functional saturation s (exact inverse of :meth:`saturation`)."""
        m, sco = self.m, self.sco
        ends = (s == 0) | (s == 1)
        inner = m.where(ends, 0.5, s)  # the formulas divide by s and 1 - s
        if self.has_co:
            total = inner * (1.0 - sco) + sco
            p_eq = _total_inverse(self.name, total, self.c, self.shift, m)
            po2 = m.where(sco > 0, p_eq * (total - sco) / total, p_eq)
        else:
            po2 = _total_inverse(self.name, inner, self.c, self.shift, m)
        if m.any(ends):
            po2 = m.where(s == 0, 0.0, m.where(s == 1, m.inf, po2))
        return po2


def _prepare_curve(
    m, ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve
):
    """:func:`prepare_curve` for numpy (``m=np``) or one case of floats (:mod:`model.floats`)."""
    name, c = _conditions(
        ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve, m
    )
    return PreparedCurve(name, c, m)


def prepare_curve(
    *,
    ph=7.40,
    pco2_mmhg=40.0,
    temperature_c=37.0,
    dpg_mmol_l=None,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    p50_mmhg=None,
    curve="severinghaus",
):
    """Validate curve conditions once and return a :class:`PreparedCurve`.

    Examples
    --------
    >>> round(float(prepare_curve(ph=7.2).saturation(40.0)), 4) == round(float(saturation(40.0, ph=7.2)), 4)
    True
    """
    return _prepare_curve(
        np, ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve
    )


def po2_from_saturation(
    so2,
    *,
    ph=7.40,
    pco2_mmhg=40.0,
    temperature_c=37.0,
    dpg_mmol_l=None,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    p50_mmhg=None,
    curve="severinghaus",
):
    """PO2 at which the functional saturation equals ``so2`` [mmHg].

    The exact inverse of :func:`saturation`: Ellis' closed form for Severinghaus Eq 1,
    the closed form for Hill, Newton iteration (to 1e-13 in ln PO2) for the Dash and tanh
    curves, and Haldane's law inverted exactly for CO.

    Parameters
    ----------
    so2 : array_like
        Functional saturation [-], 0 <= so2 <= 1 (0 gives 0, 1 gives inf).
    **conditions
        As for :func:`saturation`.

    Returns
    -------
    ndarray
        PO2 [mmHg].

    Examples
    --------
    >>> round(float(po2_from_saturation(0.5)), 3)
    26.857
    >>> round(float(po2_from_saturation(0.75, curve="dash")), 2)
    39.86
    """
    name, c = _conditions(
        ph, pco2_mmhg, temperature_c, dpg_mmol_l, cohb_fraction, methb_fraction, p50_mmhg, curve
    )
    s, c = _broadcast(so2, c)
    if np.any(s < 0) or np.any(s > 1):
        bad = s[(s < 0) | (s > 1)].ravel()[0]
        raise ValueError(f"so2 = {bad:g} is outside the allowed range 0-1")
    return PreparedCurve(name, c).inverse(s)


def p50(
    *,
    ph=7.40,
    pco2_mmhg=40.0,
    temperature_c=37.0,
    dpg_mmol_l=None,
    cohb_fraction=0.0,
    methb_fraction=0.0,
    p50_mmhg=None,
    curve="severinghaus",
):
    """P50, the PO2 at half functional saturation, under the given conditions [mmHg].

    Examples
    --------
    >>> round(float(p50(temperature_c=39.0, curve="siggaard_andersen1990")), 2)
    29.96
    """
    return po2_from_saturation(
        0.5,
        ph=ph,
        pco2_mmhg=pco2_mmhg,
        temperature_c=temperature_c,
        dpg_mmol_l=dpg_mmol_l,
        cohb_fraction=cohb_fraction,
        methb_fraction=methb_fraction,
        p50_mmhg=p50_mmhg,
        curve=curve,
    )


def saturation_slope(po2_mmhg, **conditions):
    """dS/dPO2 of :func:`saturation` by a central difference [1/mmHg].

    Examples
    --------
    >>> round(float(saturation_slope(26.86)), 4)
    0.0247
    """
    return prepare_curve(**conditions).slope(np.asarray(po2_mmhg, dtype=float))


def _tanh_standard_p50() -> float:
    c = {
        "ph": np.array(7.40),
        "pco2": np.array(40.0),
        "t": np.array(37.0),
        "dpg": np.array(NORMAL_DPG_MMOL_L),
        "fco": np.array(0.0),
        "fmet": np.array(0.0),
    }
    return float(_total_inverse("siggaard_andersen1990", np.array(0.5), c, np.array(0.0)))


STANDARD_P50_MMHG["siggaard_andersen1990"] = _tanh_standard_p50()
