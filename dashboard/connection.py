"""Connection lost: a page whose server has gone says so at once and never looks current.

A number that looks current but is not is the worst thing a bedside tool can show. Bokeh's
browser side fires a ``connection_lost`` event on the page's document as soon as the live
connection (a websocket) closes; every served page of o2transit answers it, in the browser,
with no help from the server (which is gone):

* a red banner across the top (``.o2-connection-lost``, ``role=alert``): the connection is
  lost, the numbers shown are stale, the inputs are locked;
* every input, list, box and button of the page disabled, the page dimmed under a veil that
  takes no clicks, and every value of the numbers tables struck through;
* the server asked for a small file every :data:`PROBE_S` seconds; once it answers, the page
  is reloaded (the banner's "Reload now" does it at once).

The page address carries the screen's state (:mod:`dashboard.urlstate`), so the reload gives
back the case. What the address may not hold yet is the last change: one typed just before the
server died (the address is rewritten a moment after a change), or typed and not yet sent.
So every field the user edited is written to the tab's ``sessionStorage`` when the connection
is lost (its page's CSS class, ``o2-in-fio2``, and what the field showed), and after the reload
each one that differs from what the page opened with is typed in again; a green line says
which. Bokeh's own reconnection is not used: a restarted server does not know the old session,
and a fresh page is the only state both sides agree on.

:func:`install` (once per server process; ``dashboard.app`` does it) adds this to every
session's document, so each screen has it with no change of its own; :func:`watch` adds it to
one document.
"""

from __future__ import annotations

import panel as pn
from bokeh.models import CustomJS

__all__ = ["BANNER_TEXT", "PROBE_S", "install", "watch"]

BANNER_TEXT = "Connection to the o2transit server lost."
STALE_TEXT = (
    "the numbers shown are stale (from before the loss) and the inputs are locked until the "
    "server answers again; the page then reloads itself and applies again what you typed."
)
PROBE_S = 1.0
"""How often a page without its server asks whether the server is back [s]."""
RESTORE_WAIT_S = 30.0
"""How long a reloaded page waits for its fields to appear before giving up on them [s]."""
_STORAGE_PREFIX = "o2transit-unsent:"

_JS = r"""
const doc = cb_obj;
if (window.__o2Connection) { return; }
window.__o2Connection = true;
const STORE = STORAGE_PREFIX + location.pathname;
const FIELDS = "input:not([type=file]), select, textarea";  // a file cannot be typed again
const CONTROLS = "input, select, textarea, button";

function* walk(root) {
  for (const el of root.querySelectorAll("*")) {
    yield el;
    if (el.shadowRoot) { yield* walk(el.shadowRoot); }
  }
}
function hostClass(host) {
  const mine = [...host.classList].filter(c => c.startsWith("o2-"));
  return mine.find(c => c.startsWith("o2-in-")) || mine[mine.length - 1] || null;
}
// the page-level name of a field: its nearest host with an o2- class, and which of them
function fieldKey(el) {
  let node = el;
  while (node) {
    const host = node.getRootNode().host;
    if (!host) { return null; }
    const cls = hostClass(host);
    if (cls) {
      const same = [...walk(document)].filter(h => h.classList && h.classList.contains(cls));
      const inner = [...(host.shadowRoot ? walk(host.shadowRoot) : [])].filter(f => f.matches(FIELDS));
      return {cls: cls, index: same.indexOf(host), field: inner.indexOf(el)};
    }
    node = host;
  }
  return null;
}
function findField(key) {
  const hosts = [...walk(document)].filter(h => h.classList && h.classList.contains(key.cls));
  const host = hosts[key.index];
  if (!host || !host.shadowRoot) { return null; }
  return [...walk(host.shadowRoot)].filter(f => f.matches(FIELDS))[key.field] || null;
}
function shown(el) { return el.type === "checkbox" || el.type === "radio" ? el.checked : el.value; }
function label(key) { return key.cls.replace(/^o2-(in-)?/, ""); }

const edited = new Map();  // field -> its page-level name, found at its first edit
document.addEventListener("input", (e) => {
  const el = e.composedPath()[0];
  if (!lost && e.isTrusted && el && el.matches && el.matches(FIELDS) && !edited.has(el)) {
    edited.set(el, fieldKey(el));
  }
}, true);

let lost = false;
const locked = [];
const struck = [];
let veil = null, banner = null;

function save() {
  const fields = [];
  for (const [el, key] of edited) {
    if (key) { fields.push({...key, value: shown(el)}); }
  }
  if (fields.length) {
    sessionStorage.setItem(STORE, JSON.stringify({search: location.search, fields: fields}));
  }
}
function lock() {
  for (const el of walk(document)) {
    if (el.matches(CONTROLS) && !el.disabled && !(banner && banner.contains(el))) {
      el.disabled = true; locked.push(el);
    }
    if (el.matches("td.val, .o2-value")) { el.style.textDecoration = "line-through"; struck.push(el); }
    if (el.classList && el.classList.contains("noUi-target")) { el.setAttribute("disabled", ""); locked.push(el); }
  }
}
function show() {
  veil = document.createElement("div");
  veil.className = "o2-connection-veil";
  veil.style.cssText = "position:fixed;inset:0;z-index:99998;background:rgba(255,255,255,.62);" +
    "backdrop-filter:grayscale(1);cursor:not-allowed";
  banner = document.createElement("div");
  banner.className = "o2-connection-lost";
  banner.setAttribute("role", "alert");
  banner.style.cssText = "position:fixed;top:0;left:0;right:0;z-index:99999;background:#9a1b1b;" +
    "color:#fff;font:600 16px 'Liberation Sans',Arial,sans-serif;padding:10px 16px;" +
    "box-shadow:0 2px 8px rgba(0,0,0,.35);display:flex;gap:14px;align-items:center;flex-wrap:wrap";
  const text = document.createElement("span");
  text.innerHTML = "<b>" + BANNER + "</b> <span class='o2-connection-stale'><b>STALE</b>: " + STALE + "</span>";
  const status = document.createElement("span");
  status.className = "o2-connection-status";
  status.style.cssText = "font-weight:400;font-size:14px;opacity:.9";
  status.textContent = "Waiting for the server…";
  const again = document.createElement("button");
  again.className = "o2-connection-reload";
  again.textContent = "Reload now";
  again.style.cssText = "font:600 14px inherit;padding:3px 12px;border:0;border-radius:3px;" +
    "background:#fff;color:#9a1b1b;cursor:pointer";
  again.addEventListener("click", () => { location.reload(); });
  banner.append(text, status, again);
  document.body.append(veil, banner);
  return status;
}
function probeUrl() {
  const s = [...document.scripts].find(x => x.src && x.src.includes("/static/"));
  return s ? s.src : location.href;
}
function waitForServer(status) {
  const url = probeUrl();
  let tries = 0;
  const probe = () => {
    tries += 1;
    fetch(url, {method: "HEAD", cache: "no-store"}).then(() => {
      status.textContent = "The server is back: reloading…";
      location.reload();
    }).catch(() => {
      status.textContent = "Waiting for the server… (asked " + tries + (tries === 1 ? " time)" : " times)");
      setTimeout(probe, PROBE_MS);
    });
  };
  setTimeout(probe, PROBE_MS);
}
doc.on_event("connection_lost", () => {
  if (lost) { return; }
  lost = true;
  save();
  const status = show();
  lock();
  document.documentElement.classList.add("o2-disconnected");
  waitForServer(status);
});

// after a reload: type again what the address did not carry
const saved = sessionStorage.getItem(STORE);
if (saved) {
  let state = null;
  try { state = JSON.parse(saved); } catch (err) { state = null; }
  if (state && state.search !== location.search) { state = null; }  // another case was opened
  const started = Date.now();
  const restore = () => {
    if (!state || !Array.isArray(state.fields)) { sessionStorage.removeItem(STORE); return; }
    // the screen is built in one message once the page has connected: wait for its first
    // field, then take every field there is (one on a tab never opened stays untyped)
    const found = state.fields.map(f => [f, findField(f)]);
    if (found.every(([, el]) => el === null) && Date.now() - started < RESTORE_MS) {
      setTimeout(restore, 200);
      return;
    }
    sessionStorage.removeItem(STORE);
    const applied = [];
    for (const [f, el] of found) {
      if (el === null || el.disabled || shown(el) === f.value) { continue; }
      if (el.type === "checkbox" || el.type === "radio") { el.checked = f.value; } else { el.value = f.value; }
      el.dispatchEvent(new Event("input", {bubbles: true, composed: true}));
      el.dispatchEvent(new Event("change", {bubbles: true, composed: true}));
      applied.push(label(f) + " = " + f.value);
    }
    if (applied.length) {
      const note = document.createElement("div");
      note.className = "o2-connection-restored";
      note.setAttribute("role", "status");
      note.style.cssText = "position:fixed;bottom:12px;left:12px;z-index:99999;background:#e6f4ea;" +
        "color:#1e4620;border-left:5px solid #2e7d32;padding:8px 14px;" +
        "font:14px 'Liberation Sans',Arial,sans-serif;box-shadow:0 1px 6px rgba(0,0,0,.25)";
      note.textContent = "Connected again. Applied again what was not sent before the connection " +
        "was lost: " + applied.join("; ") + ".";
      document.body.append(note);
      setTimeout(() => note.remove(), 15000);
    }
  };
  setTimeout(restore, 200);
}
"""


def _code() -> str:
    import json

    return (
        f"const STORAGE_PREFIX = {json.dumps(_STORAGE_PREFIX)};\n"
        f"const BANNER = {json.dumps(BANNER_TEXT)};\n"
        f"const STALE = {json.dumps(STALE_TEXT)};\n"
        f"const PROBE_MS = {int(PROBE_S * 1000)};\n"
        f"const RESTORE_MS = {int(RESTORE_WAIT_S * 1000)};\n" + _JS
    )


def watch(doc) -> None:
    """Give the served page of Bokeh document ``doc`` its connection-lost state."""
    doc.js_on_event("document_ready", CustomJS(code=_code()))


def _session_created(context) -> None:
    watch(context._document)


_installed = False


def install() -> None:
    """Once per server process: every session's page gets :func:`watch`. Idempotent."""
    global _installed
    if not _installed:
        pn.state.on_session_created(_session_created)
        _installed = True
