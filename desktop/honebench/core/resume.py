"""Resuming a grade run that did not finish (interrupted, cancelled or stopped by an error).

A resumed run is a new grade run of the same wording, placement, answer check and
generation settings over the same items. Every answer the first run received was saved in
the completion cache before its mark, so the new run takes those from the cache at no model
cost and asks the model only for the rest. The first run keeps its marks and is then
recorded as "resumed".
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, fields, replace
from typing import Callable

from .checks import CheckSpec
from .engines.base import Engine, Params
from .events import Progress
from .grading import Grader, RunOutcome, select_items
from .records import Mark, RunInfo
from .run_writers import may_be_running
from .sets import Item, QuestionSet
from .store import Store
from .summary import STATUS_WORDS
from .wording import Wording

RESUMABLE = ("interrupted", "cancelled", "failed")


@dataclass(frozen=True)
class Unfinished:
    """A run that can be resumed, with how far it got."""

    run: RunInfo
    graded: int

    def text(self) -> str:
        what = f"run {self.run.id} ({self.run.split.replace('_', '-')} items"
        return (f"{what}, {self.graded} of {self.run.n_items} graded, "
                f"{STATUS_WORDS.get(self.run.status, self.run.status)})")


def unfinished_runs(store: Store, statuses=("interrupted",)) -> list[Unfinished]:
    """Runs with one of ``statuses`` (by default those interrupted), oldest first. In a
    read-only project, where nothing can be marked, a run still saved as "running" whose
    writer has ended counts as interrupted too."""
    found = []
    for run in store.runs():
        if run.status == "running" and not may_be_running(run.params.get("writer")):
            run = replace(run, status="interrupted")
        if run.status in statuses:
            found.append(Unfinished(run, store.run_counts(run.id)[1]))
    return found


def run_params(run: RunInfo) -> Params:
    """The generation settings a run was graded with."""
    known = {f.name for f in fields(Params)}
    values = {k: v for k, v in run.params.items() if k in known}
    values.setdefault("calibrate", False)  # runs saved before calibration existed
    if "stop" in values:
        values["stop"] = tuple(values["stop"])
    return Params(**values)


def run_items(run: RunInfo, qset: QuestionSet, done: set[str]) -> tuple[Item, ...]:
    """The items a run was grading: those it marked, then the first of its split's other
    items in set order until there are as many as it had. This is exactly its items for a
    run over a whole split or over the first N items of one (``--limit``)."""
    pool = select_items(qset, run.split)
    marked = [it for it in pool if it.id in done]
    missing = done - {it.id for it in marked}
    if missing:
        raise ValueError(f"run {run.id} marked items that its question set no longer holds "
                         f"({', '.join(sorted(missing)[:5])}); it cannot be resumed")
    rest = [it for it in pool if it.id not in done][: max(0, run.n_items - len(marked))]
    chosen = {it.id for it in marked + rest}
    return tuple(it for it in pool if it.id in chosen)


def resume_run(store: Store, engine: Engine, run_id: int, *,
               on_mark: Callable[[Mark, Progress], None] | None = None,
               cancel: threading.Event | None = None) -> RunOutcome:
    """Grade the rest of an unfinished run as a new run; returns the new run's outcome.
    Raises ValueError when the run cannot be resumed (finished, still running, or graded
    with another engine, whose cached answers this engine cannot reuse)."""
    run = store.run(run_id)
    if run.status not in RESUMABLE:
        raise ValueError(f"run {run_id} is {STATUS_WORDS.get(run.status, run.status)}; only "
                         f"runs that are {', '.join(RESUMABLE)} can be resumed")
    fingerprint = engine.fingerprint()
    if fingerprint != run.fingerprint:
        raise ValueError(f"run {run_id} was graded with the engine {run.fingerprint}, not the "
                         f"one open now ({fingerprint}). Open that engine to resume it, or "
                         "grade the wording again with this one as a new run.")
    qset = store.get_set(run.set_id)
    done = {m.item_id for m in store.marks(run_id)}
    items = run_items(run, qset, done)
    outcome = Grader(store, engine).grade(
        set_id=run.set_id, qset=qset, wording=Wording(run.wording_text, run.placement),
        check=CheckSpec.from_dict(run.check), params=run_params(run), split=run.split,
        items=items, wording_id=run.wording_id, on_mark=on_mark, cancel=cancel)
    if outcome.status == "finished":
        store.finish_run(run_id, "resumed")
    return outcome


def interrupted_note(store: Store, path) -> str | None:
    """One line on the runs found interrupted when the project was opened, or None."""
    found = [u for u in unfinished_runs(store) if u.run.id in set(store.interrupted_on_open)]
    if not found:
        return None
    runs = "; ".join(u.text() for u in found)
    return (f"found {len(found)} grade run{'s' if len(found) > 1 else ''} that stopped before "
            f"finishing: {runs}. Finish one with `honebench resume {path} RUN`.")
