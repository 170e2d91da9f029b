"""What an operation on a project changed, so each view re-reads only what it shows.

Every user act is one method on :class:`honebench.core.project.Project`; each returns a
:class:`Done` holding its result and a :class:`Changes` value. The window's job mechanism emits
``project_changed(changes)`` after an operation; the CLI prints the result and ignores it.
"""
from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Generic, TypeVar

T = TypeVar("T")


@dataclass(frozen=True)
class Changes:
    """Which parts of a project an operation touched."""

    shelf: bool = False      # shelf entries, decisions, notes, or their scores
    runs: bool = False       # grade runs were started or finished
    marks: bool = False      # marks were added to a run
    settings: bool = False   # check, draft, project settings, title
    set: bool = False        # the current question set

    def __or__(self, other: "Changes") -> "Changes":
        return Changes(**{f.name: getattr(self, f.name) or getattr(other, f.name)
                          for f in fields(self)})

    def __bool__(self) -> bool:
        return any(getattr(self, f.name) for f in fields(self))

    def names(self) -> tuple[str, ...]:
        return tuple(f.name for f in fields(self) if getattr(self, f.name))


NOTHING = Changes()
EVERYTHING = Changes(shelf=True, runs=True, marks=True, settings=True, set=True)


@dataclass(frozen=True)
class Done(Generic[T]):
    """An operation's result and what it changed."""

    value: T
    changes: Changes = NOTHING
