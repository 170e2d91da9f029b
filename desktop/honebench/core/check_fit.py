"""Does an answer check suit a question set? Checked before any grading starts.

A label check whose labels leave out some expected answers could never pass those items;
a number check on expected answers that are not numbers could never pass at all. Both are
refused up front with the offending values named, instead of showing up as a wall of misses.

Labels belong to the set: when a project switches to another question set, the check's
labels are guessed again (from the set's recipe, or from its own expected answers) rather
than carried over from the previous set. Also here: reading labels from the command line
and from a file.
"""
from __future__ import annotations

import re
from collections import Counter
from dataclasses import replace
from pathlib import Path
from typing import Sequence

from .checks import CheckSpec
from .extraction import label_key, parse_number, quote

SHOWN = 5  # offending values or rows named in a message


def _rows_word(items: Sequence) -> str:
    rows = [str(it.row) for it in items[:SHOWN]]
    more = f" and {len(items) - SHOWN} more" if len(items) > SHOWN else ""
    return ("row " if len(items) == 1 else "rows ") + ", ".join(rows) + more


def check_fits_set(check: CheckSpec, qset) -> None:
    """Raise ValueError when ``check`` cannot judge ``qset``'s expected answers:
    a label check whose labels leave out expected answers, or a number check on expected
    answers that are not single numbers. Names the values and rows and says what to do."""
    items = tuple(qset.items)
    name = getattr(qset, "name", "") or "the question set"
    if check.kind == "label" and check.labels:
        known = {label_key(lab) for lab in check.labels}
        outside = [it for it in items if label_key(it.expected) not in known]
        if outside:
            counts = Counter(it.expected for it in outside)
            values = ", ".join(f"{quote(v)} ({n} item{'s' if n > 1 else ''})"
                               for v, n in counts.most_common(SHOWN))
            more = f" and {len(counts) - SHOWN} more" if len(counts) > SHOWN else ""
            raise ValueError(
                f"The label check's labels ({', '.join(check.labels)}) leave out "
                f"{len(counts)} expected answer{'s' if len(counts) > 1 else ''} of {name}: "
                f"{values}{more}, first at {_rows_word(outside)}. Those items could never "
                "pass. Add the missing labels (--label / --labels-file, or the label table), "
                "or clear the labels to use the set's own expected answers.")
    if check.kind == "number":
        bad = [it for it in items if parse_number(it.expected) is None]
        if bad:
            shown = ", ".join(f"row {it.row} ({quote(it.expected)})" for it in bad[:SHOWN])
            more = f" and {len(bad) - SHOWN} more" if len(bad) > SHOWN else ""
            raise ValueError(
                f"The number check needs a single number as every expected answer, but "
                f"{len(bad)} of {len(items)} in {name} are not: {shown}{more}. Fix those "
                "rows, or choose another answer check (exact, label or contains).")


def check_for_new_set(check: CheckSpec, recipe_check: dict | None = None) -> CheckSpec:
    """The check to use after switching to another question set: the same check with its
    labels guessed again, from the set's recipe when it has one, else from the set's own
    expected answers (no labels given)."""
    labels = tuple((recipe_check or {}).get("labels") or ()) if check.kind == "label" else ()
    if recipe_check and recipe_check.get("kind") != check.kind:
        labels = ()
    return replace(check, labels=labels)


def labels_from_option(text: str) -> tuple[list[str], str | None]:
    """Split a ``--labels`` value at commas. Returns the labels and a warning when a comma
    has spaces beside it, as that often means one label holds a comma."""
    labels = [part.strip() for part in text.split(",") if part.strip()]
    warning = None
    if re.search(r"\s,|,\s", text):
        listed = ", ".join(quote(lab) for lab in labels)
        warning = (f"--labels was split at every comma into {len(labels)} labels: {listed}. "
                   "If a label holds a comma, give each label with its own --label, or one per "
                   "line in a file with --labels-file.")
    return labels, warning


def collect_labels(option: str | None = None, each: Sequence[str] = (),
                   file: str | Path | None = None) -> tuple[list[str] | None, list[str]]:
    """Labels from a comma-separated option, single labels and a labels file, in that
    order; None when none was given. Also returns warnings to show."""
    if option is None and not each and file is None:
        return None, []
    labels, warnings = [], []
    if option is not None:
        split, warning = labels_from_option(option)
        labels += split
        warnings += [warning] if warning else []
    labels += [lab.strip() for lab in each if lab.strip()]
    if file is not None:
        labels += read_labels_file(file)
    return labels, warnings


def read_labels_file(path: str | Path) -> list[str]:
    """Labels from a UTF-8 text file, one per line; blank lines and surrounding spaces are
    ignored, commas are kept. Raises ValueError naming the file and line."""
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise ValueError(f"labels file {p} cannot be read ({exc.strerror or exc}); check the "
                         "path") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        raise ValueError(f"labels file {p}, line {line}: not UTF-8 text; save it as UTF-8") \
            from None
    labels = [line.strip() for line in text.splitlines() if line.strip()]
    if not labels:
        raise ValueError(f"labels file {p} holds no labels; write one label per line")
    return labels
