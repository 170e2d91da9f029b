"""The window end to end with the real bundled model: import, write, grade, filter, read a
miss, keep, restore, reopen. Plus cancel, closing mid-run, responsiveness and bad input.
The window is composed as run_app composes it (honebench.gui.app.compose)."""
from __future__ import annotations

import csv

import pytest
from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import QFileDialog

from honebench.core.checks import CheckSpec
from honebench.core.project import Project
from honebench.core.sets import ColumnMapping
from honebench.gui.app import App, compose
from honebench.core.project import preview_set

from .pictures import non_blank

pytestmark = pytest.mark.model
MODEL_WAIT = 600_000  # ms; generous, the machine may be shared and busy


def new_window(qtbot, runner, settings) -> App:
    app = compose(runner, settings, quiet=True)
    qtbot.addWidget(app.window)
    app.window.show()
    return app


def wait_ready(qtbot, app, *, with_set=True):
    qtbot.waitUntil(lambda: app.engine.handle is not None, timeout=MODEL_WAIT)
    qtbot.waitUntil(lambda: app.session.state is not None and
                    (app.session.qset is not None or not with_set), timeout=MODEL_WAIT)
    assert app.window.problems == []


def open_routing_project(qtbot, app, project_path, sample_dir):
    """An empty project, then the routing set imported as the mapping dialog would do:
    preview (guessed mapping), then the import step with the dialog's answers."""
    with qtbot.waitSignal(app.session.opened, timeout=MODEL_WAIT):
        app.session.open_project(project_path)
    assert app.session.qset is None
    set_path = str(sample_dir / "passenger_desk_routing.csv")
    head, guess, problems, recipe_check = preview_set(set_path)
    assert guess == ColumnMapping(("message",), "department", "id", None)
    assert problems == []
    with qtbot.waitSignal(app.session.opened, timeout=MODEL_WAIT):
        app.import_flow.run_import(set_path, guess, recipe_check, 0, 0.3)
    wait_ready(qtbot, app)


def type_wording(qtbot, window, text):
    window.editor.text_edit.clear()
    qtbot.keyClicks(window.editor.text_edit, text)


def grade(qtbot, app, limit=10):
    with qtbot.waitSignal(app.grading.finished, timeout=MODEL_WAIT) as blocker:
        app.grade(limit)
    return blocker.args[0]


def keep(qtbot, app, label: str):
    with qtbot.waitSignal(app.shelf.kept, timeout=30_000):
        app.keep_action.trigger()
    qtbot.waitUntil(lambda: label in [r.entry.label for r in app.shelf_model.rows],
                    timeout=30_000)
    return sorted(app.shelf_model.rows, key=lambda r: r.entry.version)


WORDING = ("Route this passenger message to one department: refund, booking_change, "
           "lost_property, accessibility or timetable. Reply with the department only.")


def test_grade_filter_read_keep_restore_and_reopen(qtbot, runner, settings, tmp_path,
                                                    sample_dir, monkeypatch):
    project_path = tmp_path / "routing.hone"
    window = new_window(qtbot, runner, settings)
    open_routing_project(qtbot, window, project_path, sample_dir)
    type_wording(qtbot, window, WORDING)
    assert window.editor.wording().text == WORDING

    result = grade(qtbot, window, limit=10)
    model, proxy = window.sheet.model, window.sheet.proxy
    assert result.outcome.status == "finished"
    assert model.rowCount() == 10
    assert {m.item_id for m in model.marks()} == {m.item_id for m in result.outcome.marks}
    check_store = Project(project_path)
    assert check_store.store.run_counts(result.run.id) == (
        sum(m.passed for m in result.outcome.marks), 10)
    assert result.run.wording_text == WORDING
    assert window.sheet.summary.score_label.text().startswith("Score ")
    assert f"/10, 95% interval" in window.sheet.summary.score_label.text()
    # the label check gets a confusion table
    assert window.label_table.model.rowCount() >= 6

    misses = sum(not m.passed for m in model.marks())
    qtbot.mouseClick(window.sheet.misses_only, Qt.MouseButton.LeftButton)
    assert window.sheet.misses_only.isChecked()
    assert proxy.rowCount() == misses
    assert all(not proxy.mark_at(r).passed for r in range(proxy.rowCount()))
    window.sheet.misses_only.setChecked(False)
    assert proxy.rowCount() == 10

    # free-text filter: one item id matches one row
    some_id = model.mark_at(3).item_id
    window.sheet.filter_edit.setText(some_id)
    qtbot.waitUntil(lambda: proxy.rowCount() == 1, timeout=5000)
    assert proxy.mark_at(0).item_id == some_id
    window.sheet.filter_edit.clear()
    qtbot.waitUntil(lambda: proxy.rowCount() == 10, timeout=5000)

    # Enter on a row opens the item view for that mark
    window.sheet.table.setFocus()
    window.sheet.select_row(2)
    shown = window.sheet.proxy.mark_at(2)
    qtbot.keyClick(window.sheet.table, Qt.Key.Key_Return)
    view = window.items.view
    assert view is not None and view.isVisible()
    assert view.mark.item_id == shown.item_id
    view.step_requested.emit(1)
    assert view.mark.item_id == window.sheet.proxy.mark_at(3).item_id
    shots = tmp_path / "snap"
    shots.mkdir()
    view.grab().save(str(shots / "item_view.png"))
    assert non_blank(shots / "item_view.png")
    view.close()

    height = window.window.height()
    with qtbot.waitSignal(window.shelf.kept, timeout=30_000):
        qtbot.keyClick(window.editor.text_edit, Qt.Key.Key_K, Qt.KeyboardModifier.ControlModifier)
    # the grade put the wording on the shelf as v1, not decided; keeping decides it
    qtbot.waitUntil(lambda: window.shelf_model.rowCount() == 1
                    and window.shelf_model.rows[0].entry.decision == "kept", timeout=30_000)
    v1 = window.shelf_model.rows[0].entry
    assert (v1.label, v1.text, v1.decision) == ("v1", WORDING, "kept")
    assert window.shelf_model.rows[0].tuning.total == 10  # its score comes from the run
    assert window.window.height() == height  # keeping does not grow the window

    second = WORDING + " One word."
    type_wording(qtbot, window, second)
    rows = keep(qtbot, window, "v2")
    assert [r.entry.label for r in rows] == ["v1", "v2"]
    assert rows[1].entry.parent_id is None
    window.window.grab().save(str(shots / "window_graded.png"))
    assert non_blank(shots / "window_graded.png")

    # export: read back with the standard library's CSV reader (RFC 4180 quoting)
    out = tmp_path / "marks.csv"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(out), ""))
    with qtbot.waitSignal(window.exports.exported, timeout=30_000):
        window.marks_action.trigger()
    with out.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    shown = {m.item_id: m for m in model.marks()}
    assert sorted(r["item_id"] for r in rows) == sorted(shown)
    assert all((r["passed"] == "True") == shown[r["item_id"]].passed for r in rows)
    assert all(r["output"] == shown[r["item_id"]].output for r in rows)

    window.shelf_panel.restore_requested.emit(v1.id)
    assert window.editor.wording().text == WORDING
    assert window.undo_action.isEnabled()
    window.undo_action.trigger()  # restoring is one undoable edit
    assert window.editor.wording().text == second
    window.redo_action.trigger()
    assert window.editor.wording().text == WORDING
    with qtbot.waitSignal(window.session.draft_saved, timeout=30_000):
        pass
    assert check_store.draft().text == WORDING
    check_store.close()
    window.window.close()
    assert settings.value("window/state") is not None

    again = new_window(qtbot, runner, settings)
    with qtbot.waitSignal(again.session.opened, timeout=MODEL_WAIT):
        again.session.open_project(project_path)
    assert again.editor.wording().text == WORDING
    assert again.editor.wording().placement == window.session.state.draft.placement
    assert [r.entry.label for r in again.shelf_model.rows] == ["v2", "v1"]
    assert again.sheet.model.rowCount() == 10
    assert again.session.state.last_run.id == result.run.id
    assert again.sheet.summary.score_label.text() == window.sheet.summary.score_label.text()
    again.window.close()


def test_cancel_keeps_the_finished_marks(qtbot, runner, settings, tmp_path, sample_dir):
    project_path = tmp_path / "cancel.hone"
    window = new_window(qtbot, runner, settings)
    open_routing_project(qtbot, window, project_path, sample_dir)
    type_wording(qtbot, window, WORDING)
    with qtbot.waitSignal(window.grading.finished, timeout=MODEL_WAIT) as blocker:
        window.grade(40)
        qtbot.waitUntil(lambda: window.sheet.progress.value() >= 2, timeout=MODEL_WAIT)
        assert window.cancel_action.isEnabled()
        window.cancel_action.trigger()
    result = blocker.args[0]
    assert result.outcome.status == "cancelled"
    kept = len(result.outcome.marks)
    assert 2 <= kept < 40
    assert window.sheet.model.rowCount() == kept
    project = Project(project_path)
    assert project.store.run_counts(result.run.id)[1] == kept
    assert project.store.run(result.run.id).status == "cancelled"
    project.close()
    assert not window.cancel_action.isEnabled()
    assert window.grade_action.isEnabled()
    window.window.close()


def test_closing_during_a_run_stops_it_and_keeps_its_marks(qtbot, runner, settings, tmp_path,
                                                          sample_dir):
    project_path = tmp_path / "closing.hone"
    window = new_window(qtbot, runner, settings)
    open_routing_project(qtbot, window, project_path, sample_dir)
    type_wording(qtbot, window, WORDING)
    window.grade(40)
    qtbot.waitUntil(lambda: window.sheet.progress.value() >= 1, timeout=MODEL_WAIT)
    window.window.close()  # cancels, waits for the job, closes the engine
    assert runner.active() == []
    project = Project(project_path)
    run = project.store.runs()[-1]
    assert run.status == "cancelled"
    assert 1 <= project.store.run_counts(run.id)[1] < 40
    assert project.draft().text == WORDING
    project.close()


def test_the_event_loop_keeps_ticking_during_a_grade_run(qtbot, runner, settings, tmp_path,
                                                         sample_dir):
    """The run is a job: timers fire and typing lands while the model answers (checked
    by what happens during the run, not by how fast)."""
    window = new_window(qtbot, runner, settings)
    open_routing_project(qtbot, window, tmp_path / "ticks.hone", sample_dir)
    type_wording(qtbot, window, WORDING)
    window.grading.limit = 10
    ticks = []
    timer = QTimer()
    timer.setInterval(20)
    timer.timeout.connect(lambda: ticks.append(window.sheet.model.rowCount()))
    with qtbot.waitSignal(window.grading.finished, timeout=MODEL_WAIT):
        # Ctrl+Return in the editor starts the run
        qtbot.keyClick(window.editor.text_edit, Qt.Key.Key_Return,
                       Qt.KeyboardModifier.ControlModifier)
        assert window.grading.running  # a job: this thread goes on at once
        timer.start()
        qtbot.keyClicks(window.editor.text_edit, " Thank you.")  # typing while it runs
        assert window.grading.running
    timer.stop()
    # the timer fired while marks were still arriving: a blocked thread would have shown
    # all ten at once, never a partly filled sheet
    assert any(0 < n < 10 for n in ticks), ticks
    assert window.editor.wording().text.endswith("Thank you.")
    window.window.close()


def test_a_bad_model_file_gets_a_message_and_the_engine_stays(qtbot, runner, settings,
                                                              tmp_path):
    window = new_window(qtbot, runner, settings)
    qtbot.waitUntil(lambda: window.engine.handle is not None, timeout=MODEL_WAIT)
    before = window.engine.handle
    bad = tmp_path / "broken.gguf"
    bad.write_bytes(b"not a model" * 200)
    with qtbot.waitSignal(window.engine.engine_failed, timeout=30_000) as blocker:
        window.engine.load(str(bad))
    message = blocker.args[0]
    assert "broken.gguf" in message and "GGUF" in message
    assert "stays" in message
    assert window.engine.handle is before
    assert window.window.problems and window.window.problems[-1][0] == "The model did not load"
    assert window.engine.choice.currentData() == ""  # back on the bundled model
    window.window.close()


def test_a_bad_question_set_is_refused_with_row_and_column(qtbot, runner, settings, tmp_path):
    bad = tmp_path / "desk.csv"
    bad.write_text("id,message,department\nq1,Where is my refund?,refund\nq2,Lost a bag,\n",
                   encoding="utf-8")
    window = new_window(qtbot, runner, settings)
    with qtbot.waitSignal(window.session.opened, timeout=MODEL_WAIT):
        window.session.open_project(tmp_path / "empty.hone")
    with qtbot.waitSignal(window.import_flow.failed, timeout=30_000) as blocker:
        window.import_flow.run_import(str(bad), ColumnMapping(("message",), "department", "id"),
                                      CheckSpec(kind="label"))
    assert "row 3" in blocker.args[0].lower() and "department" in blocker.args[0]
    title, message = window.window.problems[-1]
    assert title == "The question set was not imported"
    assert "Nothing in the project was changed" in message
    assert Project(tmp_path / "empty.hone").store.set_ids() == []
    window.window.close()


def test_dropping_a_set_goes_through_the_mapping_dialog(qtbot, runner, settings, tmp_path,
                                                        sample_dir, monkeypatch):
    from PySide6.QtCore import QMimeData, QPointF, QUrl
    from PySide6.QtGui import QDragEnterEvent, QDropEvent
    from honebench.gui.project.mapping_dialog import MappingDialog
    from honebench.gui.tour import GuidedTour

    shots = tmp_path / "snap"
    shots.mkdir()
    own = tmp_path / "desk_messages.csv"  # not a sample name: no recipe, the dialog decides
    own.write_text((sample_dir / "passenger_desk_routing.csv").read_text(encoding="utf-8"),
                   encoding="utf-8")
    seen = {}

    def answer(dialog):  # the user looks, picks a held-out share, presses OK
        seen["title"] = dialog.windowTitle()
        dialog.grab().save(str(shots / "mapping_dialog.png"))
        dialog.fraction.setValue(0.25)
        dialog.accept()
        return dialog.result()

    monkeypatch.setattr(MappingDialog, "exec", answer)
    window = new_window(qtbot, runner, settings)
    with qtbot.waitSignal(window.session.opened, timeout=MODEL_WAIT):
        window.session.open_project(tmp_path / "dropped.hone")
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(own))])
    enter = QDragEnterEvent(QPointF(window.window.rect().center()), Qt.DropAction.CopyAction, mime,
                            Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier)
    window.window.dragEnterEvent(enter)
    assert enter.isAccepted()
    drop = QDropEvent(QPointF(window.window.rect().center()), Qt.DropAction.CopyAction, mime,
                      Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier)
    with qtbot.waitSignal(window.import_flow.imported, timeout=60_000) as blocker:
        window.window.dropEvent(drop)
    state = blocker.args[0]
    assert seen["title"] == "Columns of desk_messages.csv"
    assert state.qset.mapping == ColumnMapping(("message",), "department", "id", None)
    assert state.qset.held_out_fraction == 0.25
    assert len(state.qset.held_out()) == round(120 * 0.25)
    assert window.editor.fields == ["message"]
    assert "desk_messages" in window.window.windowTitle()
    assert non_blank(shots / "mapping_dialog.png")

    text_file = tmp_path / "notes.pdf"
    text_file.write_bytes(b"%PDF")
    mime.setUrls([QUrl.fromLocalFile(str(text_file))])
    refused = QDragEnterEvent(QPointF(window.window.rect().center()), Qt.DropAction.CopyAction, mime,
                              Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier)
    window.window.dragEnterEvent(refused)
    assert not refused.isAccepted()

    tour = window.show_tour()
    assert isinstance(tour, GuidedTour)
    tour.next.click()
    assert tour.step_label.text().startswith("Step 2 of")
    tour.grab().save(str(shots / "guided_tour.png"))
    assert non_blank(shots / "guided_tour.png")
    tour.close()
    window.window.close()
