"""Browser test of issue 16's whole bedside flow, in kPa and g/L throughout.

The septic patient of the issue (invented values: FiO2 0.6, Hb 85 g/L, 39 °C, pH 7.25,
cardiac output 7 L/min): enter, calculate, fit, make three plans (one from a ranked what-if
in one click, one stacking three changes, one by hand), compare them on one screen, add the
gas to the shift, save, reopen, add a second gas, paste a third, see the trend. Headless
Debian Chromium driven by Playwright; skipped only without Chromium and without CI.
"""

import os
import re
from pathlib import Path
from urllib.parse import urlsplit

import pytest
from browser_session import LOCAL_HOSTS, checked_context, require_chromium, served
from o2transit.dashboard.app import create_app
from o2transit.model.casebook import CASE_DIR_ENV, open_case
from playwright.sync_api import expect

# Fits, plans and trends take a few seconds on a shared 2-core machine; waits are for text.
expect.set_options(timeout=20000)

require_chromium()

SCREENSHOT = Path(os.environ.get("O2TRANSIT_SHOT_DIR", "/tmp")) / "bedside-plans-shift.png"

# Typed in kPa, g/L and % (the septic case, ours).
GAS = {
    "pao2_mmhg": "10.9",
    "paco2_mmhg": "5.07",
    "ph": "7.25",
    "hb_g_dl": "85",
    "temperature_c": "39",
    "lactate_mmol_l": "4.1",
    "sao2": "93",
    "fio2": "0.6",
    "altitude_m": "0",
    "pvo2_mmhg": "4.8",
    "svo2": "60",
    "pvco2_mmhg": "6.0",
    "cardiac_output_l_min": "7",
}
SECOND = {"pao2_mmhg": "9.9", "ph": "7.28", "sao2": "92", "temperature_c": "38.6"}
THIRD = (
    "time,pao2_kpa,paco2_kpa,ph,sao2_percent,hb_g_l,fio2,temperature_c,pvo2_kpa,svo2_percent,"
    "cardiac_output_l_min,altitude_m\n14:00,11.5,5.2,7.31,95,90,0.5,38.1,5.2,66,6.5,0"
)


@pytest.fixture(scope="module")
def case_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cases")
    old = os.environ.get(CASE_DIR_ENV)
    os.environ[CASE_DIR_ENV] = str(folder)
    yield folder
    if old is None:
        os.environ.pop(CASE_DIR_ENV, None)
    else:
        os.environ[CASE_DIR_ENV] = old


@pytest.fixture(scope="module")
def server_url(case_dir):
    with served("/o2", create_app, startup_s=60, request_s=30) as url:
        yield url


@pytest.fixture
def page(browser, server_url):
    options = {"viewport": {"width": 1500, "height": 1000}}
    with checked_context(browser, **options) as ctx:
        pg = ctx.new_page()
        pg.requests = ctx.requests
        pg.goto(server_url)
        expect(pg.locator(".o2-numbers")).to_contain_text("PaO2", timeout=15000)
        pg.locator(".o2-pressure-unit button", has_text="kPa").click()
        pg.locator(".o2-hb-unit button", has_text="g/L").click()
        expect(pg.locator(".o2-numbers")).to_contain_text("kPa")
        pg.locator(".o2-case-tabs .bk-tab", has_text="Measured gas").click()
        expect(pg.locator(".o2-bs-entry")).to_be_visible()
        yield pg


def type_into(page, selector: str, text: str) -> None:
    box = page.locator(selector)
    box.fill(text)
    box.press("Enter")


def click(page, css: str) -> None:
    page.locator(f".{css} button").first.click()


DEEP_TEXT = """el => { const out = [];
  const walk = n => { if (n.nodeType === 3) { const t = n.textContent.trim(); if (t) out.push(t); return; }
    if (n.nodeType === 1 && (n.tagName === "STYLE" || n.tagName === "SCRIPT")) return;
    if (n.shadowRoot) walk(n.shadowRoot); for (const c of n.childNodes) walk(c); };
  walk(el); return out.join(" | "); }"""
"""The text of an element and of every shadow root under it (Panel renders in shadow DOM)."""


def assert_units(page, css: str) -> None:
    """No mmHg or g/dL in the element's text but the one note that names the Berlin
    cut-offs' own unit beside their kPa values."""
    text = page.locator(css).first.evaluate(DEEP_TEXT)
    text = re.sub(r"cut-offs are in mmHg: [^|]*kPa", "", text)
    left = re.findall(r"[^|]{0,60}(?:mmHg|g/dL)", text)
    assert not left, (css, left)


def use_fitted_case(page) -> None:
    """'Use fitted case', then read the Model inputs tab as the intensivist would."""
    click(page, "o2-bs-use-fit")
    page.locator(".o2-case-tabs .bk-tab", has_text="Model inputs").click()
    numbers = page.locator(".o2-numbers")
    # The sidebar is filled at the precision the bedside tables show (shunt 28.6 %), not
    # with 0.2857, 276.66, 7.2206 (issue 16).
    expect(page.locator(".o2-in-shunt_fraction input")).to_have_value(re.compile(r"^0\.\d{1,3}$"))
    expect(page.locator(".o2-in-vo2_ml_min input")).to_have_value(re.compile(r"^\d+$"))
    expect(page.locator(".o2-in-ph input")).to_have_value(re.compile(r"^7\.\d{1,3}$"))
    # At 39 degC the chain's PaO2 is labelled with its temperature and left unflagged; the
    # reading a 37 degC analyser gives (the measured 10.9 kPa) is flagged against the range.
    expect(numbers.locator("tr[data-key=arterial_po2]")).to_contain_text("at 39.0 °C")
    expect(numbers.locator("tr[data-key=arterial_po2] .flag")).to_have_text("")
    expect(numbers.locator("tr[data-key=arterial_po2_37] td.val")).to_have_text("10.9")
    expect(page.locator(".o2-curve")).to_be_visible()
    # The sidebar, the scenario picker and the model table speak kPa and g/L as well.
    for part in (".o2-inputs", ".o2-scenario", ".o2-numbers", ".o2-curve"):
        assert_units(page, part)
    page.locator(".o2-case-tabs .bk-tab", has_text="Measured gas").click()
    expect(page.locator(".o2-bs-entry")).to_be_visible()


def plan_change(page, card: int, kind_label: str, value: str) -> None:
    """Give plan ``card`` a new change of that kind (labels carry the display unit)."""
    root = f".o2-bs-plan-{card}"
    page.locator(f"{root} .o2-bs-plan-change select").select_option(label="+ new change")
    page.locator(f"{root} .o2-bs-plan-kind select").select_option(label=kind_label)
    # The value's label follows the kind from the server: the pick has arrived there.
    expect(page.locator(f"{root} .o2-bs-plan-value")).to_contain_text(kind_label)
    type_into(page, f"{root} .o2-bs-plan-value input", value)
    page.locator(f"{root} .o2-bs-plan-set button").click()


def test_plans_and_shift_in_kpa_and_g_l(page, case_dir):
    for key, text in GAS.items():
        type_into(page, f".o2-bs-in-{key} input", text)
    expect(page.locator(".o2-bs-in-hb_g_dl")).to_contain_text("(g/L)")
    click(page, "o2-bs-calculate")
    # P/F = 10.9 kPa / 0.6 = 18.2 kPa (the definition, to the digit shown).
    expect(page.locator(".o2-bs-derived tr[data-key=pao2_fio2_ratio] td.val")).to_have_text("18.2")
    derived = page.locator(".o2-bs-derived")
    expect(derived).to_contain_text("≤ 10 %")  # the usual range column
    expect(page.locator(".o2-bs-flags")).to_contain_text("kPa")
    expect(page.locator(".o2-bs-flags")).not_to_contain_text("[mmHg]")
    expect(page.locator(".o2-bs-how-sure")).to_contain_text("CLIA")

    click(page, "o2-bs-fit")
    expect(page.locator(".o2-bs-residuals")).to_contain_text("PvO2", timeout=30000)
    expect(page.locator(".o2-bs-fit-verdict")).not_to_contain_text("measured 0.")
    expect(page.locator(".o2-bs-how-sure")).to_contain_text("curve models")
    expect(page.locator(".o2-bs-levers tr[data-key]").first).to_be_visible(timeout=20000)
    expect(page.locator(".o2-bs-levers")).to_contain_text("g/L")
    expect(page.locator(".o2-bs-levers")).not_to_contain_text("g/dL")
    # Each FiO2 and Hb field says whose value it is: the gas's or the model case's.
    expect(page.locator(".o2-bs-in-fio2")).to_contain_text("FiO2 when drawn")
    expect(page.locator(".o2-bs-in-hb_g_dl")).to_contain_text("Measured Hb (g/L)")
    expect(page.locator(".o2-in-fio2")).to_contain_text("Model FiO2")
    expect(page.locator(".o2-in-hb_g_dl")).to_contain_text("Model Hb (g/L)")
    use_fitted_case(page)

    # Plan A: the best ranked what-if (chosen in the picker), one click into a new plan.
    click(page, "o2-bs-lever-to-plan")
    expect(page.locator(".o2-bs-plan-0")).to_be_visible()
    expect(page.locator(".o2-bs-plan-0 .o2-bs-plan-steps li")).to_have_count(1)
    # Plan B: transfuse to 100 g/L, then FiO2 0.8, then cool to 37 °C, stacked.
    click(page, "o2-bs-plan-new")
    expect(page.locator(".o2-bs-plan-1")).to_be_visible()
    plan_change(page, 1, "Transfuse to Hb (g/L)", "100")
    expect(page.locator(".o2-bs-plan-1 .o2-bs-plan-steps")).to_contain_text("85 → 100 g/L")
    plan_change(page, 1, "FiO2 to", "0.8")
    expect(page.locator(".o2-bs-plan-1 .o2-bs-plan-steps li")).to_have_count(2)
    plan_change(page, 1, "Cool to (°C)", "37")
    steps = page.locator(".o2-bs-plan-1 .o2-bs-plan-steps")
    expect(steps).to_contain_text("Cool: 39.0 → 37.0 °C")
    expect(steps).to_contain_text("85 → 100 g/L")  # the transfusion was not undone
    # Plan C: FiO2 0.8 alone; a value out of range first is refused with its range.
    click(page, "o2-bs-plan-new")
    plan_change(page, 2, "FiO2 to", "8")
    expect(page.locator(".o2-bs-plan-msg")).to_contain_text("outside the allowed range 0.05–1")
    plan_change(page, 2, "FiO2 to", "0.8")
    expect(page.locator(".o2-bs-plan-2 .o2-bs-plan-steps")).to_contain_text("FiO2 0.60 → 0.80")

    # Compare: one table, patient and three plans, kPa and g/L, curve models' range.
    table = page.locator(".o2-bs-plan-table")
    expect(table.locator("th[data-plan]")).to_have_count(3)
    expect(table.locator("tr[data-key=hb_g_dl] td.num").nth(2)).to_contain_text("100")
    expect(table.locator("tr[data-key=pao2_37_mmhg]")).to_contain_text("kPa")
    expect(table.locator("tr[data-key=sao2]")).to_contain_text("models")
    expect(page.locator(".o2-bs-plan-curve canvas").first).to_be_attached()

    # The gas joins the shift at 06:00, then the case is saved with plans and shift.
    type_into(page, ".o2-bs-gas-time input", "06:00")
    click(page, "o2-bs-gas-add")
    expect(page.locator(".o2-bs-trend tr[data-time]")).to_have_count(1)
    type_into(page, ".o2-bs-label input", "bed 7 sepsis")
    click(page, "o2-bs-save")
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("Saved bed-7-sepsis.toml")
    record = open_case(case_dir / "bed-7-sepsis.toml")
    assert len(record.plans) == 3 and [g.time for g in record.gases] == ["06:00"]

    # Reopen from scratch: plans come back solved, the shift with its gas.
    click(page, "o2-bs-clear")
    page.locator(".o2-bs-cases select").select_option(index=0)
    click(page, "o2-bs-open")
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("Opened bed 7 sepsis", timeout=30000)
    expect(table.locator("th[data-plan]")).to_have_count(3, timeout=30000)
    expect(page.locator(".o2-bs-plan-2")).to_be_visible()
    expect(page.locator(".o2-bs-trend tr[data-time]")).to_have_count(1)

    # A second gas four hours later, then a third pasted: the trend of the shift.
    for key, text in SECOND.items():
        type_into(page, f".o2-bs-in-{key} input", text)
    click(page, "o2-bs-calculate")
    expect(page.locator(".o2-bs-derived tr[data-key=pao2_fio2_ratio] td.val")).to_have_text("16.5")
    expect(table).to_contain_text("The plans are kept")
    click(page, "o2-bs-fit")  # the plans are solved again from the new gas
    expect(table.locator("th[data-plan]")).to_have_count(3, timeout=30000)
    type_into(page, ".o2-bs-gas-time input", "10:00")
    click(page, "o2-bs-gas-add")
    expect(page.locator(".o2-bs-trend tr[data-time]")).to_have_count(2, timeout=30000)
    page.locator(".o2-bs-gas-paste-card .card-header").first.click()
    paste = page.locator(".o2-bs-gas-paste textarea")
    paste.fill(THIRD)
    paste.blur()
    click(page, "o2-bs-gas-read")
    expect(page.locator(".o2-bs-trend tr[data-time]")).to_have_count(3, timeout=30000)
    trend = page.locator(".o2-bs-trend")
    expect(trend).to_contain_text("P/F (kPa)")
    expect(trend.locator("tr[data-time='14:00']")).to_contain_text("8.0")
    expect(page.locator(".o2-bs-gas-msg")).to_contain_text("3 in the shift")

    # Every string of the tab in kPa and g/L: no mmHg or g/dL left but the one note that
    # names the Berlin cut-offs' own unit beside their kPa values.
    assert_units(page, ".o2-bs-screen")

    hosts = {urlsplit(u).hostname for u in page.requests if u.startswith("http")}
    assert hosts <= LOCAL_HOSTS, hosts

    # The page scrolls inside the template: a tall window shows the whole tab at once.
    page.set_viewport_size({"width": 1500, "height": 5600})
    page.locator(".o2-case-tabs").scroll_into_view_if_needed()
    page.screenshot(path=str(SCREENSHOT), full_page=True)
