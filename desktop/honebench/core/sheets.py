"""Excel workbooks: which sheet holds the question set, and title rows above the header.

``sheet_names`` lists a workbook's sheets (for a sheet picker); ``read_sheet`` reads one
sheet, chosen by name or by number counted from 1, as a grid of cells. Messages about a
sheet name the sheet that was read and, when the workbook has others, list them and say how
to choose one. Nothing here writes anything.
"""
from __future__ import annotations

import os
from dataclasses import dataclass

import pandas as pd


def check_reading_options(path: str, ext: str, sheet, skip_rows, text_exts) -> None:
    """ValueError when ``sheet`` or ``skip_rows`` make no sense for this kind of file."""
    kind = f"{os.path.basename(path)} is a {ext or 'plain'} file"
    if sheet is not None and ext != ".xlsx":
        raise ValueError(f"a sheet can be chosen only in an Excel (.xlsx) file; {kind}")
    if isinstance(skip_rows, bool) or not isinstance(skip_rows, int) or skip_rows < 0:
        raise ValueError(f"rows to skip must be a whole number of 0 or more, not {skip_rows!r}")
    if skip_rows and ext not in text_exts and ext != ".xlsx":
        raise ValueError(f"title rows can be skipped only in CSV, TSV, text and Excel files; "
                         f"{kind}, whose records have no title rows")


@dataclass(frozen=True)
class SheetChoice:
    """The sheet that was read, and every sheet of its workbook."""

    name: str
    number: int  # counted from 1
    names: tuple[str, ...]

    def note(self) -> str:
        """Where the rows came from, for messages: names the sheet and any others."""
        if len(self.names) == 1:
            return f"(Read from sheet {self.name!r}, the workbook's only sheet.)"
        others = ", ".join(repr(n) for n in self.names if n != self.name)
        return (f"(Read from sheet {self.name!r}, sheet {self.number} of {len(self.names)}; "
                f"the workbook also has {others}. If the items are on another sheet, choose "
                "it with --sheet NAME or in the column mapping.)")


def sheet_names(path: str) -> list[str]:
    """The workbook's sheet names in order. Raises whatever the reader raises for a file
    that is not a workbook (read_table turns that into a SetError)."""
    with pd.ExcelFile(path, engine="openpyxl") as book:
        return [str(n) for n in book.sheet_names]


def choose_sheet(names: list[str], sheet: str | int | None) -> SheetChoice | str:
    """The sheet asked for, or the text of the problem when there is no such sheet.
    ``sheet``: None for the first sheet, a name, or a number counted from 1 (a text of
    digits is a name when a sheet has that name, else a number)."""
    names_t = tuple(names)
    listed = ", ".join(repr(n) for n in names) or "none"
    if not names:
        return "The workbook has no sheets. Save the question set as a workbook with one sheet."
    if sheet is None:
        return SheetChoice(names[0], 1, names_t)
    if isinstance(sheet, str) and sheet in names:
        return SheetChoice(sheet, names.index(sheet) + 1, names_t)
    text = str(sheet).strip()
    if text.isdigit():
        number = int(text)
        if 1 <= number <= len(names):
            return SheetChoice(names[number - 1], number, names_t)
        return (f"There is no sheet number {number}: the workbook has {len(names)} sheet"
                f"{'s' if len(names) > 1 else ''} ({listed}). Sheets are counted from 1.")
    folded = [n for n in names if n.casefold() == text.casefold()]
    if len(folded) == 1:
        return SheetChoice(folded[0], names.index(folded[0]) + 1, names_t)
    return f"The workbook has no sheet named {text!r}. Its sheets are: {listed}."


def read_sheet(path: str, sheet: str | int | None, skip_rows: int) -> tuple[pd.DataFrame, SheetChoice | str]:
    """The chosen sheet as a grid of raw cells, its first ``skip_rows`` rows left out, with
    the index holding each row's number in the sheet (the first row is 1). When the sheet
    does not exist, the grid is empty and the second value is the problem's text."""
    with pd.ExcelFile(path, engine="openpyxl") as book:
        choice = choose_sheet([str(n) for n in book.sheet_names], sheet)
        if isinstance(choice, str):
            return pd.DataFrame(), choice
        grid = pd.read_excel(book, sheet_name=choice.number - 1, header=None, dtype=object,
                             na_filter=False, skiprows=skip_rows or None)
    grid.index = grid.index + 1 + skip_rows
    return grid, choice
