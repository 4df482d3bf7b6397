"""Issue 18's page items in headless Chromium: hostile addresses get the visible notice on every
screen, uploads are refused with one message naming the file (a file over the limit before
anything is sent), and the server sends its security headers with every response.

Every browser test module serves its screens with the security headers on
(``browser_session.served_screens``), so each screen is also shown to render and go live under
the Content-Security-Policy. Skipped only on a machine without Chromium and without CI.
"""

from __future__ import annotations

import socket
import time
import urllib.error
import urllib.request

import pytest
from browser_session import checked_context, require_chromium, served_screens, wait_address
from o2transit.dashboard.app import SCREENS, SECURITY_HEADERS, serve
from o2transit.dashboard.widgets import MAX_UPLOAD_BYTES
from playwright.sync_api import expect

expect.set_options(timeout=20_000)

require_chromium()


@pytest.fixture(scope="module")
def base_url():
    with served_screens(dict(SCREENS), "/") as base:
        yield base


@pytest.fixture
def context(browser):
    with checked_context(browser, viewport={"width": 1400, "height": 900}) as ctx:
        yield ctx


def _notice(context, url: str):
    page = context.new_page()
    page.goto(url)
    notice = page.locator(".o2-url-msg")
    expect(notice).to_be_visible()
    return page, notice


ADDRESSES = [
    ("/?fio2=%C2%B2", "FiO2 = '²' is not a number in 0.05–1"),
    ("/?hb_g_dl=" + "9" * 5000, "(5000 characters)"),
    ("/?fio2=inf", "FiO2 = 'inf' is not a number"),
    ("/?fio2=nan", "FiO2 = 'nan' is not a number"),
    ("/?fio2=1e999", "FiO2 = '1e999' is not a number"),
    ("/?fio2=", "FiO2 = '' is not a number"),
    ("/?fio2=0.3&fio2=0.4", "fio2 is given 2 times ('0.3', '0.4'); give it once"),
    ("/?ph=7.3&base_excess_mmol_l=-5", "ph and base_excess_mmol_l are both given; keep one"),
    (
        "/?altitude_m=3000&barometric_pressure_mmhg=500",
        "altitude_m and barometric_pressure_mmhg are both given; keep one",
    ),
    ("/lecture?step=%C2%B2", "step = '²' is outside the allowed range"),
    ("/lecture?step=", "step = '' is outside the allowed range"),
    ("/lecture?factor=ph&ph=%C2%B2", "ph = '²' is outside the allowed range"),
    ("/lecture?step=1&step=2", "step is given 2 times"),
    ("/ascent?foo=1", "'foo' is not a setting of the ascent planner; ignored"),
]


@pytest.mark.parametrize("path, text", ADDRESSES, ids=[a[0][:40] for a in ADDRESSES])
def test_a_hostile_address_gets_the_notice_never_a_server_error(context, base_url, path, text):
    with urllib.request.urlopen(base_url + path, timeout=60) as answer:
        assert answer.status == 200  # was HTTP 500 with a server traceback for the first three
    _page, notice = _notice(context, base_url + path)
    expect(notice).to_contain_text(text)


def test_the_case_screen_still_opens_the_valid_keys_of_a_refused_pair(context, base_url):
    page, notice = _notice(context, base_url + "/?ph=7.3&base_excess_mmol_l=-5&hb_g_dl=9")
    expect(notice).to_contain_text("ph and base_excess_mmol_l are both given")
    expect(page.locator(".o2-in-hb_g_dl input")).to_have_value("9")
    expect(page.locator(".o2-in-ph input")).to_have_value("7.4")  # the default is kept
    expect(page.locator(".o2-numbers")).to_contain_text("PaO2")


# ---------------------------------------------------------------------- uploads
def _planner(context, base_url):
    page = context.new_page()
    page.goto(f"{base_url}/ascent")
    expect(page.locator(".o2-asc-summary")).to_be_visible()
    return page


def test_a_file_over_the_limit_is_stopped_in_the_browser(context, base_url):
    page = _planner(context, base_url)
    expect(page.locator(".o2-upload-limit").first).to_contain_text("at most 1.0 MiB")
    sent = []
    page.on("websocket", lambda ws: ws.on("framesent", lambda f: sent.append(len(f))))
    page.reload()
    expect(page.locator(".o2-asc-summary")).to_be_visible()
    big = b"# " + b"x" * (16 * 1024 * 1024) + b"\n"  # the 16 MB schedule of the issue
    page.locator(".o2-asc-open input[type=file]").set_input_files(
        files=[{"name": "huge.toml", "mimeType": "application/toml", "buffer": big}]
    )
    refused = page.locator(".o2-asc-open .o2-upload-refused")
    expect(refused).to_contain_text(
        "huge.toml: the file is 16.0 MiB, over the limit of 1.0 MiB for an upload; nothing was sent"
    )
    page.wait_for_timeout(500)
    assert max(sent, default=0) < MAX_UPLOAD_BYTES  # nothing of the file went to the server
    # the page still answers: a file under the limit is read
    good = b'name = "Small"\n[[day]]\nsleep_altitude_m = 1400\n[[day]]\nsleep_altitude_m = 2600\n'
    page.locator(".o2-asc-open input[type=file]").set_input_files(
        files=[{"name": "small.toml", "mimeType": "application/toml", "buffer": good}]
    )
    expect(page.locator(".o2-asc-summary")).to_contain_text("Small")
    expect(refused).to_have_count(0)


BAD_FILES = [
    (".o2-asc-open", "empty.toml", b"", "empty.toml: the file is empty"),
    (
        ".o2-asc-open",
        "deep.toml",
        ("a = " + "[" * 2000 + "]" * 2000 + "\n").encode(),
        "deep.toml: tables or arrays nested deeper than 32 levels",
    ),
    (
        ".o2-asc-ws-open",
        "deep.json",
        ("[" * 3000 + "]" * 3000).encode(),
        "deep.json: tables or arrays nested deeper than 32 levels",
    ),
    (
        ".o2-asc-csv-in",
        "long.csv",
        ("day,sleep_altitude_m\n1," + "9" * 140_000 + "\n").encode(),
        "long.csv: a field on line 2 is longer than 131,072 characters",
    ),
    (".o2-asc-rd-file", "bytes.csv", bytes(range(256)) * 8, "bytes.csv: holds NUL bytes"),
]


@pytest.mark.parametrize("where, name, data, text", BAD_FILES, ids=[b[1] for b in BAD_FILES])
def test_a_bad_upload_gets_one_message_naming_the_file(context, base_url, where, name, data, text):
    page = _planner(context, base_url)
    summary = page.locator(".o2-asc-summary").evaluate("e => e.shadowRoot.textContent")
    page.locator(f"{where} input[type=file]").set_input_files(
        files=[{"name": name, "mimeType": "text/plain", "buffer": data}]
    )
    message = page.locator(".o2-upload-msg").filter(has_text=name)
    expect(message).to_contain_text(text)
    expect(message).to_contain_text("File not used.")
    # nothing was opened in its place (an empty file used to reopen the examples)
    assert page.locator(".o2-asc-summary").evaluate("e => e.shadowRoot.textContent") == summary


# ---------------------------------------------------------------------- headers
def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def real_server():
    port = _free_port()
    server = serve(port=port, show=False, threaded=True)
    base = f"http://127.0.0.1:{port}"
    for _ in range(600):
        try:
            urllib.request.urlopen(base + "/static/js/bokeh.min.js", timeout=30).close()
            break
        except OSError:
            time.sleep(0.1)
    try:
        yield base
    finally:
        server.stop()
        server.join(timeout=5)


@pytest.mark.parametrize("path", ["/", "/ascent", "/lecture", "/static/js/bokeh.min.js", "/nope"])
def test_every_response_of_serve_carries_the_security_headers(real_server, path):
    try:
        answer = urllib.request.urlopen(real_server + path, timeout=60)
    except urllib.error.HTTPError as exc:  # the 404 page too
        answer = exc
    with answer:
        for name, value in SECURITY_HEADERS.items():
            assert answer.headers[name] == value, name
    policy = SECURITY_HEADERS["Content-Security-Policy"]
    assert "frame-ancestors 'none'" in policy and "default-src 'self'" in policy
    assert SECURITY_HEADERS["X-Frame-Options"] == "DENY"


def test_every_screen_renders_and_goes_live_under_the_policy(browser, real_server):
    with checked_context(browser, viewport={"width": 1400, "height": 900}) as ctx:
        violations = []
        ctx.on(
            "console",
            lambda m: violations.append(m.text) if "Content Security Policy" in m.text else None,
        )
        page = ctx.new_page()
        page.goto(real_server + "/")
        cell = page.locator(".o2-numbers tr[data-key=arterial_po2] td.val")
        expect(cell).not_to_be_empty()
        before = cell.evaluate("e => e.textContent")
        box = page.locator(".o2-in-altitude_m input")
        box.fill("3000")
        box.press("Enter")
        expect(cell).not_to_have_text(before)
        page.goto(real_server + "/ascent")
        expect(page.locator(".o2-asc-summary")).to_be_visible()
        page.goto(real_server + "/lecture")
        expect(page.locator(".o2-lecture-caption")).to_be_visible()
        expect(page.locator(".o2-lecture-caption")).to_contain_text("Our reference")
        page.keyboard.press("ArrowRight")  # the server answers with the next step
        wait_address(page, r"step=2$", timeout=20)
        expect(page.locator(".o2-lecture-caption")).not_to_contain_text("Our reference")
        assert not violations, violations
