"""Reading a question set file into a table of text (the error a bad file raises is in
set_errors.py).

Every cell comes back as text, exactly as written: "NA", "None", "007" and "1e5" stay text.
The table's index holds each row's number in the file, so messages can point at it:
for CSV, TSV and XLSX the header is row 1 and the first item row 2; for JSONL the number is
the line; for JSON and Parquet it is the record's position, the first being 1.
``table.attrs["row_word"]`` says which of "row", "line" or "record" to call it.
"""
from __future__ import annotations

import csv
import datetime
import io
import json
import math
import os
import re

import numpy as np
import pandas as pd

from .set_errors import Problem, SetError, quote
from .sheets import check_reading_options, read_sheet

TEXT_DELIMITED = {".csv": ",", ".tsv": "\t", ".tab": "\t", ".txt": None}
JSON_LINES = (".jsonl", ".ndjson")
SUPPORTED = (".csv", ".tsv", ".tab", ".txt", ".jsonl", ".ndjson", ".json", ".parquet", ".xlsx")
def read_table(path, *, sheet: str | int | None = None, skip_rows: int = 0) -> pd.DataFrame:
    """The file's rows as a table of text, with blank rows left out. Raises SetError.

    ``sheet`` (Excel only): a sheet name, or its number counted from 1; the first sheet
    by default. ``skip_rows`` (CSV, TSV, text and Excel): title rows above the column names
    to leave out, counted from the top of the file or sheet, blank rows included.
    """
    path = os.fspath(path)
    ext = os.path.splitext(path)[1].lower()
    if ext not in SUPPORTED:
        raise SetError(path, [Problem(
            f"Files ending in {quote(ext or '(nothing)')} are not read. Save the question set "
            f"as one of: {', '.join(SUPPORTED)}.")])
    check_reading_options(path, ext, sheet, skip_rows, TEXT_DELIMITED)
    try:
        if ext in (".parquet", ".xlsx"):
            table = _read_binary(path, ext, sheet, skip_rows)
        else:
            with open(path, "rb") as f:
                raw = f.read()
            if not raw.strip():
                raise SetError(path, [Problem(
                    "The file is empty. Put the column names in the first row and one item per row.")])
            text = _decode(path, raw, ext)
            if ext == ".json":
                table = _from_records(path, _json_records(path, text), word="record")
            elif ext in JSON_LINES:
                table = _from_records(path, _jsonl_records(path, text), word="line")
            else:
                table = _read_delimited(path, text, ext, skip_rows)
    except OSError as e:
        raise SetError(path, [Problem(f"The file cannot be opened ({e.strerror or e}). "
                                      "Check that it exists and that you may read it.")]) from e
    if table.empty:
        raise SetError(path, [Problem(
            "The file has column names but no items. Add one item per row below the header."
            + _sheet_note(table))])
    return table


def _sheet_note(table: pd.DataFrame) -> str:
    note = table.attrs.get("sheet_note")
    return f" {note}" if note else ""


def _delimiter(ext: str, header_line: str) -> str:
    """Comma for .csv (semicolon if the header has only those), tab for .tsv; .txt is sniffed."""
    fixed = TEXT_DELIMITED[ext]
    if fixed == "\t":
        return fixed
    if fixed == "," and "," in header_line:
        return ","
    for candidate in "\t,;":
        if candidate in header_line:
            return candidate
    return fixed or "\t"


def _read_delimited(path: str, text: str, ext: str, skip_rows: int = 0) -> pd.DataFrame:
    lines_skipped = 0
    for _ in range(skip_rows):  # title rows: whole lines, as they are in the file
        m = re.search(r"\r\n|\r|\n", text)
        text = text[m.end():] if m else ""
        lines_skipped += 1
    if not text.strip():
        raise SetError(path, [Problem(
            f"Nothing is left after skipping the first {skip_rows} rows. Skip fewer rows: the "
            "column names must come right after the rows skipped.")])
    body = text.lstrip("\r\n")
    skipped = lines_skipped + len(re.findall(r"\r\n|\r|\n", text[: len(text) - len(body)]))
    sep = _delimiter(ext, body.splitlines()[0] if body else "")
    try:
        # Quoting follows RFC 4180 section 2: a quoted field may hold the delimiter, line
        # breaks and doubled double quotes ("") that stand for one double quote.
        grid = pd.read_csv(io.StringIO(body), sep=sep, header=None, dtype=str, quotechar='"',
                           doublequote=True, keep_default_na=False, na_filter=False,
                           skip_blank_lines=False, engine="c")
    except pd.errors.ParserError as e:
        raise SetError(path, [_parser_problem(str(e), skipped, sep)]) from e
    except pd.errors.EmptyDataError as e:
        raise SetError(path, [Problem("The file has no column names. Put them in the first row.")]) from e
    grid.index = grid.index + 1 + skipped
    return _with_header(path, grid, word="row")


def _parser_problem(message: str, skipped: int, sep: str) -> Problem:
    what = {",": "comma", "\t": "tab", ";": "semicolon"}.get(sep, quote(sep))
    m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", message)
    if m:
        expected, row, saw = int(m[1]), int(m[2]) + skipped, int(m[3])
        return Problem(
            f"Row {row} has {saw} values but the first row names only {expected} columns. "
            f"Put double quotes around any value that contains a {what}, or add the missing "
            "column names to the first row.", row)
    m = re.search(r"EOF inside string starting at row (\d+)", message)
    if m:
        row = int(m[1]) + 1 + skipped
        return Problem(
            f"Row {row} opens a double quote that is never closed, so the rest of the file "
            'would be one value. Close the quote, or write a double quote inside a value as "".', row)
    return Problem(f"The file cannot be read as {what}-separated values ({message.strip()}). "
                   "Open it in a spreadsheet and save it again as CSV UTF-8.")


def _with_header(path: str, grid: pd.DataFrame, word: str) -> pd.DataFrame:
    """Use the first non-blank row of a grid of text as column names."""
    filled = grid.apply(lambda column: column.str.strip().ne("")).any(axis=1).to_numpy()
    nonblank = np.flatnonzero(filled)
    if not len(nonblank):
        raise SetError(path, [Problem("The file holds only blank rows. Put the column names "
                                      "in the first row and one item per row.")])
    top = nonblank[0]
    header = [str(v).strip().lstrip("\ufeff").strip() for v in grid.iloc[top]]
    body = grid.iloc[top + 1:]
    return _finish(path, body, header, word)


def _finish(path: str, body: pd.DataFrame, header: list[str], word: str) -> pd.DataFrame:
    """Name the columns, drop unnamed blank columns and blank rows, refuse repeated names."""
    keep, names = [], []
    for position, name in enumerate(header):
        column = body.iloc[:, position]
        if not name:
            if not column.str.strip().ne("").any():
                continue
            name = f"column {position + 1}"
        keep.append(position)
        names.append(name)
    seen: dict[str, int] = {}
    problems = []
    for position, name in zip(keep, names):
        if name in seen:
            problems.append(Problem(
                f"Columns {seen[name] + 1} and {position + 1} are both named {quote(name)}. "
                "Rename one so that each column has its own name.", None, name))
        else:
            seen[name] = position
    if problems:
        raise SetError(path, problems)
    table = body.iloc[:, keep].copy()
    table.columns = names
    if len(table):
        blank = table.apply(lambda c: c.str.strip().eq("")).all(axis=1)
        table = table[~blank]
    table = table.astype(str)
    table.attrs["row_word"] = word
    return table


def _decode(path: str, raw: bytes, ext: str) -> str:
    text = None
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            text = raw.decode("utf-16")
        except UnicodeDecodeError:
            pass
    try:
        text = raw.decode("utf-8-sig") if text is None else text
    except UnicodeDecodeError as e:
        controls = sum(raw.count(b) for b in range(32) if b not in (9, 10, 13))
        if raw.count(0) * 4 <= len(raw):  # mostly NULs: binary or UTF-16, said below
            raise SetError(path, [_decode_problem(raw, e.start, ext, controls * 10 > len(raw))]
                           ) from None
        text = raw.decode("latin-1")
    if "\x00" in text:  # text files hold no NUL: UTF-16 without a byte-order mark, or binary
        line = text.count("\n", 0, text.find("\x00")) + 1
        odd, even = raw[1::2].count(0), raw[0::2].count(0)
        what = ("looks like UTF-16 text without a byte-order mark" if max(odd, even) * 3 > len(raw)
                and min(odd, even) * 20 < len(raw) else "is probably not a text file, or is damaged")
        raise SetError(path, [Problem(
            f"The file holds NUL characters (code 0), first on line {line}, which text files "
            f"never contain: it {what}. Save it as UTF-8 text (in a spreadsheet, choose "
            "'CSV UTF-8') and load it again.", line)])
    return text


def _decode_problem(raw: bytes, offset: int, ext: str, binary: bool = False) -> Problem:
    """Where the first byte that is not UTF-8 sits: byte offset, line, and row/column if found."""
    line = raw.count(b"\n", 0, offset) + 1
    row, column = (line, None) if ext in JSON_LINES else (None, None)
    if ext in TEXT_DELIMITED:
        prefix = raw[:offset].decode("utf-8-sig")
        try:
            records = list(csv.reader(io.StringIO(prefix + "\x01", newline=""),
                                      delimiter=_delimiter(ext, prefix.split("\n")[0])))
            row = len(records)
            if row > 1:
                names = records[0]
                position = len(records[-1])
                column = names[position - 1].strip() if position <= len(names) else None
        except csv.Error:
            row = None
    where = f"row {row}" if row and ext in TEXT_DELIMITED else f"line {line}"
    if column:
        where += f", column {quote(column)}"
    cause = ("It holds many control bytes, so it is probably not a text file at all" if binary
             else "It was probably saved in another encoding such as Windows-1252")
    return Problem(
        f"The file is not UTF-8 text: byte {offset:,} ({where}) cannot be read. {cause}. Save "
        "it as UTF-8 (in a spreadsheet, choose 'CSV UTF-8') and load it again.", row, column)


def _json_records(path: str, text: str) -> list[tuple[int, object]]:
    try:
        data = json.loads(text)
    except json.JSONDecodeError as e:
        raise SetError(path, [Problem(
            f"The JSON is not valid at line {e.lineno}, column {e.colno} ({e.msg}). Fix it there, "
            "or write one JSON object per line in a .jsonl file.", e.lineno)]) from None
    if isinstance(data, dict) and isinstance(data.get("items"), list):
        data = data["items"]
    if not isinstance(data, list):
        raise SetError(path, [Problem(
            'The JSON must be a list of records, [{"question": ..., "answer": ...}, ...], '
            'or an object holding that list as "items".')])
    return [(i, record) for i, record in enumerate(data, 1)]


def _jsonl_records(path: str, text: str) -> list[tuple[int, object]]:
    records, problems = [], []
    for number, line in enumerate(text.splitlines(), 1):
        if not line.strip():
            continue
        example = 'such as {"question": "...", "answer": "..."}'
        try:
            record = json.loads(line)
        except json.JSONDecodeError as e:
            problems.append(Problem(f"Line {number} is not valid JSON ({e.msg} at character "
                                    f"{e.colno}). Each line must hold one JSON object, {example}.", number))
            continue
        if not isinstance(record, dict):
            problems.append(Problem(f"Line {number} holds a JSON {_json_kind(record)}, not an "
                                    f"object. Each line must hold one JSON object, {example}.", number))
        records.append((number, record))
    if problems:
        raise SetError(path, problems)
    return records


def _json_kind(value: object) -> str:
    kinds = {list: "list", str: "string", bool: "true/false value", type(None): "null"}
    return kinds.get(type(value), "number" if isinstance(value, (int, float)) else "value")


def _from_records(path: str, records: list[tuple[int, object]], word: str) -> pd.DataFrame:
    problems = [Problem(f"{word.capitalize()} {n} is a {_json_kind(r)}, not an object "
                        "with named values. Write each item as {\"question\": ..., \"answer\": ...}.", n)
                for n, r in records if not isinstance(r, dict)]
    if problems:
        raise SetError(path, problems)
    if not records:
        raise SetError(path, [Problem("The file holds no records. Add one record per item, "
                                      "such as {\"question\": \"...\", \"answer\": \"...\"}.")])
    names: dict[str, None] = {}
    for _, record in records:
        names.update(dict.fromkeys(str(k) for k in record))
    header = list(names)
    rows = []
    for _, record in records:
        values = {str(k): v for k, v in record.items()}
        rows.append([_cell_text(values.get(name)) for name in header])
    body = pd.DataFrame(rows, columns=range(len(header)), index=[n for n, _ in records], dtype=str)
    return _finish(path, body, [h.strip().lstrip("\ufeff").strip() for h in header], word)


def _read_binary(path: str, ext: str, sheet=None, skip_rows: int = 0) -> pd.DataFrame:
    kind = "Parquet" if ext == ".parquet" else "Excel (.xlsx)"
    try:
        if ext == ".parquet":
            frame = pd.read_parquet(path, dtype_backend="numpy_nullable")
            if any(name is not None for name in frame.index.names):
                frame = frame.reset_index()
            records = [(i, dict(zip(frame.columns, values)))
                       for i, values in enumerate(frame.itertuples(index=False, name=None), 1)]
            return _from_records(path, records, word="record")
        grid, choice = read_sheet(path, sheet, skip_rows)
    except SetError:
        raise
    except Exception as e:  # the readers raise many types for a damaged file
        if isinstance(e, OSError) and not os.path.exists(path):
            raise
        raise SetError(path, [Problem(
            f"The file cannot be read as {kind} ({type(e).__name__}: {e}). Check that it is a "
            f"{kind} file, or save the question set as CSV UTF-8.")]) from e
    if isinstance(choice, str):
        raise SetError(path, [Problem(choice + " Choose one with --sheet NAME (or its number, "
                                      "counted from 1) or in the column mapping.")])
    note = choice.note()
    if grid.empty:
        skipped = f" once the first {skip_rows} rows are skipped" if skip_rows else ""
        raise SetError(path, [Problem(f"The sheet is empty{skipped}. Put the column names in "
                                      f"the first row and one item per row. {note}")])
    grid = grid.map(_cell_text)
    try:
        table = _with_header(path, grid, word="row")
    except SetError as e:
        raise SetError(path, [Problem(f"{p.text} {note}", p.row, p.column)
                              for p in e._found]) from None
    table.attrs["sheet"] = choice.name
    if len(choice.names) > 1 or table.empty:
        table.attrs["sheet_note"] = note
    return table


def _cell_text(value: object) -> str:
    """A cell from JSON, Parquet or Excel as text, one spelling for every format."""
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, str):
        return value
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return "" if math.isnan(value) else repr(float(value))
    if isinstance(value, datetime.datetime):
        midnight = value.time() == datetime.time(0) and value.tzinfo is None
        return value.date().isoformat() if midnight else value.isoformat(sep=" ")
    if isinstance(value, datetime.date):
        return value.isoformat()
    if isinstance(value, bytes):
        return value.decode("utf-8", errors="replace")
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, (list, tuple, dict)):
        return json.dumps(value, ensure_ascii=False, default=str)
    return str(value)
