"""The shelf's acts and its one copy of the rows.

Keep the editor's wording, restore a version into the editor, notes and decisions: each
store write is an operation in a job. The shelf model (the rows every view reads) is
re-read whenever an operation reports a shelf change through ``project_changed``.
"""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal

from ...core.changes import Changes
from ...core.wording import Wording
from ..grading.editor import WordingEditor
from ..jobs import Job, JobRunner
from ..project import operations
from ..project.session import ProjectSession
from .model import ShelfModel
from .panel import ShelfPanel


class ShelfControl(QObject):
    """Signals: ``kept(ShelfEntry)`` once a keep is saved (the rows follow by
    ``model.rows_changed``)."""

    kept = Signal(object)

    def __init__(self, runner: JobRunner, session: ProjectSession, model: ShelfModel,
                 panel: ShelfPanel, editor: WordingEditor, status: Callable[[str], None],
                 show_problem: Callable[[str, str], None], parent=None):
        super().__init__(parent)
        self.runner, self.session, self.model, self.panel = runner, session, model, panel
        self.editor, self.status, self.show_problem = editor, status, show_problem
        self.restored_from: int | None = None  # the parent of the next kept wording
        self._select_next: int | None = None
        self._generation = 0
        panel.restore_requested.connect(self.restore)
        panel.note_edited.connect(self.set_note)
        panel.decision_requested.connect(self.decide)
        runner.project_changed.connect(self._on_changed)
        session.opened.connect(self._on_opened)
        model.rows_changed.connect(self._after_rows)

    # -- the rows ------------------------------------------------------------------------
    def _on_opened(self, state) -> None:
        self._generation += 1
        self.restored_from = None
        self.model.set_rows(state.shelf)

    def _on_changed(self, changes: Changes) -> None:
        if changes.shelf:
            self.refresh()

    def refresh(self) -> Job | None:
        """Re-read the shelf rows (a job); the latest request wins."""
        project = self.session.project
        if project is None:
            return None
        self._generation += 1
        generation = self._generation

        def done(rows):
            if generation == self._generation:
                self.model.set_rows(rows)

        return self.runner.submit(lambda ctx: operations.shelf_rows(project), done=done,
                                  name="read the shelf")

    def _after_rows(self, _rows) -> None:
        if self._select_next is not None and self.model.row_of(self._select_next) is not None:
            self.panel.select(self._select_next)
            self._select_next = None

    # -- acts ----------------------------------------------------------------------------
    def keep(self) -> Job | None:
        """Put the editor's wording on the shelf; the shelf then shows it selected."""
        project = self.session.project
        wording = self.editor.wording()
        if project is None:
            return None
        if not wording.text.strip():
            self.show_problem("The wording is empty", "There is nothing to keep.")
            return None

        def done(entry):
            self._select_next = entry.id
            self.status(f"Kept on the shelf as {entry.label}")
            self.kept.emit(entry)

        return self.runner.submit(
            lambda ctx: operations.keep(project, wording=wording, parent_id=self.restored_from),
            done=done, failed=lambda m: self.show_problem("The wording was not kept", m),
            name="keep the wording")

    def load_into_editor(self, wording: Wording, parent_id: int | None) -> None:
        """Put a wording into the editor as one undoable edit; a keep then records
        ``parent_id`` as its parent."""
        self.editor.set_wording(wording, undoable=True)
        self.restored_from = parent_id

    def restore(self, wording_id: int) -> None:
        """Copy a shelf entry into the editor (Ctrl+Z takes it back)."""
        entry = self.model.entry(wording_id)
        if entry is None:
            return
        self.load_into_editor(Wording(entry.text, entry.placement), entry.id)
        self.status(f"Restored {entry.label} into the editor (Ctrl+Z undoes)")

    def set_note(self, wording_id: int, note: str) -> Job | None:
        project = self.session.project
        if project is None:
            return None
        return self.runner.submit(
            lambda ctx: operations.set_note(project, wording_id=wording_id, note=note),
            failed=lambda m: self.show_problem("The note was not saved", m),
            name="save the note")

    def decide(self, wording_id: int, verdict: str) -> Job | None:
        project = self.session.project
        if project is None:
            return None
        act = operations.keep_entry if verdict == "kept" else operations.set_aside
        return self.runner.submit(
            lambda ctx: act(project, wording_id=wording_id),
            failed=lambda m: self.show_problem("The decision was not saved", m),
            name="record the decision")
