"""Answer checks: CheckSpec settings and judge() for every check kind."""
import dataclasses
import json
import math

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from rapidfuzz import fuzz
from rapidfuzz.distance import Indel, Levenshtein

from honebench.core.checks import CHECKS, EXTRACTIONS, CheckSpec, judge

LABELS = ("refund", "exchange", "late refund", "lost property")


def one_line(text):
    return len(text.splitlines()) == 1 and text == text.strip()


# --- CheckSpec ----------------------------------------------------------------------------
def test_auto_extraction_by_kind():
    want = {"label": "label", "number": "last_number", "json_field": "whole",
            "contains": "whole", "pattern": "whole", "exact": "first_line",
            "fuzzy": "first_line"}
    assert {k: CheckSpec(kind=k).extraction_used for k in CHECKS} == want
    assert CheckSpec(kind="number", extraction="first_line").extraction_used == "first_line"


def test_as_dict_round_trip():
    spec = CheckSpec(kind="label", labels=("a", "b"), label_threshold=70, marker="Final:")
    d = spec.as_dict()
    assert d["labels"] == ["a", "b"]
    assert json.loads(json.dumps(d)) == d
    assert CheckSpec.from_dict(d) == spec
    assert CheckSpec.from_dict({}) == CheckSpec()


@pytest.mark.parametrize("changes, field", [
    ({"kind": "closeness"}, "kind"),
    ({"extraction": "middle"}, "extraction"),
    ({"extraction": "after_marker", "marker": "  "}, "marker"),
    ({"label_threshold": 120}, "label_threshold"),
    ({"fuzzy_threshold": -1}, "fuzzy_threshold"),
    ({"fuzzy_threshold": float("nan")}, "fuzzy_threshold"),
    ({"rel_tol": -1e-9}, "rel_tol"),
    ({"abs_tol": float("inf")}, "abs_tol"),
    ({"kind": "pattern", "pattern": "(unclosed"}, "pattern"),
    ({"kind": "json_field"}, "json_field"),
    ({"kind": "json_field", "json_field": "a..b"}, "json_field"),
    ({"labels": ("Refund", "refund!")}, "labels"),
    ({"labels": ("ok", "?!")}, "labels"),
    ({"marker": 3}, "marker"),
])
def test_validate_names_the_bad_field(changes, field):
    with pytest.raises(ValueError, match=rf"^{field}:"):
        dataclasses.replace(CheckSpec(), **changes).validate()


def test_from_dict_rejects_unknown_field_and_bad_labels():
    with pytest.raises(ValueError, match="unknown field 'treshold'"):
        CheckSpec.from_dict({"treshold": 3})
    with pytest.raises(ValueError, match="labels: give a list"):
        CheckSpec.from_dict({"labels": "refund"})
    with pytest.raises(ValueError, match="^kind:"):
        CheckSpec.from_dict({"kind": "nope"})


def test_judge_rejects_invalid_spec():
    with pytest.raises(ValueError, match="^kind:"):
        judge("x", "x", CheckSpec(kind="nope"))


def test_describe_is_one_line_for_every_kind():
    assert CheckSpec(kind="label", labels=("a", "b", "c")).describe() == \
        "label (fuzzy ≥ 80, from labels: a, b, c)"
    assert CheckSpec(kind="fuzzy").describe() == "fuzzy (similarity ≥ 85, first line)"
    assert "after 'Final:'" in CheckSpec(extraction="after_marker", marker="Final:").describe()
    for kind in CHECKS:
        spec = CheckSpec(kind=kind, json_field="a" if kind == "json_field" else "",
                         labels=("x\ny",) if kind == "label" else ())
        assert one_line(spec.describe())


# --- exact ----------------------------------------------------------------------------------
def test_exact():
    v = judge("  The Refund.\nBecause the sailing was cancelled.", "refund", CheckSpec())
    assert (v.passed, v.extracted, v.score) == (True, "The Refund.", 1.0)
    assert v.why == "matches 'refund' (first line)"
    v = judge("Exchange", "refund", CheckSpec())
    assert not v.passed and v.score == 0.0
    assert v.why == "expected 'refund', found 'Exchange' (first line)"
    assert judge("", "refund", CheckSpec()).why == "expected 'refund', found nothing (output is empty)"


def test_exact_after_marker():
    spec = CheckSpec(extraction="after_marker")
    v = judge("Let me think. answer: an exchange", "Exchange", spec)
    assert v.passed and v.why == "matches 'Exchange' (after 'Answer:')"


# --- label ----------------------------------------------------------------------------------
def test_label_exact_named_and_close():
    spec = CheckSpec(kind="label", labels=LABELS)
    assert judge("Refund!", "refund", spec).why == "matches 'refund' (exact label)"
    v = judge("This looks like a late refund to me.", "late refund", spec)
    assert v.passed and v.extracted == "late refund"
    v = judge("refnd", "refund", spec)
    # rapidfuzz WRatio decides the closeness; score read from the library itself
    score = fuzz.WRatio("refnd", "refund")
    assert v.passed and v.why.startswith("matches 'refund' (closest label, score ")
    assert score >= 80


def test_label_wrong_and_unreachable():
    spec = CheckSpec(kind="label", labels=LABELS)
    v = judge("exchange", "refund", spec)
    assert not v.passed and v.extracted == "exchange"
    assert v.why == "expected 'refund', found 'exchange' (exact label)"
    v = judge("qqqq", "refund", spec)
    assert not v.passed and v.why.startswith("no label close enough")
    v = judge("exchange", "upgrade", spec)
    assert "not one of the labels" in v.why


def test_label_threshold_and_other_extraction():
    spec = CheckSpec(kind="label", labels=LABELS, label_threshold=100)
    assert not judge("refnd", "refund", spec).passed
    spec = CheckSpec(kind="label", labels=LABELS, extraction="first_line")
    v = judge("exchange\nnot a refund", "exchange", spec)
    assert v.passed and v.why == "matches 'exchange' (exact label, first line)"


def test_label_without_labels_uses_expected_answer():
    assert judge("Lost property", "lost property", CheckSpec(kind="label")).passed
    assert not judge("exchange", "lost property", CheckSpec(kind="label")).passed


def test_letter_labels_stay_distinct():
    spec = CheckSpec(kind="label", labels=("A", "B", "C"))
    assert judge("B", "B", spec).passed
    assert not judge("A", "B", spec).passed


# --- number ---------------------------------------------------------------------------------
def test_number_whys():
    spec = CheckSpec(kind="number")
    v = judge("Adults pay 12, so two pay 18.", "36", spec)
    assert not v.passed and v.why == "expected 36, found 18 (last number in output)"
    v = judge("The total is €1,234.50", "1234.5", spec)
    assert v.passed and v.why == "matches 1234.5 (last number in output)"
    assert judge("none left", "3", spec).why == "no number in output"
    assert judge("3", "three", spec).why == "expected answer 'three' is not a single number"
    v = judge("3 tickets at 12, total 36\n(12 each)", "36", CheckSpec(kind="number", extraction="first_line"))
    assert v.passed and v.why == "matches 36 (first line, last number)"
    v = judge("no digits\n5", "5", CheckSpec(kind="number", extraction="first_line"))
    assert v.why == "no number found (first line)"


def test_number_tolerance_relative_to_larger_value():
    # PEP 485: |a-b| <= max(rel_tol * max(|a|, |b|), abs_tol); relative to the LARGER value.
    spec = CheckSpec(kind="number", abs_tol=0.0, rel_tol=0.00995)
    assert judge("101", "100", spec).passed          # 0.00995 * 101 = 1.005 >= 1
    assert judge("100", "101", spec).passed          # symmetric
    assert not judge("101", "100", dataclasses.replace(spec, rel_tol=0.0099)).passed
    # PEP 485: nothing is relatively close to zero except zero; abs_tol handles that
    assert not judge("1e-12", "0", CheckSpec(kind="number", abs_tol=0.0)).passed
    assert judge("1e-12", "0", CheckSpec(kind="number", abs_tol=1e-9)).passed


finite = st.floats(allow_nan=False, allow_infinity=False)


@settings(max_examples=400)
@given(finite, finite, st.floats(0, 1), st.floats(0, 1e6))
def test_number_check_is_math_isclose(found, expected, rel_tol, abs_tol):
    # Reference: math.isclose, the PEP 485 definition.
    spec = CheckSpec(kind="number", rel_tol=rel_tol, abs_tol=abs_tol)
    v = judge(f"I make it {found!r}.", repr(expected), spec)
    assert v.passed == math.isclose(found, expected, rel_tol=rel_tol, abs_tol=abs_tol)


# --- fuzzy ----------------------------------------------------------------------------------
def test_kitten_sitting_worked_example():
    # Worked example, from memory: Levenshtein distance kitten -> sitting is 3 (two
    # substitutions, one insertion), so the normalized similarity is 1 - 3/7.
    assert Levenshtein.distance("kitten", "sitting") == 3
    assert Levenshtein.normalized_similarity("kitten", "sitting") == pytest.approx(1 - 3 / 7)
    # rapidfuzz fuzz.ratio is Indel-based (insertions and deletions only): a substitution
    # costs 2, so the distance is 5 and the ratio 100 * (1 - 5 / (6 + 7)).
    assert Indel.distance("kitten", "sitting") == 5
    assert fuzz.ratio("kitten", "sitting") == pytest.approx(100 * (1 - 5 / 13))
    v = judge("kitten", "sitting", CheckSpec(kind="fuzzy"))
    assert not v.passed and v.score == pytest.approx(1 - 5 / 13)
    assert v.why == "expected 'sitting', found 'kitten': similarity 61.5 < 85 (first line)"
    assert judge("kitten", "sitting", CheckSpec(kind="fuzzy", fuzzy_threshold=61.5)).passed


def test_fuzzy_uses_normalized_text():
    v = judge("The Lost-Property office", "lost property office", CheckSpec(kind="fuzzy"))
    assert v.passed and v.score < 1.0          # "lostproperty" vs "lost property"
    assert judge("EXCHANGE!", "exchange", CheckSpec(kind="fuzzy")).score == 1.0


# --- pattern / contains / json_field --------------------------------------------------------
def test_pattern():
    spec = CheckSpec(kind="pattern", pattern=r"\bgate [A-D]\d\b")
    v = judge("Board at gate B4 at noon", "", spec)
    assert v.passed and "matches 'gate B4'" in v.why
    assert not judge("Board at Gate B4", "", spec).passed          # case as written
    spec = CheckSpec(kind="pattern", pattern=r"^\s*{expected}\.?\s*$")
    assert judge(" 3.5. ", "3.5", spec).passed                     # {expected} is literal
    assert not judge("385", "3.5", spec).passed


def test_pattern_empty_means_whole_word_literal():
    spec = CheckSpec(kind="pattern")
    assert judge("You may get a Refund (partial).", "refund", spec).passed
    assert not judge("refunds are rare", "refund", spec).passed
    assert judge("price: $4.50 (c++)", "c++", spec).passed


def test_contains():
    spec = CheckSpec(kind="contains")
    v = judge("Sure!\nYou can ask the crew for an EXCHANGE, sir.", "exchange", spec)
    assert v.passed and v.why == "contains 'exchange' (whole text)"
    assert not judge("no exchanges today", "exchange", spec).passed   # whole words only
    assert judge("anything", "?!", spec).why == "expected answer is empty once normalized"


def test_json_field():
    spec = CheckSpec(kind="json_field", json_field="booking.legs.1.port")
    out = 'Here: {not json} {"booking": {"legs": [{"port": "Oslo"}, {"port": "Kiel"}]}} done'
    v = judge(out, "kiel", spec)
    assert v.passed and v.extracted == "Kiel"
    v = judge(out, "Oslo", spec)
    assert not v.passed and v.why == "field 'booking.legs.1.port' is 'Kiel', expected 'Oslo'"
    assert judge("no object", "x", spec).why == "no JSON object found (whole text)"
    v = judge('{"booking": {"legs": []}}', "x", spec)
    assert v.why == "JSON has no field 'booking.legs.1.port' (no '1' at that step)"


def test_json_field_values_of_other_types():
    spec = CheckSpec(kind="json_field", json_field="seats")
    assert judge('{"seats": 42.0}', "42", spec).passed               # numbers compare as numbers
    assert judge('{"seats": true}', "True", spec).passed
    assert judge('{"seats": null}', "null", spec).passed
    assert not judge('{"seats": [1, 2]}', "1", spec).passed


def test_json_field_deep_nesting_does_not_raise():
    out = '{"a": ' + "[" * 100_000
    assert not judge(out, "x", CheckSpec(kind="json_field", json_field="a")).passed


# --- never raises, always one line ----------------------------------------------------------
messy = st.text() | st.text(alphabet='{}[]":,.-0123456789 abtrueAnswer:\n\u2212/€%e')
specs = st.builds(
    CheckSpec,
    kind=st.sampled_from(CHECKS),
    extraction=st.sampled_from(("auto",) + EXTRACTIONS),
    labels=st.lists(st.text(max_size=10), max_size=4).map(tuple),
    pattern=st.sampled_from(["", r"\d+", "{expected}", r"^(?i)a", "[{expected}]"]),
    json_field=st.sampled_from(["a", "a.0", "answer.b.-1"]),
    label_threshold=st.floats(0, 100),
    fuzzy_threshold=st.floats(0, 100),
)


@settings(max_examples=1500)
@given(messy, messy, specs)
def test_judge_never_raises_and_why_is_one_line(output, expected, spec):
    try:
        spec.validate()
    except ValueError:
        assume(False)
    v = judge(output, expected, spec)
    assert isinstance(v.passed, bool) and isinstance(v.extracted, str)
    assert one_line(v.why), v.why
    assert 0.0 <= v.score <= 1.0
    if spec.kind != "fuzzy":
        assert v.score == (1.0 if v.passed else 0.0)
