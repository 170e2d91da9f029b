"""Question sets: a labelled data file whose rows are items.

A column mapping says which columns are the input fields, the expected answer, and
optionally the item id and the split. Loading checks the whole file and reports every
problem at once in one SetError. Items are split into tuning items and held-out items,
either from a split column or by a seeded draw that does not depend on row order.
Nothing here writes anything.
"""
from __future__ import annotations

import contextlib
import gc
import hashlib
import json
import os
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .set_problems import _SPLIT_HINT, HELD_OUT, TUNING, find_problems, split_name
from .set_reading import Problem, SetError, quote, read_table

__all__ = ["ColumnMapping", "Item", "QuestionSet", "SetError", "Problem", "read_table",
           "guess_mapping", "find_problems", "load_set", "preview", "split_items", "split_name"]

_EXPECTED_NAMES = ("expected", "expected_answer", "expected_output", "answer", "gold",
                   "gold_answer", "gold_label", "label", "target", "output", "correct",
                   "correct_answer", "reference_answer", "ground_truth", "truth", "category",
                   "class", "intent", "department", "desk", "team", "queue", "route",
                   "topic", "sentiment", "mood", "verdict", "result")
_EXPECTED_WORDS = ("answer", "expected", "label", "gold", "target")
_ID_NAMES = ("id", "item_id", "itemid", "item_no", "qid", "question_id", "uid", "uuid",
             "example_id", "row_id", "record_id")
_SPLIT_COLUMN_NAMES = ("split", "partition", "fold", "subset", "data_split", "split_name")
_INPUT_NAMES = ("question", "input", "message", "text", "prompt", "query", "request",
                "context", "passage", "document", "instruction", "sentence", "utterance",
                "email", "ticket", "content", "body")
# Never guessed as an input: they tend to give the answer away or say nothing about it.
_NOT_INPUT_NAMES = ("explanation", "rationale", "reasoning", "solution", "notes", "note",
                    "comment", "comments", "source", "author", "annotator", "date",
                    "created", "created_at", "updated_at", "timestamp", "reference")


@dataclass(frozen=True)
class ColumnMapping:
    """Which columns are the input fields, the expected answer, the id and the split."""
    inputs: tuple[str, ...]
    expected: str
    id: str | None = None
    split: str | None = None

    def __post_init__(self):
        inputs = (self.inputs,) if isinstance(self.inputs, str) else tuple(self.inputs)
        object.__setattr__(self, "inputs", inputs)

    def columns(self) -> list[tuple[str, str]]:
        """(role, column) for every mapped column."""
        roles = [("an input field", c) for c in self.inputs] + [("the expected answer", self.expected)]
        roles += [(r, c) for r, c in (("the id", self.id), ("the split", self.split)) if c]
        return roles

    def as_dict(self) -> dict:
        return {"inputs": list(self.inputs), "expected": self.expected, "id": self.id,
                "split": self.split}

    @classmethod
    def from_dict(cls, d: dict) -> "ColumnMapping":
        inputs, expected = d.get("inputs"), d.get("expected")
        if not isinstance(expected, str) or not isinstance(inputs, (list, tuple)) \
                or not all(isinstance(c, str) for c in inputs):
            raise ValueError(f"a column mapping needs 'inputs' (a list of column names) and "
                             f"'expected' (a column name); got {d!r}")
        optional = {k: d.get(k) for k in ("id", "split")}
        for key, value in optional.items():
            if value is not None and not isinstance(value, str):
                raise ValueError(f"column mapping '{key}' must be a column name or null, not {value!r}")
        return cls(tuple(inputs), expected, **optional)


@dataclass(frozen=True)
class Item:
    """One row of a question set."""
    id: str
    fields: dict[str, str]
    expected: str
    split: str
    row: int


@dataclass(frozen=True)
class QuestionSet:
    """A loaded, checked question set. ``content_hash`` covers the ids, input field names,
    input texts and expected answers (and the split column's values when one is mapped),
    not the file format, column order or row order."""
    name: str
    path: str
    mapping: ColumnMapping
    items: tuple[Item, ...]
    content_hash: str
    split_seed: int
    held_out_fraction: float

    def tuning(self) -> tuple[Item, ...]:
        return tuple(i for i in self.items if i.split == TUNING)

    def held_out(self) -> tuple[Item, ...]:
        return tuple(i for i in self.items if i.split == HELD_OUT)

    def labels(self) -> list[str]:
        """The distinct expected answers, sorted."""
        return sorted({i.expected for i in self.items})

    def __len__(self) -> int:
        return len(self.items)


def split_items(ids, seed: int, held_out_fraction: float) -> dict[str, str]:
    """Seeded split: round(n * fraction) ids held out (at least 1 when n >= 2 and the
    fraction is above 0, at most n - 1 when it is below 1), the same whatever the order."""
    ids = [str(i) for i in ids]
    if len(set(ids)) != len(ids):
        raise ValueError("split_items needs distinct ids")
    if not 0.0 <= held_out_fraction <= 1.0:
        raise ValueError(f"held_out_fraction must be between 0 and 1, not {held_out_fraction}")
    n = len(ids)
    count = round(n * held_out_fraction)
    if n >= 2 and held_out_fraction > 0:
        count = max(count, 1)
    if n >= 2 and held_out_fraction < 1:
        count = min(count, n - 1)
    sha = hashlib.sha256
    digests = [sha(f"{seed}:{i}".encode()).digest() for i in ids]
    # the order of the hex digests (then the id) is the order of the raw digests; the first
    # 8 bytes as numbers decide it unless two ids share them (then the full sort)
    heads = np.frombuffer(b"".join(d[:8] for d in digests), dtype=">u8")
    if len(np.unique(heads)) == n:
        chosen = np.argsort(heads, kind="stable")[:count]
        held = {ids[k] for k in chosen.tolist()}
    else:
        held = {i for _, i in sorted(zip(digests, ids))[:count]}
    return {i: HELD_OUT if i in held else TUNING for i in ids}


def _key(name: str) -> str:
    return re.sub(r"[^0-9a-z]+", "_", name.strip().lower()).strip("_")


def guess_mapping(columns: list[str]) -> ColumnMapping:
    """A likely mapping from column names alone. Raises SetError when no column looks like
    the expected answer or none is left for input."""
    columns = [str(c) for c in columns]
    keys = {c: _key(c) for c in columns}

    def first(names: tuple[str, ...], among: list[str]) -> str | None:
        for name in names:
            for c in among:
                if keys[c] == name:
                    return c
        return None

    expected = first(_EXPECTED_NAMES, columns) or next(
        (c for c in columns if set(keys[c].split("_")) & set(_EXPECTED_WORDS)), None)
    if expected is None:
        raise SetError("", [Problem(
            f"No column looks like the expected answer. Columns found: "
            f"{', '.join(quote(c) for c in columns) or 'none'}. Choose the expected-answer "
            "column in the column mapping, or name it 'answer'.")])
    rest = [c for c in columns if c != expected]
    id_column = first(_ID_NAMES, rest)
    rest = [c for c in rest if c != id_column]
    split_column = first(_SPLIT_COLUMN_NAMES, rest)
    excluded = set(_EXPECTED_NAMES + _ID_NAMES + _SPLIT_COLUMN_NAMES + _NOT_INPUT_NAMES)
    rest = [c for c in rest if c != split_column and keys[c] not in excluded
            and not re.fullmatch(r"unnamed_\d+|column_\d+", keys[c])]
    inputs = [c for c in rest if keys[c] in _INPUT_NAMES] + [c for c in rest if keys[c] not in _INPUT_NAMES]
    if not inputs:
        raise SetError("", [Problem(
            f"No column is left to use as input: {quote(expected)} looks like the expected "
            f"answer and the others ({', '.join(quote(c) for c in columns if c != expected) or 'none'}) "
            "look like ids, splits or notes. Choose the input columns in the column mapping.")])
    return ColumnMapping(tuple(inputs), expected, id_column, split_column)


def content_hash(items, mapping: ColumnMapping) -> str:
    """sha256 over ids, input names and texts, expected answers (and the split when a split
    column is mapped), in id order, as compact UTF-8 JSON."""
    return _hash_rows([i.id for i in items], [[i.fields[c] for i in items] for c in mapping.inputs],
                      [i.expected for i in items],
                      [i.split for i in items] if mapping.split else None, mapping)


def _hash_rows(ids: list[str], inputs: list[list[str]], expected: list[str],
               splits: list[str] | None, mapping: ColumnMapping) -> str:
    """``content_hash`` from columns. Ids are distinct (a loaded set guarantees it), so
    ordering rows by id alone is the order of the rows themselves."""
    texts = list(zip(*inputs)) if inputs else [()] * len(ids)
    extra = ([(s,) for s in splits] if splits is not None else [()] * len(ids))
    rows = [(i, t, e) + x for i, t, e, x in zip(ids, texts, expected, extra)]
    if len(set(ids)) == len(ids):
        rows.sort(key=lambda r: r[0])
    else:  # only for hand-made item lists: the full row order, as before
        rows = sorted([[r[0], list(r[1]), *r[2:]] for r in rows])
    canonical = json.dumps({"inputs": list(mapping.inputs), "items": rows},
                           ensure_ascii=False, separators=(",", ":"))
    return hashlib.sha256(canonical.encode("utf-8", "surrogatepass")).hexdigest()


def _guess_for(path: str, table: pd.DataFrame) -> ColumnMapping:
    try:
        return guess_mapping(list(table.columns))
    except SetError as e:
        notes = [table.attrs.get("sheet_note")]  # a workbook: the items may be elsewhere
        if any(re.fullmatch(r"column \d+", str(c)) for c in table.columns):
            notes.append("If the first row read is a title above the column names, leave it "
                         "out with --skip-rows (or in the column mapping).")
        extra = " ".join(n for n in notes if n)
        raise SetError(path, [Problem(f"{p.text} {extra}".strip(), p.row, p.column)
                              for p in e._found]) from None


def load_set(path, mapping: ColumnMapping | None = None, *, split_seed: int = 0,
             held_out_fraction: float = 0.3, max_cell_chars: int = 100_000,
             sheet: str | int | None = None, skip_rows: int = 0) -> QuestionSet:
    """Read, check and split a question set. With no mapping, one is guessed from the
    column names. ``sheet`` and ``skip_rows``: see read_table. Raises SetError listing
    every problem found."""
    if not 0.0 <= held_out_fraction <= 1.0:
        raise ValueError(f"held_out_fraction must be between 0 and 1, not {held_out_fraction}")
    if max_cell_chars < 1:
        raise ValueError(f"max_cell_chars must be at least 1, not {max_cell_chars}")
    path = os.fspath(path)
    table = read_table(path, sheet=sheet, skip_rows=skip_rows)
    mapping = mapping or _guess_for(path, table)
    problems = find_problems(table, mapping, max_cell_chars=max_cell_chars)
    if problems:
        raise SetError(path, problems)
    rows = [int(r) for r in table.index]
    ids = (table[mapping.id].str.strip().tolist() if mapping.id
           else [str(n) for n in range(1, len(table) + 1)])
    if mapping.split:
        splits = table[mapping.split].map(split_name).tolist()
    else:
        drawn = split_items(ids, split_seed, held_out_fraction)
        splits = [drawn[i] for i in ids]
    columns = [table[c].tolist() for c in mapping.inputs]
    expected = table[mapping.expected].tolist()
    names = list(mapping.inputs)
    if len(names) == 1:
        fields = [{names[0]: v} for v in columns[0]]
    else:
        fields = [dict(zip(names, values)) for values in zip(*columns)]
    with _gc_paused():  # 100,000 new objects would set off many full collections
        items = tuple(map(_item, ids, fields, expected, splits, rows))
    digest = _hash_rows(ids, columns, expected, splits if mapping.split else None, mapping)
    return QuestionSet(os.path.splitext(os.path.basename(path))[0], path, mapping, items,
                       digest, split_seed, held_out_fraction)


@contextlib.contextmanager
def _gc_paused():
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def _item(id_: str, fields: dict, expected: str, split: str, row: int) -> Item:
    """An Item without the frozen dataclass's per-field checks (six times faster, for sets
    of 100,000 rows); the same object as ``Item(...)``."""
    item = object.__new__(Item)
    item.__dict__.update(id=id_, fields=fields, expected=expected, split=split, row=row)
    return item


def preview(path, rows: int = 5, *, sheet: str | int | None = None,
            skip_rows: int = 0) -> tuple[pd.DataFrame, ColumnMapping | None, list[str]]:
    """For a mapping dialog: the first rows, a guessed mapping (None if none can be guessed),
    and the problems loading with that mapping would meet. Raises SetError only when the
    file cannot be read at all. For a workbook, sheets.sheet_names lists the sheets."""
    path = os.fspath(path)
    table = read_table(path, sheet=sheet, skip_rows=skip_rows)
    head = table.head(rows)
    try:
        mapping = _guess_for(path, table)
    except SetError as e:
        return head, None, list(e.problems)
    notes = []
    if mapping.split and table[mapping.split].map(split_name).isna().any():
        notes.append(f"Column {quote(mapping.split)} looks like a split column but holds other "
                     "values, so the split will be drawn instead. " + _SPLIT_HINT)
        mapping = ColumnMapping(mapping.inputs, mapping.expected, mapping.id, None)
    return head, mapping, notes + [p.text for p in find_problems(table, mapping)]
