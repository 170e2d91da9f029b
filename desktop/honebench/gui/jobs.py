"""The one way the window runs work off the GUI thread.

``JobRunner.submit(fn)`` runs ``fn(ctx)`` on a worker thread. Its result, its error (as a
readable message) and any progress it reports arrive back on the GUI thread, through the
callbacks given to ``submit`` and through the runner's and the job's signals. A job asked
to cancel sees ``ctx.cancel_event`` set; it may return what it has (delivered as done) or
raise ``JobCancelled`` (delivered as cancelled).

Operations return ``Done(value, changes)`` (honebench.core.changes): the runner then emits
``project_changed(changes)`` on the GUI thread, and the done callback gets ``value``. Views
subscribe to that one signal instead of being refreshed by hand.

The model lane: jobs submitted with ``uses_model=True`` run one at a time, in the order
asked. A job waiting for the lane is told so through its progress callback
(``Stage("waiting for the model: …")``) and ``lane_changed`` says what runs and what waits,
so two users of the model never meet inside it.
"""
from __future__ import annotations

import collections
import itertools
import logging
import threading
import time
import traceback
from typing import Any, Callable

from PySide6.QtCore import (QCoreApplication, QEventLoop, QObject, QRunnable, Qt, QThreadPool,
                            Signal, Slot)

from ..core.changes import Changes, Done
from ..core.engines.base import EngineError
from ..core.events import Stage
from ..core.sets import SetError
from ..core.store import StoreError

log = logging.getLogger("honebench.jobs")

# Errors whose message is written for the user; anything else is a bug and says its type.
EXPECTED_ERRORS = (SetError, EngineError, StoreError, ValueError, LookupError, OSError)


class JobCancelled(Exception):
    """Raised inside a job that stops early because it was asked to cancel."""


def error_message(exc: BaseException) -> str:
    """A readable one-paragraph message for an exception raised in a job."""
    text = str(exc).strip()
    if isinstance(exc, KeyError) and text.startswith(("'", '"')):
        text = text[1:-1]
    if isinstance(exc, EXPECTED_ERRORS) and len(text.split()) > 1:  # a sentence for the user
        return text
    return (f"{type(exc).__name__}: {text or 'no details'} "
            "(this is a honebench bug; please report it)")


class JobContext:
    """What a job's function gets: the cancel flag and a way to report progress."""

    def __init__(self, job: "Job"):
        self._job = job
        self.cancel_event: threading.Event = job.cancel_event

    @property
    def cancelled(self) -> bool:
        return self.cancel_event.is_set()

    def check_cancel(self) -> None:
        """Raise JobCancelled when the job was asked to stop."""
        if self.cancel_event.is_set():
            raise JobCancelled()

    def report(self, payload: Any) -> None:
        """Send ``payload`` to the GUI thread (the job's progress callback); a ``Changes``
        value is emitted as ``project_changed`` instead (work committed mid-run)."""
        self._job.relay.event.emit(self._job.id, "progress", payload)


class _Relay(QObject):
    """Lives on the GUI thread; its signal carries worker events there (queued)."""

    event = Signal(int, str, object)


class Job(QObject):
    """One submitted piece of work. Its signals are always emitted on the GUI thread."""

    done = Signal(object)
    failed = Signal(str)
    progress = Signal(object)
    cancelled = Signal()
    finished = Signal()  # after done, failed or cancelled

    def __init__(self, job_id: int, name: str, relay: _Relay):
        super().__init__()
        self.id, self.name, self.relay = job_id, name, relay
        self.cancel_event = threading.Event()
        self.state = "queued"  # queued | waiting | running | done | failed | cancelled
        self.uses_model = False
        self.result: Any = None
        self.error: str | None = None
        self.runnable: QRunnable | None = None

    def cancel(self) -> None:
        """Ask the job to stop; a job still waiting for a thread or the model never starts
        (one waiting for the model is delivered as cancelled at once)."""
        already = self.cancel_event.is_set()
        self.cancel_event.set()
        if self.state == "waiting" and not already:
            self.relay.event.emit(self.id, "cancelled", None)

    @property
    def is_finished(self) -> bool:
        return self.state in ("done", "failed", "cancelled")

    def __repr__(self) -> str:
        return f"<Job {self.id} {self.name!r} {self.state}>"


class _Runnable(QRunnable):
    def __init__(self, job: Job, fn: Callable[[JobContext], Any]):
        super().__init__()
        self.setAutoDelete(False)
        self.job, self.fn = job, fn

    def run(self) -> None:
        job, emit = self.job, self.job.relay.event.emit
        if job.cancel_event.is_set():
            emit(job.id, "cancelled", None)
            return
        emit(job.id, "started", None)
        try:
            result = self.fn(JobContext(job))
        except JobCancelled:
            emit(job.id, "cancelled", None)
        except BaseException as exc:  # delivered to the GUI thread as a message
            log.debug("job %s failed:\n%s", job.name, traceback.format_exc())
            emit(job.id, "failed", error_message(exc))
        else:
            emit(job.id, "done", result)


class JobRunner(QObject):
    """Runs jobs on its own thread pool and delivers their outcome on the GUI thread."""

    job_started = Signal(object)
    project_changed = Signal(object)  # Changes, after an operation that returned Done
    lane_changed = Signal(str)  # "" when the model is free, else what runs and what waits
    job_finished = Signal(object)  # the Job, whatever its outcome
    job_failed = Signal(object, str)  # every failure, handled or not
    unhandled_error = Signal(str, str)  # (job name, message) for jobs without a failed callback
    idle = Signal()

    def __init__(self, parent: QObject | None = None, max_threads: int = 4):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(max_threads)
        self.relay = _Relay()
        self.relay.event.connect(self._on_event, Qt.ConnectionType.QueuedConnection)
        self._jobs: dict[int, tuple[Job, dict]] = {}
        self._ids = itertools.count(1)
        self._lane: collections.deque[Job] = collections.deque()  # waiting for the model
        self._lane_job: Job | None = None  # the one job using the model

    def submit(self, fn: Callable[[JobContext], Any], *, done: Callable | None = None,
               failed: Callable[[str], None] | None = None,
               progress: Callable[[Any], None] | None = None,
               cancelled: Callable[[], None] | None = None, name: str = "",
               uses_model: bool = False) -> Job:
        """Run ``fn(ctx)`` on a worker thread; callbacks run on the GUI thread.
        ``uses_model``: wait for the model lane (one such job at a time)."""
        job = Job(next(self._ids), name or getattr(fn, "__name__", "job"), self.relay)
        job.uses_model = uses_model
        self._jobs[job.id] = (job, {"done": done, "failed": failed, "progress": progress,
                                    "cancelled": cancelled})
        job.runnable = _Runnable(job, fn)
        if not uses_model:
            self._pool.start(job.runnable)
        elif self._lane_job is None:
            self._lane_job = job
            self._pool.start(job.runnable)
            self._lane_report()
        else:
            job.state = "waiting"
            self._lane.append(job)
            self._call(job, progress, Stage(f"waiting for the model: {self._lane_job.name} "
                                            "runs first"))
            self._lane_report()
        return job

    def model_job(self) -> Job | None:
        """The job using the model now, if any."""
        return self._lane_job

    def waiting(self) -> list[Job]:
        """Jobs waiting for the model, first first."""
        return list(self._lane)

    def cancel_model_jobs(self) -> None:
        """Cancel the job using the model and every job waiting for it."""
        for job in [self._lane_job, *self._lane]:
            if job is not None:
                job.cancel()

    def _lane_report(self) -> None:
        if self._lane_job is None:
            self.lane_changed.emit("")
            return
        text = f"model: {self._lane_job.name}"
        if self._lane:
            text += " · waiting: " + ", ".join(j.name for j in self._lane)
        self.lane_changed.emit(text)

    def _lane_next(self, finished: Job) -> None:
        """A lane job delivered its outcome: start the next one waiting (a cancelled one
        is delivered as cancelled without running)."""
        if finished is not self._lane_job:
            if finished in self._lane:
                self._lane.remove(finished)
                self._lane_report()
            return
        self._lane_job = None
        if self._lane:
            job = self._lane.popleft()
            self._lane_job = job
            job.state = "queued"
            self._pool.start(job.runnable)
        self._lane_report()

    def active(self) -> list[Job]:
        """Jobs submitted and not yet finished (their outcome not yet delivered)."""
        return [job for job, _ in self._jobs.values()]

    def cancel_all(self) -> None:
        for job in self.active():
            job.cancel()

    def wait_idle(self, ms: int = 30_000) -> bool:
        """Process events until every job has delivered its outcome; False on timeout."""
        deadline = time.monotonic() + ms / 1000
        app = QCoreApplication.instance()
        while self._jobs:
            if time.monotonic() > deadline:
                return False
            if app is not None:
                app.processEvents(QEventLoop.ProcessEventsFlag.AllEvents, 20)
            time.sleep(0.002)
        return True

    @Slot(int, str, object)
    def _on_event(self, job_id: int, kind: str, payload: object) -> None:
        entry = self._jobs.get(job_id)
        if entry is None:
            return
        job, callbacks = entry
        if kind == "started":
            job.state = "running"
            self.job_started.emit(job)
            return
        if kind == "progress":
            if job.is_finished:
                return
            if isinstance(payload, Changes):  # committed mid-run (e.g. one auto-hone round)
                if payload:
                    self.project_changed.emit(payload)
                return
            self._call(job, callbacks["progress"], payload)
            job.progress.emit(payload)
            return
        del self._jobs[job_id]
        job.state = kind
        if kind == "done":
            if isinstance(payload, Done):  # an operation: say what changed, then its value
                if payload.changes:
                    self.project_changed.emit(payload.changes)
                payload = payload.value
            job.result = payload
            self._call(job, callbacks["done"], payload)
            job.done.emit(payload)
        elif kind == "failed":
            job.error = str(payload)
            self.job_failed.emit(job, job.error)
            if callbacks["failed"] is not None:
                self._call(job, callbacks["failed"], job.error)
            else:
                self.unhandled_error.emit(job.name, job.error)
            job.failed.emit(job.error)
        else:
            self._call(job, callbacks["cancelled"])
            job.cancelled.emit()
        if job.uses_model:
            self._lane_next(job)
        job.finished.emit()
        self.job_finished.emit(job)
        if not self._jobs:
            self.idle.emit()

    def _call(self, job: Job, callback: Callable | None, *args) -> None:
        """Run a GUI-side callback; a bug in it becomes a message, not a crash."""
        if callback is None:
            return
        try:
            callback(*args)
        except Exception as exc:  # a GUI callback bug must not kill the event loop
            log.exception("callback of job %s failed", job.name)
            self.unhandled_error.emit(job.name, error_message(exc))
