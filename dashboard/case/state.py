"""Session state of the case screen: the case inputs, the model result, the baseline.

No Panel import here: this module can be driven from a test, a notebook or a script.
:class:`CaseState` is the one object the views, the page address and the other screens
hold; it composes

* the inputs along the oxygen path (:mod:`.inputs`), the display units (:mod:`.units`) and
  the checks on typed values (:mod:`.entry`), as parameters of the one state, so that each
  can be watched;
* one derivation, :meth:`CaseState._solve`, which calls :func:`model.solve_transport` and
  sets :attr:`result` and :attr:`curves`;
* the baseline, and the example scenarios (:mod:`.scenarios`);
* what the screen reads off the result, in display units (:mod:`.readings`).
"""

from __future__ import annotations

from pathlib import Path

import param

from ... import model
from . import readings as _readings
from .entry import CaseEntry
from .inputs import CASE_INPUTS, CURVE_LABELS
from .readings import PO2_GRID_MMHG, Reading, curves_for
from .scenarios import SCENARIO_DIR, scenario_choices, scenario_files
from .units import HB_UNITS, PRESSURE_UNITS

__all__ = [
    "CASE_INPUTS",
    "CURVE_LABELS",
    "HB_UNITS",
    "PO2_GRID_MMHG",
    "PRESSURE_UNITS",
    "SCENARIO_DIR",
    "CaseState",
    "Reading",
]


class CaseState(CaseEntry):
    """Inputs of one case along the oxygen path, its result and an optional baseline."""

    # --- Derived (read-only for views)
    result = param.Parameter(default=None, doc="Last valid model.TransportResult.")
    curves = param.Dict(default={}, doc="PO2 grid and SO2 arrays: arterial, venous, standard.")
    baseline = param.Parameter(default=None, doc="Result kept as baseline, or None.")
    baseline_curves = param.Dict(default=None, allow_None=True, doc="Curves of the baseline.")
    scenario_name = param.String(default="", doc="Name of the last scenario loaded.")
    scenario_description = param.String(default="")

    def __init__(self, **params):
        super().__init__(**params)
        self._solve()

    # ------------------------------------------------------------------ derivation
    @param.depends(*CASE_INPUTS, watch=True)
    def _solve(self) -> None:
        try:
            result = model.solve_transport(**self.model_inputs())
            curves = curves_for(result, self.curve)
        except ValueError as exc:
            self.error_message = str(exc)
            return
        self.param.update(result=result, curves=curves, error_message="")

    # ------------------------------------------------------------------ baseline
    def keep_baseline(self) -> None:
        """Keep the current result and curves to compare later changes against."""
        self.param.update(baseline=self.result, baseline_curves=dict(self.curves))

    def clear_baseline(self) -> None:
        self.param.update(baseline=None, baseline_curves=None)

    # ------------------------------------------------------------------ whole cases
    def scenario_files(self, directory: Path | str = SCENARIO_DIR) -> list[Path]:
        return scenario_files(directory)

    def scenario_choices(self, directory: Path | str = SCENARIO_DIR) -> dict[str, str]:
        """Scenario name -> file path, for a picker; unreadable files are marked, not hidden."""
        return scenario_choices(directory)

    def load_scenario(self, path: Path | str) -> bool:
        """Apply a scenario's inputs all-or-nothing; False (and error_message) if refused.

        Inputs the scenario does not name return to their defaults, so a scenario always
        gives the same case whatever was on screen before.
        """
        try:
            scenario = model.load_scenario(path)
        except (ValueError, OSError, TypeError) as exc:
            self.error_message = f"Scenario not loaded: {exc}"
            return False
        return self._apply(
            scenario.inputs, scenario.name, scenario.description, "Scenario not loaded"
        )

    def apply_inputs(self, inputs: dict, name: str = "", description: str = "") -> bool:
        """Make ``inputs`` (scenario key names) the live case, all-or-nothing.

        Inputs not named return to their defaults, as for a scenario. Returns False and sets
        ``error_message`` (nothing changed) when a key is unknown or a value is refused.
        """
        return self._apply(inputs, name, description, "Case not applied")

    def _apply(self, inputs, name: str, description: str, refusal: str) -> bool:
        try:
            updates = self.input_updates(dict(inputs))
            model.solve_transport(**self.model_inputs_after(updates))
        except (ValueError, TypeError) as exc:
            self.error_message = f"{refusal}: {exc}"
            return False
        updates.update(scenario_name=name, scenario_description=description)
        self.param.update(**updates)
        return True

    # ------------------------------------------------------------------ readings
    def body_surface_area_m2(self) -> float | None:
        """Mosteller body surface area sqrt(height_cm * weight_kg / 3600) [m²], if given."""
        if self.height_cm is None or self.weight_kg is None:
            return None
        return float(model.body_surface_area(self.height_cm, self.weight_kg))

    def readings(self) -> list[Reading]:
        """The reported numbers in display units, with range and change vs the baseline."""
        return _readings.readings(self.result, self.baseline, self, self.body_surface_area_m2())

    def cascade(self) -> dict[str, list]:
        """PO2 at each stop of the path, in the display pressure unit."""
        return _readings.cascade(self.result, self)

    def curve_view(self, baseline: bool = False) -> dict | None:
        """Curves and marked points of the result (or the baseline) in display units.

        Keys: x, arterial, venous, standard (arrays); loading, unloading, arterial_p50,
        venous_p50 ((x, y) pairs); extracted_ml_per_l, shift_gain_ml_per_l (floats).
        """
        if baseline:
            return _readings.curve_view(self.baseline, self.baseline_curves, self)
        return _readings.curve_view(self.result, self.curves, self)

    def standard_conditions_text(self) -> str:
        """The model's standard state (its saturation() defaults) in display units."""
        return _readings.standard_conditions_text(self)

    def x_max_display(self) -> float:
        return self.pressure_to_display(float(PO2_GRID_MMHG[-1]))
