"""Running a grade: one job at a time, marks streamed into the grade sheet, cancel keeps
what is finished. A grade asked for before the model has loaded starts once it has."""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal

from ..core.wording import Wording
from . import project_tasks as tasks
from .engine_bar import EngineBar
from .grade_sheet_panel import GradeSheetPanel
from .jobs import Job, JobRunner


class GradeControl(QObject):
    """Signals: ``started(Job)``, ``finished(GradeResult)``, ``failed(str)``,
    ``running_changed(bool)``."""

    started = Signal(object)
    finished = Signal(object)
    failed = Signal(str)
    running_changed = Signal(bool)

    def __init__(self, runner: JobRunner, sheet: GradeSheetPanel, engine_bar: EngineBar,
                 show_problem: Callable[[str, str], None], status: Callable[[str], None],
                 parent=None):
        super().__init__(parent)
        self.runner, self.sheet, self.engine_bar = runner, sheet, engine_bar
        self.show_problem, self.status = show_problem, status
        self.job: Job | None = None
        self.pending: tuple | None = None
        self.last: tasks.GradeResult | None = None
        engine_bar.engine_ready.connect(self._on_engine_ready)

    @property
    def running(self) -> bool:
        return self.job is not None

    def grade(self, state: tasks.ProjectState | None, wording: Wording, split: str = "tuning",
              limit: int | None = None) -> Job | None:
        if self.job is not None:
            return self.job
        if state is None or state.qset is None:
            self.show_problem("Nothing to grade yet", "Import a question set first "
                              "(File › Import question set…).")
            return None
        if not wording.text.strip():
            self.show_problem("The wording is empty", "Write an instruction in the editor, "
                              "then grade.")
            return None
        handle = self.engine_bar.handle
        if handle is None:
            self.pending = (state, wording, split, limit)
            self.status("Grading starts once the model has loaded…")
            return None
        project, params = state.project, self.engine_bar.params()
        self.sheet.start_run(0, state.expected, f"Grading {tasks.SPLIT_WORDS[split]}…")
        self.job = self.runner.submit(
            lambda ctx: tasks.grade(project, handle, wording, params, split, limit,
                                    ctx.cancel_event, ctx.report),
            progress=self._on_progress, done=self._on_done, failed=self._on_failed,
            name="grade")
        self.running_changed.emit(True)
        self.started.emit(self.job)
        return self.job

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()
            self.sheet.cancelling()
            self.status("Cancelling; finished marks are kept…")
        self.pending = None

    def _on_progress(self, payload: tuple) -> None:
        if payload[0] == "start":
            total = payload[1]
            self.sheet.progress.setRange(0, max(total, 1))
            self.sheet.progress.setFormat(f"0/{total} graded · starting…")
        else:
            self.sheet.add_mark(payload[1], payload[2])

    def _on_done(self, result: tasks.GradeResult) -> None:
        self.job, self.last = None, result
        caption = tasks.run_caption(result.run, len(result.outcome.marks))
        self.sheet.finish_run(caption)
        self.sheet.show_summary(result.summary)
        self.status(f"{caption}: {result.summary.score.text()}")
        self.running_changed.emit(False)
        self.finished.emit(result)

    def _on_failed(self, message: str) -> None:
        self.job = None
        self.sheet.finish_run("Grade run stopped by an error; finished marks are kept")
        self.running_changed.emit(False)
        self.show_problem("The grade run stopped", message)
        self.failed.emit(message)

    def _on_engine_ready(self, _handle) -> None:
        if self.pending is not None:
            pending, self.pending = self.pending, None
            self.grade(*pending)
