"""Stopping generation once the answer check can decide (worked examples)."""
from honebench.core.answer_stops import StopRule, stop_rule, wants_more
from honebench.core.checks import CheckSpec

LABELS = ("refund", "booking_change", "timetable")


def test_first_line_ends_the_answer_after_some_text():
    rule = StopRule(first_line=True)
    assert rule.cut("\n\n  refund") is None  # leading blank lines are not the end
    assert rule.cut("refund") is None
    assert rule.cut("refund\nBecause the") == len("refund")


def test_a_named_label_ends_the_answer_once_the_word_is_complete():
    rule = StopRule(first_line=False, labels=LABELS)
    assert rule.cut("The department is ref") is None
    assert rule.cut("The department is refund") is None  # could still become "refunds"
    assert rule.cut("The department is refund.") is not None
    assert rule.cut("booking_") is None
    assert rule.cut("booking_change ") is not None


def test_a_label_that_starts_a_longer_label_does_not_stop_early():
    rule = StopRule(first_line=False, labels=("no", "no change"))
    assert rule.cut("no ") is None
    assert rule.cut("no change ") is not None


def test_wording_that_asks_for_more_keeps_later_lines():
    assert wants_more("Explain your reasoning, then give the number.")
    assert wants_more("Work it out step by step.")
    assert not wants_more("Reply with the number only.")
    assert stop_rule(CheckSpec(kind="number"), "Reply with the number only.") == StopRule(True, ())
    assert stop_rule(CheckSpec(kind="number"), "Think step by step.") is None
    assert stop_rule(CheckSpec(kind="label", labels=LABELS), "Explain, then name it.") == \
        StopRule(False, LABELS)
    assert stop_rule(CheckSpec(kind="fuzzy"), "Reply briefly.") is None
