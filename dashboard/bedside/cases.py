"""Saved bedside cases: the folder's list, save (never a silent overwrite), open, label.

No Panel import here. :class:`CaseFiles` keeps the accepted measurement of
:class:`dashboard.bedside.entry.GasEntry`, the fit of :class:`dashboard.bedside.fit.PatientFit`
and the notes in a case file through ``model.casebook``, and restores them.
"""

from __future__ import annotations

import math
from pathlib import Path

import param

from ...model import casebook
from .entry import GasEntry
from .fit import PatientFit
from .identifiers import identifier_message
from .plans_stack import PlanStack
from .series import GasSeries


class CaseFiles(param.Parameterized):
    """The cases kept on disk, and the label and notes of the one on screen."""

    entry = param.ClassSelector(class_=GasEntry, doc="The form a case is saved from.")
    fitting = param.ClassSelector(class_=PatientFit, doc="The fit saved with the case.")
    plan_stack = param.ClassSelector(
        class_=PlanStack, allow_None=True, doc="The plans saved with the case."
    )
    series = param.ClassSelector(
        class_=GasSeries, allow_None=True, doc="The shift's gases saved with the case."
    )
    case_dir = param.Path(default=None, allow_None=True, check_exists=False)
    case_label = param.String(default="", label="Case label (no names or record numbers)")
    notes = param.String(default="", label="Notes")
    saved_cases = param.List(default=[], doc="Records from model.casebook.list_cases.")
    case_problems = param.List(default=[], doc="Files that could not be read, with why.")
    case_message = param.String(default="")
    overwrite_offer = param.String(default="", doc="Path the last Save refused to overwrite.")

    def __init__(self, case_dir: Path | str | None = None, **params):
        super().__init__(**params)
        self.case_dir = str(case_dir) if case_dir is not None else str(casebook.default_case_dir())
        self.refresh_cases()

    def case_dir_path(self) -> Path:
        return Path(self.case_dir).expanduser()

    @property
    def identifier_warning(self) -> str:
        return casebook.IDENTIFIER_WARNING

    def refresh_cases(self) -> None:
        """Re-read the case folder; unreadable files are listed as problems, not hidden."""
        try:
            records, problems = casebook.list_cases(self.case_dir)
        except OSError as exc:
            records, problems = [], [f"{self.case_dir}: cannot read the folder ({exc})"]
        self.param.update(saved_cases=records, case_problems=problems)

    def case_choices(self) -> dict[str, str]:
        """'label · saved at' -> file path, newest first."""
        out = {}
        for r in self.saved_cases:
            when = r.saved_at.astimezone().strftime("%Y-%m-%d %H:%M")
            out[f"{r.label} · {when}"] = str(r.path)
        return out

    def save(self, overwrite: bool = False) -> bool:
        """Save the accepted measurement, its fit and the notes under the label.

        An existing file of the same name is never replaced silently: the first Save
        refuses and offers the overwrite, which needs :meth:`save` with ``overwrite``.
        """
        measured = self.entry.measured
        if not measured:
            self.case_message = "Nothing to save yet: Calculate a measured gas first."
            return False
        try:
            target = casebook.case_path(self.case_dir, self.case_label)
            if target.exists() and not overwrite:
                self.param.update(
                    overwrite_offer=str(target),
                    case_message=(
                        f"Not saved: a case named {target.name} already exists in "
                        f"{target.parent}. Choose another label, or overwrite it."
                    ),
                )
                return False
            path = casebook.save_case(
                self.case_dir,
                self.case_label,
                measured,
                self.fitting.fit,
                self.notes,
                overwrite=overwrite,
                plans=self.plan_stack.saved() if self.plan_stack is not None else (),
                gases=self.series.saved() if self.series is not None else (),
            )
        except (casebook.CaseFileError, ValueError) as exc:
            self.param.update(case_message=f"Not saved: {exc}", overwrite_offer="")
            return False
        warning = identifier_message(self.case_label, self.notes)
        self.param.update(
            case_message=f"Saved {path.name} in {path.parent}"
            + (" (replaced the earlier file)." if overwrite else ".")
            + (f" {warning}" if warning else ""),
            overwrite_offer="",
        )
        self.refresh_cases()
        return True

    def open(self, path: str | Path) -> bool:
        """Restore a saved case: measured entry, label, notes, then the fit recomputed.

        The fit is solved again from the saved measurement, so the curve and the what-ifs
        are whole; if it no longer matches the saved fit (a newer model), this is said.
        """
        try:
            record = casebook.open_case(path)
        except casebook.CaseFileError as exc:
            self.case_message = f"Not opened: {exc}"
            return False
        self.entry.set_draft_model_units(record.measured)
        if self.plan_stack is not None:
            self.plan_stack.restore(record.plans)
        if self.series is not None:
            self.series.restore(record.gases)
        self.param.update(case_label=record.label, notes=record.notes, overwrite_offer="")
        if not self.entry.calculate():
            self.case_message = f"Opened {Path(path).name}, but: {self.entry.entry_message}"
            return False
        message = f"Opened {record.label} (saved {record.saved_at.astimezone():%Y-%m-%d %H:%M})."
        if record.fitted:
            message += " " + self._refit_against(record.fitted)
        kept = []
        if record.plans:
            kept.append(f"{len(record.plans)} plan{'s' if len(record.plans) > 1 else ''}")
        if record.gases:
            n = len(record.gases)
            kept.append(f"{n} {'gas' if n == 1 else 'gases'} of the shift")
        if kept:
            message += " With " + " and ".join(kept) + "."
        self.case_message = message
        return True

    def _refit_against(self, saved: dict) -> str:
        """Fit the opened measurement again and say whether it matches the saved fit."""
        self.fitting.fit_measured()
        fit = self.fitting.fit
        now = fit.fitted if fit is not None else {}
        differs = [
            k
            for k, v in saved.items()
            if k in now and not math.isclose(now[k], v, rel_tol=1e-3, abs_tol=1e-4)
        ]
        if differs:
            return (
                "Fit recomputed; it differs from the saved fit in "
                + ", ".join(differs)
                + " (the model has changed since)."
            )
        return "Fit recomputed: same as saved."
