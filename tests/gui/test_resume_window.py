"""A grade run left interrupted (its process killed) is shown when the project opens in
the window, and Run › Resume interrupted run finishes it as a new run on the model lane."""
from __future__ import annotations

import sqlite3
import threading

from honebench.core.grading import Grader
from honebench.core.project import Project
from honebench.core.wording import Wording

from ..core.suggest_fixtures import small_project
from ..fakes import FakeEngine
from .test_wiring import GOOD, WAIT, answer_key, composed_on


def _interrupted_run(project: Project, after: int) -> int:
    """Grade GOOD, stop after ``after`` answers, and leave the run 'running' with no
    writer, as a killed process leaves it (the same fault tests/core/test_resume.py makes)."""
    cancel = threading.Event()
    engine = FakeEngine(answer_key(project),
                        on_call=lambda n: cancel.set() if n >= after else None)
    set_id, qset = project.current_set()
    outcome = Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, check=project.check(), wording=Wording(GOOD, "before"),
        cancel=cancel)
    assert outcome.status == "cancelled" and len(outcome.marks) == after
    with sqlite3.connect(project.path) as conn:
        conn.execute("UPDATE runs SET status='running', params=json_remove(params, "
                     "'$.writer') WHERE id=?", (outcome.run_id,))
    return outcome.run_id


def test_an_interrupted_run_is_shown_and_resumed(qtbot, runner, settings, tmp_path,
                                                 sample_dir):
    project = small_project(tmp_path, sample_dir)
    engine = FakeEngine(answer_key(project))
    run_id = _interrupted_run(project, after=4)
    n_tuning = len(project.current_set()[1].tuning())
    path = project.path
    project.close()

    app, engine, _ = composed_on(qtbot, runner, settings, path, engine)
    note = (f"Run {run_id} was interrupted after 4 of {n_tuning} items — "
            "Run › Resume interrupted run")
    assert app.window.statusBar().currentMessage() == note
    assert note in app.sheet.summary.detail_label.text() + app.sheet.summary.score_label.text()
    assert app.resume_action.isEnabled()

    with qtbot.waitSignal(app.grading.running_changed, timeout=WAIT,
                          check_params_cb=lambda running: not running):
        app.resume_action.trigger()

    # the project file itself: the old run is 'resumed', a new run finished every item,
    # and only the items the old run had not graded were asked of the model
    check = Project(path)
    runs = check.store.runs()
    assert check.store.run(run_id).status == "resumed"
    new = runs[-1]
    assert new.id != run_id and new.status == "finished"
    view = check.run_view(new.id)
    assert len(view.marks) == n_tuning and sum(m.cached for m in view.marks) == 4
    assert check.interrupted_runs() == []
    check.close()
    assert engine.calls == n_tuning - 4

    # the window: the grade sheet shows the new run, and nothing is left to resume
    assert app.sheet.model.rowCount() == n_tuning
    assert app.sheet.caption.text().startswith(f"Run {new.id} ·")
    assert not app.resume_action.isEnabled()
    assert "interrupted" not in app.sheet.summary.detail_label.text()
