"""Planner workspace state, its exports and its views without a server."""

import csv
import io
import re
from html.parser import HTMLParser
from urllib.parse import parse_qsl, urlsplit

import pytest
from bokeh.document import Document
from o2transit.dashboard.ascent.export import comparison_csv, comparison_html
from o2transit.dashboard.ascent.state import EXAMPLE_DIR, MAX_COMPARED, AscentWorkspace
from o2transit.dashboard.case.state import CaseState
from o2transit.dashboard.look import CAUTION
from o2transit.model.ascent import days_to_csv, load_ascent, run_ascent
from o2transit.model.ascent_report import hypoxic_burden, night_case_inputs, nights_below

from o2transit import model


@pytest.fixture
def ws():
    w = AscentWorkspace()
    assert w.load_examples(), w.error_message
    return w


def _days(w, key=None):
    return w.schedules[key or w.editing].days


# ---------------------------------------------------------------- opening and comparing
def test_examples_open_and_are_compared(ws):
    keys = [p.stem for p in sorted(EXAMPLE_DIR.glob("*.toml"))]
    assert list(ws.schedules) == keys
    assert ws.compared == keys[:MAX_COMPARED]
    assert ws.editing == keys[0]
    assert not ws.error_message
    assert ws.load_examples() and len(ws.schedules) == len(keys)  # no second copy


def test_results_match_the_model(ws):
    for key, profile in ws.schedules.items():
        expected = run_ascent(load_ascent(profile.path)).summary
        assert ws.results[key].summary == expected


def test_compare_refuses_five_and_unknown(ws):
    ws.duplicate()
    ws.duplicate()
    keys = list(ws.schedules)
    assert len(keys) == 5
    before = list(ws.compared)
    assert not ws.set_compared(keys)
    assert "5 schedules chosen; compare 2-4" in ws.error_message
    assert ws.compared == before
    assert not ws.set_compared(["nope"])
    assert ws.set_compared(keys[3:])
    assert ws.compared == keys[3:]


def test_open_text_refuses_bad_toml_naming_the_file():
    w = AscentWorkspace()
    assert w.open_text(b"name = 'x'\n[[day]]\nsleep_altitude_m = 12000\n", "mine.toml") is None
    assert "mine.toml" in w.error_message and "12000" in w.error_message
    assert "-500-9000 m" in w.error_message
    assert w.open_text("name = \n", "broken.toml") is None
    assert "broken.toml: not valid TOML" in w.error_message
    assert not w.schedules
    key = w.open_text("name = 'Mine'\n[[day]]\nsleep_altitude_m = 2000\n", "my trek.toml")
    assert key == "my-trek" and w.schedules[key].name == "Mine" and not w.error_message


def test_a_schedule_keeps_its_colour_while_compared(ws):
    assert ws.slots == {"fast-to-5300m": 0, "oxygen-above-6000m": 1, "slow-to-5300m": 2}
    assert ws.set_compared(["slow-to-5300m", "fast-to-5300m"])
    assert ws.slots == {"slow-to-5300m": 2, "fast-to-5300m": 0}
    copy = ws.duplicate()
    assert ws.slots[copy] == 1  # the first free one
    assert ws.close("fast-to-5300m") and set(ws.slots) == {"slow-to-5300m", copy}


def test_selection_round_trips_through_the_address():
    w = AscentWorkspace()
    msgs = w.restore_selection("slow-to-5300m,fast-to-5300m,../etc,missing")
    assert w.compared == ["slow-to-5300m", "fast-to-5300m"]
    assert w.selection_query() == "slow-to-5300m,fast-to-5300m"
    assert len(msgs) == 2 and all("not an example schedule" in m for m in msgs)
    other = AscentWorkspace()
    other.restore_selection(w.selection_query())
    assert other.compared == w.compared


# ---------------------------------------------------------------- editing
def test_edit_cell_applies_and_recomputes(ws):
    key = "fast-to-5300m"
    sao2 = float(ws.results[key].night.arterial.so2[2])
    assert ws.edit_cell(3, "sleep_altitude_m", 3600.0)
    assert _days(ws)[2].sleep_altitude_m == 3600.0
    assert float(ws.results[key].night.arterial.so2[2]) > sao2  # lower night, better SaO2
    assert ws.edit_cell(3, "fio2", 0.3)
    assert _days(ws)[2].fio2 == 0.3
    assert ws.edit_cell(3, "high_altitude_m", 4100.0)
    assert ws.edit_cell(3, "high_altitude_m", float("nan"))  # blank: no high point
    assert _days(ws)[2].high_altitude_m is None
    assert ws.edit_cell(3, "fio2", None)
    assert _days(ws)[2].fio2 == 0.21


@pytest.mark.parametrize(
    "field, value, words",
    [
        ("sleep_altitude_m", 12000.0, ["day 2", "sleep_altitude_m", "12000", "-500-9000 m"]),
        ("high_altitude_m", 3000.0, ["day 2", "high_altitude_m", "3000", "3400-9000 m"]),
        ("fio2", 1.5, ["day 2", "fio2", "1.5", "0.21-1"]),
        ("fio2", "lots", ["day 2", "fio2", "'lots'", "must be a number"]),
        ("sleep_altitude_m", None, ["day 2", "sleep_altitude_m", "required", "m"]),
    ],
)
def test_bad_edit_is_refused_and_nothing_changes(ws, field, value, words):
    days, results = _days(ws), dict(ws.results)
    assert not ws.edit_cell(2, field, value)
    for w in words:
        assert w in ws.error_message, ws.error_message
    assert _days(ws) == days and ws.results == results


def test_raising_sleep_above_high_point_is_refused(ws):
    days = _days(ws)
    assert days[1].high_altitude_m == 3500.0
    assert not ws.edit_cell(2, "sleep_altitude_m", 3600.0)
    assert "below the sleeping altitude 3600 m" in ws.error_message
    assert _days(ws) == days


def test_add_remove_move_days(ws):
    days = list(_days(ws))
    assert ws.add_day(2)
    new = _days(ws)
    assert len(new) == len(days) + 1
    assert new[2].sleep_altitude_m == days[1].sleep_altitude_m and new[2].high_altitude_m is None
    assert ws.selected_day == 3
    assert ws.move_day(3, -1)
    assert _days(ws)[1] == new[2] and _days(ws)[2] == new[1] and ws.selected_day == 2
    assert ws.move_day(2, 1)
    assert list(_days(ws)) == list(new)
    assert ws.remove_day(3)
    assert list(_days(ws)) == days
    assert not ws.move_day(1, -1) and "already the first" in ws.error_message
    assert not ws.remove_day(99) and "1-8" in ws.error_message
    assert not ws.move_day(None, 1) and "pick a day first" in ws.error_message
    assert ws.add_day(None) and len(_days(ws)) == len(days) + 1  # appended at the end


def test_rest_day_added_never_adds_a_flag(ws):
    flags = ws.results[ws.editing].summary["flag_count"]
    assert ws.add_day(3)
    assert ws.results[ws.editing].summary["flag_count"] <= flags


def test_a_schedule_keeps_one_day():
    w = AscentWorkspace()
    w.open_text("name = 'one'\n[[day]]\nsleep_altitude_m = 100\n", "one.toml")
    assert not w.remove_day(1) and "at least 1 day" in w.error_message


def test_rename_duplicate_close(ws):
    assert ws.rename("  My fast plan ")
    assert ws.schedules[ws.editing].name == "My fast plan"
    assert ws.results[ws.editing].profile.name == "My fast plan"
    assert not ws.rename("   ") and "1-120 characters" in ws.error_message
    original = ws.editing
    copy = ws.duplicate()
    assert ws.editing == copy and ws.schedules[copy].days == ws.schedules[original].days
    assert ws.close(copy) and copy not in ws.schedules and copy not in ws.compared


def test_csv_round_trip_uses_the_model_format(ws):
    text = ws.export_csv()
    assert text == days_to_csv(_days(ws))
    assert text.splitlines()[0] == "day,sleep_altitude_m,high_altitude_m,fio2"
    assert ws.select_editing("slow-to-5300m")
    assert ws.import_csv(text.encode(), "fast.csv")
    assert _days(ws) == ws.schedules["fast-to-5300m"].days
    before = _days(ws)
    assert not ws.import_csv("day,sleep_altitude_m,high_altitude_m,fio2\n1,2800,,\n3,3000,,\n")
    assert "row 2 day = '3' must be 2" in ws.error_message
    assert _days(ws) == before


# ---------------------------------------------------------------- thresholds, summary
def test_thresholds_change_counts_not_the_model(ws):
    key = "slow-to-5300m"
    r = ws.results[key]
    s = ws.summary(key)
    # at the default thresholds our counts are the model's own
    assert s["nights_below_high"] == r.summary["nights_below_0_90"]
    assert s["nights_below_low"] == r.summary["nights_below_0_80"]
    assert s["hypoxic_burden"] == pytest.approx(r.summary["hypoxic_burden_saturation_days"])
    assert ws.set_threshold("threshold_high_pct", 85.0)
    s2 = ws.summary(key)
    assert s2["nights_below_high"] == nights_below(r, 0.85) <= s["nights_below_high"]
    assert s2["hypoxic_burden"] == pytest.approx(hypoxic_burden(r, 0.85))
    assert s2["hypoxic_burden"] < s["hypoxic_burden"]
    assert not ws.set_threshold("threshold_low_pct", 20.0)
    assert "Lower SaO2 threshold = 20.0 is outside the allowed range 40-100 %" in ws.error_message
    assert ws.threshold_low_pct == 80.0


# ---------------------------------------------------------------- a day as a case
def test_case_link_reproduces_the_night_on_the_case_screen(ws):
    key, day = "fast-to-5300m", 5
    link = ws.case_link(key, day)
    parts = urlsplit(link)
    assert parts.path == "/"
    pairs = dict(parse_qsl(parts.query))
    assert pairs["altitude_m"] == "5300" and pairs["pressure_model"] == "mountain"
    assert set(pairs) >= {"fio2", "paco2_mmhg", "ph", "hb_g_dl", "dpg_mmol_l"}
    case = CaseState()
    inputs = {k: (v if k == "pressure_model" else float(v)) for k, v in pairs.items()}
    assert case.apply_inputs(inputs), case.error_message
    night = ws.results[key].night
    # same chain, same inputs: agreement to the solver's tolerance (common practice)
    assert float(case.result.arterial.po2_mmhg) == pytest.approx(
        float(night.arterial.po2_mmhg[day - 1]), abs=1e-4
    )
    assert float(case.result.arterial.so2) == pytest.approx(
        float(night.arterial.so2[day - 1]), abs=1e-6
    )


def test_case_inputs_on_oxygen_carry_the_fio2(ws):
    r = ws.results["oxygen-above-6000m"]
    inputs = night_case_inputs(r, 18)
    assert inputs["fio2"] == pytest.approx(0.29) and inputs["altitude_m"] == 6500.0
    res = model.solve_transport(**inputs)
    assert float(res.arterial.so2) == pytest.approx(float(r.night.arterial.so2[17]), abs=1e-6)
    with pytest.raises(ValueError, match="outside the allowed range 1-22"):
        night_case_inputs(r, 23)


def test_pick_and_select_day(ws):
    assert ws.pick("slow-to-5300m", 10)
    assert ws.picked == ("slow-to-5300m", 10)
    assert ws.picked_text().startswith("Slow ascent to a 5300 m camp, night 10: 5300 m")
    assert not ws.pick("slow-to-5300m", 40) and "1-13" in ws.error_message
    assert ws.select_day(4) and ws.picked == (ws.editing, 4)


# ---------------------------------------------------------------- exports
def test_comparison_csv_parses_and_holds_days_and_summary(ws):
    ws.set_threshold("threshold_high_pct", 85.0)
    rows = list(csv.DictReader(io.StringIO(comparison_csv(ws))))
    assert rows[0]["record"] == "note" and CAUTION in rows[0]["note"]
    for key in ws.compared:
        r = ws.results[key]
        days = [x for x in rows if x["schedule_key"] == key and x["record"] == "day"]
        assert len(days) == r.sleep_altitude_m.size
        assert [int(x["day"]) for x in days] == list(range(1, len(days) + 1))
        assert float(days[-1]["sao2"]) == pytest.approx(float(r.night.arterial.so2[-1]), rel=1e-5)
        (summary,) = [x for x in rows if x["schedule_key"] == key and x["record"] == "summary"]
        assert int(summary["nights_below_0_85"]) == nights_below(r, 0.85)
        assert summary["risk_category"] == r.summary["risk_category"]
        assert float(summary["lowest_night_sao2"]) == pytest.approx(
            r.summary["lowest_night_sao2"], rel=1e-5
        )
    flagged = [x for x in rows if x["record"] == "day" and x["flags"]]
    assert flagged and all("guideline" in x["flags"] for x in flagged)


class _Resources(HTMLParser):
    """Every src/href of the page's tags (script bodies are data, not tags)."""

    def __init__(self):
        super().__init__()
        self.urls = []

    def handle_starttag(self, tag, attrs):
        self.urls += [v for k, v in attrs if k in ("src", "href") and v]


def test_comparison_html_is_standalone_and_holds_the_data(ws):
    page = comparison_html(ws)
    parser = _Resources()
    parser.feed(page)
    assert parser.urls == []  # nothing loaded by address: everything is inline
    assert not re.search(r"url\(\s*['\"]?(https?:)?//", page)
    assert not re.search(r"@import", page)
    assert "Bokeh.embed.embed_items" in page
    assert CAUTION in page and "Made by o2transit on" in page
    for key in ws.compared:
        r = ws.results[key]
        assert r.profile.name in page
        assert f"{100 * r.summary['lowest_night_sao2']:.1f} %" in page
    assert "sleeping altitude rose 600 m to 3400 m" in page  # a flag of the fast schedule
    assert "Risk category" in page


# ---------------------------------------------------------------- views without a server
def test_views_render_and_follow_the_state(ws):
    from o2transit.dashboard.ascent.app import create_ascent_app
    from o2transit.dashboard.ascent.views import ComparisonPlots, ScheduleEditor, SummaryTable

    assert create_ascent_app(AscentWorkspace()).server_doc(Document()) is not None
    plots = ComparisonPlots(ws)
    assert plots.__panel__().get_root(Document()) is not None
    src = plots.figures.line_sources["sao2"]
    assert [len(s.data["x"]) for s in src] == [8, 22, 13, 0]
    pts = plots.figures.point_sources["sao2"].data
    flagged = [m for m in pts["marker"] if m == "triangle"]
    assert len(flagged) == sum(len([f for f in ws.results[k].flags if f]) for k in ws.compared)
    ws.set_compared(["slow-to-5300m", "fast-to-5300m"])
    assert [len(s.data["x"]) for s in src] == [8, 0, 13, 0]  # each keeps its colour
    editor = ScheduleEditor(ws)
    assert list(editor._table.value["day"]) == list(range(1, 9))
    ws.add_day(1)
    assert list(editor._table.value["day"]) == list(range(1, 10))
    table = SummaryTable(ws)
    assert "Nights below 90 %" in table.__panel__().object
    ws.set_threshold("threshold_high_pct", 88.0)
    assert "Nights below 88 %" in table.__panel__().object
