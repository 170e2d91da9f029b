"""The shelf's "Which phrases matter" act: phrase importance of the selected version.

Runs the core's analysis (each phrase left out alone, graded on the tuning items) as one
operation on the model lane, with progress, an ETA and a Stop button; when it ends, the
version is in the editor with its phrases shaded (gui/grading/phrase_shading.py).
"""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal
from PySide6.QtWidgets import (QHBoxLayout, QLabel, QPushButton, QSizePolicy, QVBoxLayout,
                               QWidget)

from ...core.events import Marked, Stage, Started, progress_text
from ...core.importance import split_phrases
from ...core.wording import Wording
from ..actions import make_action
from ..jobs import Job, JobRunner
from ..project import operations

START_TEXT = "Which &phrases matter…"
STOP_TEXT = "Stop the phrase check"


class ImportanceBar(QWidget):
    """A button and one line of progress, at the top of the shelf."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.button = QPushButton(START_TEXT)
        self.button.setAccessibleName("Which phrases of the selected version matter")
        self.button.setToolTip("Leave each phrase of the selected version out in turn, grade "
                               "it on the tuning items and shade the phrases in the editor by "
                               "how much the score changes")
        self.progress = QLabel()
        self.progress.setWordWrap(True)
        self.progress.setAccessibleName("Progress of the phrase check")
        self.progress.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Minimum)
        self.progress.hide()
        row = QHBoxLayout()
        row.addWidget(self.button)
        row.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 4)
        layout.addLayout(row)
        layout.addWidget(self.progress)

    def say(self, text: str) -> None:
        self.progress.setText(text)
        self.progress.setVisible(bool(text))


class ImportanceControl(QObject):
    """Signals: ``shown(ImportanceResult)`` once the editor shades a finished analysis."""

    shown = Signal(object)

    def __init__(self, runner: JobRunner, session, shelf, panel, editor, engine, *,
                 load_into_editor: Callable[[Wording, int], None],
                 status: Callable[[str], None], show_problem: Callable[[str, str], None],
                 window, parent=None):
        super().__init__(parent)
        self.runner, self.session, self.shelf, self.panel = runner, session, shelf, panel
        self.editor, self.engine, self.load_into_editor = editor, engine, load_into_editor
        self.status, self.show_problem, self.window = status, show_problem, window
        self.job: Job | None = None
        self.bar = ImportanceBar()
        panel.add_above(self.bar)
        self.action = window.add_action("run", make_action(
            window, START_TEXT, self.start_or_stop, "",
            "Which phrases of the selected shelf version carry its score"))
        self.bar.button.clicked.connect(self.start_or_stop)
        panel.selection_changed.connect(lambda _id: self.update_enabled())
        engine.engine_ready.connect(lambda _h: self.update_enabled())
        session.opened.connect(lambda _s: self.update_enabled())
        self.update_enabled()

    def can_start(self) -> bool:
        return (self.job is None and self.session.qset is not None
                and self.panel.selected_id() is not None and self.engine.handle is not None)

    def update_enabled(self) -> None:
        running = self.job is not None
        self.bar.button.setText(STOP_TEXT if running else START_TEXT.replace("&", ""))
        self.action.setText(STOP_TEXT if running else START_TEXT)
        for widget in (self.bar.button, self.action):
            widget.setEnabled(running or self.can_start())

    def start_or_stop(self) -> Job | None:
        if self.job is not None:
            self.job.cancel()
            self.bar.say("Stopping after the items being graded…")
            return None
        return self.start()

    def start(self) -> Job | None:
        """Analyse the selected shelf version."""
        wid = self.panel.selected_id()
        if not self.can_start() or wid is None:
            return None
        entry = self.shelf.entry(wid)
        if len(split_phrases(entry.text)) < 2:
            self.show_problem("Nothing to leave out",
                              f"{entry.label} is one phrase. Phrase importance leaves out one "
                              "phrase at a time; phrases end at . ! ? or ;")
            return None
        project, handle = self.session.project, self.engine.handle
        settings = self.engine.project_settings()
        self.bar.say(f"Checking the phrases of {entry.label}…")
        self.job = self.runner.submit(
            lambda ctx: operations.importance(project, handle, wording_id=wid,
                                              settings=settings, cancel=ctx.cancel_event,
                                              on_event=ctx.report),
            done=lambda result: self._done(result, project), failed=self._failed, cancelled=self._cancelled,
            progress=self._progress, name=f"phrase importance of {entry.label}",
            uses_model=True)
        self.update_enabled()
        return self.job

    def _progress(self, event) -> None:
        if isinstance(event, Marked):
            self.bar.say(progress_text(event.progress))
        elif isinstance(event, Stage):
            self.bar.say(event.text)
        elif isinstance(event, Started) and event.what:
            self.bar.say(event.what)

    def _end(self) -> None:
        self.job = None
        self.update_enabled()

    def _failed(self, message: str) -> None:
        self._end()
        self.bar.say("")
        self.show_problem("The phrase check did not finish", message)

    def _cancelled(self) -> None:
        self._end()
        self.bar.say("Stopped; the answers graded so far are in the cache.")

    def _done(self, result, project) -> None:
        self._end()
        if result.status != "finished":
            self._cancelled()
            return
        if project is not self.session.project:  # another project was opened meanwhile
            self.bar.say("")
            return
        if self.editor.wording() != Wording(result.text, result.placement):
            self.load_into_editor(Wording(result.text, result.placement), result.wording_id)
        self.editor.show_importance(result)
        measurable = sum(e.measurable for e in result.effects)
        text = (f"{result.label}: {measurable} of {len(result.effects)} phrases change the "
                f"score measurably ({result.n_items} tuning items); the editor shades them")
        self.bar.say(text + ".")
        self.status(f"Phrase importance of {text} (Ctrl+Z in the editor undoes the restore)")
        self.shown.emit(result)
