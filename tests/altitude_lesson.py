"""The "Altitude day by day" lesson, made from the model's acclimatization.

``python tests/altitude_lesson.py`` rewrites ``scenarios/lessons/staying-at-altitude.toml``:
a lowlander flown from sea level to 4500 m (``model.run_ascent``), shown at sea level, in the
first hours (the high point of day 1), and on nights 1, 3, 7 and 21, each step's inputs the
model's values rounded (:data:`DIGITS`) and each caption written round the model's numbers
for that step. ``tests/test_lesson_captions.py`` checks the shipped file against
:func:`lesson_steps`, so a change of the acclimatization model is found there; run this file
again to take the new values in, and read the captions it writes.
"""

from __future__ import annotations

import inspect
from pathlib import Path

from o2transit.model.ascent import AscentDay, AscentProfile, run_ascent
from o2transit.model.ascent_report import night_case_inputs
from o2transit.model.lesson import LessonStep, lesson_to_toml

from o2transit import model

ALTITUDE_M = 4500.0
NIGHTS = (1, 3, 7, 21)
"""The nights shown after the first hours (steps 3-6)."""
DIGITS = {
    "paco2_mmhg": 1,
    "rq": 2,
    "ph": 2,
    "hb_g_dl": 1,
    "dpg_mmol_l": 1,
    "p50_mmhg": 1,
    "cardiac_output_l_min": 1,
}
"""Decimals each input is written with in the lesson."""
PATH = Path(__file__).resolve().parent.parent / "scenarios" / "lessons" / "staying-at-altitude.toml"
_DEFAULTS = {k: p.default for k, p in inspect.signature(model.solve_transport).parameters.items()}
_DEFAULTS["dpg_mmol_l"] = model.NORMAL_DPG_MMOL_L  # None there means normal


def _minus(value: float, digits: int = 1) -> str:
    return f"{value:+.{digits}f}".replace("-", "−")


def _rounded(inputs: dict) -> dict:
    """Altitude and pressure model, and every other input away from its default, rounded."""
    out = {"altitude_m": ALTITUDE_M, "pressure_model": "mountain"}
    for key, digits in DIGITS.items():
        if key in inputs and inputs[key] is not None:
            value = round(float(inputs[key]), digits)
            if _DEFAULTS.get(key) is None or abs(value - float(_DEFAULTS[key])) > 1e-9:
                out[key] = value
    return out


def model_inputs() -> list[dict]:
    """The unrounded inputs of steps 2-6 as the model gives them (arrival, then the nights)."""
    result = run_ascent(AscentProfile("4500 m", (AscentDay(ALTITUDE_M),) * max(NIGHTS)))
    high = result.high
    arrival = {
        "paco2_mmhg": float(high.arterial.pco2_mmhg[0]),
        "ph": float(high.arterial.ph[0]),
        "hb_g_dl": float(high.hb_g_dl[0]),
        "cardiac_output_l_min": float(high.cardiac_output_l_min[0]),
    }
    nights = []
    for night in NIGHTS:
        case = night_case_inputs(result, night)
        case["night_dpg_mmol_l"] = float(result.dpg_mmol_l[night - 1])
        nights.append(case)
    return [arrival, *nights]


def _numbers(inputs: dict) -> dict:
    r = model.solve_transport(**inputs)
    return {
        "pao2": float(r.arterial.po2_mmhg),
        "sao2": 100 * float(r.arterial.so2),
        "cao2": float(r.arterial.o2_content_ml_dl),
        "pvo2": float(r.venous.po2_mmhg),
        "ext": float(r.o2_extracted_ml_per_l),
        "p50": float(r.arterial.p50_mmhg),
        "pio2": float(r.inspired_po2_mmhg),
        "co": float(r.cardiac_output_l_min),
        "hb": float(r.hb_g_dl),
    }


def lesson_steps() -> list[LessonStep]:
    """The six steps, inputs rounded, captions written round the model's numbers."""
    raw = model_inputs()
    inputs = [_rounded(x) for x in raw]
    ref = _numbers({})
    arrival, n1, n3, n7, n21 = (_numbers(x) for x in inputs)
    shift = {k: v["p50"] - ref["p50"] for k, v in (("a", arrival), ("n1", n1))}
    dpg1 = raw[1]["night_dpg_mmol_l"]
    gain = "makes up for" if n21["cao2"] >= ref["cao2"] else "makes up much of the loss from"
    captions = [
        (
            "At sea level, before the trip",
            (
                f"A lowlander at rest at sea level: PaO2 {ref['pao2']:.0f} mmHg, SaO2 "
                f"{ref['sao2']:.0f} %, and each litre gives up {ref['ext']:.0f} mL O2 by a venous "
                f"PO2 of {ref['pvo2']:.0f} mmHg. The steps that follow are the model's "
                f"acclimatization at {ALTITUDE_M:.0f} m, each read at the venous PO2 of that "
                "day's solve."
            ),
        ),
        (
            f"Hours after arriving at {ALTITUDE_M:.0f} m",
            (
                f"The inspired PO2 falls from {ref['pio2']:.0f} to {arrival['pio2']:.0f} mmHg. "
                f"Breathing harder lowers PCO2 to {inputs[0]['paco2_mmhg']:.0f} mmHg and raises "
                f"the pH to {inputs[0]['ph']:.2f}, which moves the curve a little left (P50 "
                f"{_minus(shift['a'])} mmHg): it helps loading, but the arterial point is on the "
                f"steep part, at {arrival['pao2']:.0f} mmHg and {arrival['sao2']:.0f} %."
            ),
        ),
        (
            f"First night at {ALTITUDE_M:.0f} m",
            (
                f"The kidneys start to shed bicarbonate and red-cell 2,3-DPG rises to "
                f"{dpg1:.1f} mmol/L, which moves the curve right again (P50 {_minus(shift['n1'])} "
                f"mmHg). The heart still pumps {n1['co']:.1f} L/min, so each litre need give up "
                f"only {n1['ext']:.0f} mL, by a venous PO2 of {n1['pvo2']:.0f} mmHg."
            ),
        ),
        (
            f"Day 3 at {ALTITUDE_M:.0f} m",
            (
                f"Breathing goes on rising (PCO2 {inputs[2]['paco2_mmhg']:.0f} mmHg), so PaO2 "
                f"climbs to {n3['pao2']:.0f} mmHg and SaO2 to {n3['sao2']:.0f} %. Plasma volume "
                f"shrinks and Hb rises to {n3['hb']:.1f} g/dL: CaO2 is back up to "
                f"{n3['cao2']:.1f} mL/dL."
            ),
        ),
        (
            f"One week at {ALTITUDE_M:.0f} m",
            (
                f"PCO2 {inputs[3]['paco2_mmhg']:.0f} mmHg, SaO2 {n7['sao2']:.0f} %, Hb "
                f"{n7['hb']:.1f} g/dL. Cardiac output is back to {n7['co']:.1f} L/min, so each "
                f"litre again gives up about {n7['ext']:.0f} mL, by a venous PO2 of "
                f"{n7['pvo2']:.0f} mmHg, {ref['pvo2'] - n7['pvo2']:.0f} mmHg below that at sea "
                "level."
            ),
        ),
        (
            f"Three weeks at {ALTITUDE_M:.0f} m",
            (
                f"Hb {n21['hb']:.1f} g/dL and CaO2 {n21['cao2']:.1f} mL/dL against "
                f"{ref['cao2']:.1f} at sea level: more haemoglobin {gain} a saturation of only "
                f"{n21['sao2']:.0f} %. The venous PO2, {n21['pvo2']:.0f} mmHg, stays below the "
                f"sea-level {ref['pvo2']:.0f}: the tissues work at a lower PO2."
            ),
        ),
    ]
    cases = [{}, *inputs]
    return [
        LessonStep(i, title, caption, 40.0, case, "venous")
        for i, ((title, caption), case) in enumerate(zip(captions, cases), start=1)
    ]


NAME = "Altitude day by day"
DESCRIPTION = (
    "A lowlander flown from sea level to 4500 m and staying there: the first hours, the first "
    "night, day 3, one week and three weeks, as the model's acclimatization gives them "
    "(model.run_ascent, rounded). Every step reads the tissue point at the venous PO2 of its "
    "own solve."
)
HEADER = (
    "# An invented lowlander; the day-by-day values are the model's acclimatization\n"
    "# (model.run_ascent, sea level straight to 4500 m), rounded. Written by\n"
    "# tests/altitude_lesson.py; each number a caption states is checked against the model\n"
    "# in tests/test_lesson_captions.py.\n"
)


def write(path: Path = PATH) -> Path:
    text = lesson_to_toml(NAME, DESCRIPTION, lesson_steps())
    body = text.split("\n", 2)[2]  # lesson_to_toml's own two header lines give way to ours
    path.write_text(HEADER + body, encoding="utf-8")
    return path


if __name__ == "__main__":
    print(write())
