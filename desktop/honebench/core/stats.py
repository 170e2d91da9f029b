"""Statistics for grade runs: pass rates with intervals, paired comparison, label reports.

All distributions come from scipy; nothing here is hand-written probability code.
"""
from __future__ import annotations

import math
import operator
from collections import Counter
from dataclasses import dataclass
from typing import Sequence

from scipy.stats import binomtest


def _check_counts(passed: int, total: int) -> None:
    for name, value in (("passed", passed), ("total", total)):
        try:
            if isinstance(value, bool):
                raise TypeError
            operator.index(value)
        except TypeError:
            raise ValueError(f"{name} must be a whole number, got {value!r}") from None
    if total < 0 or not 0 <= passed <= total:
        raise ValueError(f"passed must be between 0 and total; got {passed} of {total}")


def wilson_interval(passed: int, total: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval for a pass rate (scipy binomtest). No items: (0.0, 1.0)."""
    _check_counts(passed, total)
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence!r}")
    if total == 0:
        return 0.0, 1.0
    ci = binomtest(int(passed), int(total)).proportion_ci(
        confidence_level=confidence, method="wilson"
    )
    return float(ci.low), float(ci.high)


def _percent(x: float) -> str:
    """62.5 -> '62.5%', 100.0 -> '100%'."""
    text = f"{x * 100:.1f}".rstrip("0").rstrip(".")
    return f"{text}%"


@dataclass(frozen=True)
class Score:
    passed: int
    total: int
    rate: float
    low: float
    high: float  # 95% Wilson interval

    def text(self) -> str:
        """'62.5% (25/40, 95% interval 47–76%)'."""
        if self.total == 0:
            return "no items graded (0/0)"
        return (f"{_percent(self.rate)} ({self.passed}/{self.total}, 95% interval "
                f"{round(self.low * 100)}–{round(self.high * 100)}%)")


def score(passed: int, total: int) -> Score:
    """Pass rate with its 95% Wilson interval; no items gives rate 0 and interval (0, 1)."""
    low, high = wilson_interval(passed, total)
    rate = passed / total if total else 0.0
    return Score(int(passed), int(total), rate, low, high)


def _items(n: int) -> str:
    return "1 item" if n == 1 else f"{n} items"


def _chance_phrase(p: float) -> str:
    if p < 0.001:
        return "less than 0.1% of the time"
    if p < 0.01:
        return f"about {p * 100:.1f}% of the time"
    if p >= 0.995:
        return "almost every time"
    return f"about {round(p * 100)}% of the time"


@dataclass(frozen=True)
class Paired:
    fixed: int  # failed in A, passed in B
    broken: int  # passed in A, failed in B
    both_pass: int
    both_fail: int
    p_value: float  # exact McNemar test, two-sided

    def text(self, name: str = "B") -> str:
        """Plain words, e.g. 'B fixes 9 items and breaks 2; a difference this size would
        arise by chance about 7% of the time'."""
        if self.fixed == 0 and self.broken == 0:
            return f"{name} fixes no items and breaks none; both versions agree on every item"
        broken = "none" if self.broken == 0 else str(self.broken)
        fixed = "no items" if self.fixed == 0 else _items(self.fixed)
        return (f"{name} fixes {fixed} and breaks {broken}; a difference this size would "
                f"arise by chance {_chance_phrase(self.p_value)}")


def paired_exact(a_passed: Sequence[bool], b_passed: Sequence[bool]) -> Paired:
    """Compare two runs over the same items, in the same order: the exact McNemar test,
    i.e. a two-sided exact binomial test (p = 1/2) on the items where they disagree."""
    a, b = [bool(x) for x in a_passed], [bool(x) for x in b_passed]
    if len(a) != len(b):
        raise ValueError(
            f"the two runs cover different numbers of items ({len(a)} and {len(b)}); "
            "compare runs over the same items"
        )
    counts = Counter(zip(a, b))
    fixed, broken = counts[(False, True)], counts[(True, False)]
    discordant = fixed + broken
    p = 1.0 if discordant == 0 else float(binomtest(fixed, discordant, 0.5).pvalue)
    return Paired(fixed, broken, counts[(True, True)], counts[(False, False)], min(p, 1.0))


def paired_difference_interval(paired: Paired, confidence: float = 0.95) -> tuple[float, float]:
    """Interval for B's pass rate minus A's over the same items: Newcombe's hybrid score
    interval for paired proportions (his method 10), built from the Wilson intervals of
    both pass rates and the correlation of the paired marks. No items: (-1.0, 1.0)."""
    n = paired.fixed + paired.broken + paired.both_pass + paired.both_fail
    if n == 0:
        return -1.0, 1.0
    b_passed, a_passed = paired.both_pass + paired.fixed, paired.both_pass + paired.broken
    p_b, p_a = b_passed / n, a_passed / n
    low_b, high_b = wilson_interval(b_passed, n, confidence)
    low_a, high_a = wilson_interval(a_passed, n, confidence)
    # phi: correlation of A's and B's pass/miss over the items (0 when a margin is empty),
    # a positive one shrunk by n/2 in its numerator so that runs agreeing on every item
    # still get an interval of some width (the method's correction, from memory)
    margins = a_passed * (n - a_passed) * b_passed * (n - b_passed)
    agree = paired.both_pass * paired.both_fail - paired.fixed * paired.broken
    if agree > 0:
        agree = max(agree - n / 2, 0.0)
    phi = agree / math.sqrt(margins) if margins else 0.0
    diff = p_b - p_a
    below = math.sqrt(max(0.0, (p_b - low_b) ** 2 - 2 * phi * (p_b - low_b) * (high_a - p_a)
                          + (high_a - p_a) ** 2))
    above = math.sqrt(max(0.0, (high_b - p_b) ** 2 - 2 * phi * (high_b - p_b) * (p_a - low_a)
                          + (p_a - low_a) ** 2))
    return max(-1.0, diff - below), min(1.0, diff + above)


@dataclass(frozen=True)
class LabelStats:
    label: str
    precision: float  # 0.0 when the label was never predicted
    recall: float  # 0.0 when the label never occurs among expected answers
    f1: float
    support: int  # how many items expect this label
    predicted: int  # how many answers gave this label


@dataclass(frozen=True)
class LabelReport:
    labels: tuple[str, ...]  # the order of the rows and columns of ``confusion``
    accuracy: float  # over all items; 0.0 when there are none
    per_label: tuple[LabelStats, ...]
    confusion: list[list[int]]  # rows: expected label, columns: predicted label
    total: int
    outside: int  # items whose expected or predicted answer is not among ``labels``

    def stats_for(self, label: str) -> LabelStats:
        for stats in self.per_label:
            if stats.label == label:
                return stats
        raise KeyError(f"{label!r} is not one of the report's labels")


def label_report(expected: Sequence[str], predicted: Sequence[str],
                 labels: Sequence[str] | None = None) -> LabelReport:
    """Accuracy, per-label precision / recall / F1 / support and the confusion matrix.

    Labels default to the sorted set of all expected and predicted values. With given
    labels, pairs involving other values count for accuracy (and as misses for recall)
    but have no cell in the matrix. A ratio with nothing to divide by is 0.0 (the same
    convention as scikit-learn's zero_division=0).
    """
    expected, predicted = list(expected), list(predicted)
    if len(expected) != len(predicted):
        raise ValueError(
            f"{len(expected)} expected answers but {len(predicted)} predicted ones; "
            "give one prediction per item"
        )
    order = tuple(sorted(set(expected) | set(predicted))) if labels is None else tuple(labels)
    if len(set(order)) != len(order):
        raise ValueError("labels: each label may appear only once")
    index = {lab: i for i, lab in enumerate(order)}
    confusion = [[0] * len(order) for _ in order]
    outside = 0
    for e, p in zip(expected, predicted):
        if e in index and p in index:
            confusion[index[e]][index[p]] += 1
        else:
            outside += 1
    support = Counter(expected)
    given = Counter(predicted)
    per_label = []
    for i, lab in enumerate(order):
        hits = confusion[i][i]
        precision = hits / given[lab] if given[lab] else 0.0
        recall = hits / support[lab] if support[lab] else 0.0
        f1 = 2 * precision * recall / (precision + recall) if precision + recall else 0.0
        per_label.append(LabelStats(lab, precision, recall, f1, support[lab], given[lab]))
    total = len(expected)
    correct = sum(e == p for e, p in zip(expected, predicted))
    return LabelReport(order, correct / total if total else 0.0, tuple(per_label),
                       confusion, total, outside)
