"""Importing a question set: file dialog, preview job, mapping dialog, import job.

``run_import`` is the step after the dialog; tests and the first-run demo call it directly.
"""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, QSettings, Signal
from PySide6.QtWidgets import QDialog, QFileDialog, QWidget

from ...core.checks import CheckSpec
from ...core.set_reading import SUPPORTED
from ...core.sets import ColumnMapping
from . import operations
from ...core.project import preview_set
from ..jobs import Job, JobRunner

FILE_FILTER = ("Question sets (" + " ".join(f"*{ext}" for ext in SUPPORTED) + ");;"
               "All files (*)")


def is_question_set(path: str) -> bool:
    return Path(path).suffix.lower() in SUPPORTED


class ImportFlow(QObject):
    """Signals: ``imported(ProjectState)``, ``failed(str)`` (the message, already shown)."""

    imported = Signal(object)
    failed = Signal(str)

    def __init__(self, runner: JobRunner, settings: QSettings, parent_widget: QWidget,
                 session, show_problem, parent=None):
        super().__init__(parent)
        self.runner, self.settings = runner, settings
        self.parent_widget = parent_widget
        self.session = session  # the open project; an imported set is shown through it
        self.show_problem = show_problem  # (title, message) -> None
        self.dialog = None
        session.import_requested.connect(
            lambda path, sample: self.run_import(path) if sample else self.start(path))

    def choose(self) -> None:
        """Ask for a file, then preview and map it."""
        start = str(self.settings.value("import/last_dir", str(Path.home())))
        path, _ = QFileDialog.getOpenFileName(self.parent_widget, "Import a question set",
                                              start, FILE_FILTER)
        if path:
            self.settings.setValue("import/last_dir", str(Path(path).parent))
            self.start(path)

    def start(self, path: str) -> Job:
        """Preview ``path`` in a job, then show the mapping dialog."""
        return self.runner.submit(
            lambda ctx: preview_set(path),
            done=lambda result: self._show_dialog(path, *result),
            failed=lambda msg: self._problem(msg), name="read the question set")

    def _show_dialog(self, path: str, head, guess, problems, recipe_check) -> None:
        from .mapping_dialog import MappingDialog

        state = self.session.state
        check = recipe_check or (state.check if state else None) or CheckSpec()
        dialog = MappingDialog(path, head, guess, problems, check, parent=self.parent_widget)
        self.dialog = dialog
        try:
            if dialog.exec() != QDialog.DialogCode.Accepted:
                return
            seed, fraction = dialog.split_settings()
            self.run_import(path, dialog.mapping(), dialog.check_spec(), seed, fraction)
        finally:
            self.dialog = None
            dialog.deleteLater()

    def run_import(self, path: str, mapping: ColumnMapping | None = None,
                   check: CheckSpec | None = None, split_seed: int = 0,
                   held_out_fraction: float = 0.3) -> Job | None:
        """Read, validate and store the set in the open project (a job)."""
        project = self.session.project
        if project is None:
            self._problem("Open or create a project first (File › New project…).")
            return None
        return self.runner.submit(
            lambda ctx: operations.import_set(project, path=path, mapping=mapping, check=check,
                                              split_seed=split_seed,
                                              held_out_fraction=held_out_fraction),
            done=self._imported, failed=self._problem, name="import the question set")

    def _imported(self, state) -> None:
        self.session.show(state)
        self.imported.emit(state)

    def _problem(self, message: str) -> None:
        self.show_problem("The question set was not imported",
                          f"{message}\n\nNothing in the project was changed.")
        self.failed.emit(message)
