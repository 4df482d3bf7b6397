"""Dashboard timings inside headless Chromium (run by ``make bench``; not part of the tests).

For each screen (``/``, ``/ascent``, ``/lecture``) a fresh ``o2transit serve`` is launched and
the screen opened in a fresh browser context (cold cache). Printed per screen:

* launch -> interactive: from starting the server until the watched number is on screen
  and the page's connection is open; the first payload (bytes over the wire) and the
  requests that left 127.0.0.1 (there must be none);
* change -> number visible, median and p95 over 20 changes after 3 warm-ups: measured in
  the page, not by polling from Python. The clock starts just before the widget's value is
  set (the DOM ``change`` and Enter a user's typing gives, or the slider model's value); the
  new number is caught by a MutationObserver (HTML numbers) or a hook on the figure's paint
  (numbers drawn on a canvas); "visible" is the end of the next rendered frame;
* change -> figures repainted: until the last canvas paint of the change has finished.
  On the lecture screen the figure then glides for 350 ms by design: there "figures" is
  until the first paint after the figure's last new data arrived (the first frame of the
  glide, the motion excluded), and "with motion" until the glide's last paint;
* the breakdown per change (medians): update messages (PATCH-DOC) and bytes (all frames)
  the server sent, server CPU
  (user + system time of the server process, a mean: it counts in 10 ms ticks), browser
  canvas paint time.

Beside them, the floor of the stack: a one-input, one-number Panel page served and measured
the same way, once with Panel's defaults and once with the dashboard's own treatment
(``dashboard.responsive``); each screen's median is printed as a multiple of the latter.
Last, server memory per open session and the model's share of a change on ``/``.

The machine is shared: run it when it is quiet, or twice, and read the spread.
"""

from __future__ import annotations

import argparse
import os
import socket
import statistics
import subprocess
import sys
import time
from pathlib import Path
from urllib.parse import urlsplit

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
LOCAL_HOSTS = {"127.0.0.1", "localhost", "::1", "[::1]"}
WARMUP, TRIALS, SETTLE_MS = 3, 20, 600

# How each screen is changed and where its number appears (the o2-* classes the screens keep).
SCREENS = {
    "/": {
        "path": "/",
        "act": {"kind": "input", "host": ".o2-in-altitude_m"},
        "values": ["1500", "0"],
        "watch": {"kind": "html", "host": ".o2-numbers", "sel": "tr[data-key=arterial_po2] td.val"},
    },
    "/ascent": {
        "path": "/ascent",
        "act": {"kind": "input", "host": ".o2-asc-th-high"},
        "values": ["85", "90"],
        "watch": {
            "kind": "html",
            "host": ".o2-asc-summary",
            "sel": "tr[data-row=burden] td:nth-child(2)",
        },
    },
    "/lecture": {
        "path": "/lecture?factor=ph",
        "act": {"kind": "model", "cls": "o2-lecture-value-ph", "attr": "value"},
        "values": [7.25, 7.35],
        "watch": {
            "kind": "canvas",
            "source": "o2-readout-shown",
            "column": "text",
            "figure": "o2-lecture-figure",
        },
        # the figure's data arrives in these sources (drawn by nothing), then glides
        "motion": "-target",
    },
}
FLOOR = {
    "path": "/floor",
    "act": {"kind": "input", "host": ".o2-floor-in"},
    "values": ["1", "2"],
    "watch": {"kind": "html", "host": ".o2-floor-out", "sel": "span"},
}

# In-page instruments: websocket frames received, Bokeh canvas paints, a change's timing.
PAGE_JS = r"""
(() => {
  if (window.__bench) { return; }
  const now = () => performance.now();
  const B = window.__bench = {received: [], paints: [], targets: [], wsOpen: null, onPaint: null};

  const Native = window.WebSocket;
  window.WebSocket = class extends Native {
    constructor(...args) {
      super(...args);
      this.addEventListener("open", () => { if (B.wsOpen === null) { B.wsOpen = now(); } });
      // a capturing listener sees each frame before BokehJS handles it
      this.addEventListener("message", (ev) => {
        const d = ev.data;
        const text = typeof d === "string";
        let type = null;
        if (text && d.length < 300 && d.includes('"msgtype"')) {
          try { type = JSON.parse(d).msgtype; } catch (err) { type = "?"; }
        }
        B.received.push({t: now(), n: text ? d.length : d.byteLength, type});
      });
    }
  };

  const findDeep = (root, sel) => {
    const hit = root.querySelector(sel);
    if (hit) { return hit; }
    for (const el of root.querySelectorAll("*")) {
      if (el.shadowRoot) { const x = findDeep(el.shadowRoot, sel); if (x) { return x; } }
    }
    return null;
  };
  B.findDeep = findDeep;
  const doc = () => (window.Bokeh && Bokeh.documents && Bokeh.documents[0]) || null;
  const byClass = (cls) => {
    const d = doc();
    if (!d) { return null; }
    for (const m of d._all_models.values()) {
      if (m.css_classes && m.css_classes.includes && m.css_classes.includes(cls)) { return m; }
    }
    return null;
  };

  // Time every canvas paint (outermost call of a view's _actual_paint).
  B.hook = () => {
    if (!window.Bokeh || !Bokeh.index) { return; }
    for (const view of Bokeh.index.all_views()) {
      let proto = Object.getPrototypeOf(view);
      while (proto && !Object.prototype.hasOwnProperty.call(proto, "_actual_paint")) {
        proto = Object.getPrototypeOf(proto);
      }
      if (!proto || proto.__bench_hooked) { continue; }
      const paint = proto._actual_paint;
      proto.__bench_hooked = true;
      let depth = 0;
      proto._actual_paint = function (...a) {
        depth++;
        const t0 = now();
        try { return paint.apply(this, a); } finally {
          depth--;
          if (depth === 0) {
            B.paints.push({t: t0, end: now()});
            if (B.onPaint) { B.onPaint(); }
          }
        }
      };
    }
  };

  B.reader = (w) => {
    if (w.kind === "html") {
      return () => {
        const host = findDeep(document, w.host);
        const el = host && findDeep(host.shadowRoot || host, w.sel);
        return el ? el.textContent : null;
      };
    }
    return () => {
      const d = doc();
      const src = d && d.get_model_by_name(w.source);
      const col = src && src.data[w.column];
      return col && col.length ? Array.from(col).map(String).join(" | ") : null;
    };
  };
  B.ready = (w) => {
    const v = B.reader(w)();
    if (v === null || v.trim() === "" || B.wsOpen === null) { return false; }
    if (w.kind === "canvas") {
      const fig = doc().get_model_by_name(w.figure);
      const view = fig && Bokeh.index.find_one(fig);
      return Boolean(view && view._render_count > 0);
    }
    return true;
  };

  // requestAnimationFrame callbacks are marked: a change made inside one (BokehJS paints
  // there) is shown by the frame under way; otherwise by the next one.
  let inFrame = 0;
  const raf = window.requestAnimationFrame.bind(window);
  window.requestAnimationFrame = (cb) => raf((ts) => {
    inFrame++;
    try { return cb(ts); } finally { inFrame--; }
  });
  const afterTask = (cb) => { const ch = new MessageChannel(); ch.port1.onmessage = cb; ch.port2.postMessage(0); };
  const afterFrame = (cb) => { if (inFrame > 0) { afterTask(cb); } else { raf(() => afterTask(cb)); } };

  const act = (a, value) => {
    if (a.kind === "input") {
      const host = findDeep(document, a.host);
      const input = findDeep(host.shadowRoot || host, "input");
      input.value = String(value);
      input.dispatchEvent(new Event("change"));
      input.dispatchEvent(new KeyboardEvent("keyup", {key: "Enter"}));
    } else {
      byClass(a.cls)[a.attr] = value;
    }
  };

  // Sources whose name ends with `suffix`: note when their data changes (a glide's start).
  B.watchTargets = (suffix) => {
    const d = doc();
    if (!suffix || !d || B.targetsWatched) { return; }
    B.targetsWatched = true;
    for (const m of d._all_models.values()) {
      if (m.name && m.name.endsWith(suffix)) {
        m.property("data").change.connect(() => B.targets.push(now()));
      }
    }
  };

  // One change: resolves with the time the new number was on screen (ms after t0).
  B.change = (spec) => new Promise((resolve) => {
    B.hook();
    B.watchTargets(spec.motion);
    const read = B.reader(spec.watch);
    const old = read();
    let done = false, observer = null;
    const out = {timeout: false};
    const seen = () => {
      const v = read();
      if (done || v === null || v === old) { return; }
      done = true;
      if (observer) { observer.disconnect(); }
      B.onPaint = null;
      afterFrame(() => { out.visible = now() - out.t0; resolve(out); });
    };
    if (spec.watch.kind === "html") {
      const host = findDeep(document, spec.watch.host);
      observer = new MutationObserver(seen);
      observer.observe(host.shadowRoot || host, {subtree: true, childList: true, characterData: true});
    } else {
      B.onPaint = seen;
    }
    setTimeout(() => {
      if (!done) { done = true; if (observer) { observer.disconnect(); } out.timeout = true; resolve(out); }
    }, 8000);
    B.received = []; B.paints = []; B.targets = [];
    out.t0 = now();
    act(spec.act, spec.value);
  });
  // What the change brought, up to now: messages, bytes, paints (times after t0).
  B.tally = (t0) => {
    const rx = B.received.filter((f) => f.t >= t0);
    const ps = B.paints.filter((p) => p.t >= t0);
    const last = ps.length ? Math.max(...ps.map((p) => p.end)) - t0 : null;
    const tg = B.targets.filter((t) => t >= t0);
    // with a glide: the first paint that began after the last new data arrived
    const after = tg.length ? ps.filter((p) => p.t >= Math.max(...tg)) : [];
    return {
      messages: rx.filter((f) => f.type === "PATCH-DOC").length,
      bytes: rx.reduce((a, f) => a + f.n, 0),
      paint_ms: ps.reduce((a, p) => a + (p.end - p.t), 0),
      figures_ms: tg.length ? (after.length ? Math.min(...after.map((p) => p.end)) - t0 : null) : last,
      motion_ms: tg.length ? last : null,
    };
  };
})();
"""


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def port_open(port: int) -> bool:
    with socket.socket() as s:
        s.settimeout(0.2)
        return s.connect_ex(("127.0.0.1", port)) == 0


def cpu_ms(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) * 1000.0 / os.sysconf("SC_CLK_TCK")


def rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def p95(values) -> float:
    xs = sorted(values)
    return xs[max(0, min(len(xs) - 1, round(0.95 * len(xs) + 0.5) - 1))]


def launch(cmd: list[str]) -> subprocess.Popen:
    return subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def stop(proc: subprocess.Popen) -> None:
    if proc.poll() is None:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)


def measure(browser, cmd: list[str], port: int, spec: dict, extra_pages: int = 0) -> dict:
    """Launch ``cmd`` (a server on ``port``), open ``spec``'s page cold, time start and changes."""
    ctx = browser.new_context(viewport={"width": 1500, "height": 1000})
    requests: list[str] = []
    ctx.on("request", lambda r: requests.append(r.url))
    ctx.add_init_script(PAGE_JS)
    page = ctx.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    t_launch = time.time() * 1000.0
    proc = launch(cmd)
    out: dict = {}
    try:
        while not port_open(port):
            if proc.poll() is not None:
                raise RuntimeError(f"{' '.join(cmd)} exited with {proc.returncode}")
            if time.time() * 1000.0 - t_launch > 90000:
                raise RuntimeError(f"port {port} not open after 90 s")
            time.sleep(0.02)
        page.goto(f"http://127.0.0.1:{port}{spec['path']}", wait_until="commit", timeout=90000)
        page.wait_for_function(
            "w => { if (__bench.ready(w)) { __bench.readyAt = __bench.readyAt || performance.now();"
            " return true; } return false; }",
            arg=spec["watch"],
            polling="raf",
            timeout=90000,
        )
        nav = page.evaluate(
            """() => ({origin: performance.timeOrigin, ready: __bench.readyAt,
                       bytes: [performance.getEntriesByType('navigation')[0],
                               ...performance.getEntriesByType('resource')]
                              .reduce((a, r) => a + (r.transferSize || 0), 0)})"""
        )
        out["interactive_s"] = (nav["origin"] + nav["ready"] - t_launch) / 1000.0
        out["payload_mb"] = nav["bytes"] / 1e6
        page.wait_for_timeout(SETTLE_MS)
        rows = []
        for i in range(WARMUP + TRIALS):
            value = spec["values"][i % len(spec["values"])]
            c0 = cpu_ms(proc.pid)
            res = page.evaluate(
                "s => __bench.change(s)",
                {
                    "act": spec["act"],
                    "value": value,
                    "watch": spec["watch"],
                    "motion": spec.get("motion"),
                },
            )
            if res["timeout"]:
                raise RuntimeError(f"{spec['path']}: no new number 8 s after setting {value!r}")
            page.wait_for_timeout(SETTLE_MS)
            tally = page.evaluate("t0 => __bench.tally(t0)", res["t0"])
            if i >= WARMUP:
                rows.append(
                    {"visible_ms": res["visible"], "cpu_ms": cpu_ms(proc.pid) - c0, **tally}
                )
        out["rows"] = rows
        out["errors"] = errors
        if extra_pages:
            rss0 = rss_mib(proc.pid)
            for _ in range(extra_pages):
                p = ctx.new_page()
                p.goto(f"http://127.0.0.1:{port}{spec['path']}", timeout=90000)
                p.wait_for_function("w => __bench.ready(w)", arg=spec["watch"], timeout=90000)
            time.sleep(1.0)
            out["mib_per_session"] = (rss_mib(proc.pid) - rss0) / extra_pages
    finally:
        ctx.close()
        stop(proc)
    out["outside"] = [
        u
        for u in requests
        if urlsplit(u).scheme in ("http", "https", "ws", "wss")
        and urlsplit(u).hostname not in LOCAL_HOSTS
    ]
    return out


def summary(name: str, r: dict, floor_ms: float | None) -> str:
    rows = r["rows"]
    vis = [x["visible_ms"] for x in rows]
    figs = [x["figures_ms"] for x in rows if x["figures_ms"] is not None]
    med = statistics.median(vis)

    def m(key):
        return statistics.median(x[key] for x in rows)

    ratio = f"{med / floor_ms:4.1f}x floor" if floor_ms else ""
    motion = [x["motion_ms"] for x in rows if x.get("motion_ms") is not None]
    if motion:
        ratio += f"; with motion {statistics.median(motion):.0f}"
    return (
        f"  {name:16s} {med:6.0f} {p95(vis):6.0f} "
        f"{(statistics.median(figs) if figs else float('nan')):8.0f} "
        f"{r['interactive_s']:7.2f} {r['payload_mb']:6.2f} {len(r['outside']):4d} | "
        f"{m('messages'):4.0f} {m('bytes') / 1000:6.1f} "
        f"{statistics.fmean(x['cpu_ms'] for x in rows):6.0f} {m('paint_ms'):6.0f}  {ratio}"
    )


def server_side_ms() -> float:
    """Median time of one altitude change in a CaseState alone (model work only) [ms]."""
    from o2transit.dashboard.case.state import CaseState

    state = CaseState()
    times = []
    for i in range(30):
        t0 = time.perf_counter()
        state.altitude_m = 1500.0 if i % 2 == 0 else 0.0
        times.append((time.perf_counter() - t0) * 1e3)
    return statistics.median(times)


# ------------------------------------------------------------------------- the floor page
def serve_floor(port: int, stock: bool) -> None:
    """One input, one number: the least a Panel page does for a change (``--serve-floor``)."""
    import panel as pn
    from o2transit.dashboard import responsive

    def page():
        box = pn.widgets.FloatInput(value=0.0, css_classes=["o2-floor-in"])
        out = pn.pane.HTML("<span>0</span>", css_classes=["o2-floor-out"])
        box.param.watch(lambda e: setattr(out, "object", f"<span>{e.new:g}</span>"), "value")
        col = pn.Column(box, out)
        if not stock:
            responsive.quicken(col)
        return col

    if not stock:
        responsive.install()
    options = {} if stock else responsive.SERVER_OPTIONS
    pn.serve({"/floor": page}, port=port, address="127.0.0.1", show=False, **options)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--serve-floor", type=int, metavar="PORT", help=argparse.SUPPRESS)
    ap.add_argument("--stock", action="store_true", help=argparse.SUPPRESS)
    ap.add_argument("--screens", default="/,/ascent,/lecture")
    args = ap.parse_args()
    if args.serve_floor:
        serve_floor(args.serve_floor, args.stock)
        return 0

    from playwright.sync_api import sync_playwright

    exe = str(Path(sys.executable).with_name("o2transit"))
    results: dict[str, dict] = {}
    load0 = os.getloadavg()[0]
    with sync_playwright() as pw:
        browser = pw.chromium.launch(
            executable_path=os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium"), args=ARGS
        )
        try:
            for name, stock in (("floor, Panel", True), ("floor, quick", False)):
                port = free_port()
                cmd = [sys.executable, __file__, "--serve-floor", str(port)]
                results[name] = measure(browser, cmd + (["--stock"] if stock else []), port, FLOOR)
            for key in [s for s in args.screens.split(",") if s]:
                port = free_port()
                cmd = [exe, "serve", "--port", str(port), "--no-show"]
                results[key] = measure(
                    browser, cmd, port, SCREENS[key], extra_pages=5 if key == "/" else 0
                )
        finally:
            browser.close()
    load1 = os.getloadavg()[0]

    floor = statistics.median(x["visible_ms"] for x in results["floor, quick"]["rows"])
    print(f"dashboard in headless Chromium ({TRIALS} changes after {WARMUP} warm-ups per screen)")
    print(
        "  screen           change->number  figures  launch-> first  off- |  per change (medians)\n"
        "                   median    p95   median  interact.   MB   mach.| msgs     kB  srvCPU"
        "  paint  ms"
    )
    for name, r in results.items():
        print(summary(name, r, None if name.startswith("floor") else floor))
        if r["errors"]:
            print(f"      page errors: {r['errors'][:3]}")
        if r["outside"]:
            print(f"      requests leaving 127.0.0.1: {r['outside'][:5]}")
    print("  (ms unless marked; figures: change -> last canvas paint finished, on /lecture")
    print("   the first frame of the designed glide, its end as 'with motion'; srvCPU a mean:")
    print("   /proc counts 10 ms ticks)")
    if "/" in results and "mib_per_session" in results["/"]:
        print(f"  server memory per open session on /: {results['/']['mib_per_session']:.2f} MiB")
        print(f"  model work in one change on / (CaseState alone): {server_side_ms():.1f} ms")
    print(f"  load average {load0:.1f} -> {load1:.1f} (2 cores; above ~1 the figures spread)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
