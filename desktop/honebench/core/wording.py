"""A wording and its placement, turned into chat messages for one item.

Placements:
  system  - the wording is the system message; the item's input is the user message.
  before  - one user message: the wording, a blank line, then the input.
  after   - one user message: the input, a blank line, then the wording.
  answer  - the input is the user message; the answer starts with the wording (prefill),
            continued by the model from the rendered chat template.

Placeholders such as ``{question}`` name an input field. They are filled by plain text
substitution: no attribute or index access, no format specs, no code. Braces that do not
name a field (in the wording or in the data) are left exactly as they are. When the wording
names every input field itself (placements before/after), the input is not repeated.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Mapping

PLACEMENTS = ("system", "before", "after", "answer")
PLACEMENT_LABELS = {
    "system": "system message",
    "before": "before the question",
    "after": "after the question",
    "answer": "start of the answer",
}
_PLACEHOLDER = re.compile(r"\{([A-Za-z_][A-Za-z0-9_ ]{0,63})\}")


@dataclass(frozen=True)
class Wording:
    text: str
    placement: str = "system"

    def __post_init__(self):
        if self.placement not in PLACEMENTS:
            raise ValueError(
                f"placement {self.placement!r} is not one of {', '.join(PLACEMENTS)}"
            )


@dataclass(frozen=True)
class Prompt:
    messages: tuple[dict, ...]
    prefill: str = ""


def placeholders(text: str) -> list[str]:
    """Names written as {name} in the text, in order, without repeats."""
    seen: list[str] = []
    for m in _PLACEHOLDER.finditer(text):
        if m.group(1) not in seen:
            seen.append(m.group(1))
    return seen


def fill(text: str, fields: Mapping[str, object]) -> str:
    """Replace {name} by the field's text where ``name`` is a known field; keep all else."""

    def swap(m: re.Match) -> str:
        name = m.group(1)
        if name in fields:
            value = fields[name]
            return "" if value is None else str(value)
        return m.group(0)

    return _PLACEHOLDER.sub(swap, text)


def input_block(fields: Mapping[str, object]) -> str:
    """The item's input as the model reads it: the bare text for one field, labelled lines
    for several."""
    if len(fields) == 1:
        return str(next(iter(fields.values())))
    return "\n".join(f"{name}: {value}" for name, value in fields.items())


def build_prompt(wording: Wording, fields: Mapping[str, object]) -> Prompt:
    """Chat messages (and any answer prefill) for one item."""
    named = set(placeholders(wording.text)) & set(fields)
    text = fill(wording.text, fields)
    covers_input = bool(fields) and named >= set(fields)
    question = "" if covers_input else input_block(fields)
    p = wording.placement
    if p == "system":
        return Prompt(({"role": "system", "content": text},
                       {"role": "user", "content": input_block(fields)}))
    if p == "answer":
        return Prompt(({"role": "user", "content": input_block(fields)},), prefill=text)
    parts = [text, question] if p == "before" else [question, text]
    return Prompt(({"role": "user", "content": "\n\n".join(x for x in parts if x)},))
