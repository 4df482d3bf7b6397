"""The case screen's address in headless Chromium: restore, rewrite, reload, refuse.

Skipped only on a machine without Chromium and without CI; under CI a missing browser fails.
"""

import re

import pytest
from browser_session import (
    address,
    checked_context,
    require_chromium,
    served,
    wait_address,
)
from o2transit.dashboard.app import create_app
from playwright.sync_api import expect

require_chromium()


@pytest.fixture(scope="module")
def base_url():
    with served("/", create_app) as url:
        yield url


@pytest.fixture
def context(browser):
    with checked_context(browser, viewport={"width": 1500, "height": 1000}) as ctx:
        yield ctx


def open_case(ctx, url):
    page = ctx.new_page()
    page.goto(url)
    expect(page.locator(".o2-numbers")).to_contain_text("PaO2", timeout=15000)
    return page


def cell(page, key: str) -> str:
    return page.locator(f".o2-numbers tr[data-key={key}] td.val").evaluate("e => e.textContent")


def test_open_change_reload_gives_the_same_state(context, base_url):
    page = open_case(context, base_url + "?altitude_m=4500&hb_g_dl=9&curve=dash&pressure_unit=kPa")
    expect(page.locator(".o2-in-altitude_m input")).to_have_value(re.compile(r"^4500(\.0)?$"))
    expect(page.locator(".o2-in-hb_g_dl input")).to_have_value(re.compile(r"^9(\.0)?$"))
    expect(page.locator(".o2-in-curve select")).to_have_value("Dash 2016")
    expect(page.locator(".o2-numbers")).to_contain_text("kPa")
    expect(page.locator(".o2-url-msg")).to_be_hidden()

    box = page.locator(".o2-in-fio2 input")
    box.fill("0.3")
    box.press("Enter")
    page.locator(".o2-in-vo2_temperature_scaling input").check()
    shared = wait_address(page, r"fio2=0\.3.*vo2_temperature_scaling=true")
    for part in ("altitude_m=4500", "hb_g_dl=9", "curve=dash", "pressure_unit=kPa"):
        assert part in shared
    numbers = {k: cell(page, k) for k in ("arterial_po2", "do2", "venous_p50")}

    again = open_case(context, shared)
    expect(again.locator(".o2-in-fio2 input")).to_have_value(re.compile(r"^0\.3"))
    expect(again.locator(".o2-in-vo2_temperature_scaling input")).to_be_checked()
    expect(again.locator(".o2-in-altitude_m input")).to_have_value(re.compile(r"^4500(\.0)?$"))
    assert {k: cell(again, k) for k in numbers} == numbers
    assert address(again) == shared


def test_modes_restore_from_the_address(context, base_url):
    page = open_case(
        context, base_url + "?barometric_pressure_mmhg=420&base_excess_mmol_l=-8&p50_mmhg=20"
    )
    expect(page.locator(".o2-in-use_pressure_override input")).to_be_checked()
    expect(page.locator(".o2-in-use_p50_override input")).to_be_checked()
    expect(page.locator(".o2-in-barometric_pressure_mmhg input")).to_have_value(
        re.compile(r"^420(\.0)?$")
    )
    expect(page.locator(".o2-in-base_excess_mmol_l input")).to_have_value(re.compile(r"^-8"))
    expect(page.locator(".o2-in-p50_mmhg input")).to_have_value(re.compile(r"^20(\.0)?$"))


def test_invalid_address_values_fall_back_with_a_visible_message(context, base_url):
    page = open_case(context, base_url + "?hb_g_dl=99&altitude_m=abc&fio2=0.3&shoe_size=44")
    message = page.locator(".o2-url-msg")
    expect(message).to_be_visible()
    expect(message).to_contain_text(
        "Hb = 99 is outside the allowed range 2–25 g/dL; the default 15 g/dL is used"
    )
    expect(message).to_contain_text("Altitude = 'abc' is not a number in -500–9000 m")
    expect(message).to_contain_text("'shoe_size' is not an input of this page; ignored")
    expect(page.locator(".o2-in-hb_g_dl input")).to_have_value(re.compile(r"^15(\.0)?$"))
    expect(page.locator(".o2-in-fio2 input")).to_have_value(re.compile(r"^0\.3"))
    # The address is rewritten to the case actually shown.
    assert wait_address(page, r"\?fio2=0\.3$")
