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
        """Preview ``path`` (and list a workbook's sheets) in a job, then show the mapping
        dialog."""
        return self.runner.submit(
            lambda ctx: operations.preview(path=path, with_sheets=True).value,
            done=lambda result: self._show_dialog(path, result),
            failed=lambda msg: self._problem(msg), name="read the question set")

    def _show_dialog(self, path: str, preview) -> None:
        from .mapping_dialog import MappingDialog

        state = self.session.state
        check = preview.recipe_check or (state.check if state else None) or CheckSpec()
        dialog = MappingDialog(path, preview.head, preview.guess, preview.problems, check,
                               parent=self.parent_widget, sheets=preview.sheets)
        dialog.reread_requested.connect(
            lambda sheet, skip: self._reread(dialog, path, sheet, skip))
        self.dialog = dialog
        try:
            if dialog.exec() != QDialog.DialogCode.Accepted:
                return
            seed, fraction = dialog.split_settings()
            sheet, skip_rows = dialog.reading()
            self.run_import(path, dialog.mapping(), dialog.check_spec(), seed, fraction,
                            sheet=sheet, skip_rows=skip_rows)
        finally:
            self.dialog = None
            dialog.deleteLater()

    def _reread(self, dialog, path: str, sheet: str | None, skip_rows: int) -> Job:
        """Read the file again with another sheet or title rows, in a job; a result that
        is no longer what the dialog asks for is dropped."""
        def done(preview) -> None:
            if self.dialog is dialog and dialog.reading() == (sheet, skip_rows):
                dialog.show_preview(preview.head, preview.guess, preview.problems)

        def failed(message: str) -> None:
            if self.dialog is dialog and dialog.reading() == (sheet, skip_rows):
                dialog.show_read_error(message)

        return self.runner.submit(
            lambda ctx: operations.preview(path=path, sheet=sheet, skip_rows=skip_rows).value,
            done=done, failed=failed, name="read the question set again")

    def run_import(self, path: str, mapping: ColumnMapping | None = None,
                   check: CheckSpec | None = None, split_seed: int = 0,
                   held_out_fraction: float = 0.3, *, sheet: str | None = None,
                   skip_rows: int = 0) -> Job | None:
        """Read, validate and store the set in the open project (a job)."""
        project = self.session.project
        if project is None:
            self._problem("Open or create a project first (File › New project…).")
            return None
        return self.runner.submit(
            lambda ctx: operations.import_set(project, path=path, mapping=mapping, check=check,
                                              split_seed=split_seed,
                                              held_out_fraction=held_out_fraction,
                                              sheet=sheet, skip_rows=skip_rows),
            done=self._imported, failed=self._problem, name="import the question set")

    def _imported(self, state) -> None:
        self.session.show(state)
        self.imported.emit(state)

    def _problem(self, message: str) -> None:
        self.show_problem("The question set was not imported",
                          f"{message}\n\nNothing in the project was changed.")
        self.failed.emit(message)
