"""Every act the window performs on a project, in one place. No Qt.

Each function is one user act. It runs on a worker thread (the window's job mechanism calls
it), takes the project, the engine handle (``with handle as engine:``; None where no model is
needed), the act's own arguments, a cancel flag and ``on_event`` (typed progress events of
``honebench.core.events``), and returns ``Done(value, changes)``: the job mechanism then
emits ``project_changed(changes)`` and hands ``value`` to the view that asked.

The bodies assemble today's core calls. When ``core.Project`` offers the same acts
(``project.grade(...)`` returning ``Done``), each body here shrinks to that one call; the
window does not change.
"""
from __future__ import annotations

import threading
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from ...core.changes import NOTHING, Changes, Done
from ...core.checks import CheckSpec
from ...core.compare import compare_runs, latest_run
from ...core.events import Finished, Marked, Progress, Stage, Started
from ...core.grading import Grader, select_items
from ...core.sets import ColumnMapping
from ...core.wording import Wording
from .state import SPLIT_WORDS, GradeResult, ProjectState, load_state

Listener = Callable[[Any], None]
EDITOR = -1  # stands for the editor's wording where a shelf id is expected
SHELF, RUNS = Changes(shelf=True), Changes(runs=True, marks=True, shelf=True)


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
    """Turns today's (stage, done, total) callbacks into Stage events: the items done, how
    many passed so far and an ETA from the stage's wall-clock rate. While suggestions are
    scored it also reads their committed marks (at most twice a second) and sends each
    one's running score as ``Candidates``."""

    def __init__(self, project, on_event: Listener):
        self.project, self.on_event = project, on_event
        self.stage, self.began, self.last, self.passed = None, 0.0, 0.0, 0
        self.previous = time.monotonic()  # when the last report came: the next stage's start

    def __call__(self, stage: str, done: int, total: int) -> None:
        now = time.monotonic()
        if stage != self.stage:  # its work began when the previous stage last reported
            self.stage, self.began, self.last, self.passed = stage, self.previous, 0.0, 0
        self.previous = now
        if done and (now - self.last >= 0.5 or done >= total):
            self.last = now
            self._read(stage)
        elapsed = now - self.began
        eta = elapsed / done * (total - done) if done and total >= done else None
        self.on_event(Stage(stage, Progress(done, total, passed=self.passed, elapsed=elapsed,
                                            eta=eta)))

    def _read(self, stage: str) -> None:
        """The runs of this stage are the ones still running: the grader starts them all
        before the first mark and closes them after the last."""
        store = self.project.store
        items = []
        for run in store.runs():
            if run.status == "running" and run.split == "tuning":
                passed, n = store.run_counts(run.id)
                items.append(Candidate(run.wording_text, passed, n, run.n_items))
        self.passed = sum(c.passed for c in items)
        if stage.startswith("scoring") and items:
            self.on_event(Candidates(stage, tuple(items)))


# -- grading -----------------------------------------------------------------------------
def grade(project, engine, *, wording: Wording, params, split: str = "tuning",
          limit: int | None = None, cancel: threading.Event | None = None,
          on_event: Listener = _quiet) -> Done:
    """Grade a wording over one split of the current set; marks arrive as Marked events.
    Held-out items are graded only through ``confirm``."""
    if not wording.text.strip():
        raise ValueError("The wording is empty. Write an instruction in the editor first.")
    set_id, qset = project.current_set()
    items = select_items(qset, split)
    if limit:
        items = items[:limit]
    if not items:
        raise ValueError(f"The question set {qset.name} has no {SPLIT_WORDS[split]}. "
                         "Import it again with another split.")
    project.save_draft(wording)
    on_event(Started(len(items), f"grading the {SPLIT_WORDS[split]}"))
    found = project.store.find_wording(wording.text, wording.placement)
    began = time.monotonic()
    with engine as model:
        outcome = Grader(project.store, model).grade(
            set_id=set_id, qset=qset, wording=wording, check=project.check(), params=params,
            split=split, items=items, wording_id=found.id if found else None,
            on_mark=lambda mark, prog: on_event(Marked(mark, prog)), cancel=cancel)
    on_event(Finished(outcome.status, time.monotonic() - began))
    result = GradeResult(outcome, project.store.run(outcome.run_id),
                         project.summary(outcome.run_id))
    return Done(result, RUNS | Changes(settings=True))


def _grade_wording(project, engine, params, wording: Wording, wording_id, split: str,
                   cancel, on_event: Listener) -> int:
    """Grade one wording on a split for compare/confirm; returns the finished run's id."""
    set_id, qset = project.current_set()
    with engine as model:
        outcome = Grader(project.store, model).grade(
            set_id=set_id, qset=qset, wording=wording, check=project.check(), params=params,
            split=split, wording_id=wording_id, cancel=cancel,
            on_mark=lambda mark, prog: on_event(Marked(mark, prog)))
    if outcome.status != "finished":
        raise ValueError(f"the grade run on the {SPLIT_WORDS[split]} was {outcome.status} "
                         f"after {len(outcome.marks)} items; nothing is compared or confirmed")
    return outcome.run_id


def confirm(project, engine, *, wording_id: int, params, cancel=None,
            on_event: Listener = _quiet) -> Done:
    """Grade a shelf version on the held-out items (the one way to spend them)."""
    entry = project.store.wording(wording_id)
    on_event(Started(0, f"confirming {entry.label} on the held-out items"))
    run = _grade_wording(project, engine, params, Wording(entry.text, entry.placement),
                         entry.id, "held_out", cancel, on_event)
    return Done(run, RUNS)


def compare(project, engine, *, a: int, b: int, split: str, editor: Wording, params,
            cancel=None, on_event: Listener = _quiet) -> Done:
    """Compare A and B (wording ids or EDITOR) on a split, grading first whichever has no
    finished run there. Returns the core's Comparison."""
    set_id, _ = project.current_set()
    runs, names, graded = [], [], False
    for key in (a, b):
        if key == EDITOR:
            found = project.store.find_wording(editor.text, editor.placement)
            wording, wid = editor, found.id if found else None
            name = f"editor ({found.label})" if found else "the editor's wording"
        else:
            entry = project.store.wording(key)
            wording, wid, name = Wording(entry.text, entry.placement), entry.id, entry.label
        run = latest_run(project.store, wording.text, wording.placement, split, set_id)
        if run is None:
            if engine is None:
                raise ValueError(f"{name} is not graded on the {SPLIT_WORDS[split]} yet and "
                                 "the model has not loaded; wait for it, then compare again")
            on_event(Stage(f"grading {name} first"))
            run = _grade_wording(project, engine, params, wording, wid, split, cancel, on_event)
            graded = True
        runs.append(run)
        names.append(name)
    comparison = compare_runs(project.store, runs[0], runs[1], name_a=names[0],
                              name_b=names[1])
    return Done(comparison, RUNS if graded else NOTHING)


# -- suggestions and auto-hone -----------------------------------------------------------
def suggest(project, engine, *, strategy: str, count: int, base: Wording,
            other_id: int | None, params, cancel=None, on_event: Listener = _quiet) -> Done:
    """Ask the model for scored variants (nothing is put on the shelf until kept)."""
    from ...core.suggest.pipeline import suggest as run_suggest

    watch = _Watch(project, on_event)
    with engine as model:
        outcome = run_suggest(project, model, strategy, count=count, base=base,
                              other_id=other_id, params=params, progress=watch, cancel=cancel)
    return Done(outcome, Changes(runs=True, marks=True, shelf=True))


def hone(project, engine, *, wording: Wording, strategy: str, budget, params, cancel=None,
         on_event: Listener = _quiet) -> Done:
    """Rounds of suggestions, unattended. Sends Stage events, a RoundDone per round and,
    after each round, the shelf change (the runner emits project_changed at once)."""
    from ...core.hone import hone as run_hone
    from ...core.stats import score
    from ...core.suggest.pipeline import base_marks

    with engine as model:
        _, marks = base_marks(project, model, wording, params, cancel)
        on_event(Started(len(marks), "auto-hone"))
        on_event(RoundDone(score(sum(m.passed for m in marks), len(marks)), "start"))

        def on_round(rnd) -> None:
            label = project.store.wording(rnd.kept_id).label if rnd.kept_id else ""
            on_event(RoundDone(rnd, label))
            on_event(SHELF | RUNS)

        outcome = run_hone(project, model, strategy=strategy, budget=budget, start=wording,
                           params=params, on_round=on_round, cancel=cancel,
                           progress=_Watch(project, on_event))
    return Done(outcome, SHELF | RUNS)


# -- the shelf ---------------------------------------------------------------------------
def keep(project, engine=None, *, wording: Wording, parent_id: int | None = None,
         origin: str = "typed", note: str = "", inputs: dict | None = None) -> Done:
    """Put a wording on the shelf as kept; returns the shelf entry."""
    if not wording.text.strip():
        raise ValueError("The wording is empty; there is nothing to keep.")
    entry = project.keep(wording, parent_id=parent_id, origin=origin, note=note,
                         inputs=inputs)
    return Done(entry, SHELF)


def set_aside(project, engine=None, *, wording: Wording | None = None,
              wording_id: int | None = None, parent_id: int | None = None,
              origin: str = "typed", note: str = "", inputs: dict | None = None) -> Done:
    """Set a shelf entry (``wording_id``) or a new wording aside; returns the entry."""
    if wording_id is not None:
        entry = project.store.wording(wording_id)
        project.store.decide(wording_id, "set_aside", entry.note)
        return Done(project.store.wording(wording_id), SHELF)
    entry = project.set_aside(wording, parent_id=parent_id, origin=origin, note=note,
                              inputs=inputs)
    return Done(entry, SHELF)


def keep_entry(project, engine=None, *, wording_id: int) -> Done:
    """Mark an existing shelf entry as kept."""
    entry = project.store.wording(wording_id)
    project.store.decide(wording_id, "kept", entry.note)
    return Done(project.store.wording(wording_id), SHELF)


def restore(project, engine=None, *, wording_id: int) -> Done:
    """The wording of a shelf entry, for the editor (nothing is written)."""
    entry = project.store.wording(wording_id)
    return Done(entry, NOTHING)


def set_note(project, engine=None, *, wording_id: int, note: str) -> Done:
    project.store.set_note(wording_id, note)
    return Done(None, SHELF)


def shelf_rows(project, engine=None) -> Done:
    """The shelf as the window shows it (read only)."""
    return Done(project.shelf_rows(), NOTHING)


# -- the project -------------------------------------------------------------------------
def import_set(project, engine=None, *, path: str, mapping: ColumnMapping | None,
               check: CheckSpec | None, split_seed: int = 0,
               held_out_fraction: float = 0.3) -> Done:
    """Read, validate and store a question set (nothing is written if it is bad)."""
    if check is not None:
        check.validate()
    project.import_set(path, mapping, split_seed=split_seed, held_out_fraction=held_out_fraction)
    if check is not None:
        project.set_check(check)
    state: ProjectState = load_state(project.path, project)
    return Done(state, Changes(set=True, settings=True, runs=True, marks=True, shelf=True))


def set_check(project, engine=None, *, check: CheckSpec) -> Done:
    check.validate()
    project.set_check(check)
    return Done(check, Changes(settings=True))


def save_draft(project, engine=None, *, wording: Wording) -> Done:
    project.save_draft(wording)
    return Done(wording, NOTHING)  # the draft is the editor's own text: no view re-reads it


# -- exports (never the model) -----------------------------------------------------------
def export_report(project, engine=None, *, path: str) -> Done:
    from ...core.report import write_html_report

    return Done(str(write_html_report(project, path)), NOTHING)


def export_marks(project, engine=None, *, path: str, run_id: int) -> Done:
    """One run's marks as CSV (RFC 4180 quoting); returns the number of rows."""
    from ...core.report import write_marks_csv

    write_marks_csv(project, path, run_id=run_id)
    return Done(project.store.run_counts(run_id)[1], NOTHING)


def export_wording(project, engine=None, *, path: str) -> Done:
    from ...core.report import chosen_wording_text

    text = chosen_wording_text(project)
    Path(path).write_text(text if text.endswith("\n") else text + "\n", encoding="utf-8")
    return Done(path, NOTHING)

