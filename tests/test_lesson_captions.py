"""Every number a shipped lesson's title or caption states, checked against the model.

Each step lists its numbers in the order they appear, each with the quantity it claims to
be; the test fails if a caption holds a number not listed (so none slips in unchecked) or if
a number is not the model's value rounded as written (within half its last digit). The
altitude lesson's steps are also checked against the model's day-by-day acclimatization.
"""

import re

import altitude_lesson
import pytest
from o2transit.dashboard.lecture.state import LESSON_DIR, LectureState

from o2transit import model

_NUMBER = re.compile(r"(?<![\w.,])[−+-]?\d+(?:\.\d+)?(?![\w])")
_NAMES = re.compile(r"2,3-DPG")  # a name, not two numbers


def numbers(text: str) -> list[str]:
    """The numbers written in ``text`` (not the digits of names such as PaO2 or CO2)."""
    return _NUMBER.findall(_NAMES.sub("", text))


def _value(text: str) -> float:
    return float(text.replace("−", "-"))


def _tolerance(text: str) -> float:
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10.0**-decimals + 1e-9


def _result(inputs):
    return model.solve_transport(**inputs)


REFERENCE = _result({})

# quantity name -> value, from (state showing the step, its LessonStep, the previous step)
QUANTITIES = {
    "pao2": lambda st, s, prev: float(st.case.result.arterial.po2_mmhg),
    "sao2": lambda st, s, prev: 100 * float(st.case.result.arterial.so2),
    "cao2": lambda st, s, prev: float(st.case.result.arterial.o2_content_ml_dl),
    "pvo2": lambda st, s, prev: float(st.case.result.venous.po2_mmhg),
    "svo2": lambda st, s, prev: 100 * float(st.case.result.venous.so2),
    "ph": lambda st, s, prev: float(st.case.result.arterial.ph),
    "pio2": lambda st, s, prev: float(st.case.result.inspired_po2_mmhg),
    "do2": lambda st, s, prev: float(st.case.result.do2_ml_min),
    "er": lambda st, s, prev: 100 * float(st.case.result.extraction_ratio),
    "vo2": lambda st, s, prev: float(st.case.result.vo2_ml_min),
    "co": lambda st, s, prev: float(st.case.result.cardiac_output_l_min),
    "hb": lambda st, s, prev: float(st.case.result.hb_g_dl),
    "p50": lambda st, s, prev: st.frame["p50"],
    "p50_shift": lambda st, s, prev: st.frame["p50_shift"],
    "tissue": lambda st, s, prev: st.frame["tissue_po2"],
    "ext": lambda st, s, prev: st.frame["extracted_ml_per_l"],
    "ext_change": lambda st, s, prev: st.frame["extracted_change_ml_per_l"],
    "shunt%": lambda st, s, prev: 100 * s.inputs["shunt_fraction"],
    "fio2%": lambda st, s, prev: 100 * s.inputs["fio2"],
    "prev:pao2": lambda st, s, prev: float(_result(prev.inputs).arterial.po2_mmhg),
    "ref:pio2": lambda st, s, prev: float(REFERENCE.inspired_po2_mmhg),
    "ref:cao2": lambda st, s, prev: float(REFERENCE.arterial.o2_content_ml_dl),
    "ref:pvo2": lambda st, s, prev: float(REFERENCE.venous.po2_mmhg),
    "ref-pvo2": lambda st, s, prev: (
        float(REFERENCE.venous.po2_mmhg) - float(st.case.result.venous.po2_mmhg)
    ),
    "normal lungs:pao2": lambda st, s, prev: float(
        _result({k: v for k, v in s.inputs.items() if k != "shunt_fraction"}).arterial.po2_mmhg
    ),
}
for _key in (
    "altitude_m",
    "temperature_c",
    "ph",
    "base_excess_mmol_l",
    "paco2_mmhg",
    "hb_g_dl",
    "dpg_mmol_l",
    "cardiac_output_l_min",
):
    QUANTITIES[f"input:{_key}"] = lambda st, s, prev, k=_key: float(s.inputs[k])

ALTITUDE_NIGHTS = dict(zip((3, 4, 5, 6), altitude_lesson.NIGHTS))
"""Steps of the altitude lesson -> the night of the model's acclimatization they show."""
QUANTITIES["day"] = lambda st, s, prev: float(ALTITUDE_NIGHTS[s.number])
QUANTITIES["lesson altitude"] = lambda st, s, prev: altitude_lesson.ALTITUDE_M
QUANTITIES["night dpg"] = lambda st, s, prev: altitude_lesson.model_inputs()[s.number - 2][
    "night_dpg_mmol_l"
]

CLAIMS = {
    "rest-to-altitude": {
        1: [("96", "pao2"), ("97", "sao2"), ("50", "ext"), ("40", "tissue")],
        2: [
            ("38.5", "input:temperature_c"),
            ("7.32", "input:ph"),
            ("20", "tissue"),
            ("4.5", "p50_shift"),
            ("12", "ext_change"),
        ],
        3: [
            ("39.5", "input:temperature_c"),
            ("3", "p50_shift"),
            ("40", "tissue"),
            ("11", "ext_change"),
        ],
        4: [
            ("−12", "input:base_excess_mmol_l"),
            ("30", "input:paco2_mmhg"),
            ("7.27", "ph"),
            ("2.9", "p50_shift"),
            ("40", "tissue"),
            ("13", "ext_change"),
        ],
        5: [
            ("4500", "input:altitude_m"),
            ("84", "pio2"),
            ("38", "pao2"),
            ("74", "sao2"),
            ("6.3", "co"),
            ("40", "ext"),
            ("28", "pvo2"),
        ],
        6: [
            ("8", "input:hb_g_dl"),
            ("97", "sao2"),
            ("10.7", "cao2"),
            ("40", "tissue"),
            ("27", "ext"),
        ],
        7: [("98", "sao2"), ("15", "cao2"), ("19.5", "p50"), ("40", "tissue"), ("23", "ext")],
    },
    "shunt-anaemia-and-flow": {
        1: [
            ("96", "pao2"),
            ("994", "do2"),
            ("250", "vo2"),
            ("5", "co"),
            ("50", "ext"),
            ("40", "pvo2"),
        ],
        2: [("30", "shunt%"), ("54", "pao2"), ("88", "sao2"), ("50", "ext"), ("34", "pvo2")],
        3: [("30", "shunt%"), ("60", "fio2%"), ("71", "pao2"), ("350", "normal lungs:pao2")],
        4: [("3", "co"), ("83", "ext"), ("26", "pvo2"), ("71", "prev:pao2"), ("53", "pao2")],
        5: [
            ("7", "input:hb_g_dl"),
            ("97", "sao2"),
            ("9.4", "cao2"),
            ("50", "ext"),
            ("26", "pvo2"),
            ("46", "svo2"),
        ],
        6: [("8", "input:cardiac_output_l_min"), ("31", "ext"), ("35", "pvo2"), ("754", "do2")],
        7: [
            ("10", "input:hb_g_dl"),
            ("3", "input:cardiac_output_l_min"),
            ("397", "do2"),
            ("63", "er"),
            ("23", "pvo2"),
        ],
    },
    # Written by tests/altitude_lesson.py round the model's numbers: only what each is.
    "staying-at-altitude": {
        1: ["pao2", "sao2", "ext", "pvo2", "lesson altitude"],
        2: [
            "input:altitude_m",
            "ref:pio2",
            "pio2",
            "input:paco2_mmhg",
            "input:ph",
            "p50_shift",
            "pao2",
            "sao2",
        ],
        3: ["input:altitude_m", "night dpg", "p50_shift", "co", "ext", "pvo2"],
        4: ["day", "input:altitude_m", "input:paco2_mmhg", "pao2", "sao2", "hb", "cao2"],
        5: ["input:altitude_m", "input:paco2_mmhg", "sao2", "hb", "co", "ext", "pvo2", "ref-pvo2"],
        6: ["input:altitude_m", "hb", "cao2", "ref:cao2", "sao2", "pvo2", "ref:pvo2"],
    },
}


@pytest.fixture(scope="module")
def state():
    return LectureState()


def test_the_three_lessons_ship():
    assert set(CLAIMS) <= set(LectureState().lessons)
    assert sorted(p.stem for p in LESSON_DIR.glob("*.toml")) == sorted(CLAIMS)


@pytest.mark.parametrize(
    ("lesson", "number"), [(k, n) for k, steps in CLAIMS.items() for n in steps]
)
def test_each_number_in_a_caption_is_the_models(state, lesson, number):
    assert state.choose_lesson(lesson) and state.go_to(number)
    steps = state.current_lesson.steps
    step, prev = steps[number - 1], steps[number - 2] if number > 1 else None
    written = numbers(f"{step.title} | {step.caption}")
    claims = CLAIMS[lesson][number]
    if isinstance(claims[0], str):  # quantities only: the numbers are the model's of the day
        assert len(written) == len(claims), (step.title, written)
        claims = list(zip(written, claims))
    assert written == [text for text, _ in claims], (step.title, written)
    for text, quantity in claims:
        got = QUANTITIES[quantity](state, step, prev)
        assert abs(got - _value(text)) <= _tolerance(text), (step.title, text, quantity, got)


def test_every_step_of_every_lesson_is_claimed(state):
    for key, lesson in state.lessons.items():
        assert sorted(CLAIMS[key]) == [s.number for s in lesson.steps], key


def test_number_reader_skips_names():
    assert numbers("PaO2 96 mmHg, 2,3-DPG 6.1, P50 −1.5 and +0.9; CO2 at 39.5 °C") == [
        "96",
        "6.1",
        "−1.5",
        "+0.9",
        "39.5",
    ]


def test_altitude_lesson_is_the_models_acclimatization(state):
    # The lesson's inputs are model.run_ascent's (a lowlander from sea level straight to
    # 4500 m), rounded; its captions are written round the model's numbers. A change of the
    # acclimatization model shows here: run `python tests/altitude_lesson.py` to take the new
    # values in, and read the captions it writes.
    shipped = state.lessons["staying-at-altitude"]
    made = altitude_lesson.lesson_steps()
    assert shipped.name == altitude_lesson.NAME
    assert [s.title for s in shipped.steps] == [s.title for s in made]
    for have, want in zip(shipped.steps, made):
        assert have.inputs == want.inputs, (have.title, "run python tests/altitude_lesson.py")
        assert have.caption == want.caption, have.title
        assert have.tissue_point == "venous"
    # Rounding only: each input is the model's to within half its last written digit.
    for step, raw in zip(shipped.steps[1:], altitude_lesson.model_inputs()):
        for key, digits in altitude_lesson.DIGITS.items():
            if key in step.inputs:
                assert step.inputs[key] == pytest.approx(raw[key], abs=0.5 * 10**-digits + 1e-9)
    # The four-scenario lesson's altitude step was this lesson's arrival when written.
    first_day = state.lessons["rest-to-altitude"].steps[4]
    assert first_day.title == "First day at 4500 m" and first_day.tissue_point == "venous"
    assert first_day.inputs["altitude_m"] == altitude_lesson.ALTITUDE_M
