"""The background-job mechanism: outcomes arrive on the GUI thread, errors as messages."""
from __future__ import annotations

import threading
import time

import pytest

from honebench.core.sets import SetError, Problem
from honebench.gui.jobs import JobCancelled, JobRunner, error_message


@pytest.fixture
def runner(qtbot):
    r = JobRunner()
    yield r
    r.cancel_all()
    assert r.wait_idle(10_000)


def test_done_arrives_on_the_gui_thread_with_the_result(qtbot, runner):
    seen = {}
    gui_thread = threading.current_thread()

    def work(ctx):
        seen["worker"] = threading.current_thread()
        return 6 * 7

    def done(value):
        seen["value"], seen["callback"] = value, threading.current_thread()

    job = runner.submit(work, done=done, name="answer")
    with qtbot.waitSignal(job.done, timeout=5000) as blocker:
        pass
    assert blocker.args == [42]
    assert seen["value"] == 42
    assert seen["worker"] is not gui_thread
    assert seen["callback"] is gui_thread
    assert job.state == "done" and job.result == 42
    assert runner.active() == []


def test_an_exception_gives_the_failed_callback_its_message(qtbot, runner):
    messages = []

    def work(ctx):
        raise SetError("questions.csv", [Problem("row 3: column 'answer' is empty", 3, "answer")])

    job = runner.submit(work, failed=messages.append, name="import")
    with qtbot.waitSignal(job.failed, timeout=5000):
        pass
    assert len(messages) == 1
    assert "questions.csv" in messages[0] and "row 3" in messages[0]
    assert job.state == "failed" and job.error == messages[0]


def test_a_bug_without_a_failed_callback_becomes_an_unhandled_error(qtbot, runner):
    def work(ctx):
        return {}["missing"] + 1  # KeyError: a bug, not a user mistake

    with qtbot.waitSignal(runner.unhandled_error, timeout=5000) as blocker:
        runner.submit(work, name="buggy")
    name, message = blocker.args
    assert name == "buggy"
    assert "KeyError" in message and "bug" in message


def test_progress_reports_arrive_in_order_before_done(qtbot, runner):
    events = []
    job = runner.submit(lambda ctx: [ctx.report(n) for n in range(5)] and "end",
                        progress=lambda p: events.append(("progress", p)),
                        done=lambda v: events.append(("done", v)))
    with qtbot.waitSignal(job.finished, timeout=5000):
        pass
    assert events == [("progress", n) for n in range(5)] + [("done", "end")]


def test_cancel_reaches_the_running_job(qtbot, runner):
    started = threading.Event()

    def work(ctx):
        started.set()
        while not ctx.cancel_event.wait(0.01):
            pass
        raise JobCancelled()

    cancelled = []
    job = runner.submit(work, cancelled=lambda: cancelled.append(True))
    assert started.wait(5)
    assert job in runner.active()
    with qtbot.waitSignal(job.cancelled, timeout=5000):
        job.cancel()
    assert cancelled == [True]
    assert job.state == "cancelled"
    assert runner.active() == []


def test_a_cancelled_job_may_return_what_it_finished(qtbot, runner):
    def work(ctx):
        done = []
        for n in range(1000):
            if ctx.cancelled:
                break
            done.append(n)
            ctx.report(n)
            time.sleep(0.005)
        return done

    job = runner.submit(work)
    qtbot.waitSignal(job.progress, timeout=5000).wait()
    with qtbot.waitSignal(job.done, timeout=5000) as blocker:
        job.cancel()
    finished = blocker.args[0]
    assert 0 < len(finished) < 1000


def test_a_job_cancelled_before_it_starts_never_runs(qtbot):
    runner = JobRunner(max_threads=1)
    gate = threading.Event()
    ran = []
    first = runner.submit(lambda ctx: gate.wait(5))
    second = runner.submit(lambda ctx: ran.append(True))
    second.cancel()
    gate.set()
    with qtbot.waitSignal(second.cancelled, timeout=5000):
        pass
    assert runner.wait_idle(5000)
    assert first.state == "done" and ran == []


def test_wait_idle_times_out_while_a_job_runs(qtbot, runner):
    gate = threading.Event()
    runner.submit(lambda ctx: gate.wait(10))
    assert runner.wait_idle(100) is False
    gate.set()
    assert runner.wait_idle(5000) is True


def test_a_failing_gui_callback_is_reported_not_raised(qtbot, runner):
    def broken(_value):
        raise RuntimeError("callback broke")

    with qtbot.waitSignal(runner.unhandled_error, timeout=5000) as blocker:
        runner.submit(lambda ctx: 1, done=broken, name="refresh")
    assert blocker.args[0] == "refresh"
    assert "callback broke" in blocker.args[1]


def test_error_message_keeps_user_errors_plain():
    assert error_message(ValueError("max tokens must be at least 1")) == \
        "max tokens must be at least 1"
    assert "ZeroDivisionError" in error_message(ZeroDivisionError("division by zero"))


# -- operations and the model lane ----------------------------------------------------------
def test_an_operation_emits_what_changed_then_hands_over_its_value(qtbot, runner):
    from honebench.core.changes import Changes, Done

    seen = []
    runner.project_changed.connect(lambda changes: seen.append(("changed", changes)))
    job = runner.submit(lambda ctx: Done("v3", Changes(shelf=True)),
                        done=lambda value: seen.append(("done", value)))
    qtbot.waitSignal(job.finished, timeout=5000).wait()
    assert seen == [("changed", Changes(shelf=True)), ("done", "v3")]
    # a job may also report a change committed mid-run (not given to its progress callback)
    progress = []
    job = runner.submit(lambda ctx: ctx.report(Changes(runs=True)) or 1, progress=progress.append)
    qtbot.waitSignal(job.finished, timeout=5000).wait()
    assert seen[-1] == ("changed", Changes(runs=True)) and progress == []


def test_model_jobs_run_one_at_a_time_and_a_waiting_one_says_so(qtbot, runner):
    from honebench.core.events import Stage

    release = threading.Event()
    inside, most = [0], [0]
    lock = threading.Lock()

    def model_work(ctx):
        with lock:
            inside[0] += 1
            most[0] = max(most[0], inside[0])
        release.wait(10)
        with lock:
            inside[0] -= 1
        return "answered"

    first = runner.submit(model_work, name="grading", uses_model=True)
    told = []
    second = runner.submit(model_work, name="suggestions", uses_model=True,
                           progress=told.append)
    other = runner.submit(lambda ctx: "written", name="export")  # needs no model
    qtbot.waitSignal(other.finished, timeout=5000).wait()
    assert other.state == "done"  # ran while the model was busy
    assert second.state == "waiting" and runner.waiting() == [second]
    assert isinstance(told[0], Stage) and "waiting for the model: grading" in told[0].text
    release.set()
    qtbot.waitSignal(second.finished, timeout=10_000).wait()
    assert first.state == second.state == "done"
    assert most[0] == 1  # never two inside the model at once


def test_a_waiting_model_job_cancelled_is_delivered_at_once(qtbot, runner):
    release = threading.Event()
    first = runner.submit(lambda ctx: release.wait(10), name="grading", uses_model=True)
    ran = []
    second = runner.submit(lambda ctx: ran.append(1), name="suggestions", uses_model=True)
    lanes = []
    runner.lane_changed.connect(lanes.append)
    with qtbot.waitSignal(second.cancelled, timeout=5000):
        second.cancel()
    assert first.state in ("queued", "running")  # still holding the model
    assert lanes[-1] == "model: grading"
    release.set()
    qtbot.waitSignal(first.finished, timeout=10_000).wait()
    assert ran == []  # the cancelled job never ran
    assert runner.model_job() is None
