"""The example case files a session can open: listed for the picker, damaged ones named.

No Panel import. Reading one file and checking its keys is the model's
(``model.load_scenario``); making it the live case is :meth:`.state.CaseState.load_scenario`.
"""

from __future__ import annotations

from pathlib import Path

from ... import model
from ...model.scenario import EXAMPLES_DIR

SCENARIO_DIR = EXAMPLES_DIR


def scenario_files(directory: Path | str = SCENARIO_DIR) -> list[Path]:
    return sorted(Path(directory).glob("*.toml"))


def scenario_choices(directory: Path | str = SCENARIO_DIR) -> dict[str, str]:
    """Scenario name -> file path, for a picker; unreadable files are marked, not hidden."""
    choices = {}
    for path in scenario_files(directory):
        try:
            label = model.load_scenario(path).name
        except (ValueError, OSError):
            label = f"{path.stem} (cannot be read)"
        choices[label if label not in choices else f"{label} ({path.stem})"] = str(path)
    return choices
