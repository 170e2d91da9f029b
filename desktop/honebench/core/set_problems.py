"""What is wrong with a question set's table under a column mapping, row by row.

Every problem names the row, the column and what to do; ``load_set`` gathers them all into
one SetError. Split-column values are read here too (tuning / held-out and their synonyms).
"""
from __future__ import annotations

import re
from typing import TYPE_CHECKING

import pandas as pd

from .set_errors import Problem, quote

if TYPE_CHECKING:  # annotations only: sets imports this module
    from .sets import ColumnMapping

TUNING, HELD_OUT = "tuning", "held_out"
_SPLIT_NAMES = {
    TUNING: ("tuning", "tune", "train", "training", "dev", "development"),
    HELD_OUT: ("held_out", "heldout", "holdout", "hold_out", "test", "testing"),
}
_SPLIT_HINT = "Write tuning or held-out (train/test, tune/holdout and dev/test also work)."


def split_name(value: str) -> str | None:
    """"tuning" or "held_out" for a split column's value, None if it is not a split name."""
    key = re.sub(r"[\s\-]+", "_", str(value).strip().lower())
    for split, words in _SPLIT_NAMES.items():
        if key in words:
            return split
    return None


def _rows_text(word: str, rows: list[int], shown: int = 10) -> str:
    """'Row 5', 'Rows 4, 9 and 12', 'Rows 1, 2, ... and 30 more'."""
    head = f"{word.capitalize()}{'s' if len(rows) > 1 else ''} "
    listed = [str(r) for r in rows[:shown]]
    if len(rows) > shown:
        return head + ", ".join(listed) + f" and {len(rows) - shown} more"
    return head + (", ".join(listed[:-1]) + " and " + listed[-1] if len(listed) > 1 else listed[0])


def find_problems(table: pd.DataFrame, mapping: ColumnMapping, *,
                  max_cell_chars: int = 100_000) -> list[Problem]:
    """Everything that stops ``table`` (from read_table) loading under ``mapping``."""
    word = table.attrs.get("row_word", "row")
    problems = _mapping_problems(table, mapping)
    if problems:
        return problems
    rows = table.index.to_numpy()

    def where(mask) -> list[int]:
        return [int(r) for r in rows[mask.to_numpy()]]

    blank_expected = where(table[mapping.expected].str.strip().eq(""))
    if blank_expected:
        those = "those rows" if len(blank_expected) > 1 else "the row"
        problems.append(Problem(
            f"{_rows_text(word, blank_expected)}, column {quote(mapping.expected)}: the expected "
            f"answer is blank or missing. Fill it in, or delete {those}.",
            blank_expected[0], mapping.expected))
    no_input = where(table[list(mapping.inputs)].apply(lambda c: c.str.strip().eq("")).all(axis=1))
    if no_input:
        names = ", ".join(quote(c) for c in mapping.inputs)
        problems.append(Problem(
            f"{_rows_text(word, no_input)}, input column{'s' if len(mapping.inputs) > 1 else ''} "
            f"{names}: there is no input text, so there is nothing to ask. Fill it in, or "
            "delete the row.", no_input[0], mapping.inputs[0]))
    if mapping.id:
        problems += _id_problems(table, mapping.id, word, where)
    if mapping.split:
        problems += _split_problems(table, mapping.split, word)
    for _, column in mapping.columns():
        lengths = table[column].str.len()
        for row, length in lengths[lengths > max_cell_chars].items():
            problems.append(Problem(
                f"{word.capitalize()} {row}, column {quote(column)}: the text is {length:,} "
                f"characters long, over the limit of {max_cell_chars:,}. Shorten it, or keep "
                "long material out of the question set (a small model could not read it all "
                "anyway).", int(row), column))
    return problems


def _mapping_problems(table: pd.DataFrame, mapping: ColumnMapping) -> list[Problem]:
    present = ", ".join(quote(c) for c in table.columns)
    problems = [Problem(
        f"The mapping uses column {quote(column)} as {role}, but the file has no such column. "
        f"Columns found: {present}. Pick one of these in the column mapping.", None, column)
        for role, column in mapping.columns() if column not in table.columns]
    if not mapping.inputs:
        problems.append(Problem("The mapping has no input field. Choose at least one column "
                                "as input.", None, None))
    roles: dict[str, str] = {}
    for role, column in mapping.columns():
        if column in roles and not (role == "the id" and roles[column] == "an input field"):
            what = ("twice as an input field" if role == roles[column]
                    else f"as both {roles[column]} and {role}")
            problems.append(Problem(
                f"Column {quote(column)} is mapped {what}. Map each column to one role; the "
                "expected answer must never be an input.", None, column))
        roles.setdefault(column, role)
    return problems


def _id_problems(table: pd.DataFrame, column: str, word: str, where) -> list[Problem]:
    ids = table[column].str.strip()
    problems = []
    blank = where(ids.eq(""))
    if blank:
        problems.append(Problem(
            f"{_rows_text(word, blank)}, column {quote(column)}: the id is blank. Give every "
            "item an id, or map no id column to number the items by row.", blank[0], column))
    filled = ids[ids.ne("")]
    repeated = filled[filled.duplicated(keep=False)]
    for value, group in repeated.groupby(repeated, sort=False):
        listed = [int(r) for r in group.index]
        problems.append(Problem(
            f"{_rows_text(word, listed)}, column {quote(column)}: the id {quote(value)} is "
            "used more than once. Give each item its own id.", listed[0], column))
    return problems


def _split_problems(table: pd.DataFrame, column: str, word: str) -> list[Problem]:
    problems = []
    names = table[column].map(split_name)
    bad = table[column][names.isna()]
    for value, group in bad.groupby(bad.str.strip(), sort=False):
        listed = [int(r) for r in group.index]
        what = "the split is blank" if not value else f"{quote(value)} is not a split name"
        problems.append(Problem(f"{_rows_text(word, listed)}, column {quote(column)}: {what}. "
                                f"{_SPLIT_HINT}", listed[0], column))
    return problems
