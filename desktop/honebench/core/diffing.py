"""Word-level differences between two wordings, for showing what changed.

Texts are cut into words and the runs of whitespace between them, so joining the pieces
gives back the texts exactly. The matching is difflib's SequenceMatcher over those tokens.
A lone run of whitespace between two changes is folded into the change, so that
"reply in one word" -> "answer with a label" reads as one removed phrase and one added
phrase rather than a word-by-word zigzag.
"""
from __future__ import annotations

import re
from difflib import SequenceMatcher

__all__ = ["word_diff", "diff_counts", "tokens"]

SAME, REMOVED, ADDED = "same", "removed", "added"
_SPLIT = re.compile(r"(\s+)")


def tokens(text: str) -> list[str]:
    """Words and whitespace runs, in order; "".join(tokens(t)) == t."""
    return [t for t in _SPLIT.split(text) if t]


def _raw_pieces(old_tokens: list[str], new_tokens: list[str]) -> list[tuple[str, str]]:
    matcher = SequenceMatcher(None, old_tokens, new_tokens, autojunk=False)
    pieces: list[tuple[str, str]] = []
    for tag, i1, i2, j1, j2 in matcher.get_opcodes():
        if tag == "equal":
            pieces.append((SAME, "".join(old_tokens[i1:i2])))
            continue
        if i2 > i1:
            pieces.append((REMOVED, "".join(old_tokens[i1:i2])))
        if j2 > j1:
            pieces.append((ADDED, "".join(new_tokens[j1:j2])))
    return pieces


def _fold_gaps(pieces: list[tuple[str, str]]) -> list[tuple[str, str]]:
    """Turn whitespace-only "same" pieces that sit between two changes into a removed and
    an added copy, so that neighbouring changes merge."""
    out: list[tuple[str, str]] = []
    for n, (op, text) in enumerate(pieces):
        between_changes = (0 < n < len(pieces) - 1 and pieces[n - 1][0] != SAME
                           and pieces[n + 1][0] != SAME)
        if op == SAME and between_changes and not text.strip():
            out += [(REMOVED, text), (ADDED, text)]
        else:
            out.append((op, text))
    return out


def _merge(pieces: list[tuple[str, str]]) -> list[tuple[str, str]]:
    """Each run of changes becomes at most one removed piece followed by one added piece."""
    merged: list[tuple[str, str]] = []
    removed: list[str] = []
    added: list[str] = []

    def flush() -> None:
        if removed:
            merged.append((REMOVED, "".join(removed)))
        if added:
            merged.append((ADDED, "".join(added)))
        removed.clear()
        added.clear()

    for op, text in pieces:
        if op == SAME:
            flush()
            merged.append((SAME, text))
        else:
            (removed if op == REMOVED else added).append(text)
    flush()
    return merged


def word_diff(old: str, new: str) -> list[tuple[str, str]]:
    """(op, text) pieces with op "same", "removed" or "added". Joining the "same" and
    "removed" texts gives ``old``; joining "same" and "added" gives ``new``."""
    old, new = str(old), str(new)
    return _merge(_fold_gaps(_raw_pieces(tokens(old), tokens(new))))


def diff_counts(old: str, new: str) -> tuple[int, int]:
    """(words removed, words added) from ``old`` to ``new``."""
    removed = added = 0
    for op, text in word_diff(old, new):
        if op == REMOVED:
            removed += len(text.split())
        elif op == ADDED:
            added += len(text.split())
    return removed, added
