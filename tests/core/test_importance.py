"""Phrase importance: phrase spans, leave-one-out variants, deltas and paired p-values,
early stopping, the cache, the saved analysis. Logic only: the fake engine answers by a
rule over which phrases the prompt holds, so the expected marks are known in advance."""
from __future__ import annotations

import csv
import threading

import pytest
from scipy.stats import binomtest

from honebench.core.events import Finished, Marked, Started, progress_text
from honebench.core.importance import (CHUNK, ImportanceResult, leave_out, split_phrases)
from honebench.core.project import Project
from honebench.core.sets import ColumnMapping
from honebench.core.checks import CheckSpec
from honebench.core.suggest.phrase_edits import phrases
from honebench.core.wording import Wording
from tests.fakes import FakeEngine

TEXT = "Route the message.  Think about money;\nAnswer in one word."
P_ROUTE, P_MONEY, P_WORD = "Route the message.", "Think about money;", "Answer in one word."
LABELS = ("refund", "booking_change", "lost_property", "accessibility", "timetable")


@pytest.fixture
def routing(tmp_path, sample_dir):
    """80 routing items; returns (project, {message: (row number, expected)})."""
    with open(sample_dir / "passenger_desk_routing.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))[:80]
    path = tmp_path / "routing80.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=["id", "message", "department"])
        writer.writeheader()
        writer.writerows(rows)
    project = Project(tmp_path / "imp.hone")
    project.import_set(path, ColumnMapping(inputs=("message",), expected="department", id="id"))
    project.set_check(CheckSpec(kind="label", labels=LABELS))
    known = {r["message"]: (k, r["department"]) for k, r in enumerate(rows)}
    yield project, known
    project.close()


def passes(k: int, text: str) -> bool:
    """The fake model's rule: whether item k is answered right under a wording."""
    if P_ROUTE not in text:
        return False
    if P_MONEY not in text:
        return k % 3 != 0
    return k % 2 == 0


def fake(known) -> FakeEngine:
    def answer(request):
        content = "\n".join(m["content"] for m in request.messages)
        message = next(m for m in known if m in content)
        k, expected = known[message]
        return expected if passes(k, content) else "none of them"
    return FakeEngine(answer)


def test_phrase_spans_point_into_the_wording_and_match_the_phrase_edit_splitter():
    found = split_phrases(TEXT)
    assert [p.text for p in found] == phrases(TEXT) == [P_ROUTE, P_MONEY, P_WORD]
    assert all(TEXT[p.start:p.end] == p.text for p in found)
    padded = "  \n" + TEXT + " \n"
    assert [padded[p.start:p.end] for p in split_phrases(padded)] == phrases(padded)


def test_leaving_a_phrase_out_keeps_the_rest_byte_for_byte():
    first, middle, last = split_phrases(TEXT)
    assert leave_out(TEXT, first) == "Think about money;\nAnswer in one word."
    assert leave_out(TEXT, middle) == "Route the message.  Answer in one word."
    assert leave_out(TEXT, last) == "Route the message.  Think about money;"


def test_deltas_and_p_values_match_scipys_exact_binomial_test(routing):
    project, known = routing
    entry = project.keep(Wording(TEXT, "before")).value
    events = []
    done = project.importance(fake(known), entry.id, early_stop=False, on_event=events.append)
    result = done.value
    assert result.status == "finished" and done.changes.runs and not done.changes.shelf
    _, qset = project.current_set()
    tuning = [known[i.fields["message"]][0] for i in qset.tuning()]
    assert result.n_items == len(tuning) and result.base_passed == sum(k % 2 == 0 for k in tuning)
    for effect, phrase in zip(result.effects, (P_ROUTE, P_MONEY, P_WORD)):
        without = leave_out(TEXT, split_phrases(TEXT)[effect.index])
        with_marks = [passes(k, TEXT) for k in tuning]
        without_marks = [passes(k, without) for k in tuning]
        fixed = sum(not a and b for a, b in zip(with_marks, without_marks))
        broken = sum(a and not b for a, b in zip(with_marks, without_marks))
        assert effect.phrase == phrase and effect.n == len(tuning)
        assert (effect.fixed, effect.broken) == (fixed, broken)
        assert effect.delta == pytest.approx((fixed - broken) / len(tuning))
        # source: scipy.stats.binomtest, two-sided, on the discordant pairs (exact McNemar)
        expected_p = binomtest(fixed, fixed + broken, 0.5).pvalue if fixed + broken else 1.0
        assert effect.p_value == pytest.approx(expected_p, rel=1e-12)
        assert effect.low <= effect.delta <= effect.high
    route, money, word = result.effects
    assert route.measurable and route.delta < 0 and route.fixed == 0
    assert money.fixed > 0 and money.broken > 0
    assert not word.measurable and word.verdict() == "no measurable effect"
    assert (word.fixed, word.broken, word.p_value) == (0, 0, 1.0)
    # progress: one Started with the whole analysis' total, then one Marked per item
    marked = [e for e in events if isinstance(e, Marked)]
    assert isinstance(events[0], Started) and events[0].total == 4 * len(tuning)
    assert len(marked) == 4 * len(tuning) and marked[-1].progress.done == 4 * len(tuning)
    assert "left" not in progress_text(marked[-1].progress)
    assert isinstance(events[-1], Finished) and events[-1].status == "finished"


def test_a_phrase_that_clearly_matters_stops_early_and_the_rest_do_not(routing):
    project, known = routing
    entry = project.keep(Wording(TEXT, "before")).value
    events = []
    result = project.importance(fake(known), entry.id, on_event=events.append).value
    route, money, word = result.effects
    n = result.n_items
    assert n > CHUNK  # so there is a look before the last chunk
    assert route.stopped_early and route.n < n and route.p_value < 0.001
    assert not money.stopped_early and money.n == n
    assert not word.stopped_early and word.n == n and not word.measurable
    marked = [e for e in events if isinstance(e, Marked)]
    assert len(marked) == n + 2 * n + route.n  # the skipped items were never graded
    assert marked[-1].progress.done == marked[-1].progress.total


def test_a_second_analysis_comes_from_the_cache_and_is_saved_with_the_version(routing):
    project, known = routing
    entry = project.keep(Wording(TEXT, "before")).value
    engine = fake(known)
    first = project.importance(engine, entry.id, early_stop=False).value
    calls = engine.calls
    assert calls == first.model_calls > 0
    again = project.importance(engine, entry.id, early_stop=False).value
    assert engine.calls == calls and again.model_calls == 0
    assert again.effects == first.effects
    saved = project.saved_importance(entry.id)
    assert isinstance(saved, ImportanceResult) and saved.effects == again.effects
    assert [r.wording_id for r in project.saved_importances()] == [entry.id]
    # the side runs stay out of the shelf scores and the ordinary run list
    assert project.store.runs() == [] and project.shelf_rows()[0].tuning is None
    assert project.store.runs(purpose="importance")
    rows = again.json_rows()
    assert set(rows[0]) >= {"phrase", "delta", "interval", "fixed", "broken", "p_value"}


def test_a_cancelled_analysis_is_returned_but_not_saved(routing):
    project, known = routing
    entry = project.keep(Wording(TEXT, "before")).value
    cancel = threading.Event()
    engine = fake(known)
    engine.on_call = lambda n: cancel.set() if n == 5 else None
    result = project.importance(engine, entry.id, cancel=cancel).value
    assert result.status == "cancelled"
    assert project.saved_importance(entry.id) is None
    assert any("not saved" in line for line in result.lines())


def test_a_one_phrase_wording_is_refused(routing):
    project, known = routing
    entry = project.keep(Wording("Department: ", "answer")).value
    with pytest.raises(ValueError, match="at least two phrases"):
        project.importance(fake(known), entry.id)


def test_the_report_shows_each_analysed_version_with_n_intervals_and_cautions(routing):
    from honebench.core.report import report_html

    project, known = routing
    entry = project.keep(Wording(TEXT, "before")).value
    assert 'id="importance"' not in report_html(project)  # nothing analysed: no section
    result = project.importance(fake(known), entry.id, early_stop=False).value
    html = report_html(project)
    section = html.split('<section id="importance">', 1)[1].split("</section>", 1)[0]
    assert f"(n = {result.n_items})" in section and "95% interval" in section
    assert "can depend on the other phrases" in section and "noisy" in section
    route, _money, word = result.effects
    assert section.count("<span style=\"background:rgba(") >= 1 + 2  # legend has two
    assert 'style="text-decoration:underline dotted"' in section  # the no-effect phrase
    from honebench.core.importance import points
    assert f"<td>{points(route.low)} to {points(route.high)}</td>" in section
    assert word.verdict() in section


@pytest.mark.model
def test_the_bundled_model_end_to_end_with_label_scoring(tmp_path, sample_dir, local_engine):
    """The real grading path: label scoring with calibration, side runs, the cache."""
    from tests.core.suggest_fixtures import small_project

    project = small_project(tmp_path, sample_dir)
    try:
        text = ("This message is about a refund. Department (refund, booking_change, "
                "lost_property, accessibility or timetable): ")
        entry = project.keep(Wording(text, "answer")).value
        result = project.importance(local_engine, entry.id, early_stop=False).value
        assert result.status == "finished" and result.params["answer_mode"] == "score"
        assert [e.phrase for e in result.effects] == phrases(text)
        # the deltas are what the side runs' own marks say, item by item
        runs = project.store.runs(purpose="importance")
        marks = {r.wording_text: {m.item_id: m.passed for m in project.store.marks(r.id)}
                 for r in runs}
        base = marks[text]
        for phrase, effect in zip(split_phrases(text), result.effects):
            without = marks[leave_out(text, phrase)]
            fixed = sum(without[i] and not base[i] for i in base)
            broken = sum(base[i] and not without[i] for i in base)
            assert (effect.fixed, effect.broken) == (fixed, broken)
            # source: scipy.stats.binomtest on the discordant pairs (exact McNemar)
            expected = binomtest(fixed, fixed + broken, 0.5).pvalue if fixed + broken else 1.0
            assert effect.p_value == pytest.approx(expected, rel=1e-12)
        again = project.importance(local_engine, entry.id, early_stop=False).value
        assert again.model_calls == 0 and again.effects == result.effects
    finally:
        project.close()


def test_compare_offers_the_same_paired_interval(routing):
    project, known = routing
    engine = fake(known)
    first = project.keep(Wording(TEXT, "before")).value
    second = project.keep(Wording(leave_out(TEXT, split_phrases(TEXT)[1]), "before")).value
    comparison = project.compare(engine, first.id, second.id).value
    effect = project.importance(engine, first.id, early_stop=False).value.effects[1]
    assert comparison.difference_interval == (effect.low, effect.high)
    assert (len(comparison.fixed), len(comparison.broken)) == (effect.fixed, effect.broken)
    assert comparison.paired.p_value == effect.p_value
