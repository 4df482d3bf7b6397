"""Browser test of the bedside flow on the case screen's Measured gas tab.

Enter a gas (one value refused first), calculate, fit, apply a what-if, save, refuse a
silent overwrite, reopen, download the summary page and open it offline. Headless Debian
Chromium driven by Playwright; skipped only without Chromium and without CI.
"""

import os
import re
from urllib.parse import urlsplit

import pytest
from browser_session import ARTIFACTS, LOCAL_HOSTS, checked_context, require_chromium, served
from o2transit.dashboard.app import create_app
from o2transit.model.casebook import CASE_DIR_ENV
from playwright.sync_api import expect

# Fit, ranking and the re-solve of the live case take a few seconds on a shared 2-core
# machine; waits are for text to appear, never timing assertions.
expect.set_options(timeout=20000)

require_chromium()

# An invented patient (ours): hypoxaemic on FiO2 0.6 at sea level, with a venous gas.
GAS = {
    "pao2_mmhg": "68",
    "paco2_mmhg": "46",
    "ph": "7.31",
    "hb_g_dl": "9.4",
    "temperature_c": "38.4",
    "lactate_mmol_l": "2.9",
    "sao2": "91.5",
    "cohb_fraction": "1.2",
    "methb_fraction": "0.8",
    "fio2": "0.6",
    "altitude_m": "0",
    "mean_airway_pressure_cmh2o": "16",
    "pvo2_mmhg": "36",
    "svo2": "64",
    "pvco2_mmhg": "53",
    "cardiac_output_l_min": "5.6",
    "height_cm": "172",
    "weight_kg": "78",
    "age_years": "64",
}


@pytest.fixture(scope="module")
def case_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cases")
    (folder / "damaged.toml").write_text("[case\nlabel = ", encoding="utf-8")
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
    options = {"viewport": {"width": 1400, "height": 900}, "accept_downloads": True}
    with checked_context(browser, **options) as ctx:
        pg = ctx.new_page()
        pg.requests = ctx.requests
        pg.goto(server_url)
        expect(pg.locator(".o2-numbers")).to_contain_text("PaO2", timeout=15000)
        pg.locator(".o2-case-tabs .bk-tab", has_text="Measured gas").click()
        expect(pg.locator(".o2-bs-entry")).to_be_visible()
        yield pg


def type_into(page, key: str, text: str, commit: bool = True) -> None:
    box = page.locator(f".o2-bs-in-{key} input")
    box.fill(text)
    if commit:
        box.press("Enter")


def cell(page, selector: str) -> str:
    return page.locator(selector).first.evaluate("e => e.textContent")


def test_bedside_flow(page, case_dir, tmp_path):
    # A damaged file in the folder is listed; it does not block the screen.
    expect(page.locator(".o2-bs-problems")).to_contain_text("damaged.toml")
    expect(page.locator(".o2-bs-folder")).to_contain_text(str(case_dir))

    # Enter the gas with one slip: PaO2 typed with an extra digit, out of range.
    for key, text in GAS.items():
        type_into(page, key, "6800" if key == "pao2_mmhg" else text)
    page.locator(".o2-bs-calculate button").click()
    expect(page.locator(".o2-bs-msg-pao2_mmhg")).to_contain_text(
        "6800 mmHg is outside the allowed range 10–750 mmHg"
    )
    expect(page.locator(".o2-bs-entry-status")).to_contain_text("Nothing was changed")
    expect(page.locator(".o2-bs-derived")).to_contain_text("press Calculate")
    # The right value, typed and Calculate clicked at once (blur commits the field).
    type_into(page, "pao2_mmhg", "68", commit=False)
    page.locator(".o2-bs-calculate button").click()
    # P/F = 68 / 0.6 = 113 mmHg (definition of the ratio, exact to the digit shown).
    expect(page.locator(".o2-bs-derived tr[data-key=pao2_fio2_ratio] td.val")).to_have_text("113")
    expect(page.locator(".o2-bs-msg-pao2_mmhg")).to_be_hidden()
    expect(page.locator(".o2-bs-derived tr[data-key=pf_category_berlin]")).to_contain_text(
        "moderate"
    )
    expect(page.locator(".o2-bs-derived tr[data-key=shunt_fraction]")).to_contain_text("high")
    expect(page.locator(".o2-bs-derived")).to_contain_text("Berggren")

    # Fit: consistent, residuals shown, then the fitted case becomes the live case.
    page.locator(".o2-bs-fit button").click()
    expect(page.locator(".o2-bs-fit-verdict")).to_contain_text("consistent", timeout=20000)
    expect(page.locator(".o2-bs-residuals")).to_contain_text("PvO2")
    page.locator(".o2-bs-use-fit button").click()
    expect(page.locator(".o2-status")).to_contain_text("Fitted to measured gas")
    expect(page.locator(".o2-status")).to_contain_text("Baseline kept")

    # Ranked what-ifs; change the ranking; apply the best one for PaO2.
    expect(page.locator(".o2-bs-levers tr[data-key]").first).to_be_visible(timeout=20000)
    page.locator(".o2-bs-rank-by select").select_option(label="PaO2")
    expect(page.locator(".o2-bs-levers tr[data-key]").first).to_have_attribute(
        "data-key", "fio2_1.00"
    )
    picked = page.locator(".o2-bs-lever-pick select")
    expect(picked.locator("option").first).to_contain_text("FiO2 0.60 → 1.00")
    page.locator(".o2-bs-apply-lever button").click()
    expect(page.locator(".o2-status")).to_contain_text("What-if: FiO2 0.60 → 1.00")
    expect(page.locator(".o2-status")).to_contain_text("Baseline kept")

    ARTIFACTS.mkdir(exist_ok=True)
    page.locator(".o2-case-tabs .bk-tab", has_text="Measured gas").scroll_into_view_if_needed()
    page.locator(".o2-caution").scroll_into_view_if_needed()
    page.screenshot(path=str(ARTIFACTS / "bedside.png"))

    # The other tab compares the what-if against the fitted case.
    page.locator(".o2-case-tabs .bk-tab", has_text="Model inputs").click()
    expect(page.locator(".o2-numbers")).to_contain_text("Δ vs baseline")
    expect(page.locator(".o2-in-fio2 input")).to_have_value(re.compile(r"^1(\.0)?$"))
    page.locator(".o2-case-tabs .bk-tab", has_text="Measured gas").click()

    # Keep the case: the warning is there; a second save does not overwrite silently.
    expect(page.locator(".o2-bs-id-warning")).to_contain_text("Do not store names")
    page.locator(".o2-bs-label input").fill("bed 4 night")
    page.locator(".o2-bs-label input").press("Enter")
    page.locator(".o2-bs-notes textarea").fill("Prone from 02:00.")
    page.locator(".o2-bs-notes textarea").blur()
    page.locator(".o2-bs-save button").click()
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("Saved bed-4-night.toml")
    assert (case_dir / "bed-4-night.toml").exists()
    page.locator(".o2-bs-save button").click()
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("already exists")
    page.locator(".o2-bs-overwrite button").click()
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("replaced the earlier file")
    expect(page.locator(".o2-bs-problems")).to_contain_text("damaged.toml")

    # Clear everything, then reopen the saved case: entry, notes and fit come back.
    page.locator(".o2-bs-clear button").click()
    expect(page.locator(".o2-bs-in-pao2_mmhg input")).to_have_value("")
    page.locator(".o2-bs-cases select").select_option(index=0)
    page.locator(".o2-bs-open button").click()
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("Opened bed 4 night", timeout=20000)
    expect(page.locator(".o2-bs-case-msg")).to_contain_text("same as saved")
    expect(page.locator(".o2-bs-in-pao2_mmhg input")).to_have_value(re.compile(r"^68(\.0)?$"))
    expect(page.locator(".o2-bs-notes textarea")).to_have_value("Prone from 02:00.")
    expect(page.locator(".o2-bs-fit-verdict")).to_contain_text("consistent")

    # Summary page: downloaded, then opened offline in a fresh page.
    with page.expect_download() as info:
        page.locator(".o2-bs-summary-download").click()
    target = tmp_path / "summary.html"
    info.value.save_as(target)
    text = target.read_text(encoding="utf-8")
    assert "bed 4 night" in text and "Prone from 02:00." in text and "113" in text
    assert "not a medical device" in text

    hosts = {urlsplit(u).hostname for u in page.requests if u.startswith("http")}
    assert hosts <= LOCAL_HOSTS, hosts

    offline = page.context.browser.new_context(offline=True)
    sheet = offline.new_page()
    seen = []
    sheet.on("request", lambda r: seen.append(r.url))
    sheet_errors = []
    sheet.on("pageerror", lambda e: sheet_errors.append(str(e)))
    sheet.goto(target.as_uri())
    expect(sheet.locator(".bk-Canvas, .bk-Figure").first).to_be_attached(timeout=10000)
    expect(sheet.locator("h1")).to_contain_text("case summary")
    sheet.screenshot(path=str(ARTIFACTS / "bedside-summary.png"), full_page=True)
    offline.close()
    assert not sheet_errors, sheet_errors
    assert all(u.startswith(("file:", "data:", "blob:")) for u in seen), seen
