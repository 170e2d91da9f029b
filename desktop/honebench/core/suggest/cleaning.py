"""Turning a model's reply into a usable wording, or a reason why there is none."""
from __future__ import annotations

import re
from dataclasses import dataclass

from rapidfuzz import fuzz

from ..extraction import normalize_answer

MAX_CHARS = 600
MIN_WORDS = 3
DUPLICATE_SIMILARITY = 90.0  # rapidfuzz ratio on normalized text; common practice, tuned by eye

_OPENER = re.compile(r"^\s*(sure|certainly|of course|okay|ok|great)\b[!,.]*\s*", re.IGNORECASE)
_LEAD_IN = re.compile(
    r"^\s*(here is|here's|here are|the new instruction|new instruction|improved instruction|"
    r"rewritten instruction|instruction|answer)\b[^:\n]{0,40}:\s*", re.IGNORECASE)
_NUMBERING = re.compile(r"^\s*(?:[-*•]|\d+[.)]|\(\d+\))\s+")
_QUOTES = "\"'“”‘’`"
_JUNK_MARKERS = ("<|im_", "[INSTRUCTION]", "Score:", "Right answer:", "</s>")


@dataclass(frozen=True)
class Cleaned:
    text: str | None
    reason: str = ""  # why the reply was dropped, when text is None


def clean_reply(reply: str) -> Cleaned:
    """The first usable line of a reply, stripped of numbering, quotes and preambles."""
    lines = [ln.strip() for ln in (reply or "").splitlines()]
    lines = [ln for ln in lines if ln]
    if not lines:
        return Cleaned(None, "empty reply")
    if any(marker in (reply or "") for marker in _JUNK_MARKERS):
        return Cleaned(None, "echoed the request instead of answering")
    for line in lines:
        text = _NUMBERING.sub("", line)
        stripped = _LEAD_IN.sub("", _OPENER.sub("", text, count=1), count=1)
        if stripped != text and not stripped.strip():
            continue  # a bare "Here is the new instruction:" line; the wording follows
        text = stripped.strip().strip(_QUOTES).strip()
        if text:
            break
    else:
        return Cleaned(None, "only a preamble, no wording")
    if any(marker in text for marker in _JUNK_MARKERS):
        return Cleaned(None, "echoed the request instead of answering")
    if len(text) > MAX_CHARS:
        return Cleaned(None, f"over {MAX_CHARS} characters")
    if len(text.split()) < MIN_WORDS:
        return Cleaned(None, f"under {MIN_WORDS} words")
    return Cleaned(text)


def similarity(a: str, b: str) -> float:
    return fuzz.ratio(normalize_answer(a), normalize_answer(b))


def find_duplicate(text: str, others: list[tuple[str, str]],
                   threshold: float = DUPLICATE_SIMILARITY) -> tuple[str, float] | None:
    """(label, similarity) of the first of ``others`` (label, text) that ``text`` repeats."""
    best = None
    for label, other in others:
        score = similarity(text, other)
        if score >= threshold and (best is None or score > best[1]):
            best = (label, score)
    return best
