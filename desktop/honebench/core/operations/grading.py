"""Grading operations: grade a wording, confirm a version on held-out items, compare two.

``grade_wording`` is the one place a wording is graded on the current set; the window, the
CLI, suggestions and auto-hone all come through it (or ``grade_plans`` for several at once).
"""
from __future__ import annotations

import threading
import time
from typing import Sequence

from ..changes import NOTHING, Changes, Done
from ..compare import Comparison, compare_runs, latest_run
from ..events import Finished, Listener, Marked, Stage, Started
from ..grading import Grader, Plan, RunOutcome, select_items
from ..records import ShelfEntry
from ..settings import ProjectSettings
from ..sets import Item
from ..views import SPLIT_WORDS, ConfirmResult, GradeResult, ResumeResult
from ..wording import Wording

GRADED = Changes(shelf=True, runs=True, marks=True)


def grade_wording(project, engine, wording: Wording, *, split: str = "tuning",
                  items: Sequence[Item] | None = None, params=None,
                  wording_id: int | None = None, on_event: Listener | None = None,
                  cancel: threading.Event | None = None, what: str = "",
                  purpose: str = "") -> RunOutcome:
    """Grade one wording on one split of the current set (or the given items) with the
    project's check; ``params`` default to the project's settings. Sends Started, then one
    Marked per item. Cached answers cost no model call. ``purpose`` names an analysis'
    side run ("transfer", "importance"), left out of shelf scores."""
    set_id, qset = project.current_set()
    items = tuple(items) if items is not None else select_items(qset, split)
    params = params or project.settings().params()
    if on_event:
        on_event(Started(len(items), what or f"grading on the {SPLIT_WORDS.get(split, split)}"))
    on_mark = (lambda mark, prog: on_event(Marked(mark, prog))) if on_event else None
    return Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, wording=wording, check=project.check(), params=params,
        split=split, items=items, wording_id=wording_id, on_mark=on_mark, cancel=cancel,
        purpose=purpose)


def grade_plans(project, engine, plans: Sequence[Plan], *, params=None,
                on_event: Listener | None = None, cancel: threading.Event | None = None,
                what: str = "", purpose: str = "") -> list[RunOutcome]:
    """Several wordings graded as one stream; Marked events carry the plan's index.
    ``purpose`` as for ``grade_wording``."""
    set_id, qset = project.current_set()
    params = params or project.settings().params()
    if on_event:
        on_event(Started(sum(len(p.items) for p in plans), what))
    on_mark = ((lambda index, mark, prog: on_event(Marked(mark, prog, index)))
               if on_event else None)
    return Grader(project.store, engine).grade_many(
        set_id=set_id, qset=qset, plans=plans, check=project.check(), params=params,
        on_mark=on_mark, cancel=cancel, purpose=purpose)


class GradingOps:
    """Mixed into Project: grade, confirm, compare."""

    def grade(self, engine, wording: Wording | None = None, *, split: str = "tuning",
              limit: int | None = None, settings: ProjectSettings | None = None,
              on_event: Listener | None = None,
              cancel: threading.Event | None = None) -> Done[GradeResult]:
        """Grade a wording (default: the draft) on a split of the current set. The wording
        is saved as the draft and put on the shelf (not decided) when it is not there yet,
        and the run is linked to it. ``settings`` override the project's for this run."""
        began = time.perf_counter()
        wording = wording or self.draft()
        if not wording.text.strip():
            raise ValueError("The wording is empty. Write an instruction first (in the editor, "
                             "or with --wording / --wording-file).")
        _, qset = self.current_set()
        items = select_items(qset, split)
        if limit:
            items = items[:limit]
        if not items:
            raise ValueError(f"The question set {qset.name} has no {SPLIT_WORDS[split]}. "
                             "Import it again with another split.")
        self.save_draft(wording)
        entry = self._shelve(wording)
        outcome = grade_wording(
            self, engine, wording, split=split, items=items, wording_id=entry.id,
            params=(settings or self.settings()).params(), on_event=on_event, cancel=cancel,
            what=f"grading {entry.label} on the {SPLIT_WORDS[split]}")
        _finish(on_event, outcome.status, began)
        result = GradeResult(outcome, self.store.run(outcome.run_id),
                             self.summary(outcome.run_id), entry)
        return Done(result, GRADED | Changes(settings=True))

    def confirm(self, engine, wording_id: int, *, settings: ProjectSettings | None = None,
                on_event: Listener | None = None,
                cancel: threading.Event | None = None) -> Done[ConfirmResult]:
        """Grade a shelf version on the held-out items (answers in the cache are reused).
        Raises ValueError when the run was cancelled or failed (its marks are kept)."""
        began = time.perf_counter()
        entry = self.store.wording(wording_id)
        run_id = self._finished_run(engine, Wording(entry.text, entry.placement), entry,
                                    "held_out", settings, on_event, cancel)
        _finish(on_event, "finished", began)
        return Done(ConfirmResult(entry, run_id, self.run_score(run_id)), GRADED)

    def compare(self, engine, first: int | Wording, second: int | Wording, *,
                split: str = "tuning", settings: ProjectSettings | None = None,
                on_event: Listener | None = None,
                cancel: threading.Event | None = None) -> Done[Comparison]:
        """Compare two versions on the same items of a split. Each is a shelf id or a
        wording (the editor's, maybe unsaved); whichever has no finished run on that split
        is graded first (and so goes on the shelf). ``engine`` may be None when both are
        graded already."""
        began = time.perf_counter()
        set_id, _ = self.current_set()
        runs, names, changes = [], [], NOTHING
        for side in (first, second):
            if isinstance(side, Wording):
                wording, entry = side, self.store.find_wording(side.text, side.placement)
            else:
                entry = self.store.wording(side)
                wording = Wording(entry.text, entry.placement)
            run = latest_run(self.store, wording.text, wording.placement, split, set_id)
            if run is None:
                name = entry.label if entry else "the editor's wording"
                if engine is None:
                    raise ValueError(f"{name} is not graded on the {SPLIT_WORDS[split]} yet and "
                                     "no model is loaded; load one, then compare again")
                if on_event:
                    on_event(Stage(f"grading {name} on the {SPLIT_WORDS[split]}"))
                entry = entry or self._shelve(wording)
                run = self._finished_run(engine, wording, entry, split, settings, on_event,
                                         cancel)
                changes = GRADED
            label = entry.label if entry else "the editor's wording"
            names.append(f"editor ({label})" if isinstance(side, Wording) and entry else label)
            runs.append(run)
        comparison = compare_runs(self.store, runs[0], runs[1], name_a=names[0],
                                  name_b=names[1])
        _finish(on_event, "finished", began)
        return Done(comparison, changes)

    def resume(self, engine, run_id: int | None = None, *, on_event: Listener | None = None,
               cancel: threading.Event | None = None) -> Done[ResumeResult]:
        """Finish an interrupted grade run (default: the latest) as a new run; the items it
        had graded come back from the cache. ValueError when it cannot be resumed."""
        from ..resume import resume_run, unfinished_runs

        began = time.perf_counter()
        if run_id is None:
            found = unfinished_runs(self.store)
            if not found:
                raise LookupError(f"{self.path} has no interrupted grade run to resume")
            run_id = found[-1].run.id
        on_mark = (lambda mark, prog: on_event(Marked(mark, prog))) if on_event else None
        outcome = resume_run(self.store, engine, run_id, on_mark=on_mark, cancel=cancel)
        _finish(on_event, outcome.status, began)
        return Done(ResumeResult(run_id, outcome), GRADED)

    def interrupted_note(self) -> str | None:
        """One line on the grade runs found interrupted when this project was opened."""
        from ..resume import interrupted_note

        return interrupted_note(self.store, self.path)

    def _finished_run(self, engine, wording: Wording, entry: ShelfEntry, split: str,
                      settings, on_event, cancel) -> int:
        outcome = grade_wording(
            self, engine, wording, split=split, wording_id=entry.id,
            params=(settings or self.settings()).params(), on_event=on_event, cancel=cancel,
            what=f"grading {entry.label} on the {SPLIT_WORDS[split]}")
        if outcome.status != "finished":
            _finish(on_event, outcome.status, time.perf_counter() - outcome.seconds)
            raise ValueError(f"the grade run of {entry.label} on the {SPLIT_WORDS[split]} was "
                             f"{outcome.status} after {len(outcome.marks)} items (those marks "
                             "are saved); nothing is compared or confirmed")
        return outcome.run_id


def _finish(on_event: Listener | None, status: str, began: float) -> None:
    if on_event:
        on_event(Finished(status, time.perf_counter() - began))
