"""Typed progress events that long operations send to whoever started them.

One vocabulary for every sender (grading, suggestions, auto-hone, confirm, compare) and one
progress text, so the window and the CLI say the same thing in the same words.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Union

from .records import Mark


@dataclass(frozen=True)
class Progress:
    """How far a run of model work has got. ``eta`` is None until an answer was timed."""

    done: int
    total: int
    passed: int = 0
    cached: int = 0
    elapsed: float = 0.0
    eta: float | None = None

    @property
    def items_per_second(self) -> float:
        return self.done / self.elapsed if self.elapsed > 0 else 0.0


@dataclass(frozen=True)
class Started:
    """Work began: ``total`` items (0 when unknown) for ``what`` (e.g. "grading v3")."""

    total: int
    what: str = ""


@dataclass(frozen=True)
class Marked:
    """One item was graded; ``run`` tells concurrent runs apart (index of the plan)."""

    mark: Mark
    progress: Progress
    run: int = 0


@dataclass(frozen=True)
class Stage:
    """A step of a longer operation, in plain words ("asking the model for variants")."""

    text: str
    progress: Progress | None = None


@dataclass(frozen=True)
class Finished:
    """The operation ended: status is finished, cancelled or failed."""

    status: str
    seconds: float = 0.0


Event = Union[Started, Marked, Stage, Finished]
Listener = Callable[[Event], None]


def _duration(seconds: float) -> str:
    seconds = max(0.0, seconds)
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def progress_text(p: Progress) -> str:
    """'12/84 graded, 5 passed so far, about 40 s left' — the same words in both fronts."""
    parts = [f"{p.done}/{p.total} graded"]
    if p.done:
        parts.append(f"{p.passed} passed so far")
    if p.cached:
        parts.append(f"{p.cached} from the cache")
    if p.done < p.total:
        parts.append(f"about {_duration(p.eta)} left" if p.eta is not None
                     else "timing the first answers")
    return ", ".join(parts)
