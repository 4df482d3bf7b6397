"""The presenter's keys on the lecture page: a clicker or the arrows step through a lesson."""

from __future__ import annotations

from typing import ClassVar

import panel as pn
import param


class KeyCatcher(pn.reactive.ReactiveHTML):
    """Turns a presenter's keys into ``action`` + ``presses`` (Python watches ``presses``).

    ArrowRight, PageDown and Space mean next; ArrowLeft and PageUp mean back; Home and End
    mean the first and the last step. Keys typed in an input, a text area or a select, and
    keys on a focused slider, are left alone.
    """

    action = param.String(default="")
    presses = param.Integer(default=0)

    _template = '<div id="catcher" class="o2-keys" style="display:none"></div>'
    _scripts: ClassVar[dict[str, str]] = {
        "render": """
if (window._o2_keys) { document.removeEventListener("keydown", window._o2_keys); }
window._o2_keys = (e) => {
  const el = e.composedPath ? e.composedPath()[0] : e.target;
  const tag = el && el.tagName ? el.tagName.toUpperCase() : "";
  const typing = tag === "INPUT" || tag === "TEXTAREA" || tag === "SELECT";
  const sliding = el && el.getAttribute && el.getAttribute("role") === "slider";
  if (typing || sliding || (el && el.isContentEditable)) {
    return;
  }
  if (e.altKey || e.ctrlKey || e.metaKey) { return; }
  const map = {ArrowRight: "next", PageDown: "next", " ": "next", ArrowLeft: "back",
               PageUp: "back", Home: "first", End: "last"};
  const act = map[e.key];
  if (!act) { return; }
  e.preventDefault();
  data.action = act;
  data.presses = data.presses + 1;
};
document.addEventListener("keydown", window._o2_keys);
"""
    }
