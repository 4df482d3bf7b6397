"""Bedside fit and what-if timing (run by ``make bench``; not part of the tests).

Three invented blood gases (arterial only; arterial and venous; venous with a little CO)
are fitted by :func:`model.fit_case` beside a naive baseline: every free parameter at once
(shunt and P50, plus VO2 with venous values) by ``scipy.optimize.least_squares`` with its
own finite-difference Jacobian, one chain solve per evaluation. fit_case splits the P50
off (a root on the dissociation curve alone, no chain solve), takes the shunt alone by
Brent's method when there is no venous value, and reuses the Jacobian's solves. Both use
the chain's one-case float path. Then :func:`model.rank_levers` on each fit.
Target from the bedside issue: a fit in well under 1 s on a 2-core machine.
"""

from __future__ import annotations

import time

import numpy as np
from o2transit.model import fit_case, rank_levers, solve_transport
from scipy.optimize import least_squares

ARTERIAL = {
    "pao2_mmhg": 64.0,
    "paco2_mmhg": 44.0,
    "ph": 7.34,
    "sao2": 0.90,
    "hb_g_dl": 10.8,
    "fio2": 0.45,
    "temperature_c": 37.0,
    "cardiac_output_l_min": 5.0,
}
VENOUS = {**ARTERIAL, "svo2": 0.62, "pvo2_mmhg": 34.0, "pvco2_mmhg": 50.0}
WITH_CO = {**VENOUS, "cohb_fraction": 0.03, "methb_fraction": 0.01}


def best(fn, repeats=3) -> float:
    t = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        t = min(t, time.perf_counter() - t0)
    return t


def naive_fit(measured: dict, inputs: dict) -> np.ndarray:
    """Shunt, P50 (and VO2) fitted jointly, one chain solve per evaluation."""
    base = {
        k: v for k, v in inputs.items() if k not in ("shunt_fraction", "vo2_ml_min", "p50_mmhg")
    }
    venous = "svo2" in measured
    target = [measured["pao2_mmhg"] / 2.0, measured["sao2"] / 0.01]  # gases at 37 degC here
    if venous:
        target += [measured["svo2"] / 0.01, measured["pvo2_mmhg"]]
    target = np.array(target)

    def res(x):
        kw = dict(base, shunt_fraction=x[0], p50_mmhg=x[1])
        if venous:
            kw["vo2_ml_min"] = x[2]
        try:
            t = solve_transport(**kw)
        except ValueError:
            return np.full(target.size, 1e3)
        now = [float(t.arterial.po2_mmhg) / 2.0, float(t.arterial.so2) / 0.01]
        if venous:
            now += [float(t.venous.so2) / 0.01, float(t.venous.po2_mmhg)]
        return np.array(now) - target

    x0, lo, hi = [0.1, 26.8], [0.0, 8.0], [0.8, 60.0]
    if venous:
        x0, lo, hi = x0 + [250.0], lo + [50.0], hi + [6000.0]
    sol = least_squares(
        res,
        x0,
        bounds=(lo, hi),
        xtol=1e-9,
        ftol=1e-9,
        gtol=1e-9,
        x_scale=[0.01, 1.0, 10.0][: len(x0)],
    )
    return sol.x


def main() -> None:
    print(f"{'case':<22}{'fit_case':>10}{'naive':>10}{'naive/fit':>11}{'levers':>10}")
    for name, measured in (
        ("arterial only", ARTERIAL),
        ("arterial + venous", VENOUS),
        ("venous, COHb 0.03", WITH_CO),
    ):
        fit = fit_case(measured)
        fast = best(lambda m=measured: fit_case(m))
        slow = best(lambda m=measured, f=fit: naive_fit(m, f.inputs), repeats=2)
        joint = naive_fit(measured, fit.inputs)
        assert abs(joint[0] - fit.fitted["shunt_fraction"]) < 0.01, (joint, fit.fitted)
        lever = best(lambda f=fit: rank_levers(f.inputs, shunt_change=-0.05))
        flag = "" if fast < 1.0 else "  (target 1 s missed)"
        print(
            f"{name:<22}{fast * 1000:>8.0f}ms{slow * 1000:>8.0f}ms{slow / fast:>10.1f}x"
            f"{lever * 1000:>8.0f}ms{flag}"
        )


if __name__ == "__main__":
    main()
