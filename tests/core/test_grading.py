"""Grade runs: streaming marks, the completion cache, cancel, item errors."""
from __future__ import annotations

import math
import sqlite3
import threading

import pytest

from honebench.core.checks import CheckSpec
from honebench.core.engines.base import Params, Result
from honebench.core.grading import Grader, cache_key, item_seed
from honebench.core.wording import Wording
from tests.fakes import FakeEngine


def _grade(project, engine, **kw):
    set_id, qset = project.current_set()
    kw.setdefault("wording", project.draft())
    kw.setdefault("check", project.check())
    return Grader(project.store, engine).grade(set_id=set_id, qset=qset, **kw)


def test_marks_are_committed_as_they_arrive(project):
    seen = []

    def peek(mark, progress):
        # a second connection sees every mark as soon as the callback runs
        with sqlite3.connect(project.path) as other:
            seen.append(other.execute("SELECT COUNT(*) FROM marks").fetchone()[0])

    outcome = _grade(project, FakeEngine(), on_mark=peek)
    assert seen == list(range(1, len(outcome.marks) + 1))
    assert project.store.run(outcome.run_id).status == "finished"


def test_regrade_hits_cache_and_costs_no_model_calls(project):
    engine = FakeEngine(lambda r: "lost_property")
    first = _grade(project, engine)
    calls = engine.calls
    second = _grade(project, engine)
    assert engine.calls == calls and second.model_calls == 0
    assert {m.item_id: m.output for m in first.marks} == {m.item_id: m.output for m in second.marks}
    assert all(m.cached for m in second.marks)


def test_changed_settings_miss_the_cache(project):
    engine = FakeEngine()
    _grade(project, engine)
    calls = engine.calls
    _grade(project, engine, params=Params(max_tokens=9))
    assert engine.calls == 2 * calls


def test_cancel_keeps_finished_marks(project):
    cancel = threading.Event()
    engine = FakeEngine(on_call=lambda n: n == 5 and cancel.set())
    outcome = _grade(project, engine, cancel=cancel)
    assert outcome.status == "cancelled"
    assert len(outcome.marks) == 5
    assert len(project.store.marks(outcome.run_id)) == 5
    assert project.store.run(outcome.run_id).status == "cancelled"


def test_an_item_error_becomes_an_error_mark_and_the_run_goes_on(project):
    def answer(req):
        return RuntimeError("boom") if req.key.endswith("3") else "refund"

    outcome = _grade(project, FakeEngine(answer))
    errors = [m for m in outcome.marks if m.error]
    assert errors and all(not m.passed and m.why.startswith("error:") for m in errors)
    assert len(outcome.marks) == len(project.current_set()[1].tuning())


def test_progress_counts_and_eta(project):
    progress = []
    _grade(project, FakeEngine(), on_mark=lambda m, p: progress.append(p))
    assert [p.done for p in progress] == list(range(1, len(progress) + 1))
    assert progress[-1].done == progress[-1].total and progress[-1].eta == 0.0


def test_held_out_and_all_splits(project):
    _, qset = project.current_set()
    held = _grade(project, FakeEngine(), split="held_out")
    assert {m.item_id for m in held.marks} == {it.id for it in qset.held_out()}
    everything = _grade(project, FakeEngine(), split="all")
    assert len(everything.marks) == len(qset.items)


def test_item_seed_is_stable_and_spreads():
    assert item_seed(3, "a") == item_seed(3, "a")
    assert len({item_seed(3, str(i)) for i in range(100)}) == 100


def test_cache_key_depends_on_every_part():
    base = cache_key("fp", Params(), "prompt")
    assert base != cache_key("fp2", Params(), "prompt")
    assert base != cache_key("fp", Params(temperature=0.5), "prompt")
    assert base != cache_key("fp", Params(), "prompt ")


@pytest.mark.model
def test_real_model_grade_run_end_to_end(project, local_engine):
    """Over 20 sample items with the bundled model: marks, cache hit, same marks."""
    _, qset = project.current_set()
    items = qset.tuning()[:20]
    params = Params(max_tokens=16)
    first = _grade(project, local_engine, items=items, params=params)
    assert len(first.marks) == 20 and first.model_calls == 20
    assert all(m.why and "\n" not in m.why for m in first.marks)
    assert all(m.prompt.startswith("<|im_start|>") for m in first.marks)
    again = _grade(project, local_engine, items=items, params=params)
    assert again.model_calls == 0
    # marks arrive in the order items finish; compare item by item
    assert {m.item_id: (m.output, m.passed) for m in again.marks} == {
        m.item_id: (m.output, m.passed) for m in first.marks}


@pytest.mark.model
def test_real_model_cancel_mid_run_keeps_finished_marks(project, local_engine):
    cancel = threading.Event()
    seen = []

    def stop_after_three(mark, progress):
        seen.append(mark)
        if len(seen) == 3:
            cancel.set()

    outcome = _grade(project, local_engine, params=Params(max_tokens=40),
                     wording=Wording("Describe this message at length.", "after"),
                     check=CheckSpec(kind="contains"), on_mark=stop_after_three, cancel=cancel)
    assert outcome.status == "cancelled"
    assert 3 <= len(outcome.marks) <= 4
    assert [m.item_id for m in project.store.marks(outcome.run_id)] == [m.item_id for m in outcome.marks]


class ScoringFake(FakeEngine):
    """A fake that can score labels: "timetable" most likely, then "refund"."""

    def __init__(self):
        super().__init__(lambda r: "refund")
        self.scored = 0

    def score_labels(self, requests):
        for req in requests:
            self.scored += 1
            shares = [0.61 if lab == "timetable" else 0.22 if lab == "refund" else 0.0
                      for lab in req.labels]
            rest = (1 - sum(shares)) / max(1, shares.count(0.0))
            shares = tuple(s or rest for s in shares)
            yield Result(key=req.key, text="timetable", label_shares=shares,
                         label_logprobs=tuple(math.log(s) for s in shares), seconds=0.001)


def test_score_mode_asks_for_label_scores_and_records_confidence(project):
    engine = ScoringFake()
    raw = Params(calibrate=False)  # the fake's shares as they are (calibration: test_calibration)
    outcome = _grade(project, engine, params=raw)
    assert engine.scored == len(outcome.marks) and engine.calls == 0
    mark = outcome.marks[0]
    assert mark.extracted == "timetable" and mark.confidence == pytest.approx(0.61)
    assert (mark.runner_up, mark.runner_up_share) == ("refund", pytest.approx(0.22))
    assert "label scoring: timetable 0.61, next refund 0.22" in mark.why
    assert project.store.run(outcome.run_id).params["answer_mode"] == "score"
    assert project.store.marks(outcome.run_id)[0].confidence == pytest.approx(0.61)
    again = _grade(project, engine, params=raw)  # from the cache, shares included
    assert engine.scored == len(outcome.marks)
    assert again.marks[0].confidence == pytest.approx(0.61) and again.marks[0].cached


def test_generate_mode_and_other_checks_generate(project):
    engine = ScoringFake()
    outcome = _grade(project, engine, params=Params(answer_mode="generate"))
    assert engine.scored == 0 and engine.calls == len(outcome.marks)
    assert outcome.marks[0].confidence is None
    assert project.store.run(outcome.run_id).params["answer_mode"] == "generate"
    # an exact check in score mode generates, and is recorded as such
    other = _grade(project, engine, check=CheckSpec(kind="exact"))
    assert project.store.run(other.run_id).params["answer_mode"] == "generate"


def test_cache_key_depends_on_answer_mode_and_extra():
    assert cache_key("fp", Params(), "p") != cache_key("fp", Params(answer_mode="generate"), "p")
    assert cache_key("fp", Params(), "p", "labels:a") != cache_key("fp", Params(), "p", "labels:b")


@pytest.mark.model
def test_real_model_score_and_generate_modes_with_separate_cache(project, local_engine):
    _, qset = project.current_set()
    items = qset.tuning()[:8]
    scored = _grade(project, local_engine, items=items)
    assert scored.model_calls == 8
    assert all(m.extracted in project.check().labels and m.confidence is not None
               for m in scored.marks)
    assert all(0 < m.confidence <= 1 and m.runner_up for m in scored.marks)
    generated = _grade(project, local_engine, items=items, params=Params(answer_mode="generate"))
    assert generated.model_calls == 8  # not answered from the score-mode cache
    assert all(m.confidence is None and m.completion_tokens > 0 for m in generated.marks)
    assert all(m.completion_tokens <= Params().max_tokens for m in generated.marks)
    again = _grade(project, local_engine, items=items)
    assert again.model_calls == 0
    assert {m.item_id: (m.extracted, m.confidence) for m in again.marks} == {
        m.item_id: (m.extracted, m.confidence) for m in scored.marks}


def test_a_generated_fallback_says_so_in_the_why(project):
    class NoLogprobs(FakeEngine):
        def score_labels(self, requests):
            for req in requests:
                yield Result(key=req.key, text="refund", note="the endpoint gave no logprobs")

    outcome = _grade(project, NoLogprobs())
    assert all("the endpoint gave no logprobs" in m.why and m.confidence is None
               for m in outcome.marks)


def test_a_cached_regrade_reports_every_mark_and_saves_them_in_order(project):
    """Cached marks are saved together, yet each reaches on_mark with its progress, and
    the saved marks equal the ones returned, in item order."""
    engine = FakeEngine(lambda r: "timetable")
    first = _grade(project, engine)
    seen = []
    second = _grade(project, engine, on_mark=lambda m, p: seen.append((m.item_id, p.done, p.cached)))
    n = len(first.marks)
    assert [s[1] for s in seen] == list(range(1, n + 1)) == [s[2] for s in seen]
    assert [s[0] for s in seen] == [m.item_id for m in second.marks]
    assert project.store.marks(second.run_id) == list(second.marks)
    assert project.store.run(second.run_id).status == "finished"
