"""Dashboard timings in headless Chromium (run by ``make bench``; not part of the tests).

Prints:
* server start to interactive page: from launching ``o2transit serve`` to the numbers
  table showing PaO2 in the browser;
* widget change to updated screen: typing a new altitude (Enter) until both the DO2 and
  the PaO2 cells of the numbers table have changed, over 50 changes (median, p95).
  Measured from Python through Playwright, so each figure includes one round trip of
  polling (an upper bound); the baseline beside it is the naive way to see a new case,
  reloading the whole page;
* server memory per open session: server RSS before and after opening 5 more pages.
"""

from __future__ import annotations

import os
import socket
import statistics
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

from playwright.sync_api import expect, sync_playwright

ARGS = [
    "--headless=new",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
ROOT = Path(__file__).resolve().parents[1]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def wait_for_http(url: str, t_start: float, limit_s: float) -> None:
    """Poll until the server answers 200 (a loaded machine can take many seconds)."""
    while True:
        try:
            with urllib.request.urlopen(url, timeout=5) as r:
                if r.status == 200:
                    return
        except OSError:
            pass
        if time.perf_counter() - t_start > limit_s:
            raise RuntimeError(f"no HTTP 200 from {url} after {limit_s:.0f} s")
        time.sleep(0.05)


def text_of(page, selector: str) -> str:
    return page.locator(selector).evaluate("e => e.textContent")


def wait_until_changed(page, selectors, old, timeout=10.0):
    deadline = time.perf_counter() + timeout
    while time.perf_counter() < deadline:
        now = [text_of(page, s) for s in selectors]
        if all(n != o for n, o in zip(now, old)):
            return now
    raise RuntimeError("the screen did not update")


def server_side_ms() -> float:
    """Median time of one altitude change in a CaseState (model work only) [ms]."""
    sys.path.insert(0, str(ROOT))
    from o2transit.dashboard.case.state import CaseState

    state = CaseState()
    times = []
    for i in range(30):
        t0 = time.perf_counter()
        state.altitude_m = 1500.0 if i % 2 == 0 else 0.0
        times.append((time.perf_counter() - t0) * 1e3)
    return statistics.median(times)


def main() -> int:
    port = free_port()
    url = f"http://127.0.0.1:{port}/"
    exe = Path(sys.executable).with_name("o2transit")
    t_start = time.perf_counter()
    server = subprocess.Popen(
        [str(exe), "serve", "--port", str(port), "--no-show"],
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    try:
        with sync_playwright() as pw:
            browser = pw.chromium.launch(
                executable_path=os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium"), args=ARGS
            )
            page = browser.new_page(viewport={"width": 1500, "height": 1000})
            wait_for_http(url, t_start, limit_s=120.0)
            page.goto(url, timeout=60000)
            expect(page.locator(".o2-numbers")).to_contain_text("PaO2", timeout=30000)
            t_ready = time.perf_counter() - t_start

            watched = [
                ".o2-numbers tr[data-key=do2] td.val",
                ".o2-numbers tr[data-key=arterial_po2] td.val",
            ]
            box = page.locator(".o2-in-altitude_m input")
            times = []
            for i in range(50):
                old = [text_of(page, s) for s in watched]
                box.fill("1500" if i % 2 == 0 else "0")
                t0 = time.perf_counter()
                box.press("Enter")
                wait_until_changed(page, watched, old)
                times.append(time.perf_counter() - t0)
            reloads = []
            for _ in range(5):
                t0 = time.perf_counter()
                page.reload()
                expect(page.locator(".o2-numbers")).to_contain_text("PaO2", timeout=30000)
                reloads.append(time.perf_counter() - t0)

            rss0 = rss_mib(server.pid)
            extra = []
            for _ in range(5):
                p = browser.new_page()
                p.goto(url)
                expect(p.locator(".o2-numbers")).to_contain_text("PaO2", timeout=30000)
                extra.append(p)
            time.sleep(1.0)
            rss1 = rss_mib(server.pid)
            browser.close()
    finally:
        server.terminate()
        server.wait(timeout=10)

    times_ms = sorted(t * 1e3 for t in times)
    median = statistics.median(times_ms)
    p95 = times_ms[int(0.95 * len(times_ms)) - 1]
    reload_ms = statistics.median(reloads) * 1e3

    def verdict(ok: bool) -> str:
        return "MET" if ok else "MISSED"

    server_ms = server_side_ms()
    print("dashboard in headless Chromium")
    print(
        f"  server start -> interactive page   {t_ready:8.2f} s   (target < 5 s: "
        f"{verdict(t_ready < 5.0)})"
    )
    print(
        f"  widget change -> screen updated    median {median:6.0f} ms, p95 {p95:6.0f} ms "
        f"over {len(times)} changes (targets < 100 / < 200 ms: "
        f"{verdict(median < 100.0)} / {verdict(p95 < 200.0)})"
    )
    print(
        f"  of which server-side derivation    median {server_ms:6.1f} ms "
        "(CaseState: chain solve and three curves, in this process)"
    )
    print(
        f"  naive baseline: full page reload   median {reload_ms:6.0f} ms   "
        f"ratio {reload_ms / median:5.1f}x"
    )
    print(
        f"  server memory per open session     {(rss1 - rss0) / 5:6.2f} MiB "
        f"(RSS {rss0:.0f} -> {rss1:.0f} MiB over 5 sessions)"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
