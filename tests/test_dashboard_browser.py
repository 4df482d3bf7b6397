"""Browser tests: the served dashboard in headless Debian Chromium, driven by Playwright.

Skipped only on a machine without Chromium and without CI; under CI a missing browser fails.
"""

import re
from urllib.parse import urlsplit

import pytest
from browser_session import (
    ARTIFACTS,
    LOCAL_HOSTS,
    checked_context,
    require_chromium,
    served,
    wait_for,
)
from o2transit.dashboard.app import create_app
from playwright.sync_api import expect

require_chromium()


@pytest.fixture(scope="module")
def server_url():
    with served("/o2", create_app) as url:
        yield url


@pytest.fixture
def page(browser, server_url):
    with checked_context(browser, viewport={"width": 1500, "height": 1000}) as ctx:
        pg = ctx.new_page()
        pg.on("websocket", lambda ws: ctx.requests.append(ws.url))
        pg.requests = ctx.requests
        pg.goto(server_url)
        expect(pg.locator(".o2-numbers")).to_contain_text("PaO2", timeout=15000)
        yield pg


def value(page, key: str) -> float:
    cell = page.locator(f".o2-numbers tr[data-key={key}] td.val")
    text = cell.evaluate("e => e.textContent")
    return float(text.replace("−", "-"))


def wait_change(page, key: str, old: float, timeout: float = 10.0) -> float:
    return wait_for(
        lambda: value(page, key),
        lambda new: new != old,
        timeout,
        lambda _: f"{key} stayed at {old}",
    )


def type_into(page, name: str, text: str) -> None:
    box = page.locator(f".o2-in-{name} input")
    box.fill(text)
    box.press("Enter")


def test_widgets_move_numbers_the_right_way(page):
    p50a = value(page, "arterial_p50")
    type_into(page, "ph", "7.30")
    assert wait_change(page, "arterial_p50", p50a) > p50a

    sao2, do2 = value(page, "arterial_so2"), value(page, "do2")
    type_into(page, "altitude_m", "3000")
    assert wait_change(page, "arterial_so2", sao2) < sao2
    assert value(page, "do2") < do2

    do2, o2er = value(page, "do2"), value(page, "extraction_ratio")
    type_into(page, "hb_g_dl", "10")
    assert wait_change(page, "do2", do2) < do2
    assert value(page, "extraction_ratio") > o2er

    p50v = value(page, "venous_p50")
    type_into(page, "temperature_c", "39")
    assert wait_change(page, "venous_p50", p50v) > p50v


def test_scenario_baseline_units_and_refusal(page):
    page.locator(".o2-scenario select").select_option(label="Acclimatising trekker at 5000 m")
    page.locator(".o2-load button").click()
    expect(page.locator(".o2-status")).to_contain_text("Acclimatising trekker")
    expect(page.locator(".o2-in-altitude_m input")).to_have_value(re.compile(r"^5000(\.0)?$"))

    page.locator(".o2-keep button").click()
    expect(page.locator(".o2-status")).to_contain_text("Baseline kept")
    expect(page.locator(".o2-numbers")).to_contain_text("Δ vs baseline")
    type_into(page, "hb_g_dl", "12")
    expect(page.locator(".o2-numbers tr[data-key=arterial_o2_content] td.delta")).to_have_text(
        re.compile(r"^−\d")
    )

    page.locator(".o2-pressure-unit button", has_text="kPa").click()
    expect(page.locator(".o2-numbers tr[data-key=arterial_po2]")).to_contain_text("kPa")
    expect(page.locator(".o2-in-paco2_mmhg")).to_contain_text("PaCO2 (kPa)")
    assert value(page, "arterial_po2") < 15  # a PaO2 near 5000 m in kPa, not mmHg

    page.locator(".o2-hb-unit button", has_text="g/L").first.click()
    expect(page.locator(".o2-in-hb_g_dl")).to_contain_text("Hb (g/L)")
    expect(page.locator(".o2-in-hb_g_dl input")).to_have_value(re.compile(r"^120(\.0)?$"))
    page.locator(".o2-hb-unit button", has_text="g/dL").click()
    expect(page.locator(".o2-in-hb_g_dl")).to_contain_text("Hb (g/dL)")

    type_into(page, "hb_g_dl", "99")
    msg = page.locator(".o2-msg-hb_g_dl")
    expect(msg).to_contain_text("Hb = 99 is outside the allowed range 2–25 g/dL")
    expect(page.locator(".o2-in-hb_g_dl input")).to_have_value(re.compile(r"^12(\.0)?$"))

    type_into(page, "paco2_mmhg", "40")
    expect(page.locator(".o2-msg-paco2_mmhg")).to_contain_text("kPa")

    ARTIFACTS.mkdir(exist_ok=True)
    page.set_viewport_size({"width": 1500, "height": 1500})
    expect(page.locator(".o2-cascade")).to_be_visible()
    page.screenshot(path=str(ARTIFACTS / "dashboard.png"), full_page=True)

    assert any(u.startswith("ws://") for u in page.requests), "websocket not recorded"
    hosts = {urlsplit(u).hostname for u in page.requests if not u.startswith(("data:", "blob:"))}
    assert hosts <= LOCAL_HOSTS, hosts
