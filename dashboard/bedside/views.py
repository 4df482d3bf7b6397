"""Thin Panel views of the bedside screen over :class:`dashboard.bedside.state.BedsideState`.

They format; the state decides. One module a panel: ``entry_view`` (measured values),
``derived_view`` (derived picture), ``curve_view`` (patient's curve), ``fit_view`` (fit),
``plans_view`` (what-ifs), ``cases_view`` (keeping the case); ``panes`` holds what they
share. Button actions run on the next tick under the document lock
(``pn.state.execute(..., schedule=True)``), as in :class:`dashboard.case.views.CaseControls`,
because they edit figures and panes. Stable ``o2-bs-*`` CSS classes are hooks for tests.
"""

from __future__ import annotations

import panel as pn

from .cases_view import CaseKeeping
from .curve_view import PatientCurve
from .derived_view import DERIVED_GROUPS, DerivedTable
from .entry_view import MeasuredEntry
from .fit_view import FitPanel
from .panes import BedsidePanel
from .plans_view import WhatIfTable
from .state import BedsideState

__all__ = [
    "DERIVED_GROUPS",
    "BedsideScreen",
    "CaseKeeping",
    "DerivedTable",
    "FitPanel",
    "MeasuredEntry",
    "PatientCurve",
    "WhatIfTable",
]


class BedsideScreen(BedsidePanel):
    """The Measured gas tab: entry beside the derived picture, then fit, what-ifs, keeping."""

    def __init__(self, state: BedsideState, **params):
        super().__init__(state, **params)
        self._layout = pn.Column(
            pn.Row(
                pn.Column(MeasuredEntry(state), FitPanel(state), width=480),
                pn.Column(
                    DerivedTable(state),
                    PatientCurve(state),
                    sizing_mode="stretch_width",
                    min_width=440,
                ),
                sizing_mode="stretch_width",
            ),
            WhatIfTable(state),
            CaseKeeping(state),
            css_classes=["o2-bs-screen"],
            sizing_mode="stretch_width",
        )
