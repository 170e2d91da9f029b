"""Grade runs: streaming marks, the completion cache, cancel, item errors."""
from __future__ import annotations

import sqlite3
import threading

import pytest

from honebench.core.checks import CheckSpec
from honebench.core.engines.base import Params
from honebench.core.grading import Grader, cache_key, item_seed
from honebench.core.project import Project
from honebench.core.wording import Wording
from tests.fakes import FakeEngine

ROUTING = "passenger_desk_routing.csv"


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = Project(tmp_path / "task.hone")
    proj.import_set(sample_dir / ROUTING)
    yield proj
    proj.close()


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
