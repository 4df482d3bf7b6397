"""Shareable page state: the case inputs in the page address (``?altitude_m=4500&hb_g_dl=9``).

Query keys are the scenario files' key names, which are also :class:`CaseState`'s input
names (SI-style mmHg and g/dL keys; the files' ``_kpa``/``_g_l``/``_mmol_l`` variants are
read too), plus the display choices ``pressure_unit`` and ``hb_unit``. On load each key is
checked on its own: a refused value falls back to its default and a visible message names the
field, the value, the allowed range and the unit; the valid ones are applied together through
:meth:`CaseState.apply_inputs`. On every change the address is rewritten (only values that
differ from the defaults), once, shortly after the last of a burst of changes
(:class:`dashboard.responsive.Quiet`), so the page can be bookmarked or shared at any moment.

Hostile or careless addresses get the notice, never a server error: a value is a number only
if it is written as one in ASCII (``0.21``, ``-5``, ``4.5e3``) and is finite; a key given twice
is used neither time; a pair the scenario files refuse together (pH with base excess, altitude
with barometric pressure: :data:`model.scenario.EXCLUSIVE_INPUTS`) is refused here too, both
values keeping their defaults. Panel's own address parser, which every served page runs and
which raised on ``?fio2=%C2%B2`` or a 5,000-digit number, is replaced on import by one that
keeps such a value as text (:func:`_tolerant_parse_query`).

The pure half (:func:`case_query`, :func:`check_case_query`, :func:`parse_query_string`,
:func:`case_link`) has no Panel in it and is tested alone; :func:`bind_url` wires it to a served page, and
:func:`read_query` / :func:`write_query` are the small generic helpers other screens use for
their own keys.
"""

from __future__ import annotations

import html
import math
import re
from collections import Counter
from collections.abc import Iterable
from urllib.parse import parse_qsl, urlencode

import panel as pn
import panel.io.location
import param
from panel.util import parse_query as _panel_parse_query

from ..model.dissociation import SHORT_NAMES
from ..model.scenario import SCENARIO_UNIT_VARIANTS, exclusive_pairs
from .case.formatting import MAX_SHOWN_CHARS, quoted
from .case.state import CASE_INPUTS, CURVE_LABELS, CaseState
from .responsive import Quiet

DISPLAY_KEYS = ("pressure_unit", "hb_unit")
# Mode switches: apply_inputs infers them from which keys are given, so the address leaves
# them out; they are still accepted when a hand-written link names them.
_MODE_KEYS = ("use_pressure_override", "acid_base_input", "use_p50_override")
# Scenario-file variants in other units: key -> (input name, factor to the input's unit, unit);
# the scenario files' own table, so a link and a file accept the same keys.
UNIT_VARIANTS = SCENARIO_UNIT_VARIANTS
CASE_KEYS = (*CASE_INPUTS, *DISPLAY_KEYS)
"""Every key the case screen owns in the address (unit variants are read, never written)."""

_TRUE, _FALSE = ("true", "1", "yes", "on"), ("false", "0", "no", "off")
_CURVE_NAMES = {**{v: v for v in CURVE_LABELS.values()}, **SHORT_NAMES}
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?", re.ASCII)


def _tolerant_parse_query(query: str) -> dict:
    """Panel's ``parse_query`` for ``Location.query_params``, except that a value it cannot
    convert (``int('²')``, a number of more than 4,300 digits) stays text instead of raising
    inside every page's session. Our screens read the raw address themselves."""
    try:
        return _panel_parse_query(query)
    except ValueError:
        out: dict = {}
        for key, value in parse_qsl(query[1:]):
            try:
                out.update(_panel_parse_query("?" + urlencode({key: value})))
            except ValueError:
                out[key] = value
        return out


panel.io.location.parse_query = _tolerant_parse_query


def parse_number(raw: str) -> float | None:
    """The finite number ``raw`` writes in plain ASCII, else None.

    Python's ``float`` also takes ``inf``, ``nan``, ``1_000``, other scripts' digits and
    surrounding spaces; an address value is a number only when written as one.

    >>> parse_number("4.5e3"), parse_number("-5"), parse_number(" 1")
    (4500.0, -5.0, None)
    >>> [parse_number(t) for t in ("inf", "nan", "1e999", "", "²", "١", "1_0")]
    [None, None, None, None, None, None, None]
    """
    if len(raw) > 400 or not _NUMBER.fullmatch(raw):
        return None
    number = float(raw)
    return number if math.isfinite(number) else None


def parse_query_string(search: str) -> dict[str, str]:
    """``'?a=1&b=x'`` -> ``{'a': '1', 'b': 'x'}`` (raw text; the last of a repeated key wins;
    :func:`split_query` drops repeated keys with a message instead).

    >>> parse_query_string("?altitude_m=4500&hb_g_dl=9")
    {'altitude_m': '4500', 'hb_g_dl': '9'}
    """
    return dict(parse_qsl(search.lstrip("?"), keep_blank_values=True))


def split_query(search: str) -> tuple[dict[str, str], list[str]]:
    """(pairs, messages): the address pairs, less every key given more than once, and a
    message for each such key (which value was meant cannot be known, so neither is used).

    >>> split_query("?fio2=0.3&fio2=0.4&hb_g_dl=9")
    ({'hb_g_dl': '9'}, ["fio2 is given 2 times ('0.3', '0.4'); give it once; it is not used"])
    """
    items = parse_qsl(search.lstrip("?"), keep_blank_values=True)
    counts = Counter(key for key, _ in items)
    messages = [
        f"{quoted(key)[1:-1]} is given {n} times "
        f"({', '.join(quoted(v) for k, v in items if k == key)}); give it once; it is not used"
        for key, n in counts.items()
        if n > 1
    ]
    return {k: v for k, v in items if counts[k] == 1}, messages


def _text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return format(value, ".10g")
    return str(value)


def _field_unit(label: str) -> tuple[str, str]:
    """'Hb (g/dL)' -> ('Hb', 'g/dL'); '(-)' and '(fraction ...)' give no unit."""
    if not label.endswith(")"):
        return label, ""
    field, unit = label.rsplit(" (", 1)
    unit = unit[:-1]
    return field, "" if unit in ("-",) or unit.startswith("fraction") else unit


def _shown(value, unit: str = "") -> str:
    if value is None:
        return "none"
    text = f"{value:.4g}" if isinstance(value, float) else _text(value)
    return f"{text} {unit}".strip()


def case_query(state: CaseState) -> dict[str, str]:
    """The address pairs that give back ``state``'s case and display choices.

    Only values that differ from their defaults are written; a value that only matters in
    one mode (barometric pressure, base excess, the standard P50) is written whenever that
    mode is on, and never otherwise, so reading the pairs back selects the same modes.
    """
    out: dict[str, str] = {}
    forced = {
        "barometric_pressure_mmhg": state.use_pressure_override,
        "base_excess_mmol_l": state.acid_base_input != "pH",
        "p50_mmhg": state.use_p50_override,
    }
    for name in (*CASE_INPUTS, *DISPLAY_KEYS):
        if name in _MODE_KEYS:
            continue
        value = getattr(state, name)
        if name in forced:
            if forced[name]:
                out[name] = _text(value)
            continue
        if name == "ph" and state.acid_base_input != "pH":
            continue
        if name == "altitude_m" and state.use_pressure_override:
            continue  # the pressure is given; a file or link names one of the two
        if value is None or value == state.param[name].default:
            continue
        out[name] = _text(value)
    return out


def _check_one(state: CaseState, key: str, raw: str):
    """(input name, value) for one address pair, or raise ValueError with a reader's message."""
    name, factor, unit_shown = key, 1.0, None
    if key in UNIT_VARIANTS:
        name, factor, unit_shown = UNIT_VARIANTS[key]
    p = state.param[name]
    field, unit = _field_unit(p.label or name)
    default = p.default
    if unit_shown is not None:
        unit = unit_shown
        default = None if default is None else default / factor
    fallback = f"the default {_shown(default, unit)} is used"
    if isinstance(p, param.Boolean):
        word = raw.strip().lower()
        if word in _TRUE or word in _FALSE:
            return name, word in _TRUE
        raise ValueError(f"{field} = {quoted(raw)} must be true or false; {fallback}")
    if isinstance(p, param.Selector):
        choices = list(p.objects.values()) if isinstance(p.objects, dict) else list(p.objects)
        if name == "curve":
            value = _CURVE_NAMES.get(raw.strip().lower())
        else:
            lookup = {str(c).lower().replace(" ", "_"): c for c in choices}
            value = lookup.get(raw.strip().lower().replace(" ", "_"))
        if value is None:
            raise ValueError(
                f"{field} = {quoted(raw)} is not one of {', '.join(map(str, choices))}; {fallback}"
            )
        return name, value
    lo, hi = p.bounds
    lo, hi = lo / factor, hi / factor
    span = f"{lo:.4g}–{hi:.4g}{' ' + unit if unit else ''}"
    number = parse_number(raw)
    if number is None:
        raise ValueError(f"{field} = {quoted(raw)} is not a number in {span}; {fallback}")
    if not lo <= number <= hi:
        shown = raw if len(raw) <= MAX_SHOWN_CHARS else quoted(raw)
        raise ValueError(f"{field} = {shown} is outside the allowed range {span}; {fallback}")
    return name, min(max(number * factor, p.bounds[0]), p.bounds[1])


def check_case_query(
    state: CaseState, pairs: dict[str, str], other_keys: Iterable[str] = ()
) -> tuple[dict, dict, list[str]]:
    """Check address pairs key by key.

    Returns ``(inputs, display, messages)``: the case inputs that passed (for
    :meth:`CaseState.apply_inputs`), the display choices that passed, and one message per
    refused or unknown key. ``other_keys`` belong to another part of the page and are skipped.
    A pair of inputs that exclude each other (:func:`model.scenario.exclusive_pairs`) is
    refused whole: neither is used.
    """
    inputs: dict = {}
    display: dict = {}
    messages: list[str] = []
    skip = set(other_keys)
    for key, raw in pairs.items():
        if key in skip:
            continue
        if key not in CASE_KEYS and key not in UNIT_VARIANTS:
            messages.append(f"{quoted(key)} is not an input of this page; ignored")
            continue
        try:
            name, value = _check_one(state, key, raw)
        except ValueError as exc:
            messages.append(str(exc))
            continue
        (display if name in DISPLAY_KEYS else inputs)[name] = value
    given = {UNIT_VARIANTS[k].key if k in UNIT_VARIANTS else k: k for k in pairs if k not in skip}
    for _table, first, second in exclusive_pairs(given):
        for key in (first, second):
            inputs.pop(UNIT_VARIANTS[key].key if key in UNIT_VARIANTS else key, None)
        messages.append(
            f"{first} and {second} are both given; keep one (neither is used: a scenario "
            "file is refused for the same pair)"
        )
    return inputs, display, messages


def restore_case(
    state: CaseState, pairs: dict[str, str], other_keys: Iterable[str] = ()
) -> list[str]:
    """Make the address pairs the live case; return the messages for what was not used.

    The pairs that pass their own checks are applied together. If the model refuses that
    combination, they are taken one at a time, in the order given, keeping each that still
    solves; every one dropped gets a message.
    """
    inputs, display, messages = check_case_query(state, pairs, other_keys)
    if display:
        state.param.update(**display)
    if not inputs:
        return messages
    name = "opened from the page address"
    if state.apply_inputs(inputs, name=name):
        return messages
    kept: dict = {}
    for key, value in inputs.items():
        trial = {**kept, key: value}
        if state.apply_inputs(trial, name=name):
            kept = trial
        else:
            why = state.error_message.removeprefix("Case not applied: ")
            messages.append(f"{key} = {_text(value)} not applied with the rest: {why}")
    if not kept:
        state.apply_inputs({})
    state.error_message = ""
    return messages


def case_link(inputs: dict, path: str = "/") -> str:
    """Address of the case screen showing ``inputs`` (scenario key names), for links from
    other screens.

    Raises ValueError (the case screen's message) when the case would be refused.

    >>> case_link({"altitude_m": 4500.0, "hb_g_dl": 9.0})
    '/?altitude_m=4500&hb_g_dl=9'
    """
    state = CaseState()
    if not state.apply_inputs(inputs):
        raise ValueError(state.error_message)
    query = case_query(state)
    return f"{path}?{urlencode(query)}" if query else path


# ---------------------------------------------------------------------- served page
def _search() -> str:
    loc = pn.state.location
    return (loc.search or "") if loc is not None else ""


def read_query() -> dict[str, str]:
    """Raw key -> text pairs of the current page's address; {} outside a served page.

    A key given more than once is left out; :func:`show_url_messages` says so."""
    return split_query(_search())[0]


def write_query(values: dict[str, str | None], owned: Iterable[str]) -> None:
    """Rewrite the page address: keys in ``owned`` take ``values`` (absent or None: removed);
    keys owned by other parts of the page are kept as they are."""
    loc = pn.state.location
    if loc is None:
        return
    owned = set(owned)
    pairs = {k: v for k, v in parse_query_string(loc.search or "").items() if k not in owned}
    pairs.update({k: v for k, v in values.items() if v is not None})
    search = f"?{urlencode(pairs)}" if pairs else ""
    if search != (loc.search or ""):
        loc.search = search


def url_message_pane() -> pn.pane.HTML:
    """The notice listing address values that were not used (hidden when there are none)."""
    return pn.pane.HTML(
        "",
        visible=False,
        css_classes=["o2-url-msg"],
        sizing_mode="stretch_width",
        styles={
            "background": "#fdecea",
            "color": "#7a1414",
            "padding": "4px 10px",
            "border-left": "5px solid #9a1b1b",
            "font-size": "14px",
        },
    )


def show_url_messages(pane: pn.pane.HTML, messages: list[str]) -> None:
    """Show ``messages`` (and one for each key the address repeats) in ``pane``; hide it when
    there are none."""
    messages = [*split_query(_search())[1], *messages]
    items = "".join(f"<li>{html.escape(m)}</li>" for m in messages)
    pane.object = f"<b>Some values in the page address were not used:</b><ul>{items}</ul>"
    pane.visible = bool(messages)


def bind_url(state: CaseState, template=None, other_keys: Iterable[str] = ()) -> pn.pane.HTML:
    """Restore ``state`` from the page address now and keep the address in step with it.

    The notice for refused values is put at the top of ``template.main`` (when given) and
    returned; it hides itself at the user's next change, once the address holds the case
    again. ``other_keys`` are address keys another part of the page owns.
    """
    pane = url_message_pane()
    other_keys = tuple(other_keys)
    messages = restore_case(state, read_query(), other_keys)
    show_url_messages(pane, messages)
    owned = set(CASE_KEYS) | set(UNIT_VARIANTS) | {k for k in read_query() if k not in other_keys}

    def sync(*_events) -> None:
        write_query(case_query(state), owned)

    later = Quiet(sync)  # written once, shortly after the last change of a burst

    def changed(*events) -> None:
        later()
        if pane.visible:
            pane.visible = False

    state.param.watch(changed, list(CASE_KEYS))
    # The browser sends its own address when the page connects; rewrite it after that.
    if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
        pn.state.onload(sync)
    else:
        sync()
    if template is not None:
        template.main.insert(0, pane)
    return pane
