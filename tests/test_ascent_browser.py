"""Browser test of the ascent planner (/ascent) in headless Debian Chromium via Playwright.

A planner's session: load the examples, edit a day (and have a bad value refused), add,
move and remove days, choose what to compare, open a night on the case screen from a plot,
export the comparison (CSV and an HTML page that is then opened offline), and restore the
comparison from the address. A trekker's readings: entered in the form (a bad one refused),
pasted as CSV, drawn against the forecast; the link that carries an edited schedule, the
readings and the pressure unit into a new page; the workspace file. Skipped only without
Chromium and without CI.
"""

import csv
import io
import re
from pathlib import Path
from urllib.parse import parse_qsl, urlsplit

import pytest
from browser_session import (
    ARTIFACTS,
    LOCAL_HOSTS,
    checked_context,
    require_chromium,
    served_screens,
    wait_address,
    wait_for,
)
from o2transit.dashboard.app import SCREENS
from playwright.sync_api import TimeoutError as PlaywrightTimeoutError
from playwright.sync_api import expect

# Two cores are often shared with other work: allow a loaded machine time for each change.
expect.set_options(timeout=20_000)

require_chromium()


@pytest.fixture(scope="module")
def base_url():
    with served_screens(dict(SCREENS), "/ascent") as base:
        yield base


@pytest.fixture
def context(browser):
    options = {"viewport": {"width": 1400, "height": 900}, "accept_downloads": True}
    # A tab closed while the server still writes to it is not an error of the page.
    with checked_context(browser, **options) as ctx:
        yield ctx


def rows(page) -> list[list[str]]:
    """The day table as text, one list per row (day, sleep, high, FiO2, SaO2, flags)."""
    return page.locator(".o2-asc-table .tabulator-row").evaluate_all(
        "(rs, fields) => rs.map(r => fields.map(f => "
        "(r.querySelector(`.tabulator-cell[tabulator-field=${f}]`)?.textContent ?? '').trim()))",
        ["day", "sleep_altitude_m", "high_altitude_m", "fio2", "sao2_pct", "guidance"],
    )


def cell(page, row: int, field: str):
    return (
        page.locator(".o2-asc-table .tabulator-row")
        .nth(row)
        .locator(f".tabulator-cell[tabulator-field={field}]")
    )


def edit(page, row: int, field: str, text: str) -> None:
    cell(page, row, field).click()
    box = page.locator(".o2-asc-table .tabulator-cell input")
    box.fill(text)
    box.press("Enter")


def wait_rows(page, check, timeout: float = 20.0):
    return wait_for(lambda: rows(page), check, timeout, lambda current: current)


def point_on_plot(page, title: str, x: float, y: float) -> tuple[float, float]:
    """Page coordinates of data point (x, y) on the figure titled ``title``."""
    return tuple(
        page.evaluate(
            """([title, x, y]) => {
                const seen = new Set();
                let found = null;
                const walk = (v) => {
                    if (!v || seen.has(v) || found) return;
                    seen.add(v);
                    if (v.model.type === "Figure" && v.model.title?.text === title) found = v;
                    for (const c of v.child_views ?? []) walk(c);
                };
                Object.values(Bokeh.index).forEach(walk);
                const r = found.el.getBoundingClientRect();
                return [r.left + found.frame.x_scale.compute(x),
                        r.top + found.frame.y_scale.compute(y)];
            }""",
            [title, x, y],
        )
    )


def test_planner_session(context, base_url, tmp_path):
    page = context.new_page()
    page.goto(f"{base_url}/ascent?schedules=")
    expect(page.locator(".o2-asc-legend")).to_contain_text("Nothing compared yet")
    expect(page.locator(".o2-caution")).to_contain_text("not a medical device")

    # load the examples: three compared, the address follows
    page.locator(".o2-asc-examples button").click()
    summary = page.locator(".o2-asc-summary")
    for name in ("Fast ascent", "Slow ascent", "Expedition with oxygen"):
        expect(summary).to_contain_text(name)
    expect(page).to_have_url(re.compile(r"schedules=fast-to-5300m%2Coxygen-above-6000m%2Cslow"))
    table = wait_rows(page, lambda r: len(r) == 8)
    assert table[2][:2] == ["3", "4000"] and "⚠" in table[2][5]

    # edit a cell: day 3 sleeps at 3600 m instead of 4000 m -> better SaO2 that night
    sao2 = float(table[2][4])
    edit(page, 2, "sleep_altitude_m", "3600")
    table = wait_rows(page, lambda r: r[2][1] == "3600" and float(r[2][4]) > sao2)
    expect(page.locator(".o2-asc-status")).to_contain_text("Day 3: sleep_altitude_m changed")

    # a bad value is refused with field, value and range, and the cell shows the old value
    edit(page, 1, "high_altitude_m", "3000")
    expect(page.locator(".o2-asc-error")).to_contain_text(
        "day 2 high_altitude_m = 3000.0 is below the sleeping altitude 3400 m; "
        "the allowed range is 3400-9000 m"
    )
    wait_rows(page, lambda r: r[1][2] == "3500")

    # pick day 2, add a rest day after it, move it down, remove it
    cell(page, 1, "day").click()
    expect(page.locator(".o2-asc-edit-hint")).to_contain_text("Day 2 picked")
    page.locator(".o2-asc-add button").click()
    table = wait_rows(page, lambda r: len(r) == 9)
    assert table[2][1] == "3400" and table[2][2] == ""  # the new day: a rest day at 3400 m
    expect(page.locator(".o2-asc-edit-hint")).to_contain_text("Day 3 picked")
    page.locator(".o2-asc-down button").click()
    table = wait_rows(page, lambda r: r[2][1] == "3600" and r[3][1] == "3400")
    expect(page.locator(".o2-asc-edit-hint")).to_contain_text("Day 4 picked")
    page.locator(".o2-asc-up button").click()
    wait_rows(page, lambda r: r[2][1] == "3400" and r[3][1] == "3600")
    page.locator(".o2-asc-remove button").click()
    table = wait_rows(page, lambda r: len(r) == 8 and r[2][1] == "3600")

    # the row picked in the table is offered as a case
    expect(page.locator(".o2-asc-case")).to_contain_text("Fast ascent to a 5300 m camp, night 3")

    # compare two of them: the address and the summary follow
    page.locator(".o2-asc-compare label", has_text="Expedition with oxygen").click()
    expect(summary).not_to_contain_text("Expedition with oxygen")
    expect(page).to_have_url(re.compile(r"schedules=fast-to-5300m%2Cslow-to-5300m$"))

    # thresholds: the summary counts follow
    box = page.locator(".o2-asc-th-high input")
    box.fill("85")
    box.press("Enter")
    expect(summary).to_contain_text("Nights below 85 %")

    # click night 10 of the slow schedule on the SaO2 plot -> a link to the case screen
    page.locator(".o2-asc-plots").scroll_into_view_if_needed()
    expect(page.locator(".o2-asc-summary")).to_contain_text("Slow ascent")
    x, y = point_on_plot(page, "SaO2 at night", 10, _sao2_of(page, "slow-to-5300m", 10))
    page.mouse.click(x, y)
    case = page.locator(".o2-asc-case")
    expect(case).to_contain_text("Slow ascent to a 5300 m camp, night 10: 5300 m")
    link = page.locator(".o2-asc-case a.o2-asc-case-link")
    href = link.get_attribute("href")
    pairs = dict(parse_qsl(urlsplit(href).query))
    assert urlsplit(href).path == "/"
    # the mountain model is the case screen's default: the address may leave it out
    assert pairs["altitude_m"] == "5300" and pairs.get("pressure_model", "mountain") == "mountain"
    assert float(pairs["paco2_mmhg"]) < 35 and 7.40 < float(pairs["ph"]) < 7.55

    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / "ascent-planner.png"))

    # the link opens the case screen in a new tab with that night's case
    with context.expect_page() as new_page:
        link.click()
    case_page = new_page.value
    expect(case_page.locator(".o2-in-altitude_m input")).to_have_value(
        re.compile(r"^5300(\.0)?$"), timeout=15000
    )
    expect(case_page.locator(".o2-in-paco2_mmhg input")).to_have_value(
        re.compile("^" + re.escape(pairs["paco2_mmhg"][:4]))
    )
    case_page.close()

    # exports
    with page.expect_download() as dl:
        page.locator(".o2-asc-export-csv button").click()
    text = Path(dl.value.path()).read_text(encoding="utf-8")
    records = list(csv.DictReader(io.StringIO(text)))
    assert records[0]["record"] == "note" and "not a medical device" in records[0]["note"]
    assert {r["schedule_key"] for r in records if r["record"] == "summary"} == {
        "fast-to-5300m",
        "slow-to-5300m",
    }
    fast = [r for r in records if r["schedule_key"] == "fast-to-5300m" and r["record"] == "day"]
    assert fast[2]["sleep_altitude_m"] == "3600"  # the edit made on screen
    assert "nights_below_0_85" in records[0]

    with page.expect_download() as dl:
        page.locator(".o2-asc-export-html button").click()
    exported = tmp_path / "comparison.html"
    dl.value.save_as(exported)
    assert "Slow ascent to a 5300 m camp" in exported.read_text(encoding="utf-8")

    page_requests = [u for u in context.requests if not u.startswith(("data:", "blob:"))]
    hosts = {urlsplit(u).hostname for u in page_requests}
    assert hosts <= LOCAL_HOSTS, hosts

    # the exported page, opened with the network off: it draws and asks for nothing
    context.set_offline(True)
    before = len(context.requests)
    offline = context.new_page()
    offline.goto(exported.as_uri())
    expect(offline.locator("h1")).to_have_text("Ascent comparison")
    expect(offline.locator("table.o2s")).to_contain_text("Nights below 85 %")
    expect(offline.locator(".bk-Canvas, .bk-Figure").first).to_be_attached(timeout=10000)
    offline.wait_for_timeout(300)
    later = [u for u in context.requests[before:] if not u.startswith(("data:", "blob:"))]
    assert later == [exported.as_uri()], later
    offline.screenshot(path=str(ARTIFACTS / "ascent-export.png"), full_page=True)
    offline.close()
    context.set_offline(False)


def _sao2_of(page, key: str, day: int) -> float:
    """Night SaO2 (%) of ``key`` on ``day`` as the summary's server computed it, read back
    from the plot's own data source (so the click lands on the point)."""
    return page.evaluate(
        """([key, day]) => {
            const seen = new Set();
            let out = null;
            const walk = (v) => {
                if (!v || seen.has(v) || out !== null) return;
                seen.add(v);
                if (v.model.type === "Figure" && v.model.title?.text === "SaO2 at night") {
                    for (const r of v.model.renderers) {
                        const d = r.data_source?.data;
                        if (!d || !d.key) continue;
                        for (let i = 0; i < d.key.length; i++)
                            if (d.key[i] === key && d.x[i] === day) out = d.y[i];
                    }
                }
                for (const c of v.child_views ?? []) walk(c);
            };
            Object.values(Bokeh.index).forEach(walk);
            return out;
        }""",
        [key, day],
    )


def test_files_rename_duplicate(context, base_url, tmp_path):
    page = context.new_page()
    page.goto(f"{base_url}/ascent?schedules=")
    expect(page.locator(".o2-asc-legend")).to_contain_text("Nothing compared yet")

    # open a schedule file of one's own; a bad one is refused with file, key, value, range
    bad = tmp_path / "bad.toml"
    bad.write_text('name = "Bad"\n[[day]]\nsleep_altitude_m = 9500\n', encoding="utf-8")
    page.locator(".o2-asc-open input[type=file]").set_input_files(str(bad))
    expect(page.locator(".o2-asc-error")).to_contain_text(
        "bad.toml: [[day]] 1 sleep_altitude_m = 9500 is outside the allowed range -500-9000 m".replace(
            "[[day]] ", "day "
        )
    )
    mine = tmp_path / "my-trek.toml"
    mine.write_text(
        'name = "My trek"\n[baseline]\npressure_model = "mountain"\n'
        + "".join(f"[[day]]\nsleep_altitude_m = {h}\n" for h in (1400, 2600, 3100, 3500)),
        encoding="utf-8",
    )
    page.locator(".o2-asc-open input[type=file]").set_input_files(str(mine))
    expect(page.locator(".o2-asc-summary")).to_contain_text("My trek")
    expect(page.locator(".o2-asc-error")).to_be_hidden()
    wait_rows(page, lambda r: [x[1] for x in r] == ["1400", "2600", "3100", "3500"])

    # replace its days from a CSV file, then save them back as CSV
    days = tmp_path / "days.csv"
    days.write_text(
        "day,sleep_altitude_m,high_altitude_m,fio2\n1,1400,,\n2,2600,2900,\n3,2600,,0.25\n",
        encoding="utf-8",
    )
    page.locator(".o2-asc-csv-in input[type=file]").set_input_files(str(days))
    wait_rows(
        page,
        lambda r: (
            [x[:4] for x in r]
            == [["1", "1400", "", "0.21"], ["2", "2600", "2900", "0.21"], ["3", "2600", "", "0.25"]]
        ),
    )
    expect(page.locator(".o2-asc-status")).to_contain_text("3 days read from days.csv")
    with page.expect_download() as dl:
        page.locator(".o2-asc-csv-out button").click()
    assert dl.value.suggested_filename == "my-trek-days.csv"
    saved = Path(dl.value.path()).read_text(encoding="utf-8")
    assert saved == days.read_text(encoding="utf-8").replace(",\n", ",0.21\n")

    # rename, duplicate: the copy is compared beside the original
    name = page.locator(".o2-asc-name input")
    name.fill("My slow trek")
    page.locator(".o2-asc-rename button").click()
    expect(page.locator(".o2-asc-summary")).to_contain_text("My slow trek")
    page.locator(".o2-asc-duplicate button").click()
    expect(page.locator(".o2-asc-summary")).to_contain_text("My slow trek (copy)")
    expect(page).to_have_url(re.compile(r"schedules=my-trek%2Cmy-trek-copy$"))


def test_address_restores_the_comparison(context, base_url):
    page = context.new_page()
    page.goto(f"{base_url}/ascent?schedules=slow-to-5300m,fast-to-5300m,nowhere")
    summary = page.locator(".o2-asc-summary")
    expect(summary).to_contain_text("Slow ascent to a 5300 m camp")
    expect(summary).to_contain_text("Fast ascent to a 5300 m camp")
    expect(summary).not_to_contain_text("Expedition")
    expect(page.locator(".o2-url-msg")).to_contain_text("'nowhere' is not an example schedule")
    order = page.locator(".o2-asc-summary th").evaluate_all(
        "hs => hs.map(h => h.textContent.trim())"
    )
    assert order[1:] == ["Slow ascent to a 5300 m camp", "Fast ascent to a 5300 m camp"]
    expect(page.locator(".o2-nav")).to_contain_text("Case")

    # a first visit without the key opens on the three examples, compared
    page.goto(f"{base_url}/ascent")
    for name in ("Fast ascent", "Slow ascent", "Expedition with oxygen"):
        expect(summary).to_contain_text(name)


def readings_rows(page) -> list[list[str]]:
    """The readings table as text, one list per row (day, altitude, SpO2, HR, LLS)."""
    return page.locator(".o2-asc-readings .tabulator-row").evaluate_all(
        "(rs, fields) => rs.map(r => fields.map(f => "
        "(r.querySelector(`.tabulator-cell[tabulator-field=${f}]`)?.textContent ?? '').trim()))",
        ["day", "altitude_m", "spo2_pct", "heart_rate_min", "lake_louise_score"],
    )


def _glyph_points(page, title: str, marker: str) -> int:
    """Number of points drawn with ``marker`` on the figure titled ``title``."""
    return page.evaluate(
        """([title, marker]) => {
            const seen = new Set();
            let n = 0;
            const walk = (v) => {
                if (!v || seen.has(v)) return;
                seen.add(v);
                if (v.model.type === "Figure" && v.model.title?.text === title) {
                    for (const r of v.model.renderers) {
                        const g = r.glyph;
                        if (g?.marker?.value === marker) n += r.data_source.data.x.length;
                    }
                }
                for (const c of v.child_views ?? []) walk(c);
            };
            Object.values(Bokeh.index).forEach(walk);
            return n;
        }""",
        [title, marker],
    )


def _axis_label(page, title: str) -> str:
    return page.evaluate(
        """(title) => {
            const seen = new Set();
            let out = null;
            const walk = (v) => {
                if (!v || seen.has(v) || out !== null) return;
                seen.add(v);
                if (v.model.type === "Figure" && v.model.title?.text === title)
                    out = v.model.left[0].axis_label;
                for (const c of v.child_views ?? []) walk(c);
            };
            Object.values(Bokeh.index).forEach(walk);
            return out;
        }""",
        title,
    )


def test_readings_units_and_a_link_that_carries_edits(context, base_url, tmp_path):
    page = context.new_page()
    page.goto(f"{base_url}/ascent?schedules=fast-to-5300m,slow-to-5300m")
    summary = page.locator(".o2-asc-summary")
    expect(summary).to_contain_text("Slow ascent to a 5300 m camp")
    expect(page.locator(".o2-asc-band-note")).to_contain_text("below the band's lower edge")

    # log a reading for the slow schedule in the form; a bad one is refused, nothing added
    page.locator(".o2-asc-edit-select select").select_option(label="Slow ascent to a 5300 m camp")
    expect(page.locator(".o2-asc-readings-panel")).to_contain_text("For Slow ascent")
    fields = {"day": "3", "altitude_m": "3300", "spo2_pct": "84", "lake_louise_score": "2"}
    for name, value in fields.items():
        page.locator(f".o2-asc-rd-{name} input").fill(value)
    page.locator(".o2-asc-rd-add button").click()
    wait_for(lambda: readings_rows(page), lambda r: len(r) == 1, 20, lambda r: r)
    expect(page.locator(".o2-asc-fit")).to_contain_text("Fitted to 1 reading")
    page.locator(".o2-asc-rd-spo2_pct input").fill("130")
    page.locator(".o2-asc-rd-day input").fill("4")
    page.locator(".o2-asc-rd-add button").click()
    expect(page.locator(".o2-asc-error")).to_contain_text(
        "reading spo2_pct = '130' is outside the allowed range 50-100 %"
    )
    assert len(readings_rows(page)) == 1

    # paste CSV text: it replaces the readings; they are drawn against the forecast
    page.locator(".o2-asc-rd-paste textarea").fill(
        "day,altitude_m,spo2_pct,heart_rate_min,lake_louise_score\n3,3300,85,90,1\n4,3800,81,,\n"
    )
    page.locator(".o2-asc-rd-paste-apply button").click()
    wait_for(
        lambda: readings_rows(page),
        lambda r: [x[:3] for x in r] == [["3", "3300", "85"], ["4", "3800", "81"]],
        20,
        lambda r: r,
    )
    expect(page.locator(".o2-asc-fit")).to_contain_text("Fitted to 2 readings")
    wait_for(lambda: _glyph_points(page, "SaO2 at night", "diamond"), lambda n: n == 2, 20, str)
    expect(summary).to_contain_text("this person, from 2 readings")

    # edit the fast schedule; the address now carries its days and the readings
    page.locator(".o2-asc-edit-select select").select_option(label="Fast ascent to a 5300 m camp")
    expect(page.locator(".o2-asc-readings-panel")).to_contain_text("For Fast ascent")
    wait_rows(page, lambda r: r[2][1] == "4000")
    page.wait_for_timeout(500)  # let the editor's last redraw after the switch land
    box = page.locator(".o2-asc-table .tabulator-cell input")
    for attempt in range(3):  # a redraw arriving after the click closes the cell editor
        cell(page, 2, "sleep_altitude_m").click()
        try:
            box.wait_for(timeout=5000)
        except PlaywrightTimeoutError:
            if attempt == 2:
                raise
        else:
            break
    box.fill("3650")
    box.press("Enter")
    wait_rows(page, lambda r: r[2][1] == "3650")
    link = wait_address(page, r"plan=1\.[^&]+&schedules=fast-to-5300m%2Cslow-to-5300m$")

    # the pressure unit: the toggle, the axis and the address
    page.locator(".o2-asc-unit button", has_text="kPa").click()
    link = wait_address(page, r"pressure_unit=kPa&schedules=")
    wait_for(lambda: _axis_label(page, "PaO2 at night"), lambda a: a == "kPa", 20, str)

    # the link, opened in a new page, gives back the edited day, the readings and the unit
    shared = context.new_page()
    shared.goto(link)
    expect(shared.locator(".o2-asc-summary")).to_contain_text("this person, from 2 readings")
    wait_rows(shared, lambda r: len(r) == 8 and r[2][1] == "3650")
    wait_for(lambda: _axis_label(shared, "PaO2 at night"), lambda a: a == "kPa", 20, str)
    expect(shared.locator(".o2-asc-unit .bk-active")).to_have_text("kPa")
    shared.locator(".o2-asc-edit-select select").select_option(label="Slow ascent to a 5300 m camp")
    wait_for(lambda: readings_rows(shared), lambda r: len(r) == 2, 20, lambda r: r)
    shared.close()

    # the workspace file: save here, open in a fresh page
    with page.expect_download() as dl:
        page.locator(".o2-asc-ws-save button").click()
    saved = tmp_path / "workspace.json"
    dl.value.save_as(saved)
    fresh = context.new_page()
    fresh.goto(f"{base_url}/ascent?schedules=")
    expect(fresh.locator(".o2-asc-legend")).to_contain_text("Nothing compared yet")
    fresh.locator(".o2-asc-ws-open input[type=file]").set_input_files(str(saved))
    expect(fresh.locator(".o2-asc-summary")).to_contain_text("this person, from 2 readings")
    wait_rows(fresh, lambda r: len(r) == 8 and r[2][1] == "3650")

    # the table to read: % and the chosen unit in the column names
    with page.expect_download() as dl:
        page.locator(".o2-asc-export-table button").click()
    head = Path(dl.value.path()).read_text(encoding="utf-8").splitlines()[0]
    assert "SaO2 at rest, model (%)" in head and "PaO2 at rest (kPa)" in head
    ARTIFACTS.mkdir(exist_ok=True)
    page.locator(".o2-asc-plots").scroll_into_view_if_needed()
    page.screenshot(path=str(ARTIFACTS / "ascent-readings.png"))
