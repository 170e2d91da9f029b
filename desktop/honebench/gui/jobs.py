"""The one way the window runs work off the GUI thread.

``JobRunner.submit(fn)`` runs ``fn(ctx)`` on a worker thread. Its result, its error (as a
readable message) and any progress it reports arrive back on the GUI thread, through the
callbacks given to ``submit`` and through the runner's and the job's signals. A job asked
to cancel sees ``ctx.cancel_event`` set; it may return what it has (delivered as done) or
raise ``JobCancelled`` (delivered as cancelled).
"""
from __future__ import annotations

import itertools
import logging
import threading
import time
import traceback
from typing import Any, Callable

from PySide6.QtCore import (QCoreApplication, QEventLoop, QObject, QRunnable, Qt, QThreadPool,
                            Signal, Slot)

from ..core.engines.base import EngineError
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
        """Send ``payload`` to the GUI thread (the job's progress callback)."""
        self._job._relay.event.emit(self._job.id, "progress", payload)


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
        self.id, self.name, self._relay = job_id, name, relay
        self.cancel_event = threading.Event()
        self.state = "queued"  # queued | running | done | failed | cancelled
        self.result: Any = None
        self.error: str | None = None
        self._runnable: QRunnable | None = None

    def cancel(self) -> None:
        """Ask the job to stop; a job still waiting for a thread never starts."""
        self.cancel_event.set()

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
        job, emit = self.job, self.job._relay.event.emit
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
    job_finished = Signal(object)  # the Job, whatever its outcome
    job_failed = Signal(object, str)  # every failure, handled or not
    unhandled_error = Signal(str, str)  # (job name, message) for jobs without a failed callback
    idle = Signal()

    def __init__(self, parent: QObject | None = None, max_threads: int = 4):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(max_threads)
        self._relay = _Relay()
        self._relay.event.connect(self._on_event, Qt.ConnectionType.QueuedConnection)
        self._jobs: dict[int, tuple[Job, dict]] = {}
        self._ids = itertools.count(1)

    def submit(self, fn: Callable[[JobContext], Any], *, done: Callable | None = None,
               failed: Callable[[str], None] | None = None,
               progress: Callable[[Any], None] | None = None,
               cancelled: Callable[[], None] | None = None, name: str = "") -> Job:
        """Run ``fn(ctx)`` on a worker thread; callbacks run on the GUI thread."""
        job = Job(next(self._ids), name or getattr(fn, "__name__", "job"), self._relay)
        self._jobs[job.id] = (job, {"done": done, "failed": failed, "progress": progress,
                                    "cancelled": cancelled})
        job._runnable = _Runnable(job, fn)
        self._pool.start(job._runnable)
        return job

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
            self._call(job, callbacks["progress"], payload)
            job.progress.emit(payload)
            return
        del self._jobs[job_id]
        job.state = kind
        if kind == "done":
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
