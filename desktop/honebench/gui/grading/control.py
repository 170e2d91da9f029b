"""Running a grade: one run at a time through the model lane, marks streamed into the grade
sheet one by one, cancel keeps what is finished. A grade asked for before the model has
loaded starts once it has. Only tuning items are graded here; held-out items are graded
only by confirming a shelf version."""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal

from ...core.events import Finished, Marked, Stage, Started
from ...core.wording import Wording
from ..jobs import Job, JobRunner
from ..project import operations
from ..project.session import ProjectSession
from ...core.project import SPLIT_WORDS
from ...core.views import GradeResult
from ..project.state import interrupted_text, run_caption
from .resume_picker import pick_interrupted_run
from .sheet import GradeSheetPanel


def label_set(state) -> set[str] | None:
    """The labels of a label check (its own list, else the set's expected answers)."""
    if state is None or state.check.kind != "label":
        return None
    labels = getattr(state.check, "labels", None) or ()
    return set(labels) or set(state.expected.values())


class GradeControl(QObject):
    """Signals: ``started(Job)``, ``finished(GradeResult)``, ``failed(str)``,
    ``running_changed(bool)``."""

    # which interrupted run to resume: (runs, dialog parent) -> run id or None (tests swap it)
    choose_run = staticmethod(pick_interrupted_run)
    started = Signal(object)
    finished = Signal(object)
    failed = Signal(str)
    running_changed = Signal(bool)

    def __init__(self, runner: JobRunner, session: ProjectSession, sheet: GradeSheetPanel,
                 engine, show_problem: Callable[[str, str], None],
                 status: Callable[[str], None], parent=None):
        super().__init__(parent)
        self.runner, self.session, self.sheet, self.engine = runner, session, sheet, engine
        self.show_problem, self.status = show_problem, status
        self.job: Job | None = None
        self.pending: tuple | None = None
        self.last: GradeResult | None = None
        self.limit: int | None = None  # grade at most this many items (checks, pictures)
        engine.engine_ready.connect(self._on_engine_ready)
        sheet.cancel_requested.connect(self.cancel)
        session.opened.connect(self.show_state)

    @property
    def running(self) -> bool:
        return self.job is not None or self.pending is not None

    def show_state(self, state) -> None:
        """A project was opened: show its last run on the sheet."""
        qset = state.qset
        self.sheet.set_has_set(qset is not None)
        self.sheet.set_labels(label_set(state))
        caption = (run_caption(state.last_run, len(state.marks)) if state.last_run
                   else "Grade sheet · no grade run yet")
        self.sheet.show_marks(state.marks, state.expected, caption)
        self.sheet.show_summary(state.summary, interrupted_text(state))

    def grade(self, wording: Wording, limit: int | None = None) -> Job | None:
        """Grade ``wording`` over the tuning items in a job on the model lane."""
        state = self.session.state
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
        limit = limit or self.limit
        self.session.note_graded(wording)
        handle = self.engine.handle
        self.sheet.start_run(0, state.expected, f"Grading {SPLIT_WORDS['tuning']}…")
        self.status("Grading the tuning items…")
        if handle is None:
            self.pending = (wording, limit)
            self.sheet.waiting("the model is still loading")
            self.running_changed.emit(True)
            return None
        project, settings = state.project, self.engine.project_settings()
        self.job = self.runner.submit(
            lambda ctx: operations.grade(project, handle, wording=wording, settings=settings,
                                         split="tuning", limit=limit,
                                         cancel=ctx.cancel_event, on_event=ctx.report),
            progress=self._on_event, done=self._on_done, failed=self._on_failed,
            cancelled=lambda: self._on_failed("cancelled before it started"),
            name="grading", uses_model=True)
        self.running_changed.emit(True)
        self.started.emit(self.job)
        return self.job

    def resume(self, run_id: int | None = None) -> Job | None:
        """Finish an interrupted grade run as a new run, in a job on the model lane; marks
        stream into the sheet (those it had come from the cache). Without ``run_id``: the
        only one, or the one the user picks when there are several."""
        state = self.session.state
        if self.job is not None or state is None or not state.interrupted:
            return None
        handle = self.engine.handle
        if handle is None:
            self.show_problem("The model is still loading",
                              "Resume the interrupted run once the model has loaded.")
            return None
        if run_id is None:
            run_id = self.choose_run(state.interrupted, self.parent())
            if run_id is None:
                return None
        latest = next((u.run for u in state.interrupted if u.run.id == run_id), None)
        if latest is None:
            self.show_problem("No such interrupted run",
                              f"Run {run_id} is not among the interrupted runs.")
            return None
        self.sheet.start_run(0, state.expected,
                             f"Resuming run {latest.id} (graded items come from the cache)…")
        self.status(f"Resuming run {latest.id}…")
        project = state.project
        self.job = self.runner.submit(
            lambda ctx: operations.resume(project, handle, run_id=latest.id,
                                          cancel=ctx.cancel_event, on_event=ctx.report),
            progress=self._on_event, done=self._on_resumed, failed=self._on_failed,
            cancelled=lambda: self._on_failed("cancelled before it started"),
            name="resuming a grade run", uses_model=True)
        self.running_changed.emit(True)
        self.started.emit(self.job)
        return self.job

    def _on_resumed(self, resumed) -> None:
        self.job = None
        state, view = self.session.state, resumed.view
        if state is not None:
            state.interrupted = resumed.interrupted
            if view is not None:
                state.last_run, state.marks, state.summary = view.run, view.marks, view.summary
        outcome = resumed.result.outcome
        self.sheet.finish_run(f"Resumed run {resumed.result.resumed}")
        if view is not None:
            self.sheet.show_marks(view.marks, state.expected if state else {},
                                  run_caption(view.run, len(view.marks)))
            self.sheet.show_summary(view.summary,
                                    interrupted_text(state) if state else "")
        self.status(f"Run {resumed.result.resumed} resumed as run {outcome.run_id}: "
                    f"{outcome.status}, {outcome.model_calls} items asked of the model")
        self.running_changed.emit(False)

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()
            self.sheet.cancelling()
            self.status("Cancelling; finished marks are kept…")
        elif self.pending is not None:
            self.pending = None
            self.sheet.finish_run("Grading cancelled before it started")
            self.running_changed.emit(False)

    def _on_event(self, event) -> None:
        if isinstance(event, Marked):
            self.sheet.add_mark(event.mark, event.progress)
        elif isinstance(event, Started):
            self.sheet.set_total(event.total)
        elif isinstance(event, Stage):
            self.sheet.waiting(event.text.removeprefix("waiting for the model: "))
        elif isinstance(event, Finished) and event.status == "cancelled":
            self.status("Cancelled; finished marks are kept")

    def _on_done(self, result: GradeResult) -> None:
        self.job, self.last = None, result
        state = self.session.state
        if state is not None:
            state.last_run, state.summary = result.run, result.summary
            state.marks = self.sheet.model.marks()
        caption = run_caption(result.run, len(result.outcome.marks))
        self.sheet.finish_run(caption)
        self.sheet.show_summary(result.summary)
        self.status(f"{caption}: {result.summary.score.text()}")
        self.running_changed.emit(False)
        self.finished.emit(result)

    def _on_failed(self, message: str) -> None:
        self.job = None
        self.sheet.finish_run("Grade run stopped; finished marks are kept")
        self.running_changed.emit(False)
        if message != "cancelled before it started":
            self.show_problem("The grade run stopped", message)
        self.failed.emit(message)

    def _on_engine_ready(self, _handle) -> None:
        if self.pending is not None:
            (wording, limit), self.pending = self.pending, None
            self.grade(wording, limit)
