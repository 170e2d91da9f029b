"""The interval on a paired difference of pass rates (stats.paired_difference_interval)."""
from __future__ import annotations

import pytest
from statsmodels.stats.proportion import confint_proportions_2indep

from honebench.core.stats import Paired, paired_difference_interval


@pytest.mark.parametrize("fixed, broken, both_pass, both_fail", [
    (8, 3, 2, 12), (3, 8, 2, 12), (6, 6, 4, 9), (2, 1, 1, 2)])
def test_uncorrelated_marks_give_newcombes_interval_for_two_independent_rates(
        fixed, broken, both_pass, both_fail):
    # both_pass * both_fail == fixed * broken: the paired marks are uncorrelated (phi = 0),
    # where the paired interval is the independent-samples hybrid score interval.
    # source: statsmodels confint_proportions_2indep(method="newcomb", compare="diff")
    assert both_pass * both_fail == fixed * broken
    n = fixed + broken + both_pass + both_fail
    low, high = paired_difference_interval(Paired(fixed, broken, both_pass, both_fail, 1.0))
    ref = confint_proportions_2indep(both_pass + fixed, n, both_pass + broken, n,
                                     method="newcomb", compare="diff")
    assert (low, high) == pytest.approx((float(ref[0]), float(ref[1])), abs=1e-12)


def test_agreeing_marks_narrow_the_interval_but_never_to_a_point():
    loose = paired_difference_interval(Paired(8, 3, 2, 12, 1.0))  # uncorrelated
    tight = paired_difference_interval(Paired(8, 3, 20, 30, 1.0))
    assert tight[1] - tight[0] < loose[1] - loose[0]
    low, high = paired_difference_interval(Paired(0, 0, 10, 10, 1.0))
    assert low < 0 < high  # no item differs on 20 items: still unsure by several points
    assert paired_difference_interval(Paired(0, 10, 0, 0, 1.0))[1] < 0  # all broken


def test_the_interval_stays_within_minus_one_and_one_and_holds_the_difference():
    for counts in [(0, 30, 0, 0), (30, 0, 0, 0), (5, 1, 0, 0), (1, 5, 3, 0), (0, 0, 0, 0)]:
        low, high = paired_difference_interval(Paired(*counts, 1.0))
        n = sum(counts) or 1
        assert -1.0 <= low <= (counts[0] - counts[1]) / n <= high <= 1.0
