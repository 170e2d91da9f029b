"""Checks on the demo question sets in sample_sets/ (stdlib + pandas only)."""
from __future__ import annotations

import csv
import difflib
import io
import json
import os
import re
import subprocess
import sys
from collections import Counter
from decimal import Decimal
from pathlib import Path

import pandas as pd
import pytest

SETS_DIR = Path(__file__).resolve().parents[1] / "sample_sets"
COLUMNS = {
    "passenger_desk_routing.csv": ["id", "message", "department"],
    "booking_reference.csv": ["id", "email", "reference"],
    "fare_arithmetic.csv": ["id", "question", "answer"],
    "review_sentiment.csv": ["id", "review", "sentiment"],
}
ROUTING_LABELS = {"refund", "booking_change", "lost_property", "accessibility", "timetable"}
SENTIMENT_LABELS = {"positive", "negative", "neutral"}
CHECK_KINDS = {"exact", "label", "number", "fuzzy", "pattern", "contains", "json_field"}
# Copied from honebench.core.wording.PLACEMENTS (not imported: this test stands alone).
PLACEMENTS = {"system", "before", "after", "answer"}


def load(name: str) -> pd.DataFrame:
    return pd.read_csv(SETS_DIR / name, dtype=str, keep_default_na=False)


@pytest.mark.parametrize("name", sorted(COLUMNS))
def test_shape_ids_and_no_empty_cells(name):
    df = load(name)
    assert list(df.columns) == COLUMNS[name]
    assert 60 <= len(df) <= 200, f"{name} has {len(df)} rows"
    assert df["id"].is_unique, f"{name} repeats ids: {df['id'][df['id'].duplicated()].tolist()}"
    for column in df.columns:
        empty = df.index[df[column].str.strip() == ""].tolist()
        assert not empty, f"{name} column {column} is empty in rows {empty}"


@pytest.mark.parametrize("name", sorted(COLUMNS))
def test_csv_bytes_follow_rfc4180_quoting_with_lf_line_ends(name):
    raw = (SETS_DIR / name).read_bytes()
    text = raw.decode("utf-8")  # raises if the file is not UTF-8
    assert "\r" not in text  # LF line ends instead of RFC 4180's CRLF (project choice)
    assert text.endswith("\n")
    rows = list(csv.reader(io.StringIO(text, newline="")))
    # Python's csv module quotes minimally, per RFC 4180 section 2 rules 5-7: re-writing the
    # parsed rows must give the same bytes, so no field is quoted needlessly or left unquoted.
    again = io.StringIO(newline="")
    csv.writer(again, lineterminator="\n").writerows(rows)
    assert again.getvalue() == text
    # pandas reads the same cells as the csv module.
    assert load(name).values.tolist() == rows[1:]


@pytest.mark.parametrize("name,column,labels,per_label", [
    ("passenger_desk_routing.csv", "department", ROUTING_LABELS, 10),
    ("review_sentiment.csv", "sentiment", SENTIMENT_LABELS, 10),
])
def test_labels_allowed_and_each_well_represented(name, column, labels, per_label):
    counts = Counter(load(name)[column])
    assert set(counts) == labels, f"{name}: unexpected labels {set(counts) - labels}"
    thin = {label: n for label, n in counts.items() if n < per_label}
    assert not thin, f"{name}: labels with fewer than {per_label} items: {thin}"


def test_sentiment_labels_roughly_balanced():
    counts = Counter(load("review_sentiment.csv")["sentiment"])
    assert max(counts.values()) - min(counts.values()) <= 5, counts


@pytest.mark.parametrize("name,column", [
    ("passenger_desk_routing.csv", "message"),
    ("review_sentiment.csv", "review"),
])
def test_texts_are_not_near_duplicates(name, column):
    texts = [t.lower() for t in load(name)[column]]
    for i, a in enumerate(texts):
        for b in texts[i + 1:]:
            matcher = difflib.SequenceMatcher(None, a, b)
            if matcher.quick_ratio() >= 0.9:
                assert matcher.ratio() < 0.9, f"{name}: near-identical texts:\n{a}\n{b}"


def test_routing_messages_are_short():
    for message in load("passenger_desk_routing.csv")["message"]:
        sentences = re.findall(r"[.?!]+(?:\s|$)", message)
        assert 1 <= len(sentences) <= 5 and len(message) < 260, message


def test_each_email_holds_exactly_one_reference():
    df = load("booking_reference.csv")
    assert df["reference"].is_unique
    for _, row in df.iterrows():
        ref, email = row["reference"], row["email"]
        assert re.fullmatch(r"SK-[A-Z0-9]{6}", ref), f"{row['id']}: bad reference {ref!r}"
        assert email.count(ref) == 1, f"{row['id']}: {ref} appears {email.count(ref)} times"
        # No other SK- token at all, in any letter case.
        assert email.upper().count("SK-") == 1, f"{row['id']}: a second SK- token"
        assert re.findall(r"SK-[A-Z0-9]{6}(?![A-Z0-9])", email) == [ref], row["id"]


def test_reference_emails_carry_distractors():
    emails = " ".join(load("booking_reference.csv")["email"])
    for look_alike in ("07700 900", "ticket no.", "MV ", "sk ", "card ending"):
        assert look_alike in emails, f"no email has the distractor {look_alike!r}"


# Independent re-derivation of each arithmetic answer from its question text, one regular
# expression per question family, using Decimal (the generator uses Fraction).
P = r"£(\d+\.\d\d)"
FAMILIES = {
    "child_half": (rf"An adult ticket from .+ to .+ costs {P} and a child ticket costs half "
                   r"that\. What do (\d+) adults? and (\d+) child(?:ren)? pay in total, in "
                   r"pounds\?",
                   lambda a, n, m: int(n) * D(a) + int(m) * D(a) / 2),
    "duration": (r"The (\d\d):(\d\d) (?:late )?sailing from .+ arrives at .+ at (\d\d):(\d\d)"
                 r"( the next morning)?\. How many minutes does the crossing take\?",
                 lambda h1, m1, h2, m2, nxt: minutes_between(h1, m1, h2, m2, bool(nxt))),
    "sailings": (r"Sailings leave .+ every (\d+) minutes, starting at (\d\d):(\d\d)\. How many "
                 r"sailings leave between \2:\3 and (\d\d):(\d\d), counting a sailing that "
                 r"leaves at exactly \4:\5\?",
                 lambda f, h1, m1, h2, m2: count_departures(int(f), h1, m1, h2, m2)),
    "discount": (rf"A return from .+ to .+ is {P}\. Island residents get (\d+)% off\. What do "
                 r"(\d+) resident returns? cost, in pounds\?",
                 lambda fare, pct, n: int(n) * D(fare) * (100 - int(pct)) / 100),
    "vehicle": (rf"Taking a car from .+ to .+ costs {P} one way, plus {P} one way for each "
                r"person on board\. What does a (single|return) trip cost for a car carrying "
                r"(\d+) (?:person|people), in pounds\?",
                lambda car, each, trip, k: (D(car) + int(k) * D(each))
                * (2 if trip == "return" else 1)),
    "two_legs": (r"The .+ sails from .+ to .+ in (\d+) minutes, waits (\d+) minutes, then sails "
                 r"on to .+ in (\d+) minutes\. How many minutes is it from leaving .+ to "
                 r"arriving at .+\?",
                 lambda a, w, b: D(a) + D(w) + D(b)),
    "book_saving": (rf"A single from .+ to .+ costs {P}\. A book of (\d+) singles costs {P}\. "
                    r"How much do you save, in pounds, by buying the book instead of \2 "
                    r"separate singles\?",
                    lambda single, k, book: int(k) * D(single) - D(book)),
    "group_split": (rf"A group of (\d+) friends pays {P} in total for their tickets to .+ and "
                    r"splits it equally\. How much does each person pay, in pounds\?",
                    lambda n, total: D(total) / int(n)),
    "speed": (r"The crossing from .+ to .+ is (\d+) nautical miles and the .+ averages (\d+) "
              r"knots\. How many minutes does the crossing take\?",
              lambda miles, knots: D(miles) * 60 / D(knots)),
    "change": (rf"A passenger buys (\d+) tickets? to .+ at {P} each and pays with a £(\d+) "
               r"note\. How much change should they get, in pounds\?",
               lambda n, each, note: D(note) - int(n) * D(each)),
}


def D(text: str) -> Decimal:
    return Decimal(text)


def minutes_between(h1, m1, h2, m2, next_morning: bool) -> Decimal:
    start, end = int(h1) * 60 + int(m1), int(h2) * 60 + int(m2)
    if next_morning:
        end += 24 * 60
    assert end > start, "arrival before departure"
    return Decimal(end - start)


def count_departures(every: int, h1, m1, h2, m2) -> Decimal:
    """Count by walking the timetable, not by formula."""
    t, end, n = int(h1) * 60 + int(m1), int(h2) * 60 + int(m2), 0
    while t <= end:
        n, t = n + 1, t + every
    return Decimal(n)


def recompute(question: str) -> tuple[str, Decimal]:
    found = [(name, rx) for name, rx in FAMILIES.items() if re.fullmatch(rx[0], question)]
    assert len(found) == 1, f"question fits {len(found)} families: {question}"
    name, (pattern, rule) = found[0]
    return name, rule(*re.fullmatch(pattern, question).groups())


def answer_is_right(question: str, answer: str) -> bool:
    return Decimal(answer) == recompute(question)[1]


def test_every_fare_answer_recomputes_independently():
    df = load("fare_arithmetic.csv")
    families = Counter()
    for _, row in df.iterrows():
        name, expected = recompute(row["question"])
        families[name] += 1
        assert Decimal(row["answer"]) == expected, (
            f"{row['id']}: answer {row['answer']} but the question gives {expected}")
    assert set(families) == set(FAMILIES) and min(families.values()) >= 5, families


def test_recompute_catches_a_wrong_answer():
    row = load("fare_arithmetic.csv").iloc[0]
    assert answer_is_right(row["question"], row["answer"])
    assert not answer_is_right(row["question"], str(Decimal(row["answer"]) + Decimal("0.01")))


def test_fare_answers_are_plain_numbers():
    df = load("fare_arithmetic.csv")
    assert df["question"].is_unique
    for _, row in df.iterrows():
        answer = row["answer"]
        # Integers where whole, else at most two decimals without trailing zeros; no unit,
        # no thousands separator (the brief's format; common practice).
        assert re.fullmatch(r"\d+(\.\d{0,1}[1-9])?", answer), f"{row['id']}: {answer!r}"


def test_build_script_reproduces_committed_files(tmp_path):
    env = {**os.environ, "PYTHONHASHSEED": "12345"}
    subprocess.run([sys.executable, str(SETS_DIR / "build_sets.py"), "--out", str(tmp_path)],
                   check=True, capture_output=True, env=env, cwd=tmp_path)
    for name in COLUMNS:
        assert (tmp_path / name).read_bytes() == (SETS_DIR / name).read_bytes(), (
            f"{name} differs from a fresh build: run python sample_sets/build_sets.py")


def test_recipes_point_at_real_files_and_columns():
    recipes = json.loads((SETS_DIR / "recipes.json").read_text(encoding="utf-8"))
    assert set(recipes) == set(COLUMNS)
    for name, recipe in recipes.items():
        df = load(name)
        assert recipe["title"].strip()
        assert recipe["inputs"] and set(recipe["inputs"]) <= set(df.columns), name
        assert recipe["expected"] in df.columns and recipe["expected"] not in recipe["inputs"]
        assert recipe["placement"] in PLACEMENTS, name
        wording = recipe["starter_wording"]
        assert 0 < len(wording) <= 200 and "{" not in wording, name
        check = recipe["check"]
        assert check["kind"] in CHECK_KINDS, name
        if check["kind"] == "label":
            assert set(check["labels"]) == set(df[recipe["expected"]]), name
            assert all(label in wording for label in check["labels"]), name
        if check.get("extraction") == "first_line":
            assert not df[recipe["expected"]].str.contains("\n").any(), name
        if check["kind"] == "number":
            pd.to_numeric(df[recipe["expected"]], errors="raise")


def test_readme_lists_every_file_with_its_size():
    readme = (SETS_DIR / "README.md").read_text(encoding="utf-8")
    assert "invented" in readme.lower()
    for name in COLUMNS:
        row = next(line for line in readme.splitlines() if f"`{name}`" in line)
        cells = [c.strip() for c in row.strip("|").split("|")]
        assert cells[2] == str(len(load(name))), f"README gives n={cells[2]} for {name}"
