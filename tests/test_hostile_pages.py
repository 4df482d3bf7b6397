"""Hostile or careless page addresses and uploads: a visible message, never a server error.

State-level checks of issue 18's page items: address values that are not numbers,
repeated keys, pairs the scenario files refuse together, unknown keys on every screen, and
the upload checks shared by every upload control (dashboard/widgets.py).
"""

import pytest
from o2transit.dashboard.ascent.state import AscentWorkspace
from o2transit.dashboard.case.state import CaseState
from o2transit.dashboard.lecture.query import query_updates
from o2transit.dashboard.lecture.state import LectureState
from o2transit.dashboard.urlstate import (
    case_query,
    check_case_query,
    parse_number,
    restore_case,
    split_query,
)
from o2transit.dashboard.widgets import MAX_UPLOAD_BYTES, Upload, UploadError, check_upload
from o2transit.model.scenario import ScenarioError, scenario_from_mapping

NOT_NUMBERS = ["²", "9" * 5000, "inf", "-inf", "nan", "1e999", "", " ", "1_000", "١٢", "0x10"]


@pytest.mark.parametrize("raw", NOT_NUMBERS)
def test_a_value_that_is_not_a_number_gets_the_message_and_the_default(raw):
    for key in ("fio2", "hb_g_dl", "altitude_m", "hb_g_l"):
        state = CaseState()
        (message,) = restore_case(state, {key: raw})
        assert "is not a number in" in message and "the default" in message
        assert len(message) < 200  # a 5,000-digit value is shortened in the notice
        assert state.fio2 == 0.21 and state.hb_g_dl == 15.0 and state.altitude_m == 0.0


def test_panel_reads_any_address_without_raising():
    # Panel's parser (run for every served page) called int('²') and int() on 5,000 digits
    from panel.io import location

    for search in ("?fio2=%C2%B2", "?step=²", "?hb_g_dl=" + "9" * 5000, "?a=1&b=²"):
        params = location.Location(search=search).query_params
        assert set(params) <= {"fio2", "step", "hb_g_dl", "a", "b"}
    assert location.Location(search="?a=1&b=x").query_params == {"a": 1, "b": "x"}


def test_plain_numbers_still_parse():
    assert [parse_number(t) for t in ("0.21", "-5", "+3", ".5", "4.5e3", "7.")] == [
        0.21,
        -5.0,
        3.0,
        0.5,
        4500.0,
        7.0,
    ]


def test_a_repeated_key_is_used_neither_time():
    pairs, messages = split_query("?fio2=0.3&fio2=0.4&hb_g_dl=9&step=1&step=")
    assert pairs == {"hb_g_dl": "9"}
    assert messages == [
        "fio2 is given 2 times ('0.3', '0.4'); give it once; it is not used",
        "step is given 2 times ('1', ''); give it once; it is not used",
    ]


@pytest.mark.parametrize(
    "pairs, names",
    [
        ({"ph": "7.3", "base_excess_mmol_l": "-5"}, ("ph", "base_excess_mmol_l")),
        ({"altitude_m": "3000", "barometric_pressure_mmhg": "500"}, ("altitude_m",)),
        ({"altitude_m": "3000", "barometric_pressure_kpa": "60"}, ("altitude_m",)),
    ],
)
def test_pairs_refused_by_scenario_files_are_refused_in_the_address(pairs, names):
    with pytest.raises(ScenarioError, match="are both given; keep one"):
        table = {"ph": "blood", "base_excess_mmol_l": "blood"}
        data: dict = {}
        for key, raw in pairs.items():
            data.setdefault(table.get(key, "air"), {})[key] = float(raw)
        scenario_from_mapping(data)
    state = CaseState()
    messages = restore_case(state, {**pairs, "hb_g_dl": "9"})
    (message,) = messages
    assert "are both given; keep one" in message and all(n in message for n in names)
    assert state.hb_g_dl == 9.0  # the other keys are used
    assert state.ph == 7.40 and state.acid_base_input == "pH"
    assert state.altitude_m == 0.0 and not state.use_pressure_override


def test_the_address_written_never_holds_a_refused_pair():
    state = CaseState()
    state.altitude_m = 4500.0
    state.use_pressure_override = True
    state.barometric_pressure_mmhg = 420.0
    query = case_query(state)
    assert "altitude_m" not in query and query["barometric_pressure_mmhg"] == "420"
    assert check_case_query(CaseState(), query)[2] == []


def test_other_owners_keys_are_not_part_of_a_pair():
    inputs, _, messages = check_case_query(
        CaseState(), {"ph": "7.3", "base_excess_mmol_l": "-5"}, other_keys=["ph"]
    )
    assert messages == [] and inputs == {"base_excess_mmol_l": -5.0}


@pytest.fixture(scope="module")
def lecture():
    return LectureState()


@pytest.mark.parametrize("raw", ["²", "", "0", "-1", "9" * 5000, "1.5", "٣", "99"])
def test_a_lecture_step_that_is_not_a_step_gets_the_message(lecture, raw):
    updates, messages = query_updates(lecture, {"lesson": lecture.lesson, "step": raw})
    assert updates["step"] == 1
    (message,) = messages
    assert "is outside the allowed range 1–" in message and len(message) < 200


def test_an_unknown_ascent_key_gets_the_notice():
    ws = AscentWorkspace()
    messages = ws.restore_address({"foo": "1", "pressure_unit": "kPa"})
    assert messages == ["'foo' is not a setting of the ascent planner; ignored"]
    assert ws.pressure_unit == "kPa"


# ---------------------------------------------------------------------- uploads
DEEP_TOML = ("a = " + "[" * 2000 + "]" * 2000 + "\n").encode()
DEEP_JSON = ("[" * 3000 + "]" * 3000).encode()
LONG_FIELD_CSV = ("day,sleep_altitude_m\n1," + "9" * 140_000 + "\n").encode()
BINARY = bytes(range(256)) * 4
HOSTILE = {
    "deeply nested": (DEEP_TOML, DEEP_JSON, None),
    "long CSV field": (None, None, LONG_FIELD_CSV),
    "empty": (b"", b"", b""),
    "blank": (b"  \n", b"\n", b" \n"),
    "binary": (BINARY, BINARY, BINARY),
    "UTF-16": ("a = 1".encode("utf-16"),) * 3,
    "too large": (b"#" * (MAX_UPLOAD_BYTES + 1),) * 3,
}
EXPECTED = {
    "deeply nested": "nested deeper than 32 levels",
    "long CSV field": "longer than 131,072 characters",
    "empty": "the file is empty",
    "blank": "the file is empty",
    "binary": "NUL bytes",
    "UTF-16": "not UTF-8",
    "too large": "over the limit of 1.0 MiB for an upload",
}


def _upload_screens(ws):
    """(kind, the screen's handler) of every upload of the planner."""
    return (
        ("toml", ws.open_text),
        ("json", ws.open_workspace),
        ("csv", ws.import_readings),
        ("csv", ws.import_csv),
    )


@pytest.mark.parametrize("problem", list(HOSTILE))
def test_every_upload_refuses_a_bad_file_with_one_message_naming_it(problem):
    ws = AscentWorkspace()
    ws.load_examples()
    ws.select_editing(next(iter(ws.schedules)))
    before = dict(ws.schedules)
    toml, js, csv_data = HOSTILE[problem]
    for kind, handler in _upload_screens(ws):
        data = {"toml": toml, "json": js, "csv": csv_data}[kind]
        if data is None:
            continue
        upload = Upload(handler, kind=kind, accept="." + kind, what="A file")
        name = f"mine.{kind}"
        assert upload.receive(data, name) is False
        text = upload.message.object
        assert upload.message.visible and name in text and EXPECTED[problem] in text, text
        assert "Traceback" not in text
    assert ws.schedules == before  # nothing was opened, nothing reopened


def test_the_limit_is_stated_beside_the_control_and_carried_to_the_browser():
    upload = Upload(lambda d, n: None, kind="csv", accept=".csv", what="Readings file (.csv)")
    assert upload.hint.object == "Readings file (.csv): at most 1.0 MiB, UTF-8 text"
    assert f"o2-upload-max-{MAX_UPLOAD_BYTES}" in upload.file_input.css_classes
    assert MAX_UPLOAD_BYTES == 1024 * 1024


def test_a_good_file_reaches_the_screen_and_an_unexpected_error_is_one_line():
    got = []
    upload = Upload(lambda d, n: got.append((d, n)), kind="toml", accept=".toml", what="x")
    assert upload.receive(b"name = 'x'\n", "a.toml") and got == [(b"name = 'x'\n", "a.toml")]
    assert not upload.message.visible

    def broken(_data, _name):
        raise RecursionError("maximum recursion depth exceeded")

    upload = Upload(broken, kind="csv", accept=".csv", what="x")
    assert upload.receive(b"a,b\n1,2\n", "b.csv") is False
    assert "b.csv: could not be read (RecursionError" in upload.message.object


def test_check_upload_passes_good_files():
    check_upload(b"day,sleep_altitude_m\n1,100\n", "d.csv", "csv")
    check_upload(b'{"a": [1, {"b": 2}]}', "w.json", "json")
    check_upload(b"\xef\xbb\xbf[air]\nfio2 = 0.3\n", "s.toml", "toml")  # a BOM is dropped
    with pytest.raises(UploadError, match=r"w.json: not valid JSON"):
        check_upload(b"{", "w.json", "json")
