"""The plans panel of the bedside screen: up to four plans edited in place, compared with
the patient in one table and on one curve (watches ``state.plan_stack``).

Every part is built with the page (four plan cards, shown as plans are added), so nothing
is added to a loaded page. Each plan keeps one line style (colour and dash pattern) in the
table's head and on the curve, so that it reads in grey print and to a colour-blind eye.
"""

from __future__ import annotations

import html

import panel as pn
from bokeh.models import ColumnDataSource, LegendItem

from ...model.plans import MAX_PLANS
from ..look import ACCENT, ARTERIAL, INK, REFERENCE, VENOUS
from ..responsive import Deferred, Gate, set_data
from ..widgets import saturation_figure
from .panes import NOTE_STYLE, BedsidePanel, action_button, heading, message_pane, show, table_pane
from .state import BedsideState
from .wording import kind_choices, kind_label

PLAN_STYLES: tuple[tuple[str, tuple[int, ...], str], ...] = (
    # colour (dashboard.look), dash pattern [px on, px off, ...], marker
    (ACCENT, (8, 5), "triangle"),
    (VENOUS, (2, 4), "diamond"),
    (INK, (10, 4, 2, 4), "square"),
    (REFERENCE, (14, 6), "inverted_triangle"),
)
"""Line style of plan 1-4; the patient is a solid ember line with round points."""

PLAN_CSS = """
table.o2-bs-plan-cmp th { text-transform: none; letter-spacing: 0; vertical-align: bottom; }
table.o2-bs-plan-cmp th div.steps { font-weight: 400; font-size: 11px; color: #46545c;
  white-space: normal; }
table.o2-bs-plan-cmp th.plan { width: 17%; }
table.o2-bs-plan-cmp td.num { text-align: right; font-variant-numeric: tabular-nums;
  white-space: nowrap; }
table.o2-bs-plan-cmp td.num b { font-size: 15px; }
table.o2-bs-plan-cmp td.num div.d { font-size: 12px; color: #46545c; }
table.o2-bs-plan-cmp td.num div.sp { font-size: 11px; color: #6b767e; }
table.o2-bs-plan-cmp td.err { color: #7a1414; font-size: 12px; white-space: normal; }
"""


def style_swatch(index: int | None) -> str:
    """A small inline SVG of a plan's line (None: the patient's solid line)."""
    if index is None:
        color, dash = ARTERIAL, ""
    else:
        color, pattern, _ = PLAN_STYLES[index]
        dash = f" stroke-dasharray='{' '.join(map(str, pattern))}'"
    return (
        "<svg width='38' height='10' aria-hidden='true' style='vertical-align:middle'>"
        f"<line x1='1' y1='5' x2='37' y2='5' stroke='{color}' stroke-width='3'{dash}/></svg>"
    )


class PlanCard(pn.viewable.Viewer):
    """One plan: its name, its changes as applied, an editor for one change, make it live."""

    def __init__(self, state: BedsideState, index: int, **params):
        super().__init__(**params)
        self._state, self._index = state, index
        stack = state.plan_stack
        self._syncing = False
        self._name = pn.widgets.TextInput(
            label="Plan name", css_classes=["o2-bs-plan-name"], sizing_mode="stretch_width"
        )
        self._name.param.watch(self._renamed, "value")
        self._steps = pn.pane.HTML(
            "", css_classes=["o2-bs-plan-steps"], sizing_mode="stretch_width"
        )
        self._change = pn.widgets.Select(
            label="Change",
            options={},
            css_classes=["o2-bs-plan-change"],
            sizing_mode="stretch_width",
        )
        self._change.param.watch(self._picked, "value")
        self._kind = pn.widgets.Select(
            label="Kind",
            options=kind_choices(state.case),
            css_classes=["o2-bs-plan-kind"],
            sizing_mode="stretch_width",
        )
        self._kind.param.watch(self._kind_picked, "value")
        self._value = pn.widgets.FloatInput(
            label=kind_label(state.case, "fio2"),
            value=None,
            css_classes=["o2-bs-plan-value"],
            sizing_mode="stretch_width",
        )
        self._stored = pn.widgets.Checkbox(
            label="Stored blood, low in 2,3-DPG", css_classes=["o2-bs-plan-stored"], visible=False
        )
        self._set = action_button(
            "Set change", "o2-bs-plan-set", self._apply_change, color="primary", width=110
        )
        self._drop = action_button(
            "Remove change", "o2-bs-plan-remove-change", self._remove_change, width=130
        )
        self._live = action_button(
            "Make live",
            "o2-bs-plan-live",
            lambda: stack.apply_plan(self._index, state.cases.case_label),
            color="success",
            width=110,
        )
        self._remove = action_button(
            "Remove plan",
            "o2-bs-plan-remove",
            lambda: stack.remove_plan(self._index),
            color="danger",
            width=120,
        )
        color = PLAN_STYLES[index][0]
        self._title = pn.pane.HTML("", margin=(2, 10, 0, 10), css_classes=["o2-bs-plan-title"])
        self._layout = pn.Column(
            self._title,
            self._name,
            self._steps,
            self._change,
            self._kind,
            self._value,
            self._stored,
            pn.Row(self._set, self._drop),
            pn.Row(self._live, self._remove),
            css_classes=["o2-bs-plan-card", f"o2-bs-plan-{index}"],
            width=300,
            styles={"border": f"2px solid {color}", "border-radius": "6px", "padding": "2px"},
            margin=(4, 6),
            visible=False,
        )

    def __panel__(self):
        return self._layout

    # ------------------------------------------------------------------ edits
    def _renamed(self, event) -> None:
        if not self._syncing:
            self._state.plan_stack.rename_plan(self._index, event.new)

    def _picked(self, *_events) -> None:
        if self._syncing:
            return
        position = self._change.value
        if position is None or position < 0:
            return
        kind, value, stored = self._state.plan_stack.change_display(self._index, position)
        self._syncing = True
        try:
            self._kind.value = kind
            self._value.label = kind_label(self._state.case, kind)
            self._value.value = value
            self._stored.value = stored
            self._stored.visible = kind == "hb"
        finally:
            self._syncing = False

    def _kind_picked(self, event) -> None:
        self._value.label = kind_label(self._state.case, event.new)
        self._stored.visible = event.new == "hb"

    def _apply_change(self) -> None:
        position = self._change.value if self._change.value is not None else -1
        self._state.plan_stack.set_change(
            self._index, position, self._kind.value, self._value.value, self._stored.value
        )

    def _remove_change(self) -> None:
        position = self._change.value
        if position is None or position < 0:
            self._state.plan_stack.plan_message = "Choose the change to remove first."
            return
        self._state.plan_stack.remove_change(self._index, position)

    # ------------------------------------------------------------------ refresh
    def refresh(self) -> None:
        stack = self._state.plan_stack
        shown = self._index < len(stack.plans)
        self._layout.visible = shown
        if not shown:
            return
        plan = stack.plans[self._index]
        self._title.object = f"{style_swatch(self._index)} <b>{html.escape(plan.name)}</b>"
        steps = stack.steps_text(self._index)
        notes = stack.step_notes(self._index)
        items = "".join(f"<li>{html.escape(s)}</li>" for s in steps) or (
            "<li style='color:#6b767e'>no changes yet</li>"
        )
        error = ""
        if self._index < len(stack.outcomes) and stack.outcomes[self._index].error:
            error = (
                "<div style='color:#7a1414'>Not solved: "
                f"{html.escape(stack.outcomes[self._index].error)}</div>"
            )
        note = (
            f"<div style='font-size:11px;color:#5b6770'>{html.escape(' '.join(notes))}</div>"
            if notes
            else ""
        )
        self._steps.object = (
            f"<ol style='margin:2px 0 2px 18px;padding:0;font-size:13px'>{items}</ol>{note}{error}"
        )
        choices = stack.change_choices(self._index)
        self._syncing = True
        try:
            if self._name.value != plan.name:
                self._name.value = plan.name
            # Options are sent only when they change: sending them again while the user
            # picks a kind would put the picker back to the server's value.
            keep = self._change.value
            if self._change.options != choices:
                self._change.options = choices
            if keep not in choices.values():
                self._change.value = -1
            kinds = kind_choices(self._state.case)
            if self._kind.options != kinds:
                self._kind.options = kinds
            label = kind_label(self._state.case, self._kind.value)
            if self._value.label != label:
                self._value.label = label
        finally:
            self._syncing = False
        self._live.disabled = not (
            self._index < len(stack.outcomes) and not stack.outcomes[self._index].error
        )


class LeverToPlan(pn.viewable.Viewer):
    """One click from a ranked what-if (chosen in ``pick``) to a plan."""

    def __init__(self, state: BedsideState, pick: pn.widgets.Select, **params):
        super().__init__(**params)
        self._state = state
        self._target = pn.widgets.Select(
            label="Into", options={"a new plan": -1}, css_classes=["o2-bs-lever-target"], width=150
        )
        self._add = action_button(
            "Add to plan",
            "o2-bs-lever-to-plan",
            lambda: state.plan_stack.add_lever(pick.value, self._target.value),
            align="end",
            width=120,
        )
        self._layout = pn.Row(self._target, self._add, margin=0)
        state.plan_stack.param.watch(self._refresh, ["plans"])
        self._refresh()

    def __panel__(self):
        return self._layout

    def _refresh(self, *_events) -> None:
        names = {p.name: i for i, p in enumerate(self._state.plan_stack.plans)}
        options = {"a new plan": -1, **names} if len(names) < MAX_PLANS else names
        keep = self._target.value
        self._target.options = options
        self._target.value = keep if keep in options.values() else next(iter(options.values()))


class PlansPanel(BedsidePanel):
    """Plans from the fitted case: the cards, the side-by-side table, the curves.

    ``gate``: whether the tab is on screen; the curves are redrawn only while it is.
    """

    def __init__(self, state: BedsideState, gate: Gate | None = None, **params):
        super().__init__(state, **params)
        stack = state.plan_stack
        self._new = action_button(
            "New plan", "o2-bs-plan-new", stack.add_plan, color="primary", width=110
        )
        self._message = message_pane("o2-bs-plan-msg")
        self._cards = [PlanCard(state, i) for i in range(MAX_PLANS)]
        self._table = table_pane("o2-bs-plan-table")
        self._table.stylesheets = [*self._table.stylesheets, PLAN_CSS]
        self._build_figure()
        self._layout = pn.Column(
            heading("5 · Plans from the fitted case, side by side with the patient"),
            pn.pane.HTML(
                "A plan is a stack of changes applied in order to the fitted case (transfuse, "
                "then FiO2, then cool...). Up to four; each keeps its line style in the table "
                "and on the curve. Add a ranked what-if with <b>Add to plan</b> above.",
                styles=NOTE_STYLE,
                margin=(0, 10),
                sizing_mode="stretch_width",
            ),
            pn.Row(self._new, self._message, sizing_mode="stretch_width"),
            pn.FlexBox(*self._cards, sizing_mode="stretch_width"),
            self._table,
            pn.Column(
                pn.pane.Bokeh(self._fig, sizing_mode="stretch_width"),
                css_classes=["o2-bs-plan-curve"],
                sizing_mode="stretch_width",
            ),
            css_classes=["o2-bs-plans"],
            sizing_mode="stretch_width",
        )
        stack.param.watch(self._update, ["plans", "outcomes", "base", "plan_message"])
        state.case.param.watch(self._update, ["pressure_unit", "hb_unit"])
        later = Deferred(self._draw, gate)
        stack.param.watch(later, ["outcomes", "base"])
        state.case.param.watch(later, ["pressure_unit"])
        self._update()
        self._draw()

    # ------------------------------------------------------------------ figure
    def _build_figure(self) -> None:
        fig = saturation_figure(360, "", "14px")
        self._band = ColumnDataSource(data={"x": [], "low": [], "high": []})
        self._patient = ColumnDataSource(data={"x": [], "y": []})
        self._patient_pts = ColumnDataSource(data={"x": [], "y": []})
        fig.varea(
            "x",
            "low",
            "high",
            source=self._band,
            fill_color=ARTERIAL,
            fill_alpha=0.16,
            legend_label="spread of the 4 curve models",
        )
        fig.line(
            "x",
            "y",
            source=self._patient,
            color=ARTERIAL,
            line_width=6,
            line_alpha=0.55,
            legend_label="patient (fitted)",
        )
        fig.scatter(
            "x",
            "y",
            source=self._patient_pts,
            marker="circle",
            size=11,
            color=ARTERIAL,
            line_color="white",
            line_width=2,
        )
        self._plan_lines, self._plan_pts, self._items = [], [], []
        for i, (color, pattern, marker) in enumerate(PLAN_STYLES):
            line_src = ColumnDataSource(data={"x": [], "y": []})
            pts_src = ColumnDataSource(data={"x": [], "y": []})
            line = fig.line(
                "x", "y", source=line_src, color=color, line_width=2.5, line_dash=list(pattern)
            )
            pts = fig.scatter(
                "x",
                "y",
                source=pts_src,
                marker=marker,
                size=12,
                color=color,
                line_color="white",
                line_width=1.5,
            )
            item = LegendItem(label=f"plan {i + 1}", renderers=[line, pts], visible=False)
            fig.legend.items.append(item)
            self._plan_lines.append(line_src)
            self._plan_pts.append(pts_src)
            self._items.append(item)
        fig.legend.location = "bottom_right"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.85
        self._fig = fig

    def _draw(self, *_events) -> None:
        st = self._state
        view = st.plan_stack.curves()
        unit = st.case.pressure_unit
        self._fig.xaxis.axis_label = f"PO2 ({unit}) at each case's own temperature"
        patient = view["patient"]
        if patient is None:
            self._fig.title.text = "Plans: fit the model to a measured gas first"
            for src in (self._band, self._patient, self._patient_pts, *self._plan_lines):
                set_data(src, {k: [] for k in src.data})
            for src in self._plan_pts:
                set_data(src, {"x": [], "y": []})
            for item in self._items:
                item.visible = False
            return
        self._fig.title.text = (
            "Arterial curve of the patient and of each plan · of each marker, the upper point "
            "is arterial, the lower venous"
        )
        self._fig.x_range.end = view["x_max"]
        low, high = view["band"]
        set_data(self._band, {"x": view["x"], "low": low, "high": high})
        set_data(self._patient, {"x": patient["x"], "y": patient["y"]})
        set_data(
            self._patient_pts,
            {
                "x": [patient["arterial_point"][0], patient["venous_point"][0]],
                "y": [patient["arterial_point"][1], patient["venous_point"][1]],
            },
        )
        for i in range(MAX_PLANS):
            plan = view["plans"][i] if i < len(view["plans"]) else None
            if plan is None:
                set_data(self._plan_lines[i], {"x": [], "y": []})
                set_data(self._plan_pts[i], {"x": [], "y": []})
                self._items[i].visible = False
                continue
            set_data(self._plan_lines[i], {"x": plan["x"], "y": plan["y"]})
            set_data(
                self._plan_pts[i],
                {
                    "x": [plan["arterial_point"][0], plan["venous_point"][0]],
                    "y": [plan["arterial_point"][1], plan["venous_point"][1]],
                },
            )
            self._items[i].label = {"value": plan["name"]}
            self._items[i].visible = True

    # ------------------------------------------------------------------ numbers
    def _update(self, *_events) -> None:
        stack = self._state.plan_stack
        for card in self._cards:
            card.refresh()
        self._new.disabled = len(stack.plans) >= MAX_PLANS
        bad = stack.plan_message.startswith(("Not ", "Choose", "Add a plan", "Fit the"))
        show(self._message, stack.plan_message, error=bad)
        rows = stack.compare_rows()
        if not rows:
            waiting = (
                "The plans are kept: press <b>Fit model to these measurements</b> to solve "
                "them from this gas."
                if stack.plans
                else "Fit the model to a measured gas: plans are solved from the fitted case."
            )
            self._table.object = (
                f"<p style='color:#46545c'>{waiting}</p>" if stack.fitting.fit is None else ""
            )
            return
        names = stack.column_names()
        patient = f"{style_swatch(None)}<br>{html.escape(names[0])}"
        heads = [f"<th class='plan' style='text-align:right'>{patient}</th>"]
        for i, name in enumerate(names[1:]):
            steps = "; ".join(stack.steps_text(i)) or "no changes"
            heads.append(
                f"<th class='plan' style='text-align:right' data-plan='{i}'>{style_swatch(i)}<br>"
                f"{html.escape(name)}<div class='steps'>{html.escape(steps)}</div></th>"
            )
        body = []
        for row in rows:
            cells = []
            for j, cell in enumerate(row.cells):
                if j and stack.outcomes[j - 1].error:
                    cells.append("<td class='err'>not solved</td>")
                    continue
                delta = f"<div class='d'>{html.escape(cell.delta)}</div>" if j else ""
                sp = (
                    f"<div class='sp'>models {html.escape(cell.spread)}</div>"
                    if cell.spread
                    else ""
                )
                cells.append(f"<td class='num'><b>{html.escape(cell.value)}</b>{delta}{sp}</td>")
            body.append(
                f"<tr data-key='{row.key}'><td>{html.escape(row.label)}</td>"
                f"<td>{html.escape(row.unit)}</td>{''.join(cells)}</tr>"
            )
        self._table.object = (
            "<table class='o2t o2-bs-plan-cmp'><tr><th>Quantity</th><th>Unit</th>"
            f"{''.join(heads)}</tr>{''.join(body)}</table>"
            "<div class='src'>Plan columns: value, then change from the patient. "
            "'models': lowest–highest of the four curve models (Severinghaus 1979, Dash 2016, "
            "Siggaard-Andersen 1990, Hill 1910) reading the same PO2s. PaO2 and PvO2 as a "
            "37 °C analyser reads them, as the measured gas does.</div>"
        )
