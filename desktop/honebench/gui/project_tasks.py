"""What the window's background jobs run: plain functions over the core, no Qt.

Each runs on a worker thread and returns plain data for the window to show.
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from ..core.checks import CheckSpec
from ..core.engines.base import Params
from ..core.grading import Grader, Progress, RunOutcome, select_items
from ..core.project import Project, ShelfRow
from ..core.records import Mark, RunInfo
from ..core.recipes import recipe_for, sample_set_paths
from ..core.sets import ColumnMapping, QuestionSet
from ..core.summary import RunSummary
from ..core.wording import Wording

DEMO_SET = "passenger_desk_routing.csv"
DEMO_NAME = "ferry-demo.hone"
SPLIT_WORDS = {"tuning": "tuning items", "held_out": "held-out items", "all": "all items"}


@dataclass
class ProjectState:
    """Everything the window shows of a project, read in one go."""

    project: Project
    title: str
    set_id: int | None
    qset: QuestionSet | None
    check: CheckSpec
    draft: Wording
    shelf: list[ShelfRow]
    last_run: RunInfo | None = None
    marks: list[Mark] = field(default_factory=list)
    summary: RunSummary | None = None
    expected: dict[str, str] = field(default_factory=dict)


@dataclass
class GradeResult:
    outcome: RunOutcome
    run: RunInfo
    summary: RunSummary
    shelf: list[ShelfRow]


def demo_set_path() -> Path:
    for path in sample_set_paths():
        if path.name == DEMO_SET:
            return path
    raise LookupError(f"the sample set {DEMO_SET} is missing from this installation; "
                      "reinstall honebench or open a question set of your own")


def build_demo_project(path: Path) -> Path:
    """The first-run project: the passenger desk routing sample, ready to grade."""
    project = Project(path)
    try:
        if not project.store.set_ids():
            project.import_set(demo_set_path())
    finally:
        project.close()
    return path


def load_state(path: str | Path, project: Project | None = None) -> ProjectState:
    """Open (or re-read) a project: its set, check, draft, shelf and last run on the set."""
    project = project or Project(path)
    set_id, qset = None, None
    if project.store.set_ids():
        set_id, qset = project.current_set()
    state = ProjectState(project=project, title=project.title(), set_id=set_id, qset=qset,
                         check=project.check(), draft=project.draft(),
                         shelf=project.shelf_rows())
    if qset is not None:
        state.expected = {item.id: item.expected for item in qset.items}
        for run in reversed(project.store.runs()):
            if run.set_id == set_id and run.status != "running":
                state.last_run = run
                state.marks = project.store.marks(run.id)
                state.summary = project.summary(run.id)
                break
    return state


def preview_set(path: str) -> tuple:
    """(head, guessed mapping or None, problems, suggested check) for the mapping dialog."""
    from ..core.sets import preview

    head, mapping, problems = preview(path)
    recipe = recipe_for(path)
    check = CheckSpec.from_dict(recipe["check"]) if recipe else None
    return head, mapping, problems, check


def import_set(project: Project, path: str, mapping: ColumnMapping | None, check: CheckSpec | None,
               split_seed: int = 0, held_out_fraction: float = 0.3) -> ProjectState:
    """Read, validate and store a question set (nothing is written if it is bad)."""
    if check is not None:
        check.validate()
    project.import_set(path, mapping, split_seed=split_seed, held_out_fraction=held_out_fraction)
    if check is not None:
        project.set_check(check)
    return load_state(project.path, project)


def grade(project: Project, handle, wording: Wording, params: Params, split: str,
          limit: int | None, cancel: threading.Event,
          report: Callable[[tuple], None]) -> GradeResult:
    """One grade run; reports ("start", total) then ("mark", Mark, Progress) per item."""
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
    report(("start", len(items)))
    found = project.store.find_wording(wording.text, wording.placement)

    def on_mark(mark: Mark, progress: Progress) -> None:
        report(("mark", mark, progress))

    with handle as engine:
        outcome = Grader(project.store, engine).grade(
            set_id=set_id, qset=qset, wording=wording, check=project.check(), params=params,
            split=split, items=items, wording_id=found.id if found else None,
            on_mark=on_mark, cancel=cancel)
    return GradeResult(outcome, project.store.run(outcome.run_id),
                       project.summary(outcome.run_id), project.shelf_rows())


def keep(project: Project, wording: Wording, parent_id: int | None) -> tuple[int, list[ShelfRow]]:
    if not wording.text.strip():
        raise ValueError("The wording is empty; there is nothing to keep.")
    entry = project.keep(wording, parent_id=parent_id)
    return entry.id, project.shelf_rows()


def decide(project: Project, wording_id: int, verdict: str) -> list[ShelfRow]:
    entry = project.store.wording(wording_id)
    project.store.decide(wording_id, verdict, entry.note)
    return project.shelf_rows()


def set_note(project: Project, wording_id: int, note: str) -> list[ShelfRow]:
    project.store.set_note(wording_id, note)
    return project.shelf_rows()


def export_marks(project: Project, path: str, run_id: int) -> int:
    """Write one run's marks as CSV (RFC 4180 quoting); returns the number of rows."""
    from honebench.core.report import write_marks_csv

    write_marks_csv(project, path, run_id=run_id)
    return project.store.run_counts(run_id)[1]


def run_caption(run: RunInfo | None, graded: int | None = None) -> str:
    """'Run 3 · tuning items · 40 graded · finished' for the grade sheet's header."""
    if run is None:
        return "Grade sheet"
    n = run.n_items if graded is None else graded
    status = {"finished": "finished", "cancelled": "cancelled, finished marks kept",
              "failed": "stopped by an error", "running": "running"}.get(run.status, run.status)
    return (f"Run {run.id} · {SPLIT_WORDS.get(run.split, run.split)} · {n} of {run.n_items} "
            f"graded · {status}")
