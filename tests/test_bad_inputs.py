"""A corpus of bad inputs, each given to the command line as a user would: the exit code is
2, there is no traceback, the message names the file and the problem, and the project file
already saved is byte for byte unchanged."""
from __future__ import annotations

import hashlib
import os
import random
import sqlite3

import pytest

from honebench.core.project import Project
from tests.test_cli import honebench

GOOD = "id,message,department\n" + "".join(
    f"m{n},{text},{desk}\n" for n, (text, desk) in enumerate([
        ("My crossing was cancelled and I want my money back", "refund"),
        ("I left my blue rucksack on the evening boat", "lost_property"),
        ("When does the first sailing leave on Sunday?", "timetable"),
        ("Can I move my booking to next Friday?", "booking_change")] * 3))


def _corpus(folder):
    """name -> (file, words the message must contain)."""
    rnd = random.Random(20260317)  # a fixed seed: the same "binary" file every run
    files = {
        "utf16_without_bom.csv": (GOOD.encode("utf-16-le"), "UTF-16"),
        "nul_bytes.csv": (GOOD.replace("blue", "bl\x00ue").encode(), "NUL"),
        "ragged_rows.csv": ((GOOD + "m99,too,many,values,here\n").encode(),
                            "has 5 values but the first row names only 3 columns"),
        "binary.csv": (bytes(rnd.randrange(256) for _ in range(4000)), "not UTF-8 text"),
        "huge_cell.csv": ((GOOD + f"m99,{'x' * 150_000},refund\n").encode(),
                          "150,000 characters long"),
        "duplicate_ids.csv": ((GOOD + "m1,Another one,refund\n").encode(),
                              "the id 'm1' is used more than once"),
        "ragged.jsonl": (b'{"message": "hi", "answer": "refund"}\n{"message": "oops"\n',
                         "Line 2 is not valid JSON"),
        "empty.csv": (b"", "The file is empty"),
    }
    for name, (raw, _) in files.items():
        (folder / name).write_bytes(raw)
    return {name: (folder / name, words) for name, (_, words) in files.items()}


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def saved(tmp_path, sample_dir):
    """A project file with a set, a check and a draft, closed as a user leaves it."""
    path = tmp_path / "desk.hone"
    project = Project(path)
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    project.close()
    return path


def _refused(done, *words):
    assert done.returncode == 2, done.stdout + done.stderr
    assert "Traceback" not in done.stderr and done.stderr.startswith("honebench: ")
    for word in words:
        assert word in done.stderr, done.stderr


CASES = ["utf16_without_bom.csv", "nul_bytes.csv", "ragged_rows.csv", "binary.csv",
         "huge_cell.csv", "duplicate_ids.csv", "ragged.jsonl", "empty.csv"]


@pytest.mark.parametrize("name", CASES)
def test_bad_set_file(tmp_path, saved, name):
    path, words = _corpus(tmp_path)[name]
    before = digest(saved)
    done = honebench("grade", path, "--project", saved, "--wording", "Which desk?",
                     home=tmp_path, check=False)
    _refused(done, name, words)
    assert digest(saved) == before
    assert not (tmp_path / "home" / "projects").exists()  # no project made for the bad set


def test_read_only_project(tmp_path, saved, sample_dir):
    os.chmod(saved, 0o444)
    before = digest(saved)
    for args in (["grade", saved, "--wording", "A new wording."],
                 ["grade", sample_dir / "review_sentiment.csv", "--project", saved,
                  "--wording", "x"]):
        done = honebench(*args, home=tmp_path, check=False)
        _refused(done, str(saved), "read-only", "permissions")
        assert digest(saved) == before
    # reading needs no writing: the export works
    out = honebench("export", saved, "--csv", tmp_path / "marks.csv", home=tmp_path)
    assert "marks:" in out.stdout and (tmp_path / "marks.csv").exists()
    assert digest(saved) == before


def test_project_from_a_newer_honebench(tmp_path, saved):
    conn = sqlite3.connect(saved)
    conn.execute("PRAGMA user_version=999")
    conn.close()
    before = digest(saved)
    for args in (["grade", saved, "--wording", "x"], ["export", saved, "--csv", tmp_path / "m.csv"]):
        _refused(honebench(*args, home=tmp_path, check=False), str(saved), "newer honebench")
        assert digest(saved) == before


def test_fake_model_file(tmp_path, saved, sample_dir):
    fake = tmp_path / "model.gguf"
    fake.write_bytes(b"<html>download page</html>" * 100)
    before = digest(saved)
    done = honebench("grade", sample_dir / "passenger_desk_routing.csv", "--project", saved,
                     "--wording", "A new wording.", "--model", fake, home=tmp_path, check=False)
    _refused(done, str(fake), "not a GGUF model file")
    assert digest(saved) == before


def test_check_that_cannot_judge_the_set(tmp_path, saved, sample_dir):
    before = digest(saved)
    done = honebench("grade", sample_dir / "passenger_desk_routing.csv", "--project", saved,
                     "--wording", "x", "--check", "label", "--labels", "refund, money,timetable",
                     home=tmp_path, check=False)
    _refused(done, "'booking_change'", "'lost_property'", "--label")
    assert "was split at every comma" in done.stderr  # the warning comes first
    done = honebench("grade", sample_dir / "passenger_desk_routing.csv", "--project", saved,
                     "--wording", "x", "--check", "number", home=tmp_path, check=False)
    _refused(done, "number check", "'refund'")
    assert digest(saved) == before


def test_workbook_with_the_items_on_another_sheet(tmp_path, saved):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    book.active.title = "Cover"
    book.active.append(["message", "department"])
    data = book.create_sheet("Items")
    for line in GOOD.splitlines():
        data.append(line.split(","))
    path = tmp_path / "desk.xlsx"
    book.save(path)
    before = digest(saved)
    done = honebench("grade", path, "--project", saved, "--wording", "x", home=tmp_path,
                     check=False)
    _refused(done, "desk.xlsx", "'Cover'", "'Items'", "--sheet")
    done = honebench("grade", path, "--project", saved, "--wording", "x", "--sheet", "Nope",
                     home=tmp_path, check=False)
    _refused(done, "no sheet named 'Nope'")
    assert digest(saved) == before


def test_the_corpus_is_not_stale(tmp_path):
    """Each bad file really is refused by the reader the CLI uses (so a case above cannot
    pass for some other reason, such as a missing file)."""
    from honebench.core.sets import SetError, load_set

    for name, (path, words) in _corpus(tmp_path).items():
        assert path.exists()
        with pytest.raises(SetError) as err:
            load_set(path)
        assert words in str(err.value), name
