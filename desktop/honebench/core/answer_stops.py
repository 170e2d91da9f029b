"""Stopping a generated answer as soon as the answer check can decide.

For label, number and exact checks the answer is expected on one line, so generation stops
at the end of the first non-empty line, unless the wording asks for more than one line. For
label checks it also stops as soon as an allowed label has been written as a whole word.

"Asks for more" is decided simply, from words in the wording: any of MORE_WORDS (explain,
reason, step by step, show your working, lines, paragraph, list, JSON, ...) as a whole word,
ignoring case. A wording that says "explain" but then "answer in one word" still counts as
asking for more: stopping late costs time, stopping early could cost the answer.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from .checks import CheckSpec
from .extraction import label_key

MORE_WORDS = ("explain", "explanation", "reason", "reasons", "reasoning", "why", "because",
              "step by step", "steps", "think", "working", "work it out", "show your work",
              "lines", "paragraph", "paragraphs", "list", "bullet", "bullets", "json",
              "first", "then", "finally", "describe", "justify")
_MORE = re.compile(r"(?<!\w)(" + "|".join(re.escape(w) for w in MORE_WORDS) + r")(?!\w)",
                   re.IGNORECASE)
ONE_LINE_CHECKS = ("label", "number", "exact")


def wants_more(wording_text: str) -> bool:
    """Whether the wording asks for more than a one-line answer (see MORE_WORDS)."""
    return bool(_MORE.search(wording_text or ""))


@dataclass(frozen=True)
class StopRule:
    """Cut a growing answer at the end of its first line and/or once a label is named."""

    first_line: bool = True
    labels: tuple[str, ...] = ()

    def cut(self, text: str) -> int | None:
        """Where to cut ``text``, or None to keep generating."""
        if self.first_line:
            start = len(text) - len(text.lstrip())
            end = text.find("\n", start)
            if end > start:
                return end
        if self.labels:
            key = label_key(text)
            for label in self.labels:
                want = label_key(label)
                if not want or any(label_key(o).startswith(want + " ") for o in self.labels):
                    continue  # a longer label could still be on its way
                m = re.search(r"(?<!\w)" + re.escape(want) + r"(?!\w)", key)
                if m and (m.end() < len(key) or not text[-1:].isalnum()):
                    return len(text)  # named, and the word has ended
        return None

    def describe(self) -> str:
        parts = (["first line"] if self.first_line else []) + (["a label"] if self.labels else [])
        return "stop at " + " or ".join(parts)


def stop_rule(check: CheckSpec, wording_text: str) -> StopRule | None:
    """The rule for one check and wording, or None when generation should run its budget."""
    if check.kind not in ONE_LINE_CHECKS:
        return None
    first_line = not wants_more(wording_text)
    labels = tuple(check.labels) if check.kind == "label" else ()
    if not first_line and not labels:
        return None
    return StopRule(first_line=first_line, labels=labels)
