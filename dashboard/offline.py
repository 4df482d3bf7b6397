"""Bokeh's scripts and styles written into a page, so exported pages open offline."""

from __future__ import annotations

import re

from bokeh.embed import file_html
from bokeh.resources import INLINE


def inline_resources() -> str:
    """Bokeh's scripts and styles as inline ``<style>``/``<script>`` elements only.

    Files referred to by address are left out: Panel adds its module shim and, in a served
    session, the stylesheets of loaded extensions (as CDN links) to Bokeh's lists; an
    exported page needs none of them and they could not load offline.
    """
    js = "".join(f"<script>{code}</script>\n" for code in INLINE.js_raw)
    css = "".join(f"<style>{code}</style>\n" for code in INLINE.css_raw)
    return css + js


_EXTERNAL_TAG = re.compile(
    r"""<(?:link|script)\b[^>]*\b(?:href|src)\s*=\s*["']?https?://[^>]*>(?:\s*</script>)?\s*""",
    re.IGNORECASE,
)


def offline_file_html(models, title: str) -> str:
    """``bokeh.embed.file_html`` with inline resources and no tag that loads from the network.

    In a served session Panel adds CDN links of loaded extensions to Bokeh's inline lists
    (see :func:`inline_resources`); those tags are removed, the inline code stays.
    """
    return _EXTERNAL_TAG.sub("", file_html(models, resources=INLINE, title=title))
