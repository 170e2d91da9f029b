"""Excel workbooks with the items on another sheet, and title rows above the header."""
from __future__ import annotations

import openpyxl
import pytest

from honebench.core.sets import SetError, load_set, preview, read_table
from honebench.core.sheets import sheet_names

ROWS = [("id", "message", "department"),
        ("r1", "My crossing was cancelled, I want my money back", "refund"),
        ("r2", "I left a blue rucksack on the MV Tern Lass", "lost_property"),
        ("r3", "When does the first boat leave on Sunday?", "timetable")]


@pytest.fixture
def workbook(tmp_path):
    """Sheet 1 'Notes' holds a header-like line and no items; the items are on 'Data',
    below a title row and a blank row."""
    book = openpyxl.Workbook()
    notes = book.active
    notes.title = "Notes"
    notes.append(["message", "department"])
    data = book.create_sheet("Data")
    data.append(["Passenger desk export, March"])
    data.append([])
    for row in ROWS:
        data.append(list(row))
    path = tmp_path / "desk.xlsx"
    book.save(path)
    return path


def test_wrong_sheet_names_the_sheet_read_and_the_others(workbook):
    with pytest.raises(SetError) as err:
        load_set(workbook)
    text = str(err.value)
    assert "no items" in text and "'Notes'" in text and "'Data'" in text
    assert "--sheet" in text


def test_sheet_by_name_or_number_with_title_rows_skipped(workbook):
    by_name = load_set(workbook, sheet="Data", skip_rows=2)
    by_number = load_set(workbook, sheet=2, skip_rows=2)
    assert [i.id for i in by_name.items] == ["r1", "r2", "r3"]
    assert by_name.items == by_number.items
    assert [i.row for i in by_name.items] == [4, 5, 6]  # rows as the spreadsheet numbers them
    assert load_set(workbook, sheet="2", skip_rows=2).items == by_name.items
    assert sheet_names(str(workbook)) == ["Notes", "Data"]
    head, mapping, problems = preview(workbook, sheet="Data", skip_rows=2)
    assert mapping.expected == "department" and problems == [] and len(head) == 3


def test_unknown_sheet_lists_the_sheets(workbook):
    for bad, words in (("Summary", "no sheet named 'Summary'"), (3, "no sheet number 3")):
        with pytest.raises(SetError) as err:
            read_table(workbook, sheet=bad)
        assert words in str(err.value) and "'Notes', 'Data'" in str(err.value)


def test_title_row_without_skip_is_named_with_its_sheet(workbook):
    with pytest.raises(SetError) as err:
        load_set(workbook, sheet="Data")  # the title row is taken for the column names
    assert "'Data'" in str(err.value) and "expected answer" in str(err.value)
    assert "--skip-rows" in str(err.value)


def test_csv_title_rows_are_skipped_and_rows_keep_file_numbers(tmp_path):
    path = tmp_path / "desk.csv"
    path.write_text("Passenger desk export\nMarch, all desks\n" +
                    "\n".join(",".join(f'"{v}"' for v in row) for row in ROWS)
                    + "\nr4,Lost my scarf,\n")
    with pytest.raises(SetError) as err:
        load_set(path, skip_rows=2)
    # the header is file row 3, so the item with the blank answer is row 7
    assert "Row 7, column 'department'" in str(err.value)
    with pytest.raises(SetError, match="Nothing is left after skipping the first 40 rows"):
        read_table(path, skip_rows=40)


def test_options_that_do_not_apply_are_refused(tmp_path):
    path = tmp_path / "desk.jsonl"
    path.write_text('{"message": "hi", "answer": "x"}\n')
    with pytest.raises(ValueError, match="only in an Excel"):
        read_table(path, sheet="Data")
    with pytest.raises(ValueError, match="title rows can be skipped only"):
        read_table(path, skip_rows=1)
    with pytest.raises(ValueError, match="whole number of 0 or more"):
        read_table(path, skip_rows=-1)
