"""What the window shows of a project, read in one go on a worker thread; no Qt.

``load_state`` opens a project; the acts on it live in ``operations``.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ...core.checks import CheckSpec
from ...core.grading import RunOutcome
from ...core.project import Project, ShelfRow
from ...core.records import Mark, RunInfo
from ...core.recipes import recipe_for, sample_set_paths
from ...core.sets import QuestionSet
from ...core.summary import RunSummary
from ...core.wording import Wording

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
    from ...core.sets import preview

    head, mapping, problems = preview(path)
    recipe = recipe_for(path)
    check = CheckSpec.from_dict(recipe["check"]) if recipe else None
    return head, mapping, problems, check


def run_caption(run: RunInfo | None, graded: int | None = None) -> str:
    """'Run 3 · tuning items · 40 graded · finished' for the grade sheet's header."""
    if run is None:
        return "Grade sheet"
    n = run.n_items if graded is None else graded
    status = {"finished": "finished", "cancelled": "cancelled, finished marks kept",
              "failed": "stopped by an error", "running": "running"}.get(run.status, run.status)
    return (f"Run {run.id} · {SPLIT_WORDS.get(run.split, run.split)} · {n} of {run.n_items} "
            f"graded · {status}")
