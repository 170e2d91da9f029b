"""The transfer check in the window: the dialog from the shelf, the check as a job on the
model lane, and its table."""
from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from honebench.core.engines.model_files import bundled_model_path
from honebench.core.project import Project
from honebench.core.wording import Wording

from ..core.suggest_fixtures import small_project
from ..fakes import FakeEngine
from .pictures import non_blank
from .test_compare_view import MODEL_WAIT, open_window

GOOD = ("Route this passenger message to one department: refund, booking_change, "
        "lost_property, accessibility or timetable. Reply with the department only.")
POOR = "Reply with the single word refund, whatever the message says."


def _two_versions(tmp_path, sample_dir) -> Path:
    project = small_project(tmp_path, sample_dir)
    for text in (GOOD, POOR):
        project.keep(Wording(text, "system"))
    path = project.path
    project.close()
    return path


def test_a_bad_engine_choice_is_said_in_the_dialog_and_nothing_runs(qtbot, runner, settings,
                                                                     tmp_path, sample_dir):
    app, _ = open_window(qtbot, runner, settings, _two_versions(tmp_path, sample_dir),
                         FakeEngine())
    assert app.transfer.button.isEnabled() and app.transfer_action.isEnabled()
    dialog = app.transfer.open_dialog()
    qtbot.waitUntil(lambda: "No transfer check yet" in dialog.heading.text(), timeout=30_000)
    assert len(dialog.chosen_ids()) == 2  # the selected version and the best other one
    dialog.picker.endpoint_button.setChecked(True)
    dialog.picker.url.setText("localhost:8080")
    dialog.run_button.click()
    assert "must start with http://" in dialog.stage.text()
    dialog.picker.file_button.setChecked(True)
    dialog.picker.path.setText("")
    dialog.run_button.click()
    assert "choose a GGUF model file" in dialog.stage.text()
    assert app.transfer.job is None and dialog.run_button.isEnabled()
    app.window.close()


@pytest.mark.model
def test_check_on_another_model_file_fills_the_table(qtbot, runner, settings, tmp_path,
                                                     sample_dir):
    path = _two_versions(tmp_path, sample_dir)
    app, _ = open_window(qtbot, runner, settings, path)  # the bundled model, graded here
    other = tmp_path / "SmolLM2-other-name.gguf"  # the same weights under another name
    shutil.copy(bundled_model_path(), other)
    dialog = app.transfer.open_dialog()
    dialog.picker.path.setText(str(other))
    events = []
    with qtbot.waitSignal(app.transfer.finished, timeout=MODEL_WAIT) as blocker:
        dialog.run_button.click()
        assert not dialog.run_button.isEnabled() and dialog.stop_button.isEnabled()
        app.transfer.job.progress.connect(events.append)
    result = blocker.args[0]
    assert dialog.run_button.isEnabled() and not dialog.stop_button.isEnabled()
    assert result.there_engine == "SmolLM2-other-name.gguf" and result.n == 11
    assert dialog.table.rowCount() == 2
    for row, v in enumerate(result.versions):
        assert dialog.table.item(row, 0).text() == v.label
        assert f"({v.here.passed}/11," in dialog.table.item(row, 1).text()
        assert f"({v.there.passed}/11," in dialog.table.item(row, 3).text()
        # the same weights answer the same: no difference, no flag
        assert v.there.passed == v.here.passed and not v.flags
        assert dialog.table.item(row, 6).text() == "—"
    assert any(getattr(e, "what", "").startswith("grading v1 and v2") for e in events)
    assert "SmolLM2-other-name.gguf" in dialog.heading.text()
    check = Project(path)
    assert check.latest_transfer() == result
    assert len(check.store.runs(purpose="transfer")) == 2
    check.close()
    qtbot.waitUntil(lambda: all(r.tuning is not None for r in app.shelf_model.rows),
                    timeout=30_000)  # graded here first: the shelf shows the scores
    dialog.resize(900, 520)
    out = Path("/tmp/transfer_dialog.png")
    dialog.grab().save(str(out))
    assert non_blank(out)
    app.shelf_panel.grab().save("/tmp/transfer_shelf.png")
    app.window.close()


class _OtherChoice:
    """Stands in for an EngineChoice: opens a fake engine with its own fingerprint that
    stops the job after its third answer, and records that it was closed."""

    def __init__(self, app):
        self.app, self.opened, self.threads = app, None, []

    def label(self) -> str:
        return "a fake other engine"

    def open(self):
        import threading

        self.threads.append(threading.current_thread())

        class Other(FakeEngine):
            closed = False

            def fingerprint(self):
                return "fake:other"

            def close(self):
                Other.closed = True

        stop = lambda n: self.app.transfer.job.cancel_event.set() if n == 3 else None  # noqa
        self.opened = Other(on_call=stop)
        return self.opened


def test_stop_ends_the_check_saves_no_result_and_closes_the_other_engine(
        qtbot, runner, settings, tmp_path, sample_dir):
    import threading

    path = _two_versions(tmp_path, sample_dir)
    app, _ = open_window(qtbot, runner, settings, path, FakeEngine())
    dialog = app.transfer.open_dialog()
    choice = _OtherChoice(app)
    ids = dialog.chosen_ids()
    job = app.transfer.run(choice, ids)
    assert job is not None and job.uses_model
    qtbot.waitUntil(lambda: app.transfer.job is None, timeout=60_000)
    assert "Stopped the check" in dialog.stage.text()
    assert dialog.run_button.isEnabled() and not dialog.stop_button.isEnabled()
    assert choice.opened.closed  # closed after the job
    assert threading.main_thread() not in choice.threads  # opened in the job, not the GUI
    check = Project(path)
    assert check.latest_transfer() is None
    side = check.store.runs(purpose="transfer")
    assert side and sum(len(check.store.marks(r.id)) for r in side) == 3
    check.close()
    app.window.close()
