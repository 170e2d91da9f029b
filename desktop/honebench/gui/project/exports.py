"""The exports: the HTML report, the shown run's marks as CSV, the chosen wording as text.
Each is an operation in a job that never waits for the model."""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, QSettings, Signal
from PySide6.QtWidgets import QWidget

from ..jobs import Job, JobRunner
from ..paths import ask_save_path
from . import operations
from .session import ProjectSession


class ExportControl(QObject):
    """Signal: ``exported(path)`` after a file was written."""

    exported = Signal(str)

    def __init__(self, runner: JobRunner, session: ProjectSession, settings: QSettings,
                 dialog_parent: QWidget, show_problem: Callable[[str, str], None],
                 status: Callable[[str], None], parent=None):
        super().__init__(parent)
        self.runner, self.session, self.settings = runner, session, settings
        self.dialog_parent, self.show_problem, self.status = dialog_parent, show_problem, status

    def _path(self, path: str | None, title: str, name: str, file_filter: str) -> str | None:
        return path or ask_save_path(self.dialog_parent, self.settings, title, name,
                                     file_filter)

    def _submit(self, fn, what: str, problem: str, path: str) -> Job:
        def done(_value):
            self.status(f"Wrote the {what} to {path}")
            self.exported.emit(str(path))

        return self.runner.submit(fn, done=done, name=f"export the {what}",
                                  failed=lambda m: self.show_problem(problem, m))

    def export_report(self, path: str | None = None) -> Job | None:
        """The self-contained HTML report of the project."""
        project = self.session.project
        if project is None:
            return None
        path = self._path(path, "Export report", f"{project.path.stem}-report.html",
                          "HTML files (*.html)")
        if not path:
            return None
        return self._submit(lambda ctx: operations.export_report(project, path=path),
                            "report", "The report was not written", path)

    def export_wording(self, path: str | None = None) -> Job | None:
        """The chosen wording's text alone."""
        project = self.session.project
        if project is None:
            return None
        path = self._path(path, "Export chosen wording", "wording.txt", "Text files (*.txt)")
        if not path:
            return None
        return self._submit(lambda ctx: operations.export_wording(project, path=path),
                            "chosen wording", "The wording was not written", path)

    def export_marks(self, path: str | None = None) -> Job | None:
        """The marks of the run the grade sheet shows, as CSV."""
        state = self.session.state
        if state is None or state.last_run is None:
            self.show_problem("No marks to export", "Grade the wording first (Ctrl+Return).")
            return None
        path = self._path(path, "Export marks as CSV", "marks.csv", "CSV files (*.csv)")
        if not path:
            return None
        project, run_id = state.project, state.last_run.id
        return self._submit(lambda ctx: operations.export_marks(project, path=path,
                                                                run_id=run_id),
                            "marks", "The marks were not written", path)
