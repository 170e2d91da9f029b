"""The composed window's wiring with the fake engine (no model): grade -> sheet -> shelf ->
compare -> confirm -> export, composed exactly as run_app composes it. What is checked is the
flow between features; the numbers are checked against the project file itself."""
from __future__ import annotations

import ast
from pathlib import Path

from PySide6.QtCore import Qt

from honebench.core.engines.base import Params
from honebench.core.project import Project, ProjectSettings
from honebench.core.wording import Wording
from honebench.gui.app import compose

from ..core.suggest_fixtures import small_project
from ..fakes import FakeEngine

WAIT = 30_000
GUI = Path(__file__).resolve().parents[2] / "desktop" / "honebench" / "gui"
GOOD = "Route the message to its department. Reply with the department only."
POOR = "Reply with the single word refund."


def answer_key(project: Project):
    """The fake engine answers each item right under GOOD and 'refund' under POOR."""
    _, qset = project.current_set()
    key = {it.fields["message"]: it.expected for it in qset.items}

    def answer(request) -> str:
        asked = " ".join(m["content"] for m in request.messages)
        if POOR in asked:
            return "refund"
        return next((exp for msg, exp in key.items() if msg in asked), "no idea")
    return answer


def engine_for(project: Project) -> FakeEngine:
    return FakeEngine(answer_key(project))


def composed(qtbot, runner, settings, tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    engine = engine_for(project)
    path = project.path
    project.close()
    return composed_on(qtbot, runner, settings, path, engine)


def composed_on(qtbot, runner, settings, path, engine):
    app = compose(runner, settings, engine_factory=lambda _source: engine, quiet=True)
    qtbot.addWidget(app.window)
    app.window.show()
    qtbot.waitUntil(lambda: app.engine.handle is not None, timeout=WAIT)
    with qtbot.waitSignal(app.session.opened, timeout=WAIT):
        app.session.open_project(path)
    return app, engine, path


def grade_and_keep(qtbot, app, text: str):
    app.editor.set_wording(Wording(text, "before"))
    with qtbot.waitSignal(app.grading.finished, timeout=WAIT) as graded:
        app.grade_action.trigger()
    with qtbot.waitSignal(app.shelf.kept, timeout=WAIT) as kept:
        app.keep_action.trigger()
    entry = kept.args[0]
    # the kept entry shows once the shelf has re-read its rows, selected
    qtbot.waitUntil(lambda: app.shelf_model.row_for(entry.id) is not None, timeout=WAIT)
    qtbot.waitUntil(lambda: app.shelf_panel.selected_id() == entry.id, timeout=WAIT)
    return graded.args[0]


def test_grade_keep_compare_confirm_export(qtbot, runner, settings, tmp_path, sample_dir):
    app, engine, path = composed(qtbot, runner, settings, tmp_path, sample_dir)
    # the preview offers tuning items only (held-out items are kept for confirming)
    assert app.preview.item_spin.maximum() == 11
    height = app.window.height()

    good = grade_and_keep(qtbot, app, GOOD)
    assert good.outcome.status == "finished"
    assert app.sheet.model.rowCount() == 11  # every tuning item, none held out
    assert app.sheet.summary.score_label.text().startswith("Score 100")
    assert "n=11" in app.sheet.summary.caution.text()  # the one line of caution
    assert [r.entry.label for r in app.shelf_model.rows] == ["v1"]
    assert app.shelf_model.rows[0].tuning.total == 11
    assert app.window.height() == height  # keeping does not grow the window
    poor = grade_and_keep(qtbot, app, POOR)
    assert [r.entry.label for r in app.shelf_model.rows] == ["v2", "v1"]
    # the suggestions panel reads the same shelf rows: its blend chooser lists both
    assert app.suggest.other.count() == 2

    check = Project(path)
    expected = {m.item_id: m.passed for m in check.store.marks(good.run.id)}
    got = {m.item_id: m.passed for m in check.store.marks(poor.run.id)}
    _, qset = check.current_set()
    held_out = len(qset.held_out())
    check.close()
    broken = sorted(i for i in expected if expected[i] and not got[i])
    v1, v2 = (app.shelf_model.rows[1].entry.id, app.shelf_model.rows[0].entry.id)
    calls = engine.calls
    with qtbot.waitSignal(app.compare.compared, timeout=WAIT) as compared:
        app.compare.compare(v1, v2, "tuning")
    view = compared.args[0]
    assert engine.calls == calls  # both were graded: compare asks the model nothing
    assert sorted(p.item.id for p in view.pairs("broken")) == broken
    view.close()

    app.shelf_panel.select(v2)
    assert app.confirm_action.isEnabled()
    with qtbot.waitSignal(app.compare.confirmed, timeout=WAIT):
        app.confirm_action.trigger()
    qtbot.waitUntil(lambda: app.shelf_model.row_for(v2).held_out is not None, timeout=WAIT)
    row = app.shelf_model.row_for(v2)
    assert row.held_out is not None and row.held_out.total == held_out
    assert engine.calls == calls + held_out

    out = tmp_path / "report.html"
    with qtbot.waitSignal(app.exports.exported, timeout=WAIT):
        app.exports.export_report(str(out))
    assert out.read_text(encoding="utf-8").startswith("<!")
    assert engine.calls == calls + held_out  # exporting never uses the model
    app.window.close()


def test_a_second_model_job_waits_in_the_lane(qtbot, runner, settings, tmp_path, sample_dir):
    app, engine, _path = composed(qtbot, runner, settings, tmp_path, sample_dir)
    app.editor.set_wording(Wording(GOOD, "before"))
    app.grade()
    app.suggest.strategy.setCurrentIndex(app.suggest.strategy.findData("phrase-edits"))
    job = app.suggest.start()
    # the grade holds the model: the suggestions wait, and say so
    assert job.state == "waiting"
    assert runner.model_job().name == "grading"
    assert "waiting: suggestions" in app.window.lane_label.text()
    with qtbot.waitSignal(app.suggest.finished, timeout=WAIT):
        pass
    assert app.grading.last is not None and app.grading.last.outcome.status == "finished"
    qtbot.waitUntil(lambda: app.window.lane_label.text() == "", timeout=WAIT)
    app.window.close()


def test_no_gui_module_touches_another_objects_private_parts():
    """``x._name`` is allowed only on ``self``/``cls`` (and Qt's own ``_`` names are none)."""
    offences = []
    for path in GUI.rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Attribute) and node.attr.startswith("_") and \
                    not node.attr.startswith("__"):
                owner = node.value
                if not (isinstance(owner, ast.Name) and owner.id in ("self", "cls")):
                    offences.append(f"{path.name}:{node.lineno} {ast.unparse(node)}")
    assert offences == []


def test_no_gui_module_reaches_through_the_window():
    """No ``window.a.b`` chains and no menus found by their text."""
    offences = []
    for path in GUI.rglob("*.py"):
        text = path.read_text(encoding="utf-8")
        tree = ast.parse(text)
        for node in ast.walk(tree):
            if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Attribute) and \
                    isinstance(node.value.value, ast.Name) and node.value.value.id == "window":
                offences.append(f"{path.name}:{node.lineno} {ast.unparse(node)}")
        if "menuBar().actions()" in text:
            offences.append(f"{path.name}: finds a menu by its text")
    assert offences == []


def test_switching_the_engine_mid_run_cancels_the_run_first(qtbot, runner, settings, tmp_path,
                                                            sample_dir):
    import time

    app, engine, _path = composed(qtbot, runner, settings, tmp_path, sample_dir)
    engine.on_call = lambda n: time.sleep(0.05)  # slow enough to switch mid-run
    first = app.engine.handle
    switched = []
    app.engine.switching.connect(switched.append)
    app.editor.set_wording(Wording(GOOD, "before"))
    with qtbot.waitSignal(app.grading.finished, timeout=WAIT) as graded:
        app.grade()
        qtbot.waitUntil(lambda: app.sheet.model.rowCount() >= 1, timeout=WAIT)
        app.engine.load(str(tmp_path / "other.gguf"))  # the fake factory takes any source
    assert graded.args[0].outcome.status == "cancelled"  # stopped, finished marks kept
    qtbot.waitUntil(lambda: app.engine.handle is not first, timeout=WAIT)
    assert switched == ["grading"]  # the user is told what was cancelled
    assert app.window.problems == []
    app.window.close()


def test_the_engine_bar_shows_and_saves_the_projects_settings(qtbot, runner, settings,
                                                             tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    project.set_settings(ProjectSettings(max_tokens=40, temperature=0.3))
    engine, path = engine_for(project), project.path
    project.close()
    app, engine, path = composed_on(qtbot, runner, settings, path, engine)
    bar = app.engine
    assert (bar.max_tokens.value(), bar.temperature.value()) == (40, 0.3)
    # a label check with labels: the answer-mode switch is offered and shows the setting
    assert bar.answers.isEnabled() and bar.answers.currentData() == "score"

    changed = []
    runner.project_changed.connect(changed.append)
    bar.max_tokens.setValue(Params().max_tokens)
    bar.temperature.setValue(Params().temperature)
    bar.answers.setCurrentIndex(bar.answers.findData("generate"))
    bar.answers.activated.emit(bar.answers.currentIndex())  # what a user's choice sends
    with qtbot.waitSignal(app.session.settings_saved, timeout=WAIT) as saved:
        pass
    assert saved.args[0] == ProjectSettings(answer_mode="generate")
    qtbot.waitUntil(lambda: any(c.settings for c in changed), timeout=WAIT)
    check = Project(path)
    assert check.settings() == ProjectSettings(answer_mode="generate")  # the project's own
    check.close()
    app.window.close()


def test_a_wording_graded_in_the_window_is_answered_from_the_cache_on_the_cli(
        qtbot, runner, settings, tmp_path, sample_dir, monkeypatch, capsys):
    """Same wording, default settings, both fronts: the CLI's grade asks the model nothing
    (the fake engines share a fingerprint, so only the settings could make the keys
    differ)."""
    import json

    from honebench import cli

    app, engine, path = composed(qtbot, runner, settings, tmp_path, sample_dir)
    graded = grade_and_keep(qtbot, app, GOOD)
    assert engine.calls == graded.run.n_items == 11
    app.window.close()

    second = FakeEngine(lambda _req: "no idea")  # would fail every item if it were asked
    monkeypatch.setattr(cli, "open_engine", lambda _args: second)
    capsys.readouterr()
    code = cli.main(["grade", str(tmp_path / "routing_small.csv"), "--wording", GOOD,
                     "--placement", "before", "--input", "message", "--expected",
                     "department", "--id-column", "id", "--project", str(path), "--json"])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert second.calls == 0
    assert len(out["marks"]) == 11 and all(m["cached"] for m in out["marks"])
    assert all(m["passed"] for m in out["marks"])  # the window's answers, not "no idea"
