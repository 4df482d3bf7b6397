"""Exported pages carry Bokeh inline and load nothing from the network."""

import re

from bokeh.plotting import figure
from o2transit.dashboard.offline import inline_resources, offline_file_html

EXTERNAL = re.compile(r"""<(script|link|img|iframe)\b[^>]*(src|href)\s*=\s*["']?https?:""")


def test_offline_file_html_has_no_external_tags_and_keeps_bokeh():
    fig = figure(title="offline check")
    fig.line([0, 1, 2], [3, 4, 5])
    page = offline_file_html(fig, title="o2transit · offline check")
    assert not EXTERNAL.search(page)
    assert "Bokeh" in page and "offline check" in page
    assert '<script type="application/json"' in page


def test_external_tags_are_removed_inline_code_stays(monkeypatch):
    from o2transit.dashboard import offline

    injected = (
        '<head><link rel="stylesheet" href="https://cdn.example/x.css">\n'
        '<script type="module" src="https://cdn.example/y.js"></script>\n'
        '<script>var keep = "https://text-only";</script></head>'
    )
    monkeypatch.setattr(offline, "file_html", lambda *_a, **_k: injected)
    page = offline.offline_file_html(None, title="t")
    assert not EXTERNAL.search(page)
    assert 'var keep = "https://text-only";' in page


def test_inline_resources_are_inline_only():
    text = inline_resources()
    assert "<script>" in text and not EXTERNAL.search(text)
