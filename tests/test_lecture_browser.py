"""Lecture mode in headless Chromium: keys, buttons, index, address, motion, exports, offline;
the layout at projector and laptop sizes, combined factors, the content view, the lesson maker.

Skipped only on a machine without Chromium and without CI; under CI a missing browser fails.
"""

import json
import re
import struct
import time
from urllib.parse import urlsplit

import pytest
from browser_session import (
    LOCAL_HOSTS,
    checked_context,
    require_chromium,
    served,
    wait_address,
    wait_for,
    wait_match,
)
from o2transit.dashboard.app import SCREENS
from o2transit.dashboard.lecture.state import LESSON_DIR
from o2transit.dashboard.lecture.views import GLIDE_MS
from o2transit.dashboard.look import CAUTION
from o2transit.model.lesson import load_lesson
from playwright.sync_api import expect

require_chromium()

LESSON_FILE = LESSON_DIR / "rest-to-altitude.toml"


@pytest.fixture(scope="module")
def base_url():
    with served("/lecture", SCREENS["/lecture"]) as url:
        yield url


@pytest.fixture
def context(browser):
    options = {"viewport": {"width": 1600, "height": 900}, "accept_downloads": True}
    with checked_context(browser, **options) as ctx:
        yield ctx


def open_lecture(ctx, url):
    page = ctx.new_page()
    page.goto(url)
    page.wait_for_function(
        "() => window.Bokeh && Bokeh.documents.length"
        " && Bokeh.documents[0].get_model_by_name('o2-lecture-figure') !== null"
        " && Bokeh.index.find_one(Bokeh.documents[0].get_model_by_name('o2-lecture-figure'))",
        timeout=15000,
    )
    return page


def title(page) -> str:
    return page.evaluate(
        "() => Bokeh.documents[0].get_model_by_name('o2-lecture-figure').title.text"
    )


def wait_title(page, pattern: str, timeout: float = 10.0) -> str:
    return wait_match(lambda: title(page), pattern, "plot title", timeout)


def readout(page) -> list[str]:
    return page.evaluate(
        "() => Array.from(Bokeh.documents[0].get_model_by_name('o2-readout-target').data.text)"
    )


def wait_readout(page, ok, timeout: float = 10.0) -> list[str]:
    return wait_for(lambda: readout(page), ok, timeout, lambda text: f"readout stayed {text!r}")


def test_presenter_keys_step_forward_and_back(context, base_url):
    page = open_lecture(context, base_url)
    wait_title(page, r"^Step 1 of 7 · Resting adult")
    for key, expected in [
        ("ArrowRight", 2),
        ("PageDown", 3),
        (" ", 4),
        ("ArrowLeft", 3),
        ("PageUp", 2),
    ]:
        page.keyboard.press(key)
        wait_title(page, rf"^Step {expected} of 7")
        wait_address(page, rf"lesson=rest-to-altitude&step={expected}$")
    expect(page.locator(".o2-lecture-caption")).to_contain_text("Working muscle")
    # Back at the first step, Back does nothing (and the button is disabled).
    page.keyboard.press("PageUp")
    wait_title(page, r"^Step 1 of 7")
    page.keyboard.press("ArrowLeft")
    time.sleep(0.3)
    assert title(page).startswith("Step 1 of 7")
    expect(page.locator(".o2-lecture-back button")).to_be_disabled()


def test_keys_typed_into_a_field_are_not_steps(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=2")
    wait_title(page, r"^Step 2 of 7")
    page.evaluate(
        "() => { const i = document.createElement('input'); i.id = 'typing';"
        " document.body.appendChild(i); }"
    )
    page.locator("#typing").focus()
    page.keyboard.press("ArrowRight")
    page.keyboard.press(" ")
    time.sleep(0.4)
    assert title(page).startswith("Step 2 of 7")


def test_buttons_and_index_jump(context, base_url):
    page = open_lecture(context, base_url)
    page.locator(".o2-lecture-next button").click()
    wait_title(page, r"^Step 2 of 7 · Hard exercise")
    page.locator(".o2-lecture-index select").select_option(label="6. Anaemia at sea level")
    wait_title(page, r"^Step 6 of 7 · Anaemia")
    wait_address(page, r"step=6$")
    page.locator(".o2-lecture-back button").click()
    wait_title(page, r"^Step 5 of 7")


def test_address_restores_lesson_step_and_factor(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=5")
    wait_title(page, r"^Step 5 of 7 · First day at 4500 m")
    expect(page.locator(".o2-lecture-index select")).to_have_value("5. First day at 4500 m")

    page = open_lecture(
        context, base_url + "?factor=temperature_c&temperature_c=40&pressure_unit=kPa"
    )
    wait_title(page, r"^One factor · Temperature 40\.0 °C")
    text = readout(page)
    assert re.match(r"P50 \d\.\d\d kPa:  \+0\.\d\d kPa  vs reference", text[0]), text
    assert re.match(r"O2 extracted per litre:  \d+ mL/L,  \+\d+\.\d mL/L vs reference$", text[1]), (
        text
    )
    # Moving the factor rewrites the address; opening that address gives the same view.
    page.locator(".o2-lecture-factor button", has_text="2,3-DPG").click()
    wait_title(page, r"^One factor · 2,3-DPG 5\.0 mmol/L")
    handle = page.locator(".o2-lecture-value-dpg_mmol_l .noUi-handle")
    for _ in range(12):
        handle.press("ArrowRight")
    wait_title(page, r"2,3-DPG 6\.2 mmol/L")
    shared = wait_address(page, r"factor=dpg_mmol_l&dpg_mmol_l=6\.2")
    assert "pressure_unit=kPa" in shared
    numbers = readout(page)
    again = open_lecture(context, shared)
    wait_title(again, r"2,3-DPG 6\.2 mmol/L")
    assert readout(again) == numbers


def test_bad_address_values_fall_back_with_a_message(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=99&colour=red")
    wait_title(page, r"^Step 1 of 7")
    notice = page.locator(".o2-url-msg")
    expect(notice).to_be_visible()
    expect(notice).to_contain_text("step = '99' is outside the allowed range 1–7; step 1 is shown")
    expect(notice).to_contain_text("'colour' is not a setting of the lecture page; ignored")
    page = open_lecture(context, base_url + "?factor=ph&ph=9.5")
    wait_title(page, r"^One factor · pH 7\.40")
    expect(page.locator(".o2-url-msg")).to_contain_text(
        "pH: ph = '9.5' is outside the allowed range 6.9–7.7; the reference 7.4 is used"
    )


def test_each_factor_moves_alone_and_writes_its_effect(context, base_url):
    page = open_lecture(context, base_url + "?factor=ph")
    wait_title(page, r"pH 7\.40")
    assert readout(page)[0] == "P50 26.9 mmHg:  0.0 mmHg  vs reference"
    expected = {  # factor button -> (its input, sign of the P50 shift at the slider's top)
        "pH": ("ph", "−"),
        "PCO2": ("paco2_mmhg", "+"),
        "Temperature": ("temperature_c", "+"),
        "2,3-DPG": ("dpg_mmol_l", "+"),
        "COHb": ("cohb_fraction", "−"),
    }
    for label, (key, sign) in expected.items():
        page.locator(
            ".o2-lecture-factor button", has_text=re.compile(rf"^{re.escape(label)}$")
        ).click()
        wait_title(page, rf"· {re.escape(label)} ")
        wait_readout(page, lambda text: ":  0.0 mmHg" in text[0])  # at its reference value
        page.locator(f".o2-lecture-value-{key} .noUi-handle").press("End")
        text = wait_readout(page, lambda text: ":  0.0 mmHg" not in text[0])
        assert text[0].split(":  ")[1].startswith(sign), (label, text)
    page.locator(".o2-lecture-factor button", has_text="Fetal Hb").click()
    page.locator(".o2-lecture-choice button", has_text="fetal").click()
    wait_title(page, r"Fetal Hb: fetal blood")
    assert readout(page)[0].startswith("P50 19.0 mmHg:  −7.9 mmHg")


def test_curves_glide_between_computed_states(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=1")
    wait_title(page, r"^Step 1 of 7")
    time.sleep(0.6)
    page.evaluate(
        """() => {
        const shown = Bokeh.documents[0].get_model_by_name('o2-curves-shown');
        window._o2_samples = [];
        const t0 = performance.now();
        function sample(t) {
          window._o2_samples.push([t, shown.data.current[60], shown.data.x[60]]);
          if (t - t0 < 2500) requestAnimationFrame(sample);
        }
        requestAnimationFrame(sample);
    }"""
    )
    page.keyboard.press("ArrowRight")  # to hard exercise: the curve moves right
    wait_title(page, r"^Step 2 of 7")
    time.sleep(2.7)
    samples = page.evaluate("() => window._o2_samples")
    target = page.evaluate(
        "() => Bokeh.documents[0].get_model_by_name('o2-curves-target').data.current[60]"
    )
    first = samples[0][1]
    assert target < first - 3  # at PO2 30 mmHg the right-shifted curve is lower
    assert samples[-1][1] == pytest.approx(target, abs=1e-9)  # ends on the model's numbers
    moving = [(t, v) for t, v, _ in samples if v != first and abs(v - target) > 1e-9]
    between = [v for _, v in moving if target < v < first]
    # Frames strictly in between: a glide, not a jump (headless Chromium on a busy machine
    # draws about 15-20 frames a second, so a 350 ms glide shows at least 3).
    assert len(between) >= 3, samples
    start = next(t for t, v, _ in samples if v != first)
    end = next(t for t, v, _ in samples if abs(v - target) <= 1e-9)
    # The tween is timed by requestAnimationFrame: about GLIDE_MS, never a jump.
    assert 0.6 * GLIDE_MS <= end - start <= 2.5 * GLIDE_MS, (start, end)
    assert {x for _, _, x in samples} == {samples[0][2]}  # the PO2 grid itself does not move


def test_png_export_is_a_png_of_the_plot(context, base_url, tmp_path):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=3")
    wait_title(page, r"^Step 3 of 7")
    with page.expect_download() as info:
        page.locator(".o2-lecture-png button").click()
    path = tmp_path / "view.png"
    info.value.save_as(path)
    assert info.value.suggested_filename == "o2transit-lecture.png"
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = struct.unpack(">II", data[16:24])
    box = page.evaluate(
        "() => { const f = Bokeh.documents[0].get_model_by_name('o2-lecture-figure');"
        " const b = Bokeh.index.find_one(f).bbox; return {width: b.width, height: b.height}; }"
    )
    ratio = page.evaluate("window.devicePixelRatio")
    # The plot as drawn, plus the step's caption wrapped underneath (2-3 lines at 24 px).
    assert abs(width - box["width"] * ratio) <= 4
    extra = height - box["height"] * ratio
    assert 40 * ratio <= extra <= 200 * ratio, extra
    assert width >= 1200 and height >= 400
    assert len(data) > 20_000  # a drawn plot, not an empty canvas


def test_html_export_works_offline_and_holds_the_data(context, browser, base_url, tmp_path):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=6")
    wait_title(page, r"^Step 6 of 7 · Anaemia")
    numbers = readout(page)
    with page.expect_download() as info:
        page.locator(".o2-lecture-html button").click()
    path = tmp_path / "view.html"
    info.value.save_as(path)
    text = path.read_text(encoding="utf-8")
    # No tag loads anything from the network (Bokeh's own bundle names a MathJax address in
    # code that runs only for math text; the offline page load below shows it is not used).
    assert not re.search(r"""<(script|link|img|iframe)\b[^>]*(src|href)\s*=\s*["']?https?:""", text)
    (doc_json,) = re.findall(
        r'<script type="application/json"[^>]*>(.*?)</script>', text, re.DOTALL
    )
    doc = json.dumps(json.loads(doc_json), ensure_ascii=False)
    for needle in ("Anaemia at sea level", numbers[0], numbers[1], CAUTION[:40]):
        assert needle in doc, needle
    assert '"shape":[300]' in doc.replace(" ", "")  # the curves themselves, 300 points each

    offline = browser.new_context(offline=True)
    try:
        requests, errors = [], []
        offline.on("request", lambda r: requests.append(r.url))
        offline.on("weberror", lambda e: errors.append(str(e.error)))
        view = offline.new_page()
        view.goto(path.as_uri())
        view.wait_for_function(
            "() => window.Bokeh && Bokeh.documents.length && Bokeh.index"
            " && document.querySelectorAll('.bk-Figure, .bk-Column').length > 0",
            timeout=15000,
        )
        shown = view.evaluate(
            "() => Array.from(Bokeh.documents[0].all_models)"
            ".filter((m) => m.type === 'LabelSet' || m.data !== undefined).length"
        )
        assert shown > 0
        assert view.evaluate("() => Bokeh.documents[0].roots().length") == 1
        assert [u for u in requests if not u.startswith("file:")] == []
        assert errors == []
    finally:
        offline.close()


def test_page_asks_only_the_local_server(context, base_url):
    page = open_lecture(context, base_url)
    wait_title(page, r"^Step 1")
    hosts = {urlsplit(u).hostname for u in context.requests if urlsplit(u).scheme != "blob"}
    assert hosts <= LOCAL_HOSTS, hosts
    expect(page.locator(".o2-nav")).to_contain_text("Lecture")


# ---------------------------------------------------------------------- layout and new tools
SIZES = [(1024, 768), (1280, 720), (1920, 1080)]


def caption_text(page) -> str:
    """The caption shown under the plot (its text is inside the pane's shadow root)."""
    return page.locator(".o2-lecture-caption").evaluate(
        "(e) => (e.shadowRoot ? e.shadowRoot.textContent : e.textContent).trim()"
    )


def no_sideways_scroll(page) -> None:
    width, inner = page.evaluate("() => [document.documentElement.scrollWidth, window.innerWidth]")
    assert width <= inner, (width, inner)


def reachable(page, selector: str, min_width: float = 1, min_height: float = 1) -> dict:
    """The element is shown, at a usable size, inside the page's width (scrolled to if below)."""
    item = page.locator(selector).first
    item.scroll_into_view_if_needed()
    expect(item).to_be_visible()
    box = item.bounding_box()
    inner = page.evaluate("window.innerWidth")
    assert box["width"] >= min_width and box["height"] >= min_height, (selector, box)
    assert box["x"] >= 0 and box["x"] + box["width"] <= inner + 0.5, (selector, box, inner)
    return box


@pytest.mark.parametrize(("width", "height"), SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
def test_page_fits_each_screen_without_sideways_scroll(browser, base_url, width, height):
    options = {"viewport": {"width": width, "height": height}}
    with checked_context(browser, **options) as ctx:
        page = open_lecture(ctx, base_url + "?lesson=rest-to-altitude&step=2")
        wait_title(page, r"^Step 2 of 7")
        no_sideways_scroll(page)
        for selector in (".o2-lecture-html button", ".o2-lecture-png button", ".o2-nav"):
            reachable(page, selector)
        # The plot is the page; the figure (and the caution drawn in it, two lines under the
        # legend) fits the width.
        fig = page.evaluate(
            "() => { const f = Bokeh.documents[0].get_model_by_name('o2-lecture-figure');"
            " const v = Bokeh.index.find_one(f); const r = v.el.getBoundingClientRect();"
            " return {x: r.x, w: r.width, h: r.height,"
            " below: f.below.filter((m) => m.type === 'Title').map((m) => m.text)}; }"
        )
        assert fig["h"] >= 0.6 * height or fig["h"] >= 470, fig
        assert fig["x"] >= 0 and fig["x"] + fig["w"] <= width, fig
        assert any("not a medical device" in t for t in fig["below"]), fig
        # The lesson picker is shown at a size that can be read and clicked.
        picker = reachable(page, ".o2-lecture-lesson select", 200, 30)
        assert picker["height"] <= 80
        for selector in (".o2-lecture-next button", ".o2-lecture-view", ".o2-lecture-make"):
            reachable(page, selector)
        # Factor mode, combined: the sliders and the tissue PO2 are there too.
        page = open_lecture(ctx, base_url + "?factor=ph&ph=7.2&temperature_c=39.5&combine=true")
        wait_title(page, r"^Factors combined · pH 7\.20 \+ Temperature 39\.5 °C")
        no_sideways_scroll(page)
        for selector in (
            ".o2-lecture-tissue",
            ".o2-lecture-value-ph",
            ".o2-lecture-combine",
            ".o2-lecture-factor",
            ".o2-lecture-html button",
        ):
            reachable(page, selector)
        # The lesson maker opened: the page may grow downwards, never sideways.
        page.locator(".o2-lecture-make button").click()
        reachable(page, ".o2-maker-add button")
        reachable(page, ".o2-maker-save button")
        no_sideways_scroll(page)


def test_home_and_end_go_to_the_first_and_last_step(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=3")
    wait_title(page, r"^Step 3 of 7")
    page.keyboard.press("End")
    wait_title(page, r"^Step 7 of 7 · Carbon monoxide")
    wait_address(page, r"step=7$")
    expect(page.locator(".o2-lecture-next button")).to_be_disabled()
    page.keyboard.press("Home")
    wait_title(page, r"^Step 1 of 7 · Resting adult")
    wait_address(page, r"step=1$")
    # Home and End on a focused slider move the slider, not the lesson (factor mode).
    page = open_lecture(context, base_url + "?factor=ph")
    wait_title(page, r"pH 7\.40")
    page.locator(".o2-lecture-value-ph .noUi-handle").press("End")
    wait_title(page, r"^One factor · pH 7\.70")


def test_factors_combine_and_show_their_shares(context, base_url):
    page = open_lecture(context, base_url + "?factor=temperature_c")
    wait_title(page, r"^One factor · Temperature 37\.0 °C")
    page.locator(".o2-lecture-combine button", has_text="Combined").click()
    wait_title(page, r"^Factors combined · Temperature 37\.0 °C")
    page.locator(".o2-lecture-value-temperature_c .noUi-handle").press("End")  # 42 °C
    wait_title(page, r"^Factors combined · Temperature 42\.0 °C")
    page.locator(".o2-lecture-factor button", has_text=re.compile(r"^pH$")).click()
    handle = page.locator(".o2-lecture-value-ph .noUi-handle")
    expect(handle).to_be_visible()  # the pH slider is shown once the choice is applied
    wait_title(page, r"· Temperature 42\.0 °C$")  # the fever stays while pH is chosen
    handle.press("Home")  # pH 6.90
    wait_title(page, r"^Factors combined · pH 6\.90 \+ Temperature 42\.0 °C$")
    caption = page.locator(".o2-lecture-caption")
    expect(caption).to_contain_text("Together the P50 moves +")
    expect(caption).to_contain_text("Each factor moved alone from the reference: pH 6.90 +")
    expect(caption).to_contain_text("Temperature 42.0 °C +")
    expect(caption).to_contain_text("is their interaction")
    # the address is written once, shortly after the last change (dashboard.responsive.Quiet)
    shared = wait_address(page, r"^(?=.*combine=true)(?=.*factor=ph&ph=6\.9)")
    assert "factor=ph&ph=6.9" in shared and "temperature_c=42" in shared
    numbers = wait_readout(page, lambda text: text[0].split(":  ")[1].startswith("+"))
    again = open_lecture(context, shared)
    wait_title(again, r"^Factors combined · pH 6\.90 \+ Temperature 42\.0 °C$")
    assert readout(again) == numbers
    assert caption_text(again) == caption_text(page)
    # Back to one factor at a time: the temperature is dropped, pH stays.
    again.locator(".o2-lecture-combine button", has_text="One at a time").click()
    wait_title(again, r"^One factor · pH 6\.90$")


def test_content_view_shows_co_as_a_lower_plateau(context, base_url):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=7")
    wait_title(page, r"^Step 7 of 7 · Carbon monoxide")
    page.locator(".o2-lecture-view button", has_text="O2 content").click()
    wait_address(page, r"view=content")

    def curves():
        return page.evaluate(
            "() => { const d = Bokeh.documents[0];"
            " const c = d.get_model_by_name('o2-curves-target').data;"
            " const f = d.get_model_by_name('o2-lecture-figure');"
            " return {top: c.current[c.current.length - 1],"
            " ref: c.reference[c.reference.length - 1], label: f.left[0].axis_label,"
            " end: f.y_range.end}; }"
        )

    # The axis and the data are two updates: wait for both.
    shown = wait_for(
        curves, lambda c: c["label"].startswith("O2 content") and c["top"] < 30, 10, str
    )
    # A quarter of the sites hold CO: the plateau is about three quarters of the reference's.
    assert shown["top"] / shown["ref"] == pytest.approx(0.75, abs=0.02)
    assert shown["end"] == 25
    page.locator(".o2-lecture-view button", has_text="SO2").click()
    shown = wait_for(curves, lambda c: c["label"] == "SO2 (%)" and c["top"] > 50, 10, str)
    assert shown["top"] > 99  # the saturation of the sites left still reaches 100 %


def test_make_a_lesson_save_it_and_read_it_back(context, base_url, tmp_path):
    page = open_lecture(context, base_url + "?lesson=rest-to-altitude&step=3")
    wait_title(page, r"^Step 3 of 7 · Fever")
    page.locator(".o2-lecture-make button").click()
    title = page.locator(".o2-maker-title input")
    expect(title).to_have_value("Fever at 39.5 °C")  # the slide's own title, to edit
    name = page.locator(".o2-maker-name input")
    name.fill("Heat and acid")
    name.press("Tab")
    note = page.locator(".o2-maker-msg")
    # A title too long is refused, with the field, the count and the allowed range.
    title.fill("x" * 61)
    title.press("Tab")
    page.locator(".o2-maker-add button").click()
    expect(note).to_contain_text("title has 61 characters; allowed 1–60 characters")
    title.fill("Fever")
    title.press("Tab")
    page.locator(".o2-maker-add button").click()
    expect(note).to_contain_text("Added step 1: Fever")
    page.locator(".o2-lecture-next button").click()
    wait_title(page, r"^Step 4 of 7 · Metabolic acidosis")
    expect(title).to_have_value("Metabolic acidosis")  # the fields follow the slide
    page.locator(".o2-maker-add button").click()
    expect(note).to_contain_text("Added step 2: Metabolic acidosis")
    steps = page.locator(".o2-maker-steps select")
    steps.select_option(label="2. Metabolic acidosis")
    page.locator(".o2-maker-up button").click()
    expect(steps.locator("option").first).to_have_text("1. Metabolic acidosis")
    with page.expect_download() as info:
        page.locator(".o2-maker-save button").click()
    assert info.value.suggested_filename == "heat-and-acid.toml"
    path = tmp_path / info.value.suggested_filename
    info.value.save_as(path)
    lesson = load_lesson(path)
    assert lesson.name == "Heat and acid"
    assert [s.title for s in lesson.steps] == ["Metabolic acidosis", "Fever"]
    shipped = load_lesson(LESSON_FILE)
    assert lesson.steps[0].inputs == shipped.steps[3].inputs
    assert lesson.steps[1].inputs == shipped.steps[2].inputs
    assert lesson.steps[1].caption == shipped.steps[2].caption
    # Shown here: the lesson is in the picker and steps like the others.
    page.locator(".o2-maker-try button").click()
    wait_title(page, r"^Step 1 of 2 · Metabolic acidosis")
    wait_address(page, r"lesson=heat-and-acid&step=1$")
    page.keyboard.press("End")
    wait_title(page, r"^Step 2 of 2 · Fever")
