"""What the window shows of a project, read in one go on a worker thread; no Qt.

``load_state`` opens a project through the core facade's read methods; the acts on it
live in ``operations``.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ...core.checks import CheckSpec
from ...core.project import SPLIT_WORDS, Project, ProjectSettings, ShelfRow
from ...core.records import Mark, RunInfo
from ...core.sets import QuestionSet
from ...core.summary import RunSummary
from ...core.wording import Wording


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
    settings: ProjectSettings = field(default_factory=ProjectSettings)
    last_run: RunInfo | None = None
    marks: list[Mark] = field(default_factory=list)
    summary: RunSummary | None = None
    expected: dict[str, str] = field(default_factory=dict)
    interrupted: list = field(default_factory=list)  # core.resume.Unfinished, oldest first


def load_state(path: str | Path, project: Project | None = None) -> ProjectState:
    """Open (or re-read) a project: its set, check, draft, settings, shelf and last run."""
    project = project or Project.open(path, create=True).value
    set_id, qset = project.current_set() if project.has_set() else (None, None)
    state = ProjectState(project=project, title=project.title(), set_id=set_id, qset=qset,
                         check=project.check(), draft=project.draft(),
                         shelf=project.shelf_rows(), settings=project.settings(),
                         interrupted=project.interrupted_runs())
    if qset is not None:
        state.expected = {item.id: item.expected for item in qset.items}
        view = project.last_run()
        if view is not None:
            state.last_run, state.marks, state.summary = view.run, view.marks, view.summary
    return state


def run_caption(run: RunInfo | None, graded: int | None = None) -> str:
    """'Run 3 · tuning items · 40 graded · finished' for the grade sheet's header."""
    if run is None:
        return "Grade sheet"
    n = run.n_items if graded is None else graded
    status = {"finished": "finished", "cancelled": "cancelled, finished marks kept",
              "failed": "stopped by an error", "running": "running"}.get(run.status, run.status)
    return (f"Run {run.id} · {SPLIT_WORDS.get(run.split, run.split)} · {n} of {run.n_items} "
            f"graded · {status}")


def interrupted_text(state: ProjectState) -> str:
    """'Run 7 was interrupted after 12 of 84 items — Run › Resume interrupted run', for the
    latest interrupted run, or '' when there is none."""
    if not state.interrupted:
        return ""
    latest = state.interrupted[-1]
    more = len(state.interrupted) - 1
    others = f" ({more} more interrupted run{'s' if more > 1 else ''})" if more else ""
    return (f"Run {latest.run.id} was interrupted after {latest.graded} of "
            f"{latest.run.n_items} items{others} — Run › Resume interrupted run")
