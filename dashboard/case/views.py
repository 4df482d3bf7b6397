"""Thin Panel views over :class:`dashboard.case.state.CaseState`: inputs, numbers, controls.

Views build widgets once and refresh them from the state; they format numbers and never
compute physiology (the curve and cascade figures are in :mod:`.figures`). Every
interactive or read-back element carries a stable ``o2-*`` CSS class for tests.
"""

from __future__ import annotations

import html
from pathlib import Path

import panel as pn

from ..bedside.wording import in_display_units
from ..look import ERROR_STYLE, TABLE_CSS
from ..responsive import held, later_part
from .formatting import fmt
from .state import CaseState


class NumberInput(pn.viewable.Viewer):
    """A typed numeric input bound to one state parameter, in display units.

    A value outside the bounds is refused: the field keeps its last valid value and an
    inline message names the field, the allowed range and the unit (the message pane is
    made at the first refusal: twenty empty panes would slow every page load).
    """

    def __init__(self, state: CaseState, name: str, **params):
        super().__init__(**params)
        self._state, self._name = state, name
        p = state.param[name]
        self._widget = pn.widgets.FloatInput(
            label=state.display_label(name),
            value=state.display_value(name),
            step=p.step or 0.1,
            placeholder="optional" if p.allow_None else "",
            css_classes=["o2-input", f"o2-in-{name}"],
            sizing_mode="stretch_width",
        )
        self._message: pn.pane.HTML | None = None  # made at the first refusal
        self._syncing = False
        self._widget.param.watch(self._typed, "value")
        state.param.watch(self._refresh, [name, "pressure_unit", "hb_unit"])
        self._layout = pn.Column(self._widget, sizing_mode="stretch_width", margin=0)

    def _typed(self, event) -> None:
        if self._syncing:
            return
        if self._state.set_display_input(self._name, event.new):
            self._say("")
            return
        self._say(html.escape(self._state.error_message))
        self._refresh()

    def _say(self, text: str) -> None:
        """Show (or hide, for "") the inline message under the field."""
        if self._message is None:
            if not text:
                return
            with later_part():
                self._message = pn.pane.HTML(
                    "",
                    visible=False,
                    css_classes=["o2-input-msg", f"o2-msg-{self._name}"],
                    styles={"color": "#9a1b1b", "font-size": "13px"},
                    margin=(0, 10, 6, 10),
                )
            self._layout.append(self._message)
        self._message.object, self._message.visible = text, bool(text)

    def show(self, visible: bool) -> None:
        self._layout.visible = visible

    def _refresh(self, *_events) -> None:
        self._syncing = True
        try:
            self._widget.label = self._state.display_label(self._name)
            self._widget.value = self._state.display_value(self._name)
        finally:
            self._syncing = False

    def __panel__(self):
        return self._layout


class InputPanel(pn.viewable.Viewer):
    """Case inputs grouped along the oxygen path."""

    def __init__(self, state: CaseState, **params):
        super().__init__(**params)
        self._state = state
        s = state.param

        def num(name):
            return NumberInput(state, name)

        def choice(p, widget=pn.widgets.Select):
            w = widget.from_param(p, css_classes=[f"o2-in-{p.name}"], sizing_mode="stretch_width")
            if widget is pn.widgets.Select:
                return w
            # Button groups show no name of their own.
            caption = pn.pane.HTML(
                html.escape(p.label), margin=(4, 10, -6, 10), styles={"font-size": "13px"}
            )
            return pn.Column(caption, w, margin=0, sizing_mode="stretch_width")

        def toggle(p):
            return pn.widgets.Checkbox.from_param(p, css_classes=[f"o2-in-{p.name}"])

        self._pb = num("barometric_pressure_mmhg")
        self._altitude = num("altitude_m")
        self._ph, self._be = num("ph"), num("base_excess_mmol_l")
        self._p50 = num("p50_mmhg")
        groups = [
            (
                "Air",
                [
                    self._altitude,
                    toggle(s.use_pressure_override),
                    self._pb,
                    choice(s.pressure_model, pn.widgets.RadioButtonGroup),
                    num("fio2"),
                ],
            ),
            (
                "Lungs",
                [
                    num("paco2_mmhg"),
                    num("shunt_fraction"),
                    num("diffusing_capacity_ml_min_mmhg"),
                    num("capillary_volume_ml"),
                    num("rq"),
                ],
            ),
            (
                "Blood",
                [
                    num("hb_g_dl"),
                    num("temperature_c"),
                    choice(s.acid_base_input, pn.widgets.RadioButtonGroup),
                    self._ph,
                    self._be,
                    num("dpg_mmol_l"),
                    num("cohb_fraction"),
                    num("methb_fraction"),
                    choice(s.curve),
                    toggle(s.use_p50_override),
                    self._p50,
                ],
            ),
            (
                "Circulation & demand",
                [
                    num("cardiac_output_l_min"),
                    num("vo2_ml_min"),
                    toggle(s.vo2_temperature_scaling),
                    num("height_cm"),
                    num("weight_kg"),
                ],
            ),
        ]
        cards = [
            pn.Card(
                *items,
                title=title,
                collapsed=False,
                sizing_mode="stretch_width",
                css_classes=[f"o2-group-{title.split()[0].lower()}"],
                header_background="#e6efee",
                margin=(4, 2),
            )
            for title, items in groups
        ]
        self._layout = pn.Column(*cards, sizing_mode="stretch_width", css_classes=["o2-inputs"])
        state.param.watch(
            self._visibility, ["use_pressure_override", "acid_base_input", "use_p50_override"]
        )
        self._visibility()

    def _visibility(self, *_events) -> None:
        st = self._state
        self._pb.show(st.use_pressure_override)
        self._altitude.show(not st.use_pressure_override)
        self._ph.show(st.acid_base_input == "pH")
        self._be.show(st.acid_base_input != "pH")
        self._p50.show(st.use_p50_override)

    def __panel__(self):
        return self._layout


class NumbersTable(pn.viewable.Viewer):
    """Reported numbers with unit, reference range, flag and change vs baseline."""

    def __init__(self, state: CaseState, **params):
        super().__init__(**params)
        self._state = state
        self._pane = pn.pane.HTML(
            "", css_classes=["o2-numbers"], sizing_mode="stretch_width", stylesheets=[TABLE_CSS]
        )
        state.param.watch(
            self._update, ["result", "baseline", "pressure_unit", "height_cm", "weight_kg"]
        )
        self._update()

    def _update(self, *_events) -> None:
        has_base = self._state.baseline is not None
        head = (
            "<tr><th>Quantity</th><th style='text-align:right'>Value</th><th>Unit</th>"
            "<th>Reference</th><th></th>"
            f"<th style='text-align:right'>{'Δ vs baseline' if has_base else ''}</th></tr>"
        )
        rows = []
        for r in self._state.readings():
            flag = {"high": "▲ high", "low": "▼ low"}.get(r.flag, "")
            ref = f"{fmt(r.low, r.digits)}–{fmt(r.high, r.digits)}" if r.low is not None else ""
            rows.append(
                f"<tr class='flag-{r.flag or 'none'}' data-key='{r.key}'>"
                f"<td>{html.escape(r.label)}</td><td class='val'>{fmt(r.value, r.digits)}</td>"
                f"<td>{html.escape(r.unit)}</td><td class='range'>{ref}</td>"
                f"<td><span class='flag'>{flag}</span></td>"
                f"<td class='delta'>{fmt(r.delta, r.digits, signed=True)}</td></tr>"
            )
        self._pane.object = f"<table class='o2t'>{head}{''.join(rows)}</table>"

    def __panel__(self):
        return self._pane


SCENARIO_PROMPT = "Choose a scenario…"


class CaseControls(pn.viewable.Viewer):
    """Scenario picker, baseline buttons, display units and the status line."""

    def __init__(self, state: CaseState, scenario_dir: Path | str | None = None, **params):
        super().__init__(**params)
        self._state = state
        options = state.scenario_choices(scenario_dir) if scenario_dir else state.scenario_choices()
        # The picker opens on a prompt, so it never names a scenario that is not on screen.
        self._scenarios = options
        self._picker = pn.widgets.Select(
            label="Scenario",
            options=self._scenario_options(),
            value="",
            css_classes=["o2-scenario"],
            width=320,
            disabled=not options,
        )
        self._load = pn.widgets.Button(
            label="Load",
            color="primary",
            css_classes=["o2-load"],
            disabled=True,
            align="end",
            width=80,
        )
        self._picker.param.watch(lambda e: setattr(self._load, "disabled", not e.new), "value")
        # Scenario names carry units ("Anaemia, Hb 7 g/dL"): shown in the units chosen.
        state.param.watch(self._relabel, ["pressure_unit", "hb_unit"])
        self._keep = pn.widgets.Button(
            label="Keep as baseline",
            css_classes=["o2-keep"],
            color="success",
            align="end",
            width=150,
        )
        self._clear = pn.widgets.Button(
            label="Clear baseline", css_classes=["o2-clear"], align="end", width=130
        )
        # Button events arrive outside the document lock; held() runs the change on the
        # next tick with the lock (so the figures may be edited safely), in one message.
        load = held(lambda: state.load_scenario(self._picker.value))
        keep, clear = held(state.keep_baseline), held(state.clear_baseline)
        self._load.on_click(lambda _e: load())
        self._keep.on_click(lambda _e: keep())
        self._clear.on_click(lambda _e: clear())
        units = pn.Row(
            pn.widgets.RadioButtonGroup.from_param(
                state.param.pressure_unit, css_classes=["o2-pressure-unit"], align="end"
            ),
            pn.widgets.RadioButtonGroup.from_param(
                state.param.hb_unit, css_classes=["o2-hb-unit"], align="end"
            ),
        )
        self._status = pn.pane.HTML(
            "", css_classes=["o2-status"], sizing_mode="stretch_width", styles={"font-size": "14px"}
        )
        self._error = pn.pane.HTML(
            "",
            css_classes=["o2-error"],
            visible=False,
            sizing_mode="stretch_width",
            styles=dict(ERROR_STYLE),
        )
        state.param.watch(self._update, ["scenario_name", "baseline", "error_message"])
        self._update()
        self._layout = pn.Column(
            # A FlexBox wraps onto a second line on narrow windows instead of hiding the units.
            pn.FlexBox(
                self._picker,
                self._load,
                pn.Spacer(width=20),
                self._keep,
                self._clear,
                pn.Spacer(width=20),
                units,
                align_items="flex-end",
                sizing_mode="stretch_width",
            ),
            self._status,
            self._error,
            sizing_mode="stretch_width",
        )

    def _scenario_options(self) -> dict[str, str]:
        names = {in_display_units(self._state, k): v for k, v in self._scenarios.items()}
        return {SCENARIO_PROMPT: "", **names}

    def _relabel(self, *_events) -> None:
        value = self._picker.value
        self._picker.options = self._scenario_options()
        self._picker.value = value

    def _update(self, *_events) -> None:
        st = self._state
        parts = []
        if st.scenario_name:
            parts.append(
                f"<b>Case:</b> {html.escape(st.scenario_name)}"
                + (f" — {html.escape(st.scenario_description)}" if st.scenario_description else "")
            )
        parts.append(
            "<b>Baseline kept</b>: faint curves and Δ column compare against it."
            if st.baseline is not None
            else "No baseline kept."
        )
        self._status.object = " &nbsp;·&nbsp; ".join(parts)
        self._error.object = html.escape(st.error_message)
        self._error.visible = bool(st.error_message)

    def __panel__(self):
        return self._layout
