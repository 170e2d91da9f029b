"""The error every bad question set file raises, with each problem's row and column."""
from __future__ import annotations

import os
from typing import NamedTuple

MAX_LISTED = 20  # problems kept on a SetError
SHOWN = 3  # problems written out in its message


class Problem(NamedTuple):
    """One thing wrong with a question set: a full sentence and where it is."""
    text: str
    row: int | None = None
    column: str | None = None


class SetError(ValueError):
    """Bad question set. str() is a full sentence naming the file, and for each problem the
    row, column and what to do. ``problems`` lists up to 20 problems; ``problem_count`` is the
    total; ``row`` and ``column`` are those of the first problem."""

    def __init__(self, file: str, problems: list[Problem | str]):
        found = [p if isinstance(p, Problem) else Problem(str(p)) for p in problems]
        if not found:
            raise ValueError("SetError needs at least one problem")
        self.file = str(file)
        self.row = found[0].row
        self.column = found[0].column
        self.problem_count = len(found)
        self.problems = [p.text for p in found[:MAX_LISTED]]
        self._found = found[:MAX_LISTED]
        super().__init__(self._message())

    def for_file(self, file: str) -> "SetError":
        """The same problems, reported against ``file``."""
        return SetError(file, self._found)

    def _message(self) -> str:
        name = os.path.basename(self.file) if self.file else "this question set"
        if self.problem_count == 1:
            return f"Cannot load question set {name}: {self.problems[0]}"
        shown = " ".join(f"({i}) {text}" for i, text in enumerate(self.problems[:SHOWN], 1))
        rest = self.problem_count - SHOWN
        more = f" ... and {rest} more." if rest > 0 else ""
        return f"Cannot load question set {name}, which has {self.problem_count} problems: {shown}{more}"


def quote(name: object) -> str:
    """A column name or value as messages show it: in quotes, cut short when long."""
    text = str(name)
    return repr(text if len(text) <= 40 else text[:37] + "...")
