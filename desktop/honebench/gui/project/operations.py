"""Every act the window performs on a project, in one place. No Qt.

Each function is one user act. It runs on a worker thread (the window's job mechanism calls
it), takes the project, the engine handle (``with handle as engine:``; None where no model is
needed), the act's own arguments, the project ``settings`` to answer with, a cancel flag and
``on_event`` (typed progress events of ``honebench.core.events``), and returns
``Done(value, changes)`` from the matching ``core.project.Project`` operation: the job
mechanism then emits ``project_changed(changes)`` and hands ``value`` to the view that asked.
"""
from __future__ import annotations

import contextlib
import threading
import time
from dataclasses import dataclass
from typing import Any, Callable

from ...core.changes import NOTHING, Changes, Done
from ...core.checks import CheckSpec
from ...core.events import Marked, Progress, Stage, Started
from ...core.project import ProjectSettings, preview_set
from ...core.sets import ColumnMapping
from ...core.wording import Wording
from .state import load_state

Listener = Callable[[Any], None]
EDITOR = -1  # stands for the editor's wording where a shelf id is expected


def _quiet(_event) -> None:
    pass


@dataclass(frozen=True)
class Candidate:
    """One suggestion being scored: its wording and its running score so far."""

    text: str
    passed: int
    done: int
    total: int


@dataclass(frozen=True)
class Candidates:
    """The running scores of the suggestions being scored (sent while they are graded)."""

    stage: str
    items: tuple[Candidate, ...]


@dataclass(frozen=True)
class RoundDone:
    """Auto-hone finished a round (committed): the round and the label of what it kept."""

    round: Any
    label: str


class _Watch:
    """Turns the core's Stage and Marked events of suggestions and auto-hone into Stage
    events with the items done, how many passed so far and an ETA from the stage's
    wall-clock rate (single marks are not passed on: the panels show the stage). While
    suggestions are scored it also reads their running runs (at most twice a second,
    through ``Project.open_runs``) and sends each one's running score as ``Candidates``."""

    def __init__(self, project, on_event: Listener):
        self.project, self.on_event = project, on_event
        self.stage, self.began, self.last, self.passed = "", 0.0, 0.0, 0
        self.previous = time.monotonic()  # when the last report came: the next stage's start

    def __call__(self, event) -> None:
        if isinstance(event, Started):
            self.stage, self.began, self.last, self.passed = (event.what, self.previous,
                                                              0.0, 0)
        elif isinstance(event, Stage):
            p = event.progress
            if p is None or p.done == 0:  # a new step begins
                self.stage, self.began, self.last, self.passed = (event.text, self.previous,
                                                                  0.0, 0)
            if p is None:
                self.on_event(event)
                return
            self._report(p.done, p.total)
        elif isinstance(event, Marked):
            self._report(event.progress.done, event.progress.total)
        elif isinstance(event, RoundDone | Candidates):
            self.on_event(event)

    def _report(self, done: int, total: int) -> None:
        now = time.monotonic()
        self.previous = now
        if done and (now - self.last >= 0.5 or done >= total):
            self.last = now
            self._read()
        elapsed = now - self.began
        eta = elapsed / done * (total - done) if done and total >= done else None
        self.on_event(Stage(self.stage, Progress(done, total, passed=self.passed,
                                                 elapsed=elapsed, eta=eta)))

    def _read(self) -> None:
        """The runs of this stage are the ones still running: the grader starts them all
        before the first mark and closes them after the last."""
        items = [Candidate(run.wording_text, passed, n, run.n_items)
                 for run, passed, n in self.project.open_runs("tuning")]
        self.passed = sum(c.passed for c in items)
        if self.stage.startswith("scoring") and items:
            self.on_event(Candidates(self.stage, tuple(items)))


# -- grading -----------------------------------------------------------------------------
def grade(project, engine, *, wording: Wording, settings: ProjectSettings | None = None,
          split: str = "tuning", limit: int | None = None,
          cancel: threading.Event | None = None, on_event: Listener = _quiet) -> Done:
    """Grade a wording over one split of the current set; marks arrive as Marked events.
    Held-out items are graded only through ``confirm``. Returns Done[GradeResult]."""
    with engine as model:
        return project.grade(model, wording, split=split, limit=limit, settings=settings,
                             on_event=on_event, cancel=cancel)


def confirm(project, engine, *, wording_id: int, settings: ProjectSettings | None = None,
            cancel=None, on_event: Listener = _quiet) -> Done:
    """Grade a shelf version on the held-out items (the one way to spend them)."""
    with engine as model:
        return project.confirm(model, wording_id, settings=settings, on_event=on_event,
                               cancel=cancel)


def compare(project, engine, *, a: int, b: int, split: str, editor: Wording,
            settings: ProjectSettings | None = None, cancel=None,
            on_event: Listener = _quiet) -> Done:
    """Compare A and B (wording ids or EDITOR) on a split, grading first whichever has no
    finished run there. Returns the core's Comparison."""
    first, second = (editor if key == EDITOR else key for key in (a, b))
    if engine is None:
        return project.compare(None, first, second, split=split, settings=settings,
                               on_event=on_event, cancel=cancel)
    with engine as model:
        return project.compare(model, first, second, split=split, settings=settings,
                               on_event=on_event, cancel=cancel)


def resume(project, engine, *, run_id: int | None = None, cancel=None,
           on_event: Listener = _quiet) -> Done:
    """Finish an interrupted grade run (default: the latest) as a new run; the items it had
    graded come back from the cache. Returns Done[Resumed]: the core's ResumeResult, the
    project's newest run as the grade sheet shows it, and the runs still interrupted."""
    with engine as model:
        done = project.resume(model, run_id, on_event=on_event, cancel=cancel)
    return Done(Resumed(done.value, project.last_run(), project.interrupted_runs()),
                done.changes)


@dataclass(frozen=True)
class Resumed:
    result: Any  # core.views.ResumeResult
    view: Any  # core.views.RunView of the newest run, or None
    interrupted: list


# -- suggestions and auto-hone -----------------------------------------------------------
def suggest(project, engine, *, strategy: str, count: int, base: Wording,
            other_id: int | None, settings: ProjectSettings | None = None, cancel=None,
            on_event: Listener = _quiet, proposer=None) -> Done:
    """Ask the model for scored variants (nothing is put on the shelf until kept);
    ``proposer`` (a handle; None: ``engine``) writes them, ``engine`` scores them.
    Returns Done[SuggestOutcome]."""
    with engine as model, _using(proposer, model) as writer:
        done = project.suggest(model, strategy, count=count, base=base, other=other_id,
                               settings=settings, on_event=_Watch(project, on_event),
                               cancel=cancel, proposer=writer)
    return Done(done.value.outcome, done.changes)


@contextlib.contextmanager
def _using(handle, default):
    """The engine of ``handle`` while it is in use, or ``default`` when there is none."""
    if handle is None:
        yield default
    else:
        with handle as engine:
            yield engine


def hone(project, engine, *, wording: Wording, strategy: str, budget,
         settings: ProjectSettings | None = None, cancel=None,
         on_event: Listener = _quiet, proposer=None) -> Done:
    """Rounds of suggestions, unattended. Sends Stage events, a RoundDone for the start and
    one per round and, after each round, the shelf change (the runner emits
    project_changed at once). ``proposer`` (a handle; None: ``engine``) writes the
    suggestions. Returns Done[HoneOutcome]."""
    watch = _Watch(project, on_event)
    with engine as model, _using(proposer, model) as writer:
        start = project.grade(model, wording, split="tuning", settings=settings,
                              on_event=watch, cancel=cancel)
        on_event(RoundDone(start.value.score, "start"))

        def on_round(rnd) -> None:
            label = project.entry(rnd.kept_id).label if rnd.kept_id else ""
            on_event(RoundDone(rnd, label))
            on_event(Changes(shelf=True, runs=True, marks=True))

        return project.hone(model, strategy=strategy, budget=budget, start=wording,
                            settings=settings, on_round=on_round, on_event=watch,
                            cancel=cancel, proposer=writer)


# -- the transfer check ------------------------------------------------------------------
def transfer(project, engine, *, choice, wording_ids: list[int],
             settings: ProjectSettings | None = None, cancel=None,
             on_event: Listener = _quiet) -> Done:
    """Grade shelf versions on a second engine (``choice``, a core EngineChoice: opened
    here, on the worker thread, and closed after) and compare with the loaded engine.
    Returns Done[TransferResult]; the result is saved in the project."""
    other = choice.open()
    try:
        with engine as model:
            return project.transfer(model, other, wording_ids, other_label=choice.label(),
                                    settings=settings, on_event=on_event, cancel=cancel)
    finally:
        other.close()


def latest_transfer(project, engine=None) -> Done:
    """The newest saved transfer check, or None (read only)."""
    return Done(project.latest_transfer(), NOTHING)


def importance(project, engine, *, wording_id: int, settings: ProjectSettings | None = None,
               cancel=None, on_event: Listener = _quiet) -> Done:
    """Which phrases of a shelf version carry its score: each left out alone, graded on the
    tuning items. Returns Done[ImportanceResult] (a cancelled one is not saved)."""
    with engine as model:
        return project.importance(model, wording_id, settings=settings, on_event=on_event,
                                  cancel=cancel)


# -- the shelf ---------------------------------------------------------------------------
def keep(project, engine=None, *, wording: Wording, parent_id: int | None = None,
         origin: str = "typed", note: str = "", inputs: dict | None = None) -> Done:
    """Put a wording on the shelf as kept; returns the shelf entry."""
    return project.keep(wording, parent_id=parent_id, origin=origin, note=note,
                        inputs=inputs)


def set_aside(project, engine=None, *, wording: Wording | None = None,
              wording_id: int | None = None, parent_id: int | None = None,
              origin: str = "typed", note: str = "", inputs: dict | None = None) -> Done:
    """Set a shelf entry (``wording_id``) or a new wording aside; returns the entry."""
    if wording_id is not None:
        return project.set_aside(wording_id)
    return project.set_aside(wording, parent_id=parent_id, origin=origin, note=note,
                             inputs=inputs)


def keep_entry(project, engine=None, *, wording_id: int) -> Done:
    """Mark an existing shelf entry as kept."""
    return project.keep(wording_id)


def restore(project, engine=None, *, wording_id: int) -> Done:
    """A shelf version into the editor (it becomes the draft); returns the entry."""
    return project.restore(wording_id)


def set_note(project, engine=None, *, wording_id: int, note: str) -> Done:
    return project.set_note(wording_id, note)


def shelf_rows(project, engine=None) -> Done:
    """The shelf as the window shows it (read only)."""
    return Done(project.shelf_rows(), NOTHING)


# -- the project -------------------------------------------------------------------------
def import_set(project, engine=None, *, path: str, mapping: ColumnMapping | None,
               check: CheckSpec | None, split_seed: int = 0,
               held_out_fraction: float = 0.3, sheet: str | None = None,
               skip_rows: int = 0) -> Done:
    """Read, validate and store a question set (nothing is written if it is bad); returns
    the project's new ProjectState. ``sheet``: a workbook's sheet to read (None: the
    first); ``skip_rows``: title rows above the column names."""
    done = project.import_set(path, mapping, check=check, split_seed=split_seed,
                              held_out_fraction=held_out_fraction, sheet=sheet,
                              skip_rows=skip_rows)
    return Done(load_state(project.path, project), done.changes)


def preview(project=None, engine=None, *, path: str, sheet: str | None = None,
            skip_rows: int = 0, with_sheets: bool = False) -> Done:
    """What the import dialog shows of a file (writes nothing): Done[Preview]."""
    from ...core.sheets import sheet_names

    head, guess, problems, recipe_check = preview_set(path, sheet=sheet, skip_rows=skip_rows)
    sheets = (sheet_names(path) if with_sheets and path.lower().endswith(".xlsx")
              else None)
    return Done(Preview(head, guess, problems, recipe_check, sheets), NOTHING)


@dataclass(frozen=True)
class Preview:
    head: Any  # pandas.DataFrame of the first rows
    guess: ColumnMapping | None
    problems: list
    recipe_check: CheckSpec | None
    sheets: list[str] | None  # a workbook's sheet names, else None


def set_check(project, engine=None, *, check: CheckSpec) -> Done:
    return project.set_check(check)


def set_settings(project, engine=None, *, settings: ProjectSettings) -> Done:
    """The project's generation settings (max tokens, temperature, seed, answer mode),
    shared with the CLI."""
    return project.set_settings(settings)


def save_draft(project, engine=None, *, wording: Wording) -> Done:
    project.save_draft(wording)
    return Done(wording, NOTHING)  # the draft is the editor's own text: no view re-reads it


# -- exports (never the model) -----------------------------------------------------------
def export_report(project, engine=None, *, path: str) -> Done:
    return Done(str(project.export_report(path).value), NOTHING)


def export_marks(project, engine=None, *, path: str, run_id: int) -> Done:
    """One run's marks as CSV (RFC 4180 quoting); returns the number of rows."""
    project.export_marks(path, run_id=run_id)
    return Done(project.run_score(run_id).total, NOTHING)


def export_wording(project, engine=None, *, path: str) -> Done:
    return Done(str(project.export_wording(path).value), NOTHING)
