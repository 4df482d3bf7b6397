"""Planner workspace state, its exports and its views without a server."""

import csv
import io
import re
from html.parser import HTMLParser
from urllib.parse import parse_qsl, urlsplit

import numpy as np
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
    # the mountain model is the case screen's default: the address may leave it out
    assert pairs["altitude_m"] == "5300" and pairs.get("pressure_model", "mountain") == "mountain"
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
    from o2transit.dashboard.ascent.comparison_views import ComparisonPlots, SummaryTable
    from o2transit.dashboard.ascent.editor_view import ScheduleEditor

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


# ---------------------------------------------------------------- readings
READING = {"day": "3", "altitude_m": "3300", "spo2_pct": "84", "heart_rate_min": ""}


def test_readings_are_added_fitted_and_reforecast():
    w = AscentWorkspace()
    w.load_examples()
    assert w.select_editing("slow-to-5300m")
    before = w.results["slow-to-5300m"].night.arterial.so2.copy()
    assert w.add_reading(READING), w.error_message
    assert w.add_reading({"day": 4, "altitude_m": 3800, "spo2_pct": 80, "lake_louise_score": 2})
    fit = w.fits["slow-to-5300m"]
    assert fit.n == 2 and fit.offset_mmhg > 0.0
    assert np.all(w.results["slow-to-5300m"].night.arterial.so2[4:] < before[4:])
    assert "Fitted to 2 readings" in w.fit_text("slow-to-5300m")
    series = w.series("slow-to-5300m")
    assert list(series["readings_day"]) == [3, 4] and len(series["readings_forecast_pct"]) == 2
    assert w.edit_reading(1, "spo2_pct", "88")
    assert w.readings["slow-to-5300m"][0].spo2_pct == 88.0
    assert w.remove_reading(2) and len(w.readings["slow-to-5300m"]) == 1
    assert w.clear_readings() and "slow-to-5300m" not in w.fits
    np.testing.assert_allclose(w.results["slow-to-5300m"].night.arterial.so2, before)


@pytest.mark.parametrize(
    ("fields", "words"),
    [
        ({**READING, "spo2_pct": "130"}, ["spo2_pct = '130'", "50-100 %"]),
        ({**READING, "day": "30"}, ["day = '30'", "1-13"]),
        ({**READING, "altitude_m": ""}, ["altitude_m is missing"]),
        ({**READING, "heart_rate_min": "fast"}, ["heart_rate_min = 'fast'", "number"]),
        ({**READING, "lake_louise_score": "20"}, ["lake_louise_score = '20'", "0-12 points"]),
    ],
)
def test_bad_reading_is_refused_and_nothing_changes(fields, words):
    w = AscentWorkspace()
    w.load_examples()
    w.select_editing("slow-to-5300m")
    assert w.add_reading(READING)
    state = (dict(w.readings), dict(w.fits), dict(w.results))
    assert not w.add_reading(fields)
    for word in words:
        assert word in w.error_message, w.error_message
    assert (dict(w.readings), dict(w.fits), dict(w.results)) == state


def test_readings_from_a_file_or_pasted_text_all_or_nothing(ws):
    ws.select_editing("slow-to-5300m")
    good = "day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score\n3,3300,86,88,1\n4,3800,83,,\n"
    assert ws.import_readings(good.encode(), "log.csv")
    assert "2 readings read from log.csv" in ws.status_message
    assert ws.export_readings() == good
    kept = ws.readings["slow-to-5300m"]
    bad = good + "5,3800,83,,\n6,4200,200,,\n"
    assert not ws.import_readings(bad, "pasted text")
    assert "pasted text: row 4 spo2_pct = '200'" in ws.error_message
    assert ws.readings["slow-to-5300m"] == kept


def test_a_schedule_with_readings_keeps_their_days(ws):
    ws.select_editing("fast-to-5300m")
    assert ws.add_reading({"day": 8, "altitude_m": 2800, "spo2_pct": 92})
    days = _days(ws)
    assert not ws.remove_day(8)
    assert "reading on day 8" in ws.error_message and _days(ws) == days
    assert ws.edit_cell(8, "sleep_altitude_m", 3000.0)  # other edits still re-fit
    assert ws.fits["fast-to-5300m"].n == 1
    copy = ws.duplicate()
    assert ws.readings[copy] == ws.readings["fast-to-5300m"]  # the same person's log


# ---------------------------------------------------------------- sharing
def test_address_names_untouched_examples_only(ws):
    q = ws.address_query()
    assert q["plan"] is None and q["pressure_unit"] is None
    assert list(q) == ["plan", "pressure_unit", "schedules"]  # "schedules" stays last
    assert q["schedules"] == "fast-to-5300m,oxygen-above-6000m,slow-to-5300m"


def test_link_carries_edited_copied_and_uploaded_schedules_and_readings(ws):
    assert ws.edit_cell(3, "sleep_altitude_m", 3600.0)
    assert ws.rename("Fast, slower on day 3")
    copy = ws.duplicate()
    assert ws.edit_cell(2, "fio2", 0.3) and ws.add_day(4)
    own = ws.open_text(
        "name = 'Own'\ndescription = 'mine'\n[baseline]\nhb_g_dl = 13.5\n"
        "pressure_model = 'standard'\n[[day]]\nsleep_altitude_m = 2000\n"
        "[[day]]\nsleep_altitude_m = 3100\nhigh_altitude_m = 3500\n",
        "own.toml",
    )
    ws.select_editing("slow-to-5300m")
    assert ws.add_reading(READING)
    assert ws.set_compared(["fast-to-5300m", copy, own, "slow-to-5300m"])
    q = ws.address_query()
    assert q["plan"] and len(q["plan"]) < 2000
    other = AscentWorkspace()
    assert other.restore_address(q) == []
    assert other.compared == ws.compared
    for key in ws.compared:
        a, b = ws.schedules[key], other.schedules[key]
        assert (a.name, a.description, a.baseline, a.days) == (
            b.name,
            b.description,
            b.baseline,
            b.days,
        )
        np.testing.assert_allclose(
            other.results[key].night.arterial.so2, ws.results[key].night.arterial.so2, rtol=1e-12
        )
    assert other.readings == ws.readings and set(other.fits) == {"slow-to-5300m"}
    # the example opened by name is still an untouched example in the new workspace
    assert other.address_query() == q


def test_too_long_a_plan_is_left_to_the_file(ws, monkeypatch):
    # A 400-day schedule fits in the 6000 characters; the limit is tried on a small one.
    from o2transit.dashboard.ascent import sharing

    ws.edit_cell(3, "sleep_altitude_m", 3600.0)
    assert ws.address_query()["plan"]
    monkeypatch.setattr(sharing, "MAX_PLAN_CHARS", 40)
    plan, note = ws.sharing.plan()
    assert plan is None and "Save the workspace as a file" in note and "(40)" in note
    assert ws.address_query()["plan"] is None
    assert ws.plan_note() == note


def test_a_damaged_link_says_so_and_opens_the_examples_it_names():
    w = AscentWorkspace()
    msgs = w.restore_address({"plan": "1.AAAA-broken", "schedules": "slow-to-5300m"})
    assert any("plan is damaged" in m for m in msgs)
    assert w.compared == ["slow-to-5300m"]
    w2 = AscentWorkspace()
    msgs = w2.restore_address({"schedules": "fast-to-5300m", "pressure_unit": "bar"})
    assert any("pressure_unit = 'bar' is not one of mmHg, kPa" in m for m in msgs)
    assert w2.pressure_unit == "mmHg"


def test_a_shared_schedule_that_fails_the_checks_is_named_and_left_out():
    from o2transit.dashboard.ascent.sharing import encode_plan

    plan = encode_plan([{"k": "bad", "n": "Bad", "t": "2800;12000"}])
    w = AscentWorkspace()
    msgs = w.restore_address({"plan": plan, "schedules": "bad,slow-to-5300m"})
    assert any("sleep_altitude_m = 12000.0" in m and "-500-9000 m" in m for m in msgs), msgs
    assert w.compared == ["slow-to-5300m"]


def test_workspace_file_round_trip_and_refusals(ws):
    ws.edit_cell(2, "high_altitude_m", 3900.0)
    ws.select_editing("slow-to-5300m")
    ws.add_reading(READING)
    ws.set_threshold("threshold_high_pct", 88.0)
    ws.set_pressure_unit("kPa")
    text = ws.workspace_json()
    other = AscentWorkspace()
    assert other.open_workspace(text.encode(), "mine.json"), other.error_message
    assert list(other.schedules) == list(ws.schedules) and other.compared == ws.compared
    assert all(other.schedules[k].days == ws.schedules[k].days for k in ws.schedules)
    assert other.readings == ws.readings and other.threshold_high_pct == 88.0
    assert other.pressure_unit == "kPa"
    before = dict(other.schedules)
    broken = text.replace('"sleep_altitude_m": 3400.0', '"sleep_altitude_m": 99999', 1)
    assert not other.open_workspace(broken, "broken.json")
    assert "broken.json: schedule 'fast-to-5300m'" in other.error_message
    assert "99999" in other.error_message and "-500-9000 m" in other.error_message
    assert other.schedules == before
    assert not other.open_workspace("{}", "empty.json")
    assert "not an o2transit ascent workspace file" in other.error_message
    assert not other.open_workspace("not json", "x.json") and "not a workspace file" in (
        other.error_message
    )


# ---------------------------------------------------------------- pressure unit
def test_kpa_on_the_planner(ws):
    mmhg = ws.series("slow-to-5300m")["pao2"]
    assert ws.set_pressure_unit("kPa")
    assert ws.address_query()["pressure_unit"] == "kPa"
    kpa = ws.series("slow-to-5300m")["pao2"]
    np.testing.assert_allclose(kpa * 760.0 / 101.325, mmhg)
    ws.pick("slow-to-5300m", 10)
    assert " kPa, SaO2 " in ws.picked_text()
    assert "pressure_unit=kPa" in ws.case_link("slow-to-5300m", 10)
    assert not ws.set_pressure_unit("psi") and "psi" in ws.error_message
    other = AscentWorkspace()
    other.restore_address({"schedules": "slow-to-5300m", "pressure_unit": "kPa"})
    assert other.pressure_unit == "kPa"


# ---------------------------------------------------------------- exports for a reader
def test_table_csv_is_in_percent_rounded_as_shown(ws):
    from o2transit.dashboard.ascent.export import comparison_table_csv

    ws.set_pressure_unit("kPa")
    rows = list(csv.reader(io.StringIO(comparison_table_csv(ws))))
    head = rows[0]
    assert head[:3] == ["Schedule", "Day", "Sleeping altitude (m)"]
    assert "SaO2 at rest, model (%)" in head and "PaO2 at rest (kPa)" in head
    assert "Predicted SpO2 at rest, low edge (%)" in head
    r = ws.results["fast-to-5300m"]
    first = dict(zip(head, rows[1]))
    assert first["SaO2 at rest, model (%)"] == f"{100 * r.night.arterial.so2[0]:.1f}"
    assert first["Predicted SpO2 at rest, low edge (%)"] == f"{100 * r.sao2_low[0]:.0f}"
    pao2 = float(r.night.arterial.po2_mmhg[0]) * 101.325 / 760.0
    assert first["PaO2 at rest (kPa)"] == f"{pao2:.2f}"
    assert rows[-1][0] == "Note" and CAUTION in rows[-1][-1]
    assert "West 1996 mountain model" in rows[-1][-1]


def test_html_export_has_a_print_layout_and_the_band(ws):
    ws.select_editing("slow-to-5300m")
    ws.add_reading(READING)
    page = comparison_html(ws)
    assert "@media print" in page and "break-inside: avoid" in page
    assert "Predicted SpO2 at rest, low edge (%)" in page
    assert "Readings logged on the way" in page and "predicted SpO2" in page
    assert "West 1996 mountain model" in page


def test_the_pressure_line_names_the_model_in_words():
    from o2transit.dashboard.ascent.views import UnitToggle

    ws = AscentWorkspace()
    ws.load_examples()
    text = UnitToggle(ws)._model.object
    assert text == (
        "Barometric pressure from the West 1996 mountain model, for every compared schedule."
    )
    assert "pressure_model" not in text  # a field name of the code, not words for a reader
