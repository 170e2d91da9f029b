"""The shelf's actions: keep the editor's wording, restore a version, notes and decisions.
Each store write is a job; the shelf panel is refreshed from what the job returns."""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal

from ..core.wording import Wording
from . import project_tasks as tasks
from .editor import WordingEditor
from .jobs import Job, JobRunner


class ShelfControl(QObject):
    """Signals: ``changed(list[ShelfRow])`` after a keep, note or decision is saved."""

    changed = Signal(object)

    def __init__(self, runner: JobRunner, panel, editor: WordingEditor,
                 state: Callable[[], "tasks.ProjectState | None"], status: Callable[[str], None],
                 parent=None):
        super().__init__(parent)
        self.runner, self.panel, self.editor = runner, panel, editor
        self.state, self.status = state, status
        self.restored_from: int | None = None  # the parent of the next kept wording
        panel.restore_requested.connect(self.restore)
        panel.note_edited.connect(self.set_note)
        panel.decision_requested.connect(self.decide)

    def show_rows(self, rows) -> None:
        state = self.state()
        if state is not None:
            state.shelf = rows
        self.panel.set_rows(rows)

    def keep(self) -> Job | None:
        """Put the editor's wording on the shelf; the shelf then shows it selected."""
        state = self.state()
        if state is None:
            return None
        project, wording, parent = state.project, self.editor.wording(), self.restored_from

        def done(result):
            wording_id, rows = result
            self.show_rows(rows)
            self.panel.select(wording_id)
            entry = next((r.entry for r in rows if r.entry.id == wording_id), None)
            if entry is not None:
                self.status(f"Kept on the shelf as {entry.label}")
            self.changed.emit(rows)

        return self.runner.submit(lambda ctx: tasks.keep(project, wording, parent), done=done,
                                  name="keep the wording")

    def restore(self, wording_id: int) -> None:
        """Copy a shelf entry into the editor (Ctrl+Z takes it back)."""
        state = self.state()
        rows = state.shelf if state else []
        entry = next((r.entry for r in rows if r.entry.id == wording_id), None)
        if entry is None:
            return
        self.editor.set_wording(Wording(entry.text, entry.placement), undoable=True)
        self.restored_from = entry.id
        self.status(f"Restored {entry.label} into the editor (Ctrl+Z undoes)")

    def set_note(self, wording_id: int, note: str) -> Job | None:
        state = self.state()
        if state is None:
            return None

        def done(rows):  # the panel already shows the note: only keep the rows
            state.shelf = rows
            self.changed.emit(rows)

        return self.runner.submit(lambda ctx: tasks.set_note(state.project, wording_id, note),
                                  done=done, name="save the note")

    def decide(self, wording_id: int, verdict: str) -> Job | None:
        state = self.state()
        if state is None:
            return None

        def done(rows):
            self.show_rows(rows)
            self.changed.emit(rows)

        return self.runner.submit(lambda ctx: tasks.decide(state.project, wording_id, verdict),
                                  done=done, name="record the decision")
