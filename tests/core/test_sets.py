"""Question sets: reading every format, mapping, checking, hashing and splitting."""
import ast
import csv
import hashlib
import json
import pathlib
import time

import openpyxl
import pandas as pd
import pytest
from hypothesis import given, settings, strategies as st

from honebench.core import sets
from honebench.core.sets import (ColumnMapping, SetError, guess_mapping, load_set, preview,
                                 read_table, split_items)

# Invented ferry passenger-desk items; the text exercises commas, quotes, line breaks,
# braces, non-ASCII letters and words a reader might mistake for missing values.
ROWS = [
    {"id": "F1", "question": "Is the 7:40 to Arran late, or cancelled?", "context": "Winter timetable",
     "answer": "late"},
    {"id": "F2", "question": 'He said "bring the car" twice', "context": "Vehicle deck\nfull",
     "answer": "vehicle"},
    {"id": "F3", "question": "Can I pay for {2} bikes with {card}?", "context": "NA", "answer": "None"},
    {"id": "F4", "question": "  Où est le guichet ?  ", "context": "007", "answer": "other"},
    {"id": "F5", "question": "Refund for booking 1e5", "context": "", "answer": "refund"},
]
MAPPING = ColumnMapping(("question", "context"), "answer", "id")


def mapped(qs):
    return [(i.id, i.fields, i.expected) for i in qs.items]


def reference():
    return [(r["id"], {"question": r["question"], "context": r["context"]}, r["answer"]) for r in ROWS]


def write(tmp_path, kind):
    frame = pd.DataFrame(ROWS)
    path = tmp_path / f"ferry.{kind.split('-')[0]}"
    reordered = [{k: r[k] for k in reversed(list(r))} for r in ROWS]  # other column order
    if kind == "csv":
        frame.to_csv(path, index=False)
    elif kind in ("tsv", "txt"):
        frame.to_csv(path, index=False, sep="\t")
    elif kind == "csv-semicolon":
        frame.to_csv(path, index=False, sep=";")
    elif kind == "csv-utf16":
        path.write_text(frame.to_csv(index=False, sep="\t"), encoding="utf-16")  # with its BOM
    elif kind in ("jsonl", "ndjson"):
        path.write_text("".join(json.dumps(r) + "\n" for r in reordered), encoding="utf-8")
    elif kind == "json":
        path.write_text(json.dumps(reordered), encoding="utf-8")
    elif kind == "json-items":
        path.write_text(json.dumps({"items": ROWS}, ensure_ascii=False), encoding="utf-8")
    elif kind == "parquet":
        frame[list(reversed(frame.columns))].to_parquet(path, index=False)
    elif kind == "xlsx":
        frame.to_excel(path, index=False)
    return path


@pytest.mark.parametrize("kind", ["csv", "tsv", "txt", "csv-semicolon", "csv-utf16", "jsonl",
                                  "ndjson", "json", "json-items", "parquet", "xlsx"])
def test_every_format_loads_the_same_items_and_hash(tmp_path, kind):
    qs = load_set(write(tmp_path, kind), MAPPING)
    assert mapped(qs) == reference()
    assert qs.content_hash == load_set(write(tmp_path, "csv"), MAPPING).content_hash
    assert qs.name == "ferry" and len(qs) == 5


def test_hash_follows_content_not_row_order(tmp_path):
    base = load_set(write(tmp_path, "csv"), MAPPING).content_hash
    pd.DataFrame(ROWS[::-1]).to_csv(tmp_path / "reversed.csv", index=False)
    assert load_set(tmp_path / "reversed.csv", MAPPING).content_hash == base
    changed = [dict(r) for r in ROWS]
    changed[2]["answer"] = "none"
    pd.DataFrame(changed).to_csv(tmp_path / "changed.csv", index=False)
    assert load_set(tmp_path / "changed.csv", MAPPING).content_hash != base
    # Canonical form: compact UTF-8 JSON of sorted [id, [inputs...], expected] (our own format).
    only = load_set(write(tmp_path, "csv"), ColumnMapping(("question",), "answer", "id"))
    canonical = {"inputs": ["question"], "items": sorted([r["id"], [r["question"]], r["answer"]] for r in ROWS)}
    text = json.dumps(canonical, ensure_ascii=False, separators=(",", ":"))
    assert only.content_hash == hashlib.sha256(text.encode()).hexdigest()


def test_rfc4180_quoted_fields_round_trip(tmp_path):
    # RFC 4180 section 2: CRLF line breaks (rule 1), no break after the last record (rule 2),
    # a header line (rule 3), fields holding commas, line breaks or double quotes enclosed in
    # double quotes (rule 6), and a double quote inside written as two (rule 7).
    by_hand = (b'id,question,answer\r\n'
               b'1,"Is the 7:40 late, or cancelled?",late\r\n'
               b'2,"He said ""bring the car"" twice",vehicle\r\n'
               b'3,"first line\r\nsecond line",other')
    (tmp_path / "hand.csv").write_bytes(by_hand)
    values = [("1", "Is the 7:40 late, or cancelled?", "late"),
              ("2", 'He said "bring the car" twice', "vehicle"),
              ("3", "first line\r\nsecond line", "other")]
    with open(tmp_path / "module.csv", "w", newline="", encoding="utf-8") as f:
        csv.writer(f).writerows([("id", "question", "answer"), *values])
    for name in ("hand.csv", "module.csv"):
        qs = load_set(tmp_path / name)
        assert [(i.id, i.fields["question"], i.expected) for i in qs.items] == values
        assert [i.row for i in qs.items] == [2, 3, 4]  # records, as a spreadsheet numbers rows


def test_several_input_fields_keep_mapping_order(tmp_path):
    mapping = ColumnMapping(["context", "question"], "answer")
    qs = load_set(write(tmp_path, "csv"), mapping)
    assert list(qs.items[1].fields) == ["context", "question"]
    assert qs.items[1].fields["context"] == "Vehicle deck\nfull"
    assert [i.id for i in qs.items] == ["1", "2", "3", "4", "5"]  # no id column: row order
    assert qs.labels() == ["None", "late", "other", "refund", "vehicle"]
    assert ColumnMapping.from_dict(json.loads(json.dumps(mapping.as_dict()))) == mapping


def test_braces_and_missing_value_words_pass_through(tmp_path):
    qs = load_set(write(tmp_path, "csv"), MAPPING)
    assert qs.items[2].fields["question"] == "Can I pay for {2} bikes with {card}?"
    assert (qs.items[2].fields["context"], qs.items[2].expected) == ("NA", "None")
    assert qs.items[3].fields == {"question": "  Où est le guichet ?  ", "context": "007"}


@pytest.mark.parametrize("columns, want", [
    (["id", "question", "answer"], ColumnMapping(("question",), "answer", "id")),
    (["Item ID", "Message", "Expected Answer", "Split"],
     ColumnMapping(("Message",), "Expected Answer", "Item ID", "Split")),
    (["booking_ref", "message", "label", "notes"], ColumnMapping(("message", "booking_ref"), "label")),
    (["context", "question", "gold", "explanation", "fold"],
     ColumnMapping(("context", "question"), "gold", None, "fold")),
    (["text", "category"], ColumnMapping(("text",), "category")),
    (["prompt", "correct_label"], ColumnMapping(("prompt",), "correct_label")),
])
def test_guess_mapping(columns, want):
    assert guess_mapping(columns) == want


def test_guess_mapping_without_expected_lists_columns():
    with pytest.raises(SetError) as err:
        guess_mapping(["question", "remarks"])
    assert "'question'" in str(err.value) and "'remarks'" in str(err.value)
    with pytest.raises(SetError, match="No column is left"):
        guess_mapping(["id", "answer"])


def test_split_is_seeded_exact_and_order_free():
    ids = [f"F{n}" for n in range(40)]
    first = split_items(ids, 7, 0.3)
    assert split_items(ids[::-1], 7, 0.3) == first
    assert split_items(ids, 8, 0.3) != first
    assert list(first.values()).count("held_out") == 12
    for n, fraction in [(10, 0.3), (7, 0.5), (3, 0.25), (2, 0.01), (1, 0.3), (5, 0.0), (4, 0.99)]:
        want = round(n * fraction)
        want = min(max(want, 1), n - 1) if n >= 2 and fraction > 0 else want
        got = list(split_items([str(i) for i in range(n)], 0, fraction).values()).count("held_out")
        assert got == want, (n, fraction)


@settings(max_examples=50, deadline=None)
@given(st.lists(st.text(max_size=8), unique=True, max_size=30), st.integers(), st.randoms())
def test_split_never_depends_on_order(ids, seed, rnd):
    shuffled = list(ids)
    rnd.shuffle(shuffled)
    assert split_items(shuffled, seed, 0.3) == split_items(ids, seed, 0.3)


def test_load_set_split_fraction_and_column(tmp_path):
    qs = load_set(write(tmp_path, "csv"), MAPPING, split_seed=3, held_out_fraction=0.4)
    assert len(qs.held_out()) == 2 and len(qs.tuning()) == 3
    assert {i.id for i in qs.held_out()} == {k for k, v in split_items([r["id"] for r in ROWS], 3, 0.4).items()
                                             if v == "held_out"}
    rows = [dict(r, split=s) for r, s in zip(ROWS, ["train", "TEST", "dev", "held-out", "Tuning"])]
    pd.DataFrame(rows).to_csv(tmp_path / "split.csv", index=False)
    qs = load_set(tmp_path / "split.csv", ColumnMapping(("question",), "answer", "id", "split"))
    assert [i.split for i in qs.items] == ["tuning", "held_out", "tuning", "held_out", "tuning"]


def error_for(path, mapping=None, **options) -> SetError:
    with pytest.raises(SetError) as err:
        load_set(path, mapping, **options)
    return err.value


def write_csv(tmp_path, text, name="desk.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8", newline="")
    return path


def test_missing_mapped_column_names_it_and_lists_columns(tmp_path):
    err = error_for(write(tmp_path, "csv"), ColumnMapping(("question",), "reply"))
    assert "ferry.csv" in str(err) and "'reply'" in str(err) and "'context'" in str(err)
    assert err.column == "reply" and err.row is None
    err = error_for(write(tmp_path, "csv"), ColumnMapping(("question", "answer"), "answer"))
    assert "'answer' is mapped as both an input field and the expected answer" in str(err)


@pytest.mark.parametrize("text, row, column, words", [
    ("id,question,answer\n1,When?,soon\n2,Where?,  \n", 3, "answer", "blank"),
    ("id,question,answer\nA,\"one\ntwo\",x\n\nB,b,y\nA,c,z\n", "2 and 5", "id", "'A'"),
    ("id,question,answer,split\n1,a,x,train\n2,b,y,validation\n", 3, "split", "'validation'"),
    ("id,question,answer\n1,a,x\n2,b,y,extra\n", 3, None, "4 values"),
    ("id,question,answer\n1,a,x\n2,\"b,y\n", 3, None, "never closed"),
])
def test_bad_rows_name_file_row_and_column(tmp_path, text, row, column, words):
    mapping = ColumnMapping(("question",), "answer", "id", "split" if "split" in text else None)
    err = error_for(write_csv(tmp_path, text), mapping)
    message = str(err)
    assert "desk.csv" in message and f"Row{'s' if 'and' in str(row) else ''} {row}" in message
    assert words in message
    if column:
        assert f"column '{column}'" in message and err.column == column


def test_row_numbers_match_the_spreadsheet(tmp_path):
    book = openpyxl.Workbook()
    sheet = book.active
    for line in [("id", "question", "answer"), ("1", "a", "x"), (), ("2", "b", None)]:
        sheet.append(line)
    bad_row = sheet.max_row  # openpyxl's own row number for the blank answer
    book.save(tmp_path / "desk.xlsx")
    err = error_for(tmp_path / "desk.xlsx")
    assert err.row == bad_row == 4 and f"Row {bad_row}, column 'answer'" in str(err)


def test_all_problems_are_collected(tmp_path):
    text = "id,question,answer\n" + "".join(f"{n % 3},q{n},\n" for n in range(30))
    err = error_for(write_csv(tmp_path, text))
    assert err.problem_count == 4 and len(err.problems) == 4  # blank answers + 3 repeated ids
    assert "Rows 2, 3, 4" in err.problems[0] and "and 20 more" in err.problems[0]
    assert "... and 1 more" in str(err)


def test_huge_cell_is_reported_quickly(tmp_path):
    path = write_csv(tmp_path, "id,question,answer\n1,short,x\n2," + "w" * 10_000_000 + ",y\n")
    started = time.perf_counter()
    err = error_for(path)
    assert time.perf_counter() - started < 5  # common practice: well within a dialog's patience
    message = str(err)
    assert "Row 3, column 'question'" in message and "10,000,000 characters" in message
    assert "100,000" in message and "Shorten it" in message and len(message) < 1000


@pytest.mark.parametrize("name, content, words", [
    ("empty.csv", b"", "is empty"),
    ("header.csv", b"id,question,answer\r\n", "no items"),
    ("blank.jsonl", b"\n\n", "is empty"),
    ("none.json", b"[]", "no records"),
    ("desk.xls", b"id,question,answer\n1,a,x\n", "'.xls'"),
    ("broken.jsonl", b'{"question": "a", "answer": "x"}\n{"question": "b", answer: "y"}\n', "Line 2"),
    ("broken.json", b'[{"question": "a",\n "answer": x}]', "line 2"),
    ("broken.xlsx", b"not a zip", "Excel"),
    ("broken.parquet", b"not parquet", "Parquet"),
])
def test_unreadable_files_say_what_is_wrong(tmp_path, name, content, words):
    (tmp_path / name).write_bytes(content)
    err = error_for(tmp_path / name)
    assert name in str(err) and words in str(err)


def test_bytes_that_are_not_utf8(tmp_path):
    # 0xE9 is "é" in Windows-1252 and never valid on its own in UTF-8 (RFC 3629 section 3).
    content = "id,question,answer\n1,\"Two\nlines\",x\n".encode() + b"2,caf\xe9,y\n"
    (tmp_path / "latin.csv").write_bytes(content)
    err = error_for(tmp_path / "latin.csv")
    message = str(err)
    offset = content.index(b"\xe9")
    assert "latin.csv" in message and f"byte {offset:,}" in message
    assert "row 3, column 'question'" in message and "UTF-8" in message and err.row == 3


def test_bom_stripped_and_text_kept(tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes("\ufeffid,question,answer\n1,None,NA\n".encode())
    table = read_table(path)
    assert list(table.columns) == ["id", "question", "answer"]
    assert table.loc[2].tolist() == ["1", "None", "NA"]


def test_preview_guesses_and_reports(tmp_path):
    rows = [dict(r, fold=str(n)) for n, r in enumerate(ROWS)]
    rows[1]["answer"] = ""
    pd.DataFrame(rows).to_csv(tmp_path / "desk.csv", index=False)
    head, mapping, problems = preview(tmp_path / "desk.csv", rows=2)
    assert len(head) == 2 and list(head.index) == [2, 3]
    assert mapping == ColumnMapping(("question", "context"), "answer", "id")  # fold values unusable
    assert "'fold'" in problems[0] and any("Row 3, column 'answer'" in p for p in problems)
    pd.DataFrame({"route": ["Oban"]}).to_csv(tmp_path / "odd.csv", index=False)
    _, mapping, problems = preview(tmp_path / "odd.csv")
    assert mapping is None and "'route'" in problems[0]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.text(st.characters(exclude_categories=["Cs"],
                                                exclude_characters="\x00")),
                          st.text(st.characters(exclude_categories=["Cs"],
                                                exclude_characters="\x00"), min_size=1)
                          .filter(lambda s: s.strip())), min_size=1, max_size=8))
def test_csv_round_trips_arbitrary_text(tmp_path_factory, rows):
    # NUL is left out: a text file never holds one, and a file that does is refused
    # (test_robust_inputs.py)
    path = tmp_path_factory.mktemp("rt") / "any.csv"
    with open(path, "w", newline="", encoding="utf-8") as f:
        writer = csv.writer(f)
        writer.writerow(["question", "answer"])
        writer.writerows(rows)
    mapping = ColumnMapping(("question",), "answer")
    try:
        qs = load_set(path, mapping)
    except SetError as err:  # only a row with no input text may be refused
        assert all("no input text" in p for p in err.problems)
        assert any(not q.strip() for q, _ in rows)
        return
    assert [(i.fields["question"], i.expected) for i in qs.items] == rows


def test_module_stands_alone():
    root = pathlib.Path(sets.__file__).parent
    for name in ("sets.py", "set_problems.py", "set_reading.py", "set_errors.py", "sheets.py"):
        tree = ast.parse((root / name).read_text(encoding="utf-8"))
        imported = {a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
        imported |= {("." * n.level) + (n.module or "") for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)}
        assert not any("Qt" in m or "PySide" in m for m in imported), name
        assert not [m for m in imported if m.startswith("honebench") or (m.startswith(".") and m not in (".set_reading", ".set_errors", ".set_problems", ".sheets", ".sets"))]
