"""Thin Panel views of the bedside screen over :class:`dashboard.bedside.state.BedsideState`.

They format; the state decides. One module a panel: ``entry_view`` (measured values),
``derived_view`` (derived picture), ``curve_view`` (patient's curve), ``fit_view`` (fit),
``plans_view`` (what-ifs), ``plans_compare_view`` (plans side by side), ``series_view``
(gases through the shift), ``spread_view`` (how sure), ``cases_view`` (keeping the case);
``panes`` holds what they share. Button actions run on the next tick under the document lock
(``pn.state.execute(..., schedule=True)``), as in :class:`dashboard.case.views.CaseControls`,
because they edit figures and panes. Stable ``o2-bs-*`` CSS classes are hooks for tests.
"""

from __future__ import annotations

import panel as pn

from ..responsive import Gate
from .cases_view import CaseKeeping
from .curve_view import PatientCurve
from .derived_view import DERIVED_GROUPS, DerivedTable
from .entry_view import MeasuredEntry
from .fit_view import FitPanel
from .panes import BedsidePanel
from .plans_compare_view import PlansPanel
from .plans_view import WhatIfTable
from .series_view import SeriesPanel
from .spread_view import HowSurePanel
from .state import BedsideState

__all__ = [
    "DERIVED_GROUPS",
    "BedsideScreen",
    "CaseKeeping",
    "DerivedTable",
    "FitPanel",
    "HowSurePanel",
    "MeasuredEntry",
    "PatientCurve",
    "PlansPanel",
    "SeriesPanel",
    "WhatIfTable",
]


class BedsideScreen(BedsidePanel):
    """The Measured gas tab: entry beside the derived picture, then fit, what-ifs, keeping.

    ``gate``: whether the tab is on screen (:class:`dashboard.responsive.Gate`); the curve is
    redrawn only while it is.
    """

    def __init__(self, state: BedsideState, gate: Gate | None = None, **params):
        super().__init__(state, **params)
        self._layout = pn.Column(
            pn.Row(
                pn.Column(MeasuredEntry(state), FitPanel(state), width=480),
                pn.Column(
                    DerivedTable(state),
                    PatientCurve(state, gate=gate),
                    HowSurePanel(state),
                    sizing_mode="stretch_width",
                    min_width=440,
                ),
                sizing_mode="stretch_width",
            ),
            WhatIfTable(state),
            PlansPanel(state, gate=gate),
            SeriesPanel(state, gate=gate),
            CaseKeeping(state),
            css_classes=["o2-bs-screen"],
            sizing_mode="stretch_width",
        )
