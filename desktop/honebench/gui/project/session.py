"""The open project: opening one (in a job), the state the window shows of it, and saving
the editor's draft. Views take the session in their constructor and read ``session.state``;
they hear of a newly opened project through ``opened(ProjectState)``."""
from __future__ import annotations

from pathlib import Path
from typing import Callable

from PySide6.QtCore import QObject, QSettings, QTimer, Signal

from ...core.project import Project, ProjectSettings
from ...core.recipes import recipe_for
from ...core.wording import Wording
from ..jobs import Job, JobRunner
from . import files, operations
from .state import ProjectState, load_state

DRAFT_SAVE_MS = 1000


class ProjectSession(QObject):
    """Signals: ``opened(ProjectState)`` when a project (or a newly imported set) is shown,
    ``open_failed(str)``, ``draft_saved(Wording)``, ``settings_changed(ProjectSettings)``
    at once when the settings are changed (views that hold a copy take it),
    ``settings_saved(ProjectSettings)`` once saved, ``import_requested(path, is_sample)``
    after opening with a question set to import."""

    opened = Signal(object)
    open_failed = Signal(str)
    draft_saved = Signal(object)
    settings_changed = Signal(object)
    settings_saved = Signal(object)
    import_requested = Signal(str, bool)

    def __init__(self, runner: JobRunner, settings: QSettings,
                 show_problem: Callable[[str, str], None], parent=None):
        super().__init__(parent)
        self.runner, self.settings, self.show_problem = runner, settings, show_problem
        self.state: ProjectState | None = None
        self.busy: Callable[[], str] = lambda: ""  # why no other project may open now
        self._draft: Wording | None = None
        self._draft_timer = QTimer(self, singleShot=True, interval=DRAFT_SAVE_MS)
        self._draft_timer.timeout.connect(self.save_draft)

    @property
    def project(self):
        return self.state.project if self.state is not None else None

    @property
    def qset(self):
        return self.state.qset if self.state is not None else None

    # -- opening -------------------------------------------------------------------------
    def open_project(self, path: str | Path, *, demo: bool = False,
                     then_import: str | None = None) -> Job | None:
        """Open a project file in a job (``demo``: build the sample project first)."""
        why = self.busy()
        if why:
            self.show_problem("Busy", f"{why} Cancel it (Esc) before opening another project.")
            return None
        path = Path(path)

        def work(ctx):
            project = Project.open_demo(path).value if demo else None
            return load_state(path, project), bool(then_import and recipe_for(then_import))

        def done(result):
            state, sample = result
            self.show(state)
            if then_import:
                self.import_requested.emit(then_import, sample)

        def failed(message):
            self.open_failed.emit(message)
            self.show_problem("The project did not open",
                              f"{message}\n\nThe project shown before stays open.")

        return self.runner.submit(work, done=done, failed=failed, name="open the project")

    def show(self, state: ProjectState) -> None:
        """Make ``state`` the open project (after opening or importing a set)."""
        if self.state is not None and self.state.project.path != state.project.path:
            self.save_draft()
        self.state = state
        self.settings.setValue("last_project", str(state.project.path))
        files.remember_recent(self.settings, str(state.project.path))
        self.opened.emit(state)

    # -- the draft -----------------------------------------------------------------------
    def draft_edited(self, wording: Wording) -> None:
        """The editor changed: save the draft a moment after the last edit."""
        if self.state is None:
            return
        self._draft = wording
        self._draft_timer.start()

    def save_draft(self) -> Job | None:
        """Save the editor's text and placement to the project now (a job)."""
        self._draft_timer.stop()
        wording, self._draft = self._draft, None
        if self.state is None or wording is None:
            return None
        project = self.state.project
        self.state.draft = wording
        return self.runner.submit(
            lambda ctx: operations.save_draft(project, wording=wording),
            done=lambda _w: self.draft_saved.emit(wording), name="save the draft")

    def note_graded(self, wording: Wording) -> None:
        """A grade saved the draft itself: nothing is left to save."""
        self._draft_timer.stop()
        self._draft = None
        if self.state is not None:
            self.state.draft = wording

    # -- the project's settings ----------------------------------------------------------
    def save_settings(self, settings: ProjectSettings) -> Job | None:
        """Make ``settings`` (max tokens, temperature, seed, answer mode, suggestion engine)
        the project's own,
        shared with the CLI, in a job; the runner then emits project_changed(settings)."""
        if self.state is None or settings == self.state.settings:
            return None
        project, self.state.settings = self.state.project, settings
        self.settings_changed.emit(settings)
        return self.runner.submit(
            lambda ctx: operations.set_settings(project, settings=settings),
            done=self.settings_saved.emit, name="save the settings",
            failed=lambda message: self.show_problem("The settings were not saved", message))
