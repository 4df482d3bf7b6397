"""A class on one server: many sessions at once (run by ``make bench``; not part of the tests).

The server runs in its own process (``o2transit serve --no-show --port P`` on 127.0.0.1); the
clients run here, in one thread, speaking Bokeh's websocket protocol as a browser's page does
(the page's GET, the live connection, the document pulled, "document ready", then changes
sent as PATCH-DOC messages and button clicks as events). No browser is started: 60 of them
would not fit on two cores beside the server, and the time they took would be counted
against it.

One round:

1. open: 50 sessions on ``/lecture`` and 10 on ``/`` (case), a few at a time
   (:data:`OPENING_AT_ONCE`), each until its screen is on it;
2. idle: every session open, nothing happening (server memory read);
3. active: a lecturer steps through the lesson (:data:`LECTURE_STEPS` steps, one every
   :data:`STEP_EVERY_S`); each of the 50 students' pages presses Next (then Back) at a random
   moment within :data:`FOLLOW_WITHIN_S` after the lecturer; the 10 case pages change the
   altitude every 1.5 to 3.5 s. The answer time of a change is from sending it to the
   arrival of the message that changes its watched element (the step list on the lecture
   page, the numbers table on the case page);
4. close: every page goes away; in the last round the case pages vanish in the middle of
   an update (a change sent, the connection dropped without a close handshake); then the
   server memory is read once it has discarded the sessions and settled.

Printed: plain GET cost (server CPU of a GET that never connects), the server CPU of a whole
session (GET, connection, screen built), answer time p50/p95, errors (client-side: refused
or missing answers, closed connections, ERROR replies; server-side: tracebacks and error
lines in its log), server memory (RSS of its process) at baseline, with all sessions open
and idle (per idle session), and after every close, round by round.

Beside the dashboard, two rows run the same way with fewer rounds: ``naive``, the same
screens served the way they were before sessions were made cheap (the whole screen built
on every GET, Bokeh's default session lifetimes, nothing given back), and ``floor``, a page
with one number input and one number (the least a Panel page costs). The ratios against
them are printed.

The machine is shared: run it when it is quiet and read the spread; ``--quick`` for a small
run (20 + 4 sessions, 2 rounds), ``--strict`` to exit 1 on a missed target.
"""

from __future__ import annotations

import argparse
import asyncio
import contextlib
import json
import os
import random
import re
import socket
import statistics
import subprocess
import sys
import time
import uuid
from pathlib import Path

from tornado.httpclient import AsyncHTTPClient, HTTPRequest
from tornado.websocket import WebSocketClosedError, websocket_connect

ROOT = Path(__file__).resolve().parents[1]
O2TRANSIT = ROOT / ".venv" / "bin" / "o2transit"
HOST = "127.0.0.1"

LECTURE_SESSIONS, CASE_SESSIONS, ROUNDS = 50, 10, 5
OPENING_AT_ONCE = 4
LECTURE_STEPS = 6
STEP_EVERY_S = 4.0
FOLLOW_WITHIN_S = 3.0
CASE_EVERY_S = (1.5, 3.5)
ANSWER_TIMEOUT_S = 20.0
OPEN_TIMEOUT_S = 120.0
SETTLE_TIMEOUT_S = 60.0
PLAIN_GETS = 10

TARGETS = {"errors": 0, "p95_s": 1.0, "mib_per_idle_session": 3.0, "after_close_vs_baseline": 0.10}

# The elements a client acts on and watches, found by the CSS classes the screens keep.
LECTURE = {"next": "o2-lecture-next", "back": "o2-lecture-back", "watch": "o2-lecture-index"}
CASE = {"input": "o2-in-altitude_m", "watch": "o2-numbers"}
FLOOR = {"input": "o2-floor-input", "watch": "o2-floor-number"}

FLOOR_PAGE = """
import panel as pn
def page():
    pn.extension()
    box = pn.widgets.FloatInput(value=1.0, css_classes=["o2-floor-input"])
    out = pn.pane.HTML("<b>1.000</b>", css_classes=["o2-floor-number"])
    box.param.watch(lambda e: setattr(out, "object", f"<b>{e.new * 2:.3f}</b>"), "value")
    return pn.Column(box, out)
"""

NAIVE_SERVER = """
import sys, panel as pn
from o2transit.dashboard import app
routes = {"/": app.build_case_page, "/lecture": app._build_lecture}
pn.serve(routes, address="127.0.0.1", port=int(sys.argv[1]), show=False,
         websocket_origin=[f"127.0.0.1:{sys.argv[1]}"], compress_response=True)
"""

FLOOR_SERVER = (
    FLOOR_PAGE
    + """
import sys
pn.serve({"/floor": page}, address="127.0.0.1", port=int(sys.argv[1]), show=False,
         websocket_origin=[f"127.0.0.1:{sys.argv[1]}"])
"""
)


# ---------------------------------------------------------------------- the server process
def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def rss_mib(pid: int) -> float:
    with open(f"/proc/{pid}/status") as f:
        for line in f:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024
    raise RuntimeError("no VmRSS")


def cpu_s(pid: int) -> float:
    with open(f"/proc/{pid}/stat") as f:
        fields = f.read().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


class Server:
    """A server subprocess; its log goes to a file that is scanned for tracebacks."""

    def __init__(self, kind: str):
        self.kind = kind
        self.port = free_port()
        self.log_path = Path(f"/tmp/o2transit-bench-load-{os.getpid()}-{kind}.log")
        if kind == "o2transit":
            cmd = [str(O2TRANSIT), "serve", "--no-show", "--port", str(self.port)]
        else:
            code = NAIVE_SERVER if kind == "naive" else FLOOR_SERVER
            cmd = [sys.executable, "-c", code, str(self.port)]
        if kind == "o2transit":
            from o2transit.dashboard.sessions import RELEASE_DELAY_S, SESSION_OPTIONS

            lifetime_ms = SESSION_OPTIONS["unused_session_lifetime_milliseconds"]
            check_ms = SESSION_OPTIONS["check_unused_sessions_milliseconds"]
            self.discard_s = (lifetime_ms + check_ms) / 1000 + RELEASE_DELAY_S + 1.0
        else:  # Bokeh's defaults: 15 s lifetime, checked every 17 s
            self.discard_s = (15000 + 17000) / 1000 + 1.0
        self.log = open(self.log_path, "w")  # noqa: SIM115 - open while the server runs
        self.proc = subprocess.Popen(cmd, stdout=self.log, stderr=subprocess.STDOUT, cwd=ROOT)

    @property
    def base(self) -> str:
        return f"http://{HOST}:{self.port}"

    def wait_ready(self, timeout: float = 90) -> None:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(
                    f"{self.kind} server exited: {self.log_path.read_text()[-2000:]}"
                )
            try:
                with socket.create_connection((HOST, self.port), timeout=1):
                    return
            except OSError:
                time.sleep(0.2)
        raise RuntimeError(f"{self.kind} server did not start in {timeout} s")

    def rss(self) -> float:
        return rss_mib(self.proc.pid)

    def cpu(self) -> float:
        return cpu_s(self.proc.pid)

    def log_errors(self) -> list[str]:
        """Tracebacks (each as its last line, where the error is named) and error lines."""
        self.log.flush()
        lines = self.log_path.read_text(errors="replace").splitlines()
        found = []
        k = 0
        while k < len(lines):
            ln = lines[k]
            if "Traceback" in ln:
                k += 1
                while k < len(lines) and (lines[k].startswith(" ") or not lines[k].strip()):
                    k += 1
                last = lines[k] if k < len(lines) else "?"
                found.append(f"traceback: {last} (after: {lines[max(0, k - 3)].strip()})")
            elif " ERROR" in ln or ln.startswith("ERROR"):
                found.append(ln)
            k += 1
        return found

    def stop(self) -> None:
        self.proc.terminate()
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        self.log.close()
        if os.environ.get("O2TRANSIT_BENCH_KEEP_LOG"):  # to read a traceback in full
            print(f"  server log kept: {self.log_path}")
        else:
            self.log_path.unlink(missing_ok=True)


# ---------------------------------------------------------------------- one page, by protocol
def _message(msgtype: str, content: dict) -> list[str]:
    header = {"msgid": uuid.uuid4().hex, "msgtype": msgtype}
    return [json.dumps(header), "{}", json.dumps(content)]


def _objects(value, found: dict) -> None:
    """Every model representation inside a message's content, by id."""
    if isinstance(value, dict):
        if value.get("type") == "object" and "id" in value and "attributes" in value:
            found[value["id"]] = value
        for v in value.values():
            _objects(v, found)
    elif isinstance(value, list):
        for v in value:
            _objects(v, found)


def _has_class(model: dict, css: str) -> bool:
    classes = model.get("attributes", {}).get("css_classes")
    return isinstance(classes, list) and css in classes


class Page:
    """One browser page's session, spoken through the websocket protocol."""

    def __init__(self, base: str, path: str, roles: dict):
        self.base, self.path, self.roles = base, path, roles
        self.models: dict = {}
        self.ids: dict[str, str] = {}
        self.ws = None
        self.reader = None
        self.errors: list[str] = []
        self.touched: dict[str, float] = {}  # watched id -> arrival of the last message changing it
        self.changed = asyncio.Event()
        self.ready = asyncio.Event()

    async def open(self) -> None:
        http = AsyncHTTPClient()
        resp = await http.fetch(self.base + self.path, request_timeout=OPEN_TIMEOUT_S)
        token = re.search(rb'"token":\s*"([^"]+)"', resp.body)
        if token is None:
            raise RuntimeError(f"no session token in the page {self.path}")
        ws_url = "ws" + self.base[4:] + self.path.rstrip("/") + "/ws"
        request = HTTPRequest(ws_url, request_timeout=OPEN_TIMEOUT_S)
        self.ws = await websocket_connect(
            request, subprotocols=["bokeh", token.group(1).decode()], max_message_size=64 << 20
        )
        await self._receive()  # ACK
        await self._send("PULL-DOC-REQ", {})
        reply = await self._receive()
        _objects(reply[2], self.models)
        if self._find():
            self.ready.set()
        self.reader = asyncio.ensure_future(self._read())
        await self._send("PATCH-DOC", {"events": [self._event("document_ready", {})]})
        await asyncio.wait_for(self.ready.wait(), OPEN_TIMEOUT_S)

    def _find(self) -> bool:
        for role, css in self.roles.items():
            if role not in self.ids:
                for mid, model in self.models.items():
                    if _has_class(model, css):
                        self.ids[role] = mid
                        break
        return len(self.ids) == len(self.roles)

    async def _send(self, msgtype: str, content: dict) -> None:
        for frame in _message(msgtype, content):
            await self.ws.write_message(frame)

    async def _receive(self) -> tuple:
        header = await self.ws.read_message()
        if header is None:
            raise WebSocketClosedError("closed by the server")
        header = json.loads(header)
        metadata = await self.ws.read_message()
        content = await self.ws.read_message()
        for _ in range(2 * header.get("num_buffers", 0)):
            await self.ws.read_message()
        if header.get("msgtype") == "ERROR":
            self.errors.append(f"ERROR reply: {content[:200]}")
        return header, metadata, json.loads(content)

    async def _read(self) -> None:
        while True:
            try:
                header, _meta, content = await self._receive()
            except (WebSocketClosedError, TypeError, asyncio.CancelledError):
                return
            if header.get("msgtype") != "PATCH-DOC":
                continue
            now = time.perf_counter()
            _objects(content, self.models)
            if not self.ready.is_set() and self._find():
                self.ready.set()
            watched = self.ids.get("watch")
            for event in content.get("events", ()):
                model = event.get("model")
                if isinstance(model, dict) and model.get("id") == watched:
                    self.touched[watched] = now
                    self.changed.set()

    @staticmethod
    def _event(name: str, values: dict) -> dict:
        return {
            "kind": "MessageSent",
            "msg_type": "bokeh_event",
            "msg_data": {"type": "event", "name": name, "values": values},
        }

    async def _answer(self, send) -> float | None:
        """Seconds from sending an action until the watched element changes (None: no answer)."""
        watched = self.ids["watch"]
        before = self.touched.get(watched)
        self.changed.clear()
        t0 = time.perf_counter()
        await send()
        deadline = t0 + ANSWER_TIMEOUT_S
        while self.touched.get(watched) == before:
            left = deadline - time.perf_counter()
            if left <= 0:
                self.errors.append(f"no answer in {ANSWER_TIMEOUT_S:.0f} s on {self.path}")
                return None
            try:
                await asyncio.wait_for(self.changed.wait(), left)
            except TimeoutError:
                continue
            self.changed.clear()
        return self.touched[watched] - t0

    async def click(self, role: str) -> float | None:
        values = {"model": {"id": self.ids[role]}}
        return await self._answer(
            lambda: self._send("PATCH-DOC", {"events": [self._event("button_click", values)]})
        )

    async def set_value(self, role: str, value) -> float | None:
        event = {
            "kind": "ModelChanged",
            "model": {"id": self.ids[role]},
            "attr": "value",
            "new": value,
        }
        return await self._answer(lambda: self._send("PATCH-DOC", {"events": [event]}))

    async def vanish_mid_update(self, role: str, value) -> None:
        """Send a change and drop the connection at once, with no close handshake."""
        event = {
            "kind": "ModelChanged",
            "model": {"id": self.ids[role]},
            "attr": "value",
            "new": value,
        }
        await self._send("PATCH-DOC", {"events": [event]})
        self.ws.stream.close()
        await self._stop_reader()

    async def close(self) -> None:
        if self.ws is not None:
            self.ws.close()
        await self._stop_reader()

    async def _stop_reader(self) -> None:
        if self.reader is not None:
            self.reader.cancel()
            with contextlib.suppress(asyncio.CancelledError, Exception):  # closing anyway
                await self.reader


# ---------------------------------------------------------------------- the load
async def open_pages(base: str, specs: list[tuple[str, dict]], errors: list[str]) -> list[Page]:
    gate = asyncio.Semaphore(OPENING_AT_ONCE)
    pages: list[Page] = []

    async def one(path, roles):
        async with gate:
            page = Page(base, path, roles)
            try:
                await page.open()
                pages.append(page)
            except Exception as exc:  # noqa: BLE001 - counted, the run goes on
                errors.append(f"open {path}: {type(exc).__name__}: {exc}")
                await page.close()

    await asyncio.gather(*(one(p, r) for p, r in specs))
    return pages


async def lecture_class(pages: list[Page], steps: int, answers: list[float]) -> None:
    """The lecturer steps ``steps`` times forward, then as many back; each page follows."""

    async def follow(page: Page, role: str) -> None:
        await asyncio.sleep(random.uniform(0.0, FOLLOW_WITHIN_S))
        t = await page.click(role)
        if t is not None:
            answers.append(t)

    for k in range(2 * steps):
        role = "next" if k < steps else "back"
        started = time.perf_counter()
        await asyncio.gather(*(follow(p, role) for p in pages))
        await asyncio.sleep(max(0.0, STEP_EVERY_S - (time.perf_counter() - started)))


async def case_users(pages: list[Page], until: float, answers: list[float], values) -> None:
    async def user(page: Page) -> None:
        k = 0
        while time.perf_counter() < until:
            await asyncio.sleep(random.uniform(*CASE_EVERY_S))
            t = await page.set_value("input", values[k % len(values)])
            k += 1
            if t is not None:
                answers.append(t)

    await asyncio.gather(*(user(p) for p in pages))


async def settle(server: Server, timeout: float = SETTLE_TIMEOUT_S) -> float:
    """Server memory once its closed sessions are discarded: first the server's own session
    lifetime and check interval are waited out, then until the RSS stops falling."""
    await asyncio.sleep(server.discard_s)
    deadline = time.monotonic() + timeout
    last = server.rss()
    steady = 0
    while time.monotonic() < deadline and steady < 3:
        await asyncio.sleep(1.0)
        now = server.rss()
        steady = steady + 1 if abs(now - last) < 0.25 else 0
        last = now
    return last


async def plain_gets(server: Server, path: str, n: int) -> float:
    """Server CPU of one GET whose page never connects [s]."""
    http = AsyncHTTPClient()
    await http.fetch(server.base + path, request_timeout=OPEN_TIMEOUT_S)  # imports, caches
    c0 = server.cpu()
    for _ in range(n):
        await http.fetch(server.base + path, request_timeout=OPEN_TIMEOUT_S)
    await asyncio.sleep(0.3)
    return (server.cpu() - c0) / n


async def run(kind: str, n_lecture: int, n_case: int, rounds: int, steps: int) -> dict:
    server = Server(kind)
    out: dict = {"kind": kind, "rounds": []}
    try:
        server.wait_ready()
        errors: list[str] = []
        if kind == "floor":
            lecture_spec, case_spec = None, ("/floor", FLOOR)
            values = [2.0, 3.0, 4.0]
        else:
            lecture_spec, case_spec = ("/lecture", LECTURE), ("/", CASE)
            values = [1500.0, 3000.0, 0.0]
        out["get_cpu_s"] = await plain_gets(server, case_spec[0], PLAIN_GETS)
        # warm-up: one page of each screen opened and closed (imports, first-use caches)
        warm = await open_pages(
            server.base, [s for s in (lecture_spec, case_spec) if s is not None], errors
        )
        for p in warm:
            await p.close()
        await asyncio.sleep(1.0)
        baseline = await settle(server)
        out["baseline_mib"] = baseline
        answers: list[float] = []
        for r in range(rounds):
            row: dict = {}
            specs = [lecture_spec] * (n_lecture if lecture_spec else 0)
            specs += [case_spec] * (n_case if lecture_spec else n_lecture + n_case)
            c0, t0 = server.cpu(), time.perf_counter()
            pages = await open_pages(server.base, specs, errors)
            row["open_s"] = time.perf_counter() - t0
            row["cpu_per_session_s"] = (server.cpu() - c0) / max(1, len(pages))
            row["opened"] = len(pages)
            await asyncio.sleep(3.0)
            row["idle_mib"] = server.rss()
            row["mib_per_idle_session"] = (row["idle_mib"] - baseline) / max(1, len(pages))
            lecture_pages = [p for p in pages if p.path == "/lecture"]
            case_pages = [p for p in pages if p.path != "/lecture"]
            if lecture_pages:
                until = time.perf_counter() + 2 * steps * STEP_EVERY_S
                await asyncio.gather(
                    lecture_class(lecture_pages, steps, answers),
                    case_users(case_pages, until, answers, values),
                )
            else:
                until = time.perf_counter() + 2 * steps * STEP_EVERY_S
                await case_users(case_pages, until, answers, values)
            for p in pages:
                errors.extend(p.errors)
            last = r == rounds - 1
            for p in pages:
                if last and p in case_pages:
                    await p.vanish_mid_update("input", values[1])
                else:
                    await p.close()
            row["after_close_mib"] = await settle(server)
            out["rounds"].append(row)
        out["answers"] = answers
        out["client_errors"] = errors
        out["server_errors"] = server.log_errors()
        return out
    finally:
        server.stop()


# ---------------------------------------------------------------------- report
def pct(values: list[float], q: float) -> float:
    if not values:
        return float("nan")
    s = sorted(values)
    return s[min(len(s) - 1, round(q * (len(s) - 1)))]


def summary(res: dict) -> dict:
    rounds = res["rounds"]
    base = res["baseline_mib"]
    return {
        "get_cpu_s": res["get_cpu_s"],
        "cpu_per_session_s": statistics.median(r["cpu_per_session_s"] for r in rounds),
        "p50_s": pct(res["answers"], 0.50),
        "p95_s": pct(res["answers"], 0.95),
        "answers": len(res["answers"]),
        "errors": len(res["client_errors"]) + len(res["server_errors"]),
        "baseline_mib": base,
        "mib_per_idle_session": statistics.median(r["mib_per_idle_session"] for r in rounds),
        "after_close_vs_baseline": max(r["after_close_mib"] for r in rounds) / base - 1.0,
    }


def print_run(res: dict) -> None:
    s = summary(res)
    print(
        f"  {res['kind']:<10} GET {s['get_cpu_s'] * 1000:6.0f} ms CPU | session {s['cpu_per_session_s']:.2f} s CPU"
        f" | answer p50 {s['p50_s'] * 1000:5.0f} ms p95 {s['p95_s'] * 1000:5.0f} ms (n={s['answers']})"
        f" | errors {s['errors']} | RSS base {s['baseline_mib']:.0f} MiB,"
        f" {s['mib_per_idle_session']:.2f} MiB/idle session,"
        f" after close {s['after_close_vs_baseline'] * 100:+.0f} %"
    )
    for i, r in enumerate(res["rounds"], start=1):
        print(
            f"    round {i}: {r['opened']} opened in {r['open_s']:.1f} s"
            f" ({r['cpu_per_session_s']:.2f} s CPU each), idle {r['idle_mib']:.0f} MiB,"
            f" after close {r['after_close_mib']:.0f} MiB"
        )
    for e in (res["client_errors"] + res["server_errors"])[:8]:
        print(f"    error: {e[:200]}")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="20 + 4 sessions, 2 rounds")
    ap.add_argument("--strict", action="store_true", help="exit 1 on a missed target")
    ap.add_argument("--rounds", type=int, default=None)
    ap.add_argument("--only", choices=["o2transit", "naive", "floor"], default=None)
    args = ap.parse_args()
    random.seed(18)
    n_lecture, n_case = (20, 4) if args.quick else (LECTURE_SESSIONS, CASE_SESSIONS)
    rounds = args.rounds or (2 if args.quick else ROUNDS)
    steps = 2 if args.quick else LECTURE_STEPS // 2
    print(
        f"load: {n_lecture} lecture + {n_case} case sessions, {rounds} rounds, clients in this "
        f"process (pid {os.getpid()}), servers in their own; shared machine, load "
        f"{os.getloadavg()[0]:.1f}"
    )
    kinds = [args.only] if args.only else ["o2transit", "naive", "floor"]
    results = {}
    for kind in kinds:
        r = rounds if kind == "o2transit" else 1  # the side rows: one round each
        results[kind] = asyncio.run(run(kind, n_lecture, n_case, r, steps))
        print_run(results[kind])
    if "o2transit" not in results:
        return 0
    ours = summary(results["o2transit"])
    for other in ("naive", "floor"):
        if other in results:
            o = summary(results[other])
            print(
                f"  o2transit / {other}: GET CPU {ours['get_cpu_s'] / o['get_cpu_s']:.2f}x,"
                f" session CPU {ours['cpu_per_session_s'] / o['cpu_per_session_s']:.2f}x,"
                f" p95 {ours['p95_s'] / o['p95_s']:.2f}x,"
                f" memory per idle session {ours['mib_per_idle_session'] / max(o['mib_per_idle_session'], 0.01):.2f}x"
            )
    missed = []
    if ours["errors"] > TARGETS["errors"]:
        missed.append(f"errors {ours['errors']} > 0")
    if not ours["p95_s"] < TARGETS["p95_s"]:
        missed.append(f"p95 {ours['p95_s']:.2f} s >= 1 s")
    if not ours["mib_per_idle_session"] < TARGETS["mib_per_idle_session"]:
        missed.append(f"{ours['mib_per_idle_session']:.2f} MiB per idle session >= 3")
    if not abs(ours["after_close_vs_baseline"]) <= TARGETS["after_close_vs_baseline"]:
        missed.append(f"after close {ours['after_close_vs_baseline'] * 100:+.0f} % of baseline")
    print("  targets: " + ("all met" if not missed else "MISSED: " + "; ".join(missed)))
    return 1 if (missed and args.strict) else 0


if __name__ == "__main__":
    sys.exit(main())
