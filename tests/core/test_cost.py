"""Cost beside score: per-run cost means and totals, the Pareto front, the shelf's cost, the
report's trade-off section and ``grade --json``'s cost."""
from __future__ import annotations

import argparse
import json
import xml.etree.ElementTree as ET

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from honebench.commands import _print_grade
from honebench.core.chart_cost_svg import cost_chart_svg, nice_ticks
from honebench.core.cost import (cost_of, cost_points, front_of, front_steps, marks_cost,
                                 pareto_front, run_cost)
from honebench.core.report import report_html
from honebench.core.views import ShelfRow
from honebench.core.wording import Wording
from honebench.core.stats import score
from tests.fakes import FakeEngine

from .shelf_builder import add_run, new_project, pattern


# -- the Pareto front ------------------------------------------------------------------------
def test_pareto_front_worked_example():
    # worked example, by hand (higher score better, lower cost better):
    #   v8 (0.45,  90) cheapest of all                          -> front
    #   v1 (0.50, 100) nothing as cheap scores higher            -> front
    #   v7 (0.40, 100) v1 costs the same and scores higher       -> beaten
    #   v2 (0.60, 120) nothing cheaper scores as high            -> front
    #   v4 (0.60, 120) the same point as v2: a tie, neither beats -> front
    #   v3 (0.55, 150) v2 scores higher for less                 -> beaten
    #   v5 (0.70, 200) the top score, nothing cheaper has it     -> front
    #   v6 (0.70, 250) v5 scores the same for less               -> beaten
    #   v9 (score None) and v10 (cost None) cannot be placed     -> left out
    points = [("v1", 0.50, 100), ("v2", 0.60, 120), ("v3", 0.55, 150), ("v4", 0.60, 120),
              ("v5", 0.70, 200), ("v6", 0.70, 250), ("v7", 0.40, 100), ("v8", 0.45, 90),
              ("v9", None, 80), ("v10", 0.9, None)]
    assert pareto_front(points) == ["v8", "v1", "v2", "v4", "v5"]
    # the step line through the front (worked example): flat to the next cost, then up
    front = [(90, 0.45), (100, 0.50), (120, 0.60), (200, 0.70)]
    assert front_steps(front) == [(90, 0.45), (100, 0.45), (100, 0.50), (120, 0.50),
                                  (120, 0.60), (200, 0.60), (200, 0.70)]
    assert pareto_front([]) == [] and front_steps([]) == []


def _beaten(a, b) -> bool:
    """b beats a: at least as good on both, strictly better on one (the definition)."""
    return b[1] >= a[1] and b[2] <= a[2] and (b[1] > a[1] or b[2] < a[2])


@settings(deadline=None)  # no timing in tests: the machine is shared
@given(st.lists(st.tuples(st.integers(0, 10), st.integers(0, 10)), max_size=25))
def test_pareto_front_matches_the_definition_checked_pair_by_pair(pairs):
    points = [(i, s / 10, c) for i, (s, c) in enumerate(pairs)]
    expected = {p[0] for p in points if not any(_beaten(p, q) for q in points)}
    found = pareto_front(points)
    assert set(found) == expected and len(found) == len(expected)
    costs = [points[k][2] for k in found]
    assert costs == sorted(costs)


# -- a run's cost ----------------------------------------------------------------------------
def test_cost_means_and_totals_by_hand():
    # three marks by hand: (prompt, answer, seconds, cached)
    cost = cost_of([(100, 4, 0.5, False), (120, 6, 0.3, True), (110, 2, 0.0, True)], 1.25)
    # the last is a cached mark from an older honebench with no seconds: tokens count,
    # seconds do not (it is not timed)
    assert (cost.items, cost.timed, cost.from_cache) == (3, 2, 2)
    assert cost.mean_prompt_tokens == pytest.approx(110.0)  # (100 + 120 + 110) / 3
    assert cost.mean_answer_tokens == pytest.approx(4.0)  # (4 + 6 + 2) / 3
    assert cost.mean_tokens == pytest.approx(114.0)
    assert cost.mean_seconds == pytest.approx(0.4)  # (0.5 + 0.3) / 2
    d = cost.as_dict()
    assert d["total_prompt_tokens"] == 330 and d["total_answer_tokens"] == 12
    assert d["total_seconds"] == pytest.approx(0.8) and d["wall_seconds"] == 1.25
    # two of three answers came from the cache, so no clock time per item is claimed
    assert "110 prompt + 4.0 answer tokens, each item waited 0.40 s (n=3)" == cost.text()
    fresh = cost_of([(100, 4, 0.5, False), (120, 6, 0.3, False)], wall_seconds=0.5)
    assert fresh.clock_seconds == pytest.approx(0.25)  # 0.5 s on the clock / 2 items
    assert fresh.text() == ("110 prompt + 5.0 answer tokens, each item waited 0.40 s "
                            "(0.25 s per item on the clock) (n=2)")
    empty = cost_of([])
    assert empty.mean_tokens is None and empty.mean_seconds is None
    assert empty.text() == "no items graded"
    with pytest.raises(ValueError, match="seconds"):
        cost.measure("dollars")


def test_a_cached_regrade_costs_what_the_first_answers_cost(project):
    engine = FakeEngine(lambda r: "refund")
    w = Wording("Name the desk.", "before")
    first = project.grade(engine, w, limit=4).value.outcome
    calls = engine.calls
    again = project.grade(engine, w, limit=4).value.outcome
    assert engine.calls == calls  # nothing asked again: every answer from the cache
    assert all(m.cached for m in again.marks)
    a, b = run_cost(project.store, first.run_id), run_cost(project.store, again.run_id)
    assert b.from_cache == 4 and b.timed == 4  # cached marks carry the first seconds
    assert (b.mean_prompt_tokens, b.mean_answer_tokens) == (a.mean_prompt_tokens,
                                                            a.mean_answer_tokens)
    assert b.mean_seconds == pytest.approx(a.mean_seconds) and a.mean_seconds > 0
    assert b.mean_prompt_tokens > 0
    # the same function over the marks in memory gives the same numbers
    assert marks_cost(first.marks).as_dict() == {**a.as_dict(), "wall_seconds": None,
                                                 "clock_seconds_per_item": None}


# -- the shelf, the points and the report ---------------------------------------------------
def _row(version, rate_passed, tokens, decision="kept"):
    from honebench.core.records import ShelfEntry

    entry = ShelfEntry(version, version, f"w{version}", "system", None, "typed", "",
                       decision=decision)
    cost = None if tokens is None else cost_of([(tokens - 5, 5, 0.1, False)] * 10)
    return ShelfRow(entry, score(rate_passed, 10), None, cost)


def test_cost_points_mark_the_front_and_skip_versions_without_cost():
    rows = [_row(1, 5, 100), _row(2, 7, 150, "set_aside"), _row(3, 6, 200), _row(4, 8, None)]
    points = cost_points(rows)
    assert [(p.label, p.on_front) for p in points] == [("v1", True), ("v2", True),
                                                        ("v3", False)]
    assert [p.label for p in front_of(points)] == ["v1", "v2"]
    svg = cost_chart_svg(points)
    ET.fromstring(svg.replace("<svg ", '<svg xmlns="http://www.w3.org/2000/svg" ', 1))
    assert svg.count('class="front-ring"') == 2 and 'class="front"' in svg
    assert svg.count('class="point-label"') == 3
    assert "No version has both" in cost_chart_svg([])


def test_nice_ticks_cover_the_range_in_round_steps():
    # by hand: (212 - 93) / 5 = 23.8 -> the first of 10, 20, 50 not below it is 50
    assert nice_ticks(93, 212) == [50, 100, 150, 200, 250]
    # by hand: (0.48 - 0.21) / 5 = 0.054 -> 0.1 (0.05 is below it)
    assert nice_ticks(0.21, 0.48) == pytest.approx([0.2, 0.3, 0.4, 0.5])
    # one value: a range of 1 above it, 1 / 5 = 0.2
    assert nice_ticks(5, 5) == pytest.approx([5, 5.2, 5.4, 5.6, 5.8, 6.0])


def test_shelf_rows_carry_the_tuning_runs_cost_and_the_report_shows_the_tradeoff(tmp_path):
    project = new_project(tmp_path)
    v1, v2 = Wording("Which desk?", "before"), Wording("Name the desk, one word.", "system")
    for w, n in ((v1, 3), (v2, 4)):
        project.store.add_wording(w.text, w.placement, decision="kept")
        add_run(project, w, "tuning", pattern(n, 6))  # 10 prompt + 3 answer tokens, 0.25 s
    html = report_html(project)
    # same tokens, v2 scores higher: v2 alone on the front (worked example)
    assert '<section id="cost">' in html and "Pareto front (v2)" in html
    assert "Answer tokens of 0" not in html
    rows = project.shelf_rows()
    assert [r.cost.mean_tokens for r in rows] == [13.0, 13.0]
    assert rows[0].cost.mean_seconds == pytest.approx(0.25) and rows[0].cost.items == 6
    v3 = Wording("Desk?", "after")  # scored labels: no answer tokens, 5 prompt tokens
    project.store.add_wording(v3.text, v3.placement, decision="kept")
    add_run(project, v3, "tuning", pattern(1, 6), prompt_tokens=5, completion_tokens=0)
    html = report_html(project)
    # v3 is the cheapest (5 < 13 tokens), so it joins the front below v2 (worked example)
    assert "Pareto front (v2, v3)" in html and "Answer tokens of 0" in html
    assert "Seconds depend on the machine" in html and "with 6 tuning items" in html
    table = html[html.index('<section id="cost">'):html.index("<svg", html.index(
        '<section id="cost">'))]
    assert table.index("<td>v3</td>") < table.index("<td>v1</td>")  # cheapest first
    project.close()


def test_grade_json_gains_cost_means_and_totals(project, capsys):
    result = project.grade(FakeEngine(lambda r: "refund"), Wording("Desk?", "before"),
                           limit=3).value
    _print_grade(project, result, argparse.Namespace(json=True, split="tuning"))
    cost = json.loads(capsys.readouterr().out)["cost"]
    assert set(cost) >= {"mean_prompt_tokens", "mean_answer_tokens", "mean_seconds",
                         "total_prompt_tokens", "total_answer_tokens", "total_seconds",
                         "wall_seconds"}
    marks = result.outcome.marks
    assert cost["total_prompt_tokens"] == sum(m.prompt_tokens for m in marks)
    assert cost["mean_answer_tokens"] == pytest.approx(
        sum(m.completion_tokens for m in marks) / 3, abs=0.01)
    assert cost["wall_seconds"] is not None
    _print_grade(project, result, argparse.Namespace(json=False, split="tuning"))
    assert f"cost: {project.run_cost(result.outcome.run_id).text()}" in capsys.readouterr().out
