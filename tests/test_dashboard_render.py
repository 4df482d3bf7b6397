"""Render smoke tests: every view builds a Bokeh root; a threaded server answers HTTP 200."""

import socket
import time
import urllib.request

import panel as pn
import pytest
from bokeh.document import Document
from o2transit.dashboard.app import PortBusyError, _is_loopback, create_app, serve
from o2transit.dashboard.case.figures import CascadePlot, CurvePlot
from o2transit.dashboard.case.formatting import fmt
from o2transit.dashboard.case.state import CaseState
from o2transit.dashboard.case.views import SCENARIO_PROMPT, CaseControls, InputPanel, NumbersTable
from o2transit.dashboard.look import CAUTION


@pytest.mark.parametrize("view", [InputPanel, CurvePlot, CascadePlot, NumbersTable, CaseControls])
def test_view_renders_root(view):
    state = CaseState()
    root = view(state).__panel__().get_root(Document())
    assert root is not None


def test_numbers_table_shows_flags_units_and_deltas():
    state = CaseState()
    table = NumbersTable(state)
    html = table.__panel__().object
    assert "PaO2" in html and "mmHg" in html and "Δ vs baseline" not in html
    state.keep_baseline()
    state.altitude_m = 5000.0
    html = table.__panel__().object
    assert "Δ vs baseline" in html and "▼ low" in html
    state.pressure_unit = "kPa"
    assert "kPa" in table.__panel__().object


def test_curve_plot_sources_follow_state():
    state = CaseState()
    plot = CurvePlot(state)
    y0 = list(plot._points.data["y"])
    state.altitude_m = 5000.0
    assert plot._points.data["y"][0] < y0[0]
    assert len(plot._base.data["x"]) == 0
    state.keep_baseline()
    assert len(plot._base.data["x"]) == len(plot._now.data["x"])
    assert "extracted per L" in plot._note.data["text"][0]
    state.pressure_unit = "kPa"
    labels = [item.label.value for item in plot._fig.legend.items]
    assert any("PCO2 5.3 kPa" in label for label in labels), labels


def test_template_builds_document_with_caution():
    doc = Document()
    create_app().server_doc(doc)
    assert doc.roots
    assert CAUTION.startswith(
        "o2transit is an aid for education and planning, not a medical device."
    )


def test_format_shows_no_negative_zero():
    assert fmt(-0.04, 1, signed=True) == "0.0"
    assert fmt(-0.06, 1, signed=True) == "−0.1"
    assert fmt(2.0, 0, signed=True) == "+2"
    assert fmt(None, 1) == ""


def test_loopback_detection():
    assert _is_loopback("127.0.0.1") and _is_loopback("localhost") and _is_loopback("::1")
    assert not _is_loopback("0.0.0.0") and not _is_loopback("192.168.1.10")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_threaded_server_answers_200(capsys):
    port = _free_port()
    server = serve(port=port, show=False, threaded=True)
    try:
        assert f"http://127.0.0.1:{port}/" in capsys.readouterr().out
        # Generous timeouts: a GET builds a whole session, which on 2 busy cores (a browser
        # test or a build beside this run) can take several seconds; only a refused
        # connection is retried, so a slow answer is waited for, not asked for again.
        deadline = time.monotonic() + 60
        while True:
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=60) as r:
                    assert r.status == 200
                    assert "o2transit" in r.read().decode()
                    break
            except OSError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.1)
    finally:
        server.stop()
        server.join(timeout=5)


def test_non_loopback_address_warns(capsys, monkeypatch):
    monkeypatch.setattr(pn, "serve", lambda *a, **k: k)
    port = _free_port()
    kwargs = serve(port=port, address="0.0.0.0", show=False)
    out = capsys.readouterr().out
    assert "reachable from the network" in out
    # an address a browser can open: this computer's, and this machine's name for the others
    assert f"dashboard at http://127.0.0.1:{port}/" in out and "0.0.0.0:" not in out.split("\n")[0]
    assert f"http://{socket.gethostname()}:{port}/" in out
    # other machines open the page under names this one cannot list: every origin is allowed
    assert kwargs["websocket_origin"] == ["*"]
    loopback = serve(port=port, address="127.0.0.1", show=False)
    assert loopback["websocket_origin"] == [f"127.0.0.1:{port}", f"localhost:{port}"]


def test_busy_port_is_one_line_before_anything_is_announced(capsys, monkeypatch):
    monkeypatch.setattr(pn, "serve", lambda *a, **k: pytest.fail("served on a busy port"))
    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen()
        port = taken.getsockname()[1]
        with pytest.raises(PortBusyError, match=f"port {port} on 127.0.0.1 is already in use"):
            serve(port=port, show=False)
    assert capsys.readouterr().out == ""


def test_scenario_picker_opens_on_a_prompt_and_load_waits_for_a_choice():
    controls = CaseControls(CaseState())
    assert controls._picker.value == "" and controls._picker.labels[0] == SCENARIO_PROMPT
    assert controls._load.disabled
    controls._picker.value = controls._picker.values[1]
    assert not controls._load.disabled
