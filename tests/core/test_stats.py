"""Pass-rate intervals, paired comparison and label reports, checked against reference
libraries (statsmodels, scikit-learn) and worked examples."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import accuracy_score, confusion_matrix, precision_recall_fscore_support
from statsmodels.stats.contingency_tables import mcnemar
from statsmodels.stats.proportion import proportion_confint

from honebench.core.stats import label_report, paired_exact, score, wilson_interval


# --- Wilson interval ------------------------------------------------------------------------
GRID = [(k, n) for n in (1, 2, 5, 10, 40, 263, 1000) for k in sorted({0, 1, n // 3, n // 2, n - 1, n})]


@pytest.mark.parametrize("passed, total", GRID)
@pytest.mark.parametrize("confidence", [0.90, 0.95, 0.99])
def test_wilson_matches_statsmodels(passed, total, confidence):
    # Reference: statsmodels.stats.proportion.proportion_confint(method="wilson")
    low, high = proportion_confint(passed, total, alpha=1 - confidence, method="wilson")
    got = wilson_interval(passed, total, confidence)
    assert got == pytest.approx((max(low, 0.0), min(high, 1.0)), abs=1e-9)


@pytest.mark.parametrize("passed, total, low, high", [
    # Published worked examples of the 95% Wilson score interval (from memory, 4 places).
    (81, 263, 0.2553, 0.3662),
    (15, 148, 0.0624, 0.1605),
    (0, 20, 0.0, 0.1611),
    (1, 29, 0.0061, 0.1718),
])
def test_wilson_published_examples(passed, total, low, high):
    got = wilson_interval(passed, total)
    assert got == pytest.approx((low, high), abs=5e-5)


def test_wilson_edges_and_bad_input():
    assert wilson_interval(0, 0) == (0.0, 1.0)
    assert wilson_interval(0, 10)[0] == 0.0 and wilson_interval(10, 10)[1] == pytest.approx(1.0)
    for bad in [(5, 4), (-1, 3), (1, -1)]:
        with pytest.raises(ValueError, match="between 0 and total"):
            wilson_interval(*bad)
    with pytest.raises(ValueError, match="whole number"):
        wilson_interval(1.5, 3)
    with pytest.raises(ValueError, match="confidence"):
        wilson_interval(1, 3, confidence=95)
    assert wilson_interval(np.int64(3), np.int64(9)) == wilson_interval(3, 9)


def test_score_text():
    s = score(25, 40)
    assert (s.passed, s.total, s.rate) == (25, 40, 0.625)
    # 25/40 Wilson 95%: 0.4703-0.7578 (statsmodels gives the same, checked above)
    assert s.text() == "62.5% (25/40, 95% interval 47–76%)"
    assert score(40, 40).text().startswith("100% (40/40")
    z = score(0, 0)
    assert (z.rate, z.low, z.high) == (0.0, 0.0, 1.0) and "0/0" in z.text()


# --- paired exact test ----------------------------------------------------------------------
def build_runs(both_pass, broken, fixed, both_fail):
    a = [True] * both_pass + [True] * broken + [False] * fixed + [False] * both_fail
    b = [True] * both_pass + [False] * broken + [True] * fixed + [False] * both_fail
    return a, b


TABLES = [(10, 0, 0, 5), (0, 7, 0, 0), (0, 0, 7, 0), (0, 6, 4, 0), (12, 2, 9, 17),
          (3, 1, 1, 3), (50, 0, 1, 1), (20, 15, 3, 2), (0, 30, 30, 0), (5, 0, 12, 5)]


@pytest.mark.parametrize("both_pass, broken, fixed, both_fail", TABLES)
def test_paired_exact_matches_statsmodels(both_pass, broken, fixed, both_fail):
    a, b = build_runs(both_pass, broken, fixed, both_fail)
    got = paired_exact(a, b)
    assert (got.both_pass, got.broken, got.fixed, got.both_fail) == (both_pass, broken, fixed, both_fail)
    # Reference: statsmodels.stats.contingency_tables.mcnemar(exact=True); rows = A, cols = B
    ref = mcnemar([[both_pass, broken], [fixed, both_fail]], exact=True).pvalue
    assert got.p_value == pytest.approx(min(ref, 1.0), rel=1e-12)


@settings(max_examples=200)
@given(st.lists(st.tuples(st.booleans(), st.booleans()), max_size=80))
def test_paired_exact_matches_statsmodels_on_any_runs(pairs):
    a = [x for x, _ in pairs]
    b = [y for _, y in pairs]
    got = paired_exact(a, b)
    table = [[got.both_pass, got.broken], [got.fixed, got.both_fail]]
    ref = 1.0 if got.fixed + got.broken == 0 else mcnemar(table, exact=True).pvalue  # statsmodels
    assert got.p_value == pytest.approx(min(ref, 1.0), rel=1e-12)
    assert sum(map(sum, table)) == len(pairs)


def test_paired_exact_worked_example():
    # Worked by hand: 9 fixed, 2 broken; two-sided exact binomial on 11 discordant pairs:
    # p = 2 * (C(11,0) + C(11,1) + C(11,2)) / 2**11 = 2 * 67 / 2048.
    got = paired_exact(*build_runs(20, 2, 9, 9))
    assert got.p_value == pytest.approx(134 / 2048)
    assert got.text() == ("B fixes 9 items and breaks 2; a difference this size would "
                          "arise by chance about 7% of the time")


def test_paired_texts_and_errors():
    assert paired_exact([True, False], [True, False]).p_value == 1.0
    assert "agree on every item" in paired_exact([True, False], [True, False]).text()
    one = paired_exact([False], [True])
    assert one.text("v3").startswith("v3 fixes 1 item and breaks none;")
    assert "almost every time" in one.text()           # p = 1.0 with one discordant item
    many = paired_exact(*build_runs(0, 0, 30, 0))
    assert "less than 0.1% of the time" in many.text()
    with pytest.raises(ValueError, match="different numbers of items"):
        paired_exact([True], [True, False])


# --- label report ---------------------------------------------------------------------------
EXPECTED = ["refund", "refund", "exchange", "lost", "refund", "exchange", "lost", "lost"]
PREDICTED = ["refund", "exchange", "exchange", "refund", "refund", "exchange", "lost", "refund"]


def check_against_sklearn(expected, predicted, labels=None):
    rep = label_report(expected, predicted, labels)
    order = list(rep.labels)
    # Reference: sklearn.metrics.accuracy_score
    assert rep.accuracy == pytest.approx(accuracy_score(expected, predicted))
    # Reference: sklearn.metrics.precision_recall_fscore_support(zero_division=0)
    p, r, f, s = precision_recall_fscore_support(expected, predicted, labels=order,
                                                 average=None, zero_division=0)
    assert [x.precision for x in rep.per_label] == pytest.approx(list(p))
    assert [x.recall for x in rep.per_label] == pytest.approx(list(r))
    assert [x.f1 for x in rep.per_label] == pytest.approx(list(f))
    assert [x.support for x in rep.per_label] == list(s)
    # Reference: sklearn.metrics.confusion_matrix (rows true, columns predicted)
    assert rep.confusion == confusion_matrix(expected, predicted, labels=order).tolist()
    return rep


def test_label_report_matches_sklearn():
    rep = check_against_sklearn(EXPECTED, PREDICTED)
    assert rep.labels == ("exchange", "lost", "refund")      # sorted, like scikit-learn
    assert rep.stats_for("refund").predicted == 4 and rep.outside == 0


def test_label_report_never_predicted_label_has_zero_precision():
    rep = check_against_sklearn(["a", "b", "c"], ["a", "a", "a"], labels=["a", "b", "c"])
    assert rep.stats_for("b").precision == 0.0 and rep.stats_for("b").recall == 0.0


def test_label_report_given_labels_and_outside_values():
    predicted = ["refund", "", "exchange", "lost", "refund", "?", "lost", "refund"]
    rep = check_against_sklearn(EXPECTED, predicted, labels=["refund", "exchange", "lost"])
    assert rep.outside == 2 and rep.total == 8


@pytest.mark.filterwarnings("ignore:A single label was found")  # sklearn's own notice
@settings(max_examples=150)
@given(st.lists(st.tuples(st.sampled_from("abcd"), st.sampled_from("abcde")), min_size=1, max_size=40))
def test_label_report_matches_sklearn_on_any_data(pairs):
    check_against_sklearn([e for e, _ in pairs], [p for _, p in pairs])
    check_against_sklearn([e for e, _ in pairs], [p for _, p in pairs], labels=list("dcba"))


def test_label_report_edges():
    empty = label_report([], [])
    assert (empty.accuracy, empty.labels, empty.confusion) == (0.0, (), [])
    with pytest.raises(ValueError, match="one prediction per item"):
        label_report(["a"], [])
    with pytest.raises(ValueError, match="only once"):
        label_report(["a"], ["a"], labels=["a", "a"])
    with pytest.raises(KeyError):
        label_report(["a"], ["a"]).stats_for("z")
