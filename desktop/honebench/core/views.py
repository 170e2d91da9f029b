"""Plain records the project's operations and read methods return to the fronts."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from .cost import RunCost
from .records import Mark, RunInfo, ShelfEntry
from .stats import Score
from .summary import RunSummary

if TYPE_CHECKING:  # only for annotations: these import the grader and the suggestion pipeline
    from .grading import RunOutcome
    from .suggest.pipeline import SuggestOutcome

SPLIT_WORDS = {"tuning": "tuning items", "held_out": "held-out items", "all": "all items"}


@dataclass(frozen=True)
class ShelfRow:
    """A shelf entry with its latest finished scores on the current set, and the cost of
    the tuning run its tuning score comes from (core/cost.py)."""

    entry: ShelfEntry
    tuning: Score | None
    held_out: Score | None
    cost: RunCost | None = None


@dataclass(frozen=True)
class RunView:
    """One grade run as the grade sheet shows it: header, marks in arrival order, summary."""

    run: RunInfo
    marks: list[Mark]
    summary: RunSummary


@dataclass(frozen=True)
class GradeResult:
    """What ``Project.grade`` did: the run, its summary and the wording's shelf entry."""

    outcome: "RunOutcome"
    run: RunInfo
    summary: RunSummary
    entry: ShelfEntry

    @property
    def score(self) -> Score:
        return self.summary.score


@dataclass(frozen=True)
class ResumeResult:
    """An interrupted run (``resumed``) finished as a new run (``outcome``)."""

    resumed: int
    outcome: "RunOutcome"


@dataclass(frozen=True)
class ConfirmResult:
    """A shelf version graded on the held-out items."""

    entry: ShelfEntry
    run_id: int
    score: Score

    def text(self) -> str:
        return f"{self.entry.label} on held-out items: {self.score.text()}"


@dataclass(frozen=True)
class SuggestResult:
    """Scored suggestions, and the shelf entry kept when the best one was kept at once."""

    outcome: "SuggestOutcome"
    kept: ShelfEntry | None = None
    notes: list[str] = field(default_factory=list)
