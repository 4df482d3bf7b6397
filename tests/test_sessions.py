"""Sessions that cost little (dashboard/sessions.py), checked through a served page.

A threaded server on a free port, spoken to by Bokeh's websocket protocol as a page does
(GET, live connection, document pulled, changes as PATCH-DOC): a plain GET builds only the
shell; the screen is built once, when the page asks for the document; a closed session's
document is freed; a page that vanishes in the middle of an update leaves no traceback.
Not timed: speed and memory are measured in ``bench/bench_load.py``.
"""

import asyncio
import gc
import json
import logging
import re
import socket
import time
import urllib.request
import uuid
import weakref

import panel as pn
import pytest
from bokeh.document import Document
from o2transit.dashboard import sessions
from o2transit.dashboard.app import SCREENS, server_options
from tornado.websocket import websocket_connect

LIFETIME_MS = 300


class Records(logging.Handler):
    def __init__(self):
        super().__init__(level=logging.WARNING)
        self.records = []

    def emit(self, record):
        self.records.append(record)


def _server(lifetimes: dict):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    options = {**server_options(), **lifetimes}
    server = pn.serve(
        dict(SCREENS),
        address="127.0.0.1",
        port=port,
        show=False,
        threaded=True,
        websocket_origin=[f"127.0.0.1:{port}"],
        **options,
    )
    url = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 90
    while True:
        try:
            urllib.request.urlopen(url + "/lecture", timeout=60).close()
            break
        except OSError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)
    yield url
    server.stop()
    server.join(timeout=5)


@pytest.fixture(scope="module")
def base():
    """A server that lets an unconnected session go after LIFETIME_MS."""
    lifetimes = {
        "check_unused_sessions_milliseconds": 100,
        "unused_session_lifetime_milliseconds": LIFETIME_MS,
    }
    yield from _server(lifetimes)


@pytest.fixture(scope="module")
def served():
    """A server with the dashboard's own session lifetimes (a page may load for seconds)."""
    yield from _server({})


def get_page(url: str, headers: dict | None = None) -> bytes:
    request = urllib.request.Request(url, headers=headers or {})
    with urllib.request.urlopen(request, timeout=60) as resp:
        return resp.read()


NAVIGATION = {"Sec-Fetch-Dest": "document", "Sec-Fetch-Mode": "navigate"}
"""What a browser sends with the GET of a page it opens (Fetch Metadata)."""


def frames(msgtype: str, content: dict) -> list[str]:
    return [json.dumps({"msgid": uuid.uuid4().hex, "msgtype": msgtype}), "{}", json.dumps(content)]


async def receive(ws) -> tuple[dict, dict]:
    header = json.loads(await ws.read_message())
    await ws.read_message()
    content = json.loads(await ws.read_message())
    for _ in range(2 * header.get("num_buffers", 0)):
        await ws.read_message()
    return header, content


def find(value, css: str):
    """The id of the first model in a document's JSON that has the CSS class ``css``."""
    if isinstance(value, dict):
        classes = value.get("attributes", {}).get("css_classes") if "attributes" in value else None
        if isinstance(classes, list) and css in classes:
            return value["id"]
        values = value.values()
    elif isinstance(value, list):
        values = value
    else:
        return None
    for v in values:
        found = find(v, css)
        if found is not None:
            return found
    return None


async def connect(url: str, headers: dict | None = None, wait_s: float = 0.0):
    """A page's live connection: returns the websocket and the pulled document's JSON
    (``wait_s`` between the GET and the connection, as a browser loads its scripts)."""
    body = get_page(url, headers)
    await asyncio.sleep(wait_s)
    token = re.search(rb'"token":\s*"([^"]+)"', body).group(1).decode()
    ws = await websocket_connect("ws" + url[4:].rstrip("/") + "/ws", subprotocols=["bokeh", token])
    await receive(ws)  # ACK
    for f in frames("PULL-DOC-REQ", {}):
        await ws.write_message(f)
    header, content = await receive(ws)
    assert header["msgtype"] == "PULL-DOC-REPLY", json.dumps(content)[:1500]
    ready = {"kind": "MessageSent", "msg_type": "bokeh_event"}
    ready["msg_data"] = {"type": "event", "name": "document_ready", "values": {}}
    for f in frames("PATCH-DOC", {"events": [ready]}):
        await ws.write_message(f)
    return ws, content["doc"]


def served_docs(path: str) -> list[Document]:
    return [
        o
        for o in gc.get_objects()
        if isinstance(o, Document)
        and o.session_context is not None
        and o.session_context.request is not None
        and o.session_context.request.path == path
    ]


def test_plain_get_builds_only_the_shell(base):
    before = dict(sessions.BUILDS)
    for path in ("/", "/lecture", "/ascent"):
        body = get_page(base + path)
        assert re.search(rb'"token":\s*"', body)  # a page with its session
    assert dict(sessions.BUILDS) == before  # three GETs, no screen built


def test_the_screen_is_built_once_when_the_page_connects(base):
    async def run():
        before = sessions.BUILDS["case"]
        ws, doc = await connect(base + "/")
        try:
            assert sessions.BUILDS["case"] == before + 1
            # the screen is in the pulled document itself: the numbers and the inputs
            assert find(doc, "o2-numbers") is not None
            assert find(doc, "o2-in-altitude_m") is not None
            assert sessions.OPENING_TEXT not in json.dumps(doc)
        finally:
            ws.close()

    asyncio.run(run())


def test_a_browser_page_is_built_ahead_while_it_loads_its_scripts(served):
    """A browser's GET (Fetch Metadata says it opens a document) starts the build while the
    page loads; it is built once, and the pulled document holds the whole screen."""
    before = sessions.BUILDS["lecture"]
    get_page(served + "/lecture", NAVIGATION)
    deadline = time.monotonic() + 30
    while sessions.BUILDS["lecture"] == before and time.monotonic() < deadline:
        time.sleep(0.05)
    assert sessions.BUILDS["lecture"] == before + 1  # without any connection

    async def run():
        start = sessions.BUILDS["case"]
        ws, doc = await connect(served + "/", NAVIGATION, wait_s=1.0)  # loading its scripts
        try:
            assert sessions.BUILDS["case"] == start + 1  # ahead, and not again on connection
            assert find(doc, "o2-numbers") is not None
            assert sessions.OPENING_TEXT not in json.dumps(doc)
        finally:
            ws.close()

    asyncio.run(run())


def test_a_page_connecting_before_its_build_ahead_is_built_once(served):
    async def run():
        start = sessions.BUILDS["case"]
        ws, doc = await connect(served + "/", NAVIGATION)  # at once: the build may not have run
        try:
            await asyncio.sleep(0.5)
            assert sessions.BUILDS["case"] == start + 1
            assert find(doc, "o2-numbers") is not None
        finally:
            ws.close()

    asyncio.run(run())


def test_without_a_server_a_factory_builds_the_whole_screen():
    page = SCREENS["/lecture"]()
    models = page.get_root(Document()).references()
    assert any("o2-lecture-caption" in getattr(m, "css_classes", ()) for m in models)
    assert not any(sessions.OPENING_TEXT in str(getattr(m, "text", "")) for m in models)


def test_a_closed_session_frees_its_document(base):
    known = {id(d) for d in served_docs("/lecture")}  # other tests' pages, other servers

    async def run():
        ws, _doc = await connect(base + "/lecture")
        await asyncio.sleep(0.2)
        docs = [weakref.ref(d) for d in served_docs("/lecture") if id(d) not in known]
        assert docs
        ws.close()
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline:
            await asyncio.sleep(0.3)
            gc.collect()
            if all(r() is None for r in docs):
                return []
        return [r() for r in docs if r() is not None]

    alive = asyncio.run(run())
    assert not alive, f"{len(alive)} closed session document(s) still held"


def test_a_page_that_never_connects_is_freed(base):
    known = {id(d) for d in served_docs("/lecture")}
    get_page(base + "/lecture")
    fresh = [weakref.ref(d) for d in served_docs("/lecture") if id(d) not in known]
    assert fresh and all(hasattr(r(), sessions._PENDING) for r in fresh)  # shell, build waiting
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline and any(r() is not None for r in fresh):
        time.sleep(0.3)
        gc.collect()
    assert all(r() is None for r in fresh), "a never-connected session's document is still held"


def test_a_page_vanishing_mid_update_leaves_no_traceback(base):
    log = Records()
    logging.getLogger().addHandler(log)

    async def run():
        pages = [await connect(base + "/") for _ in range(3)]
        for k, (ws, doc) in enumerate(pages):
            box = find(doc, "o2-in-altitude_m")
            change = {"kind": "ModelChanged", "model": {"id": box}, "attr": "value"}
            change["new"] = 1000.0 + 500 * k
            for f in frames("PATCH-DOC", {"events": [change]}):
                await ws.write_message(f)
            ws.stream.close()  # gone, no close handshake, while the answer is being made
        await asyncio.sleep(1.5 + LIFETIME_MS / 1000)

    try:
        asyncio.run(run())
    finally:
        logging.getLogger().removeHandler(log)
    bad = [
        r
        for r in log.records
        if r.exc_info or r.levelno >= logging.ERROR or "Traceback" in r.getMessage()
    ]
    assert not bad, [r.getMessage() for r in bad]


def test_sessions_share_a_lesson_until_its_file_changes(tmp_path):
    import shutil

    from o2transit.dashboard.lecture.state import LESSON_DIR, LectureState

    shutil.copy(LESSON_DIR / "rest-to-altitude.toml", tmp_path)
    first, second = LectureState(lesson_dir=tmp_path), LectureState(lesson_dir=tmp_path)
    assert first.lessons["rest-to-altitude"] is second.lessons["rest-to-altitude"]
    path = tmp_path / "rest-to-altitude.toml"
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("Resting adult at sea level", "Adult at rest, sea level"), "utf-8")
    third = LectureState(lesson_dir=tmp_path)
    assert third.lessons["rest-to-altitude"] is not first.lessons["rest-to-altitude"]
    assert third.lessons["rest-to-altitude"].steps[0].title == "Adult at rest, sea level"
