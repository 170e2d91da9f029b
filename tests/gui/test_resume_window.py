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


def test_with_several_interrupted_runs_the_user_picks_one(qtbot, runner, settings, tmp_path,
                                                          sample_dir):
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication

    from honebench.gui.grading.resume_picker import (ResumePicker, pick_interrupted_run,
                                                     started_text)

    from .test_wiring import POOR

    project = small_project(tmp_path, sample_dir)
    older = _interrupted_run(project, after=4)
    with sqlite3.connect(project.path) as conn:  # a second wording, stopped after 2
        conn.execute("UPDATE runs SET status='cancelled' WHERE id=?", (older,))
    cancel = threading.Event()
    engine = FakeEngine(answer_key(project), on_call=lambda n: cancel.set() if n >= 2 else None)
    set_id, qset = project.current_set()
    newer = Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, check=project.check(), wording=Wording(POOR, "before"),
        cancel=cancel).run_id
    with sqlite3.connect(project.path) as conn:
        conn.execute("UPDATE runs SET status='interrupted' WHERE id IN (?, ?)", (older, newer))
    interrupted = project.interrupted_runs()
    n_tuning = len(qset.tuning())
    path = project.path
    project.close()
    assert [u.run.id for u in interrupted] == [older, newer]

    # one run: no question asked; several: the table says which is which
    assert pick_interrupted_run(interrupted[:1]) == older
    picker = ResumePicker(interrupted)
    qtbot.addWidget(picker)
    cells = [[picker.table.item(r, c).text() for c in range(5)] for r in range(2)]
    assert cells[0][:4] == [str(older), GOOD, "tuning items", f"4/{n_tuning}"]
    assert cells[1][:4] == [str(newer), POOR, "tuning items", f"2/{n_tuning}"]
    assert cells[1][4] == started_text(interrupted[1].run.started_at) and cells[1][4][:2] == "20"
    assert picker.run_id() == newer  # the latest is offered first

    app, engine, _ = composed_on(qtbot, runner, settings, path, FakeEngine(answer_key(
        Project(path))))
    # cancelling the choice resumes nothing
    QTimer.singleShot(0, lambda: QApplication.activeModalWidget().reject())
    assert app.grading.resume() is None and not app.grading.running
    assert engine.calls == 0
    shown = []

    def choose_the_older_run():
        dialog = QApplication.activeModalWidget()
        shown.append(dialog.table.rowCount())
        dialog.table.selectRow(0)
        dialog.accept()

    QTimer.singleShot(0, choose_the_older_run)
    with qtbot.waitSignal(app.grading.running_changed, timeout=WAIT,
                          check_params_cb=lambda running: not running):
        app.resume_action.trigger()
    assert shown == [2]
    check = Project(path)
    assert check.store.run(older).status == "resumed"
    assert [u.run.id for u in check.interrupted_runs()] == [newer]  # the other one waits
    check.close()
    assert engine.calls == n_tuning - 4
    assert app.resume_action.isEnabled()

