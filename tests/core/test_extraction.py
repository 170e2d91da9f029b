"""Extraction, answer normalization and number parsing."""
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from honebench.core.extraction import (
    EXTRACTIONS,
    Extraction,
    extract,
    label_key,
    match_label,
    normalize_answer,
    number_tokens,
    parse_number,
    quote,
)

LABELS = ("refund", "exchange", "late refund", "lost property")


# --- normalize_answer -------------------------------------------------------------------
# The usual answer normalization: lower case, punctuation removed, articles a/an/the
# dropped, whitespace collapsed (common practice, from memory).
@pytest.mark.parametrize("raw, want", [
    ("The Ferry", "ferry"),
    ("  a   return  ticket. ", "return ticket"),
    ("An upgrade!", "upgrade"),
    ("Pier 4, Gate B", "pier 4 gate b"),
    ("don't", "dont"),
    ("THE END?!", "end"),
    ("theatre", "theatre"),           # "the" only as a whole word
    ("café—bar", "cafébar"),          # unicode punctuation (em dash) also removed
])
def test_normalize_answer_common_practice(raw, want):
    assert normalize_answer(raw) == want


def test_normalize_answer_our_choices():
    # Our own choices, documented in the docstring (not common practice):
    assert normalize_answer("A") == "a"          # only articles: they are kept
    assert normalize_answer("The") != normalize_answer("A")
    assert normalize_answer("3.5") == "3.5"      # punctuation between digits is kept
    assert normalize_answer("3.5") != normalize_answer("35")
    assert normalize_answer("1,000 euro") == "1,000 euro"
    assert normalize_answer(None) == ""
    assert normalize_answer(42) == "42"


@given(st.text())
def test_normalize_answer_is_single_line_and_stable(text):
    once = normalize_answer(text)
    assert once == once.strip() and "  " not in once
    assert len(once.splitlines()) <= 1
    assert normalize_answer(once) == once


def test_label_key_keeps_articles():
    assert label_key("A") == "a" and label_key("The Refund!") == "the refund"


# --- parse_number -------------------------------------------------------------------------
@pytest.mark.parametrize("raw, want", [
    ("1,234.5", 1234.5),
    ("-3", -3.0),
    ("\u22123", -3.0),          # unicode minus sign
    ("+7", 7.0),
    ("3/4", 0.75),
    ("1 1/2", 1.5),
    ("-1 1/2", -1.5),
    ("€12.50", 12.5),
    ("-$5", -5.0),
    ("12 km", 12.0),
    ("45%", 45.0),              # our choice: % is a unit, not divided by 100
    ("2.5e3", 2500.0),
    ("1e-05", 1e-05),
    (".5", 0.5),
    ("The answer is 42.", 42.0),
    ("about 1,000,000 passengers", 1e6),
    ("covid-19", 19.0),         # a hyphen inside a word is no minus sign
    (7, 7.0),
    (2.5, 2.5),
])
def test_parse_number_accepts(raw, want):
    assert parse_number(raw) == want


@pytest.mark.parametrize("raw", [
    "", "none", "12 or 13", "10:30", "1.2.3", "1,2", "1/0", "2 3/0", True, None,
])
def test_parse_number_rejects(raw):
    assert parse_number(raw) is None


def test_parse_number_huge_values_do_not_raise():
    assert parse_number("9" * 5000) == math.inf      # float() has no digit limit
    assert parse_number("1e999") == math.inf
    assert parse_number(10 ** 400) is None            # too big for a float


def test_number_tokens_in_order():
    assert number_tokens("Leaves 9:15, costs €4.50, 2 1/2 hours") == [
        ("9", 9.0), ("15", 15.0), ("4.50", 4.5), ("2 1/2", 2.5)]
    assert number_tokens("3/0 cabins") == [("3/0", None)]


# --- extract --------------------------------------------------------------------------------
def test_extract_whole_and_first_line():
    out = "\n\n  **Refund** \nbecause the sailing was cancelled\n"
    assert extract(out, "whole") == Extraction(out.strip(), "whole text")
    assert extract(out, "first_line").text == "Refund"
    assert extract(out, "first_line").how == "first line"
    assert extract("   \n ", "first_line").how == "output is empty"


def test_extract_after_marker_uses_last_occurrence_ignoring_case():
    out = "Answer: maybe\nThinking more...\nANSWER:\n  exchange\nthanks"
    got = extract(out, "after_marker")
    assert got.text == "exchange" and got.how == "after 'Answer:'"


def test_extract_after_marker_falls_back_to_whole_text():
    got = extract("just refund", "after_marker", marker="Final:")
    assert got.text == "just refund" and "'Final:' not found" in got.how


def test_extract_last_number():
    assert extract("Gate 3, then 2 1/2 hours, total -€12.50.", "last_number").text == "-€12.50"
    got = extract("no digits here", "last_number")
    assert got.text == "" and got.how == "no number in output"


def test_extract_label_steps():
    assert extract("Refund.", "label", labels=LABELS).how == "exact label 'refund'"
    named = extract("I think this is a late refund case", "label", labels=LABELS)
    assert named.text == "late refund"               # earliest named label, longer on a tie
    assert named.how == "label 'late refund' named in output"
    close = extract("refnd", "label", labels=LABELS)
    assert close.text == "refund" and close.how.startswith("closest label 'refund' (score ")
    none = extract("zzzz", "label", labels=LABELS)
    assert none.text == "zzzz" and none.how.startswith("no label close enough")


def test_match_label_threshold_is_respected():
    # rapidfuzz WRatio score for the pair, read from the library itself
    from rapidfuzz import fuzz
    s = fuzz.WRatio(label_key("refnd"), "refund")
    assert match_label("refnd", ["refund"], threshold=s).label == "refund"
    assert match_label("refnd", ["refund"], threshold=s + 0.1).label is None


def test_extract_unknown_how():
    with pytest.raises(ValueError, match="not one of"):
        extract("x", "middle")


def test_quote_is_one_short_line():
    q = quote("a\nb\r\nc\u2028d" + "x" * 100)
    assert len(q.splitlines()) == 1 and len(q) <= 62 and q.endswith("…'")


@settings(max_examples=300)
@given(st.text(), st.sampled_from(EXTRACTIONS), st.text(min_size=1, max_size=8),
       st.lists(st.text(max_size=12), max_size=5))
def test_extract_never_raises(output, how, marker, labels):
    got = extract(output, how, marker=marker, labels=labels)
    assert isinstance(got.text, str)
    assert len(got.how.splitlines()) == 1
