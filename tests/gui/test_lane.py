"""All model work goes through one lane, on the real bundled model: suggestions, an export
and a compare started at once all finish, one after the other on the model, with no crash;
the export never waits for the model; closing the window mid-run cancels and joins first."""
from __future__ import annotations

import pytest

from honebench.core.project import Project
from honebench.core.wording import Wording
from honebench.gui.app import compose

from ..core.suggest_fixtures import small_project

pytestmark = pytest.mark.model
MODEL_WAIT = 600_000
OTHER = "Name the department for this passenger message, one word only."


def open_app(qtbot, runner, settings, tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    v1 = project.keep(project.draft()).value.id
    v2 = project.keep(Wording(OTHER, "before")).value.id
    path = project.path
    project.close()
    app = compose(runner, settings, quiet=True)
    qtbot.addWidget(app.window)
    app.window.show()
    with qtbot.waitSignal(app.session.opened, timeout=MODEL_WAIT):
        app.session.open_project(path)
    qtbot.waitUntil(lambda: app.engine.handle is not None, timeout=MODEL_WAIT)
    app.engine.max_tokens.setValue(8)
    return app, path, v1, v2


def test_suggest_export_and_compare_at_once(qtbot, runner, settings, tmp_path, sample_dir):
    app, path, v1, v2 = open_app(qtbot, runner, settings, tmp_path, sample_dir)
    order = []
    app.suggest.finished.connect(lambda _o: order.append("suggest"))
    app.exports.exported.connect(lambda _p: order.append("export"))
    app.compare.compared.connect(lambda _v: order.append("compare"))
    app.suggest.strategy.setCurrentIndex(app.suggest.strategy.findData("rephrase"))
    app.suggest.count.setValue(2)

    suggest_job = app.suggest.start()
    export_job = app.exports.export_report(str(tmp_path / "report.html"))
    compare_job = app.compare.compare(v1, v2, "tuning")
    assert suggest_job is not None and export_job is not None and compare_job is not None
    assert not export_job.uses_model  # the export is not queued behind the model
    assert compare_job.state == "waiting"  # the suggestions hold the model
    assert "waiting: compare" in app.window.lane_label.text()

    qtbot.waitUntil(lambda: len(order) == 3 or bool(app.window.problems), timeout=MODEL_WAIT)
    assert app.window.problems == []
    assert order.index("export") < order.index("suggest")  # it never waited for the model
    assert order.index("suggest") < order.index("compare")  # one model user at a time
    assert runner.wait_idle(60_000)
    assert (tmp_path / "report.html").stat().st_size > 0
    check = Project(path)
    assert check.store.runs()  # compare graded both versions on the tuning items
    check.close()
    app.window.close()
    assert runner.active() == []


def test_closing_while_the_model_is_busy_cancels_and_joins(qtbot, runner, settings, tmp_path,
                                                           sample_dir):
    app, path, v1, v2 = open_app(qtbot, runner, settings, tmp_path, sample_dir)
    app.suggest.start()
    compare_job = app.compare.compare(v1, v2, "tuning")
    qtbot.waitUntil(lambda: app.suggest.stage.text() != "Starting…", timeout=MODEL_WAIT)
    app.window.close()  # cancels the running and the waiting job, waits, closes the engine
    assert runner.active() == []
    assert compare_job.state == "cancelled"
    assert app.engine.handle is None
    check = Project(path)
    assert all(run.status != "running" for run in check.store.runs())  # each run was closed
    check.close()
