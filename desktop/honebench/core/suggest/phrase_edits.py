"""Phrase edits: model-free variants made by deleting, swapping or borrowing phrases.

Deterministic for a seed. Every variant differs from the wording it came from.
"""
from __future__ import annotations

import random
import re

_SPLIT = re.compile(r"(?<=[.!?;])\s+")


def phrase_spans(text: str) -> list[tuple[int, int]]:
    """Where each phrase of ``text`` starts and ends (character offsets into ``text``
    itself): sentences, split after . ! ? and ; (commas and colons stay inside a phrase).
    The whitespace between phrases and around the text belongs to no phrase."""
    lead = len(text) - len(text.lstrip())
    body = text.strip()
    spans, at = [], 0
    for gap in _SPLIT.finditer(body):
        if gap.start() > at:
            spans.append((lead + at, lead + gap.start()))
        at = gap.end()
    if at < len(body):
        spans.append((lead + at, lead + len(body)))
    return spans


def phrases(text: str) -> list[str]:
    """Sentences, split after . ! ? and ; (commas and colons stay inside a phrase)."""
    return [text[start:end] for start, end in phrase_spans(text)]


def _join(parts: list[str]) -> str:
    return " ".join(p.strip() for p in parts if p.strip())


def phrase_edits(text: str, donors: list[str], count: int, seed: int) -> list[tuple[str, str]]:
    """Up to ``count`` (variant, what changed) pairs, all different from ``text`` and from
    each other."""
    rng = random.Random(seed)
    base = phrases(text)
    donor_phrases = [p for d in donors if d.strip() != text.strip() for p in phrases(d)]
    donor_phrases = [p for p in dict.fromkeys(donor_phrases) if p not in base]
    seen, out = {text.strip()}, []
    moves = ["delete", "swap", "borrow"]
    for _ in range(count * 20):
        if len(out) >= count:
            break
        move = rng.choice(moves)
        parts = list(base)
        if move == "delete" and len(parts) > 1:
            i = rng.randrange(len(parts))
            what = f"deleted phrase {i + 1}: {parts.pop(i)!r}"
        elif move == "swap" and len(parts) > 1:
            i, j = rng.sample(range(len(parts)), 2)
            parts[i], parts[j] = parts[j], parts[i]
            what = f"swapped phrases {min(i, j) + 1} and {max(i, j) + 1}"
        elif move == "borrow" and donor_phrases:
            phrase = rng.choice(donor_phrases)
            at = rng.randrange(len(parts) + 1)
            parts.insert(at, phrase)
            what = f"added {phrase!r} from another shelf entry"
        else:
            continue
        variant = _join(parts)
        if variant and variant not in seen:
            seen.add(variant)
            out.append((variant, what))
    return out
