"""Comparing two grade runs: scores on the same items, fixed / broken lists, the paired exact
test and the bootstrap interval, checked against statsmodels and scipy."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import bootstrap
from statsmodels.stats.contingency_tables import mcnemar
from statsmodels.stats.proportion import proportion_confint

from honebench.core.compare import (BOOTSTRAP_RESAMPLES, BOOTSTRAP_SEED, compare_entries,
                                    compare_runs, latest_run, mean_difference)
from honebench.core.wording import Wording

from .shelf_builder import add_run, new_project

V1 = Wording("Which desk should answer this message?", "before")
V2 = Wording("Name the one department that should answer. Reply with its name only.", "before")


def _table_runs(both_pass, broken, fixed, both_fail):
    """Pass patterns for A and B over the first items of the tuning split, shuffled so the
    fixed and broken items are not simply the first ones."""
    a = [True] * both_pass + [True] * broken + [False] * fixed + [False] * both_fail
    b = [True] * both_pass + [False] * broken + [True] * fixed + [False] * both_fail
    order = np.random.default_rng(7).permutation(len(a))
    return [a[i] for i in order], [b[i] for i in order]


@pytest.fixture
def project(tmp_path):
    p = new_project(tmp_path)
    p.keep(V1)
    p.keep(V2)
    yield p
    p.close()


TABLES = [(10, 0, 0, 5),   # all agree
          (0, 6, 4, 0),    # all disagree
          (0, 0, 7, 0),    # all disagree, all fixed
          (12, 2, 9, 17), (20, 3, 9, 8), (3, 1, 1, 3), (30, 0, 1, 1), (0, 30, 30, 0)]


@pytest.mark.parametrize("both_pass, broken, fixed, both_fail", TABLES)
def test_comparison_matches_statsmodels(project, both_pass, broken, fixed, both_fail):
    a, b = _table_runs(both_pass, broken, fixed, both_fail)
    run_a = add_run(project, V1, "tuning", a)
    run_b = add_run(project, V2, "tuning", b)
    got = compare_runs(project.store, run_a, run_b)
    n = len(a)
    assert got.n == n and (got.name_a, got.name_b) == ("v1", "v2")
    assert (got.paired.both_pass, got.paired.broken, got.paired.fixed, got.paired.both_fail) \
        == (both_pass, broken, fixed, both_fail)
    # Reference: statsmodels mcnemar(exact=True); rows = A pass/miss, columns = B pass/miss
    ref = mcnemar([[both_pass, broken], [fixed, both_fail]], exact=True).pvalue
    assert got.paired.p_value == pytest.approx(min(ref, 1.0), rel=1e-12)
    # Reference: statsmodels proportion_confint(method="wilson") for both scores
    for s, passed in ((got.score_a, sum(a)), (got.score_b, sum(b))):
        low, high = proportion_confint(passed, n, alpha=0.05, method="wilson")
        assert (s.passed, s.total) == (passed, n)
        assert (s.low, s.high) == pytest.approx((max(low, 0.0), min(high, 1.0)), abs=1e-9)
    assert len(got.fixed_ids) == fixed and len(got.broken_ids) == broken


def test_all_agree_gives_p_one_and_says_so(project):
    a, b = _table_runs(10, 0, 0, 5)
    got = compare_runs(project.store, add_run(project, V1, "tuning", a),
                       add_run(project, V2, "tuning", b))
    assert got.paired.p_value == 1.0 and got.fixed == () and got.broken == ()
    assert "agree on every item" in got.text()
    assert "On the same 15 items: v1 scores 66.7% (10/15, 95% interval" in got.text()


def test_published_worked_example(project):
    # A published worked example of the exact McNemar test (from memory): 21 matched pairs,
    # 1 positive in both, 1 positive only before, 7 positive only after, 12 in neither;
    # exact conditional p = 0.070 (two-sided, to 3 places).
    a, b = _table_runs(1, 1, 7, 12)
    got = compare_runs(project.store, add_run(project, V1, "tuning", a),
                       add_run(project, V2, "tuning", b))
    assert round(got.paired.p_value, 3) == 0.070
    assert "v2 fixes 7 items and breaks 1; a difference this size would arise by chance " \
           "about 7% of the time." in got.text()


def test_fixed_and_broken_lists_follow_the_marks_in_set_order(project):
    a, b = _table_runs(12, 3, 9, 16)
    run_a, run_b = add_run(project, V1, "tuning", a), add_run(project, V2, "tuning", b)
    got = compare_runs(project.store, run_a, run_b)
    marks_a = {m.item_id: m.passed for m in project.store.marks(run_a)}
    marks_b = {m.item_id: m.passed for m in project.store.marks(run_b)}
    _, qset = project.current_set()
    order = [it.id for it in qset.items]
    want_fixed = [i for i in order if i in marks_a and not marks_a[i] and marks_b[i]]
    want_broken = [i for i in order if i in marks_a and marks_a[i] and not marks_b[i]]
    assert got.fixed_ids == want_fixed and got.broken_ids == want_broken
    assert all(not p.a.passed and p.b.passed for p in got.fixed)
    assert got.fixed[0].item.expected == qset.items[order.index(want_fixed[0])].expected
    text = got.text()
    assert got.score_a.text() in text and got.score_b.text() in text
    assert "v2 fixes 9 items and breaks 3; a difference this size would arise by chance" in text


def test_only_items_both_runs_graded_are_compared(project):
    _, qset = project.current_set()
    ids = [it.id for it in qset.tuning()]
    run_a = add_run(project, V1, "tuning", [True] * 30, item_ids=ids[:30])
    run_b = add_run(project, V2, "tuning", [False] * 30, item_ids=ids[10:40])
    got = compare_runs(project.store, run_a, run_b)
    assert list(got.item_ids) == ids[10:30] and len(got.broken) == 20
    assert got.text().startswith("On the same 20 items:")


def test_no_common_items_is_a_clear_error(project):
    _, qset = project.current_set()
    ids = [it.id for it in qset.tuning()]
    run_a = add_run(project, V1, "tuning", [True] * 5, item_ids=ids[:5])
    run_b = add_run(project, V2, "held_out", [True] * 5)
    with pytest.raises(ValueError, match="no graded items in common"):
        compare_runs(project.store, run_a, run_b)


def test_runs_on_different_sets_are_refused(project):
    run_a = add_run(project, V1, "tuning", [True] * 5)
    project.import_set(project.store.get_set(1).path.replace("passenger_desk_routing",
                                                             "review_sentiment"))
    run_b = add_run(project, V2, "tuning", [True] * 5)
    with pytest.raises(ValueError, match="items differ"):
        compare_runs(project.store, run_a, run_b)


def test_same_wording_twice_gets_run_numbers_and_names_can_be_given(project):
    r1 = add_run(project, V1, "tuning", [True, False, True])
    r2 = add_run(project, V1, "tuning", [True, True, True])
    got = compare_runs(project.store, r1, r2)
    assert (got.name_a, got.name_b) == (f"v1 (run {r1})", f"v1 (run {r2})")
    named = compare_runs(project.store, r1, r2, name_a="v1", name_b="the editor")
    assert "the editor fixes 1 item and breaks none" in named.text()


def test_latest_run_is_the_newest_finished_one(project):
    set_id, _ = project.current_set()
    assert latest_run(project.store, V1.text, V1.placement, "tuning", set_id) is None
    first = add_run(project, V1, "tuning", [True])
    add_run(project, V1, "held_out", [True])
    add_run(project, V1, "tuning", [False], finish=False)   # still running: not counted
    assert latest_run(project.store, V1.text, V1.placement, "tuning", set_id) == first
    second = add_run(project, V1, "tuning", [True, True])
    assert latest_run(project.store, V1.text, V1.placement, "tuning", set_id) == second
    assert latest_run(project.store, V1.text, "system", "tuning", set_id) is None


# --- fuzzy scores: paired bootstrap ---------------------------------------------------------
def _fuzzy_scores(n=60, shift=0.1, seed=3):
    rng = np.random.default_rng(seed)
    a = rng.uniform(0.3, 0.8, n)
    b = a + shift + rng.normal(0, 0.05, n)  # true mean difference: shift
    return a, b


def test_bootstrap_matches_scipy_called_directly():
    a, b = _fuzzy_scores()
    got = mean_difference(a, b)
    # Reference: scipy.stats.bootstrap, paired, BCa, same seed and resamples
    ref = bootstrap((a, b), lambda x, y, axis=-1: np.mean(y - x, axis=axis), paired=True,
                    vectorized=True, n_resamples=BOOTSTRAP_RESAMPLES,
                    rng=np.random.default_rng(BOOTSTRAP_SEED)).confidence_interval
    assert (got.low, got.high) == pytest.approx((ref.low, ref.high), rel=1e-12)
    assert got.difference == pytest.approx(np.mean(b - a))
    assert mean_difference(a, b) == got  # reproducible


def test_bootstrap_interval_contains_the_true_difference():
    a, b = _fuzzy_scores(shift=0.1)
    got = mean_difference(a, b)
    assert got.low < 0.1 < got.high and got.high - got.low < 0.05
    assert mean_difference(a, a + 0.2).low == pytest.approx(0.2)   # every item the same gap
    single = mean_difference([0.5], [0.7])
    assert (single.low, single.high) == pytest.approx((0.2, 0.2))
    with pytest.raises(ValueError, match="one score per item"):
        mean_difference([0.1, 0.2], [0.3])


def test_fuzzy_runs_get_a_mean_difference_and_label_runs_do_not(project):
    a, b = _fuzzy_scores(n=40)
    b = np.clip(b, 0, 1)
    fuzzy = {"kind": "fuzzy"}
    run_a = add_run(project, V1, "tuning", list(a >= 0.85), scores=list(a), check=fuzzy)
    run_b = add_run(project, V2, "tuning", list(b >= 0.85), scores=list(b), check=fuzzy)
    got = compare_runs(project.store, run_a, run_b)
    # the set is in item order, the builder saved marks in reverse: order must not matter
    ref = mean_difference(a, b)
    assert got.mean_difference == ref
    assert "95% paired bootstrap interval" in got.text()
    plain = compare_runs(project.store, add_run(project, V1, "tuning", [True, False]),
                         add_run(project, V2, "tuning", [True, True]))
    assert plain.mean_difference is None and "bootstrap" not in plain.text()


def test_compare_entries_uses_the_latest_runs_and_names_what_is_missing(project):
    v1, v2 = project.store.shelf()
    set_id, _ = project.current_set()
    add_run(project, V1, "tuning", [False, False, False])
    with pytest.raises(ValueError, match="v2 not yet graded on the tuning items"):
        compare_entries(project.store, set_id, v1, v2)
    add_run(project, V1, "tuning", [True, False, False])      # the newer run counts
    add_run(project, V2, "tuning", [True, True, True])
    got = compare_entries(project.store, set_id, v1, v2)
    assert got.score_a.passed == 1 and len(got.fixed_ids) == 2
    with pytest.raises(ValueError, match="v1 and v2 not yet graded on the held-out items"):
        compare_entries(project.store, set_id, v1, v2, "held_out")
