"""Resuming a grade run that did not finish: the rest is graded, the done part comes from
the cache, and reports and summaries say the run was interrupted."""
from __future__ import annotations

import sqlite3
import threading

import pytest

from honebench.core.grading import Grader
from honebench.core.project import Project
from honebench.core.report import report_html
from honebench.core.resume import resume_run, run_items, unfinished_runs
from honebench.core.store import Store
from honebench.core.wording import Wording
from tests.fakes import FakeEngine


def _answer(req) -> str:
    """A deterministic answer that differs between items."""
    text = req.messages[-1]["content"]
    return "refund" if len(text) % 2 else "timetable"


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = Project(tmp_path / "task.hone")
    proj.import_set(sample_dir / "passenger_desk_routing.csv")
    yield proj
    proj.close()


def _grade(project, engine, **kw):
    set_id, qset = project.current_set()
    kw.setdefault("wording", Wording("Which desk?", "before"))
    return Grader(project.store, engine).grade(set_id=set_id, qset=qset,
                                               check=project.check(), **kw)


def _interrupt(project, after: int) -> int:
    """A run stopped after ``after`` model answers, then left "running" by a writer that
    is gone, as a killed process leaves it; the project is opened again."""
    cancel = threading.Event()
    engine = FakeEngine(_answer, on_call=lambda n: cancel.set() if n >= after else None)
    outcome = _grade(project, engine, cancel=cancel)
    assert outcome.status == "cancelled" and len(outcome.marks) == after
    with sqlite3.connect(project.path) as conn:  # as the killed process left it
        conn.execute("UPDATE runs SET status='running', params=json_remove(params, "
                     "'$.writer') WHERE id=?", (outcome.run_id,))
    project.store.close()
    project.store = Store(project.path)
    assert project.store.interrupted_on_open == [outcome.run_id]
    return outcome.run_id


def test_resume_grades_only_the_rest_and_matches_an_unbroken_run(tmp_path, sample_dir,
                                                                  project):
    run = _interrupt(project, after=7)
    engine = FakeEngine(_answer)
    outcome = resume_run(project.store, engine, run)
    tuning = project.current_set()[1].tuning()
    assert outcome.status == "finished" and len(outcome.marks) == len(tuning)
    assert engine.calls == outcome.model_calls == len(tuning) - 7
    assert sum(m.cached for m in outcome.marks) == 7
    assert project.store.run(run).status == "resumed"
    assert unfinished_runs(project.store) == []
    # the same as grading without a break, in a fresh project
    fresh = Project(tmp_path / "fresh.hone")
    fresh.import_set(sample_dir / "passenger_desk_routing.csv")
    whole = _grade(fresh, FakeEngine(_answer))
    assert ({m.item_id: (m.output, m.passed) for m in whole.marks}
            == {m.item_id: (m.output, m.passed) for m in outcome.marks})
    fresh.close()


def test_resume_keeps_a_limited_run_to_its_items(project):
    set_id, qset = project.current_set()
    first = list(qset.tuning()[:10])
    cancel = threading.Event()
    engine = FakeEngine(_answer, on_call=lambda n: cancel.set() if n >= 4 else None)
    stopped = _grade(project, engine, items=first, cancel=cancel)
    run = project.store.run(stopped.run_id)
    done = {m.item_id for m in project.store.marks(run.id)}
    assert [it.id for it in run_items(run, qset, done)] == [it.id for it in first]
    outcome = resume_run(project.store, FakeEngine(_answer), run.id)
    assert {m.item_id for m in outcome.marks} == {it.id for it in first}


def test_resume_refuses_a_finished_run_and_another_engine(project):
    finished = _grade(project, FakeEngine(_answer), wording=Wording("Route it.", "before"))
    with pytest.raises(ValueError, match="finished"):
        resume_run(project.store, FakeEngine(_answer), finished.run_id)
    run = _interrupt(project, after=3)

    class Other(FakeEngine):
        def fingerprint(self):
            return "another-engine"

    with pytest.raises(ValueError, match="another-engine"):
        resume_run(project.store, Other(_answer), run)
    assert project.store.run(run).status == "interrupted"  # untouched by the refusal


def test_summary_and_report_say_a_run_was_interrupted(project):
    run = _interrupt(project, after=5)
    lines = "\n".join(project.summary(run).lines())
    total = len(project.current_set()[1].tuning())
    assert "interrupted" in lines and f"5 of {total} items graded" in lines
    assert project.summary(run).as_dict()["status"] == "interrupted"
    html = report_html(project)
    assert "Interrupted grade runs" in html and f"run {run} (tuning items, 5 of {total}" in html
    assert f"honebench resume {project.path.name}" in html


def test_summary_explains_item_errors(project):
    def flaky(req):
        return RuntimeError("no answer from http://127.0.0.1:9/v1 within 30 s (timed out)") \
            if len(req.messages[-1]["content"]) % 3 == 0 else "refund"

    outcome = _grade(project, FakeEngine(flaky))
    errors = sum(m.error is not None for m in outcome.marks)
    assert 1 < errors < len(outcome.marks)
    text = "\n".join(project.summary(outcome.run_id).lines())
    assert f"{errors} items got no answer" in text and "within 30 s" in text
