"""The window: wording editor and prompt preview above the grade sheet, the shelf docked
at the side. Every action is one core call in a background job; the window only shows."""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QByteArray, QSettings, Qt, QTimer, Signal
from PySide6.QtWidgets import (QDockWidget, QFileDialog, QLabel, QMainWindow, QMessageBox,
                               QSplitter)

from ..core.recipes import recipe_for
from ..core.records import Mark
from ..core.store import PROJECT_SUFFIX
from ..core.wording import Wording
from . import project_files as files
from . import project_tasks as tasks
from .actions import install_actions
from .editor import WordingEditor
from .engine_bar import EngineBar, open_local_engine
from .grade_sheet_panel import GradeSheetPanel
from .grading_control import GradeControl
from .import_flow import ImportFlow, is_question_set
from .jobs import JobRunner
from .preview import PromptPreview
from .shelf_control import ShelfControl
from .summary_bar import LabelTable
from .shelf_panel import ShelfPanel
from .tour import GuidedTour, show_about

DRAFT_SAVE_MS = 1000


class MainWindow(QMainWindow):
    """Signals: ``project_loaded(ProjectState)``, ``grade_finished(GradeResult)``,
    ``grade_failed(str)``, ``shelf_changed(list)``, ``draft_saved(Wording)``."""

    project_loaded = Signal(object)
    grade_finished = Signal(object)
    grade_failed = Signal(str)
    shelf_changed = Signal(object)
    draft_saved = Signal(object)

    def __init__(self, runner: JobRunner, settings: QSettings, *, engine_factory=open_local_engine,
                 quiet: bool = False, parent=None):
        super().__init__(parent)
        self.runner, self.settings, self.quiet = runner, settings, quiet
        self.state: tasks.ProjectState | None = None
        self.problems: list[tuple[str, str]] = []  # every problem shown, for tests and logs
        self.item_view = None
        self.last_grade: tasks.GradeResult | None = None
        self.grade_limit: int | None = None  # grade at most this many items (tests, snapshots)
        self._loading_text = False
        self.setObjectName("honebench_main_window")
        self.setWindowTitle("honebench")
        self.setAcceptDrops(True)

        self.editor = WordingEditor()
        self.preview = PromptPreview(runner)
        self.sheet = GradeSheetPanel()
        self.engine_bar = EngineBar(runner, settings, engine_factory)
        self.shelf = ShelfPanel()
        self.shelf.setAccessibleName("Shelf of kept wordings")

        self.top_split = QSplitter(Qt.Orientation.Horizontal)
        self.top_split.setObjectName("top_split")
        self.top_split.addWidget(self.editor)
        self.top_split.addWidget(self.preview)
        self.top_split.setStretchFactor(0, 1)
        self.top_split.setStretchFactor(1, 1)
        self.main_split = QSplitter(Qt.Orientation.Vertical)
        self.main_split.setObjectName("main_split")
        self.main_split.addWidget(self.top_split)
        self.main_split.addWidget(self.sheet)
        self.main_split.setStretchFactor(0, 2)
        self.main_split.setStretchFactor(1, 3)
        self.setCentralWidget(self.main_split)

        self.shelf_dock = QDockWidget("Shelf", self)
        self.shelf_dock.setObjectName("shelf_dock")
        self.shelf_dock.setWidget(self.shelf)
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.shelf_dock)
        self.label_table = LabelTable()
        self.label_table.set_report(None)
        self.labels_dock = QDockWidget("Label table", self)
        self.labels_dock.setObjectName("labels_dock")
        self.labels_dock.setWidget(self.label_table)
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.labels_dock)
        self.resizeDocks([self.shelf_dock], [380], Qt.Orientation.Horizontal)
        self.sheet.summary_shown.connect(
            lambda summary: self.label_table.set_report(summary.labels if summary else None))

        self.import_flow = ImportFlow(runner, settings, self, self._project_and_check,
                                      self.show_problem, self)
        self.import_flow.imported.connect(self._show_state)
        status = self.statusBar().showMessage
        self.grading = GradeControl(runner, self.sheet, self.engine_bar, self.show_problem,
                                    status, self)
        self.grading.finished.connect(self._on_graded)
        self.grading.failed.connect(self.grade_failed)
        self.grading.running_changed.connect(lambda _r: self._update_actions())
        self.shelf_control = ShelfControl(runner, self.shelf, self.editor, lambda: self.state,
                                          status, self)
        self.shelf_control.changed.connect(self.shelf_changed)
        self.actions = install_actions(self, self.engine_bar)
        self.statusBar().showMessage("Starting…")

        self._draft_timer = QTimer(self, singleShot=True, interval=DRAFT_SAVE_MS)
        self._draft_timer.timeout.connect(self.save_draft)
        self._shelf_text_timer = QTimer(self, singleShot=True, interval=300)
        self._shelf_text_timer.timeout.connect(
            lambda: self.shelf.set_editor_text(self.editor.wording().text))
        self.editor.wording_changed.connect(self._on_wording_changed)
        self.sheet.open_requested.connect(self.open_item_view)
        self.sheet.current_item_changed.connect(self.preview.show_item)
        self.sheet.cancel_requested.connect(self.cancel_grade)
        self.engine_bar.engine_ready.connect(self.preview.set_engine)
        self.engine_label = QLabel("engine: loading…")
        self.engine_label.setAccessibleName("Engine in use")
        self.statusBar().addPermanentWidget(self.engine_label)
        self.engine_bar.engine_ready.connect(
            lambda handle: self.engine_label.setText(f"engine: {handle.describe()}"))
        self.engine_bar.engine_failed.connect(
            lambda msg: self.show_problem("The model did not load", msg))
        runner.unhandled_error.connect(
            lambda name, msg: self.show_problem(f"Could not {name}", msg))
        self._update_actions()
        self.resize(1280, 820)
        self.main_split.setSizes([330, 450])
        self.top_split.setSizes([480, 480])
        self._restore_layout()
        self.engine_bar.load_remembered()

    # -- projects ------------------------------------------------------------------------
    def open_project(self, path: str | Path, *, demo: bool = False, then_import: str | None = None):
        """Open a project file in a job (``demo``: build the sample project first)."""
        if self.grading.running:
            self.show_problem("A grade run is in progress", "Cancel it (Esc) before opening "
                              "another project.")
            return None
        path = Path(path)
        self.statusBar().showMessage(f"Opening {path.name}…")

        def work(ctx):
            if demo and not path.exists():
                tasks.build_demo_project(path)
            return tasks.load_state(path), bool(then_import and recipe_for(then_import))

        def done(result):
            state, sample = result
            self._show_state(state)
            if then_import and sample:  # a sample set maps itself: no dialog
                self.import_flow.run_import(then_import)
            elif then_import:
                self.import_flow.start(then_import)

        return self.runner.submit(work, done=done, failed=lambda m: self.show_problem(
            "The project did not open", f"{m}\n\nThe project shown before stays open."),
            name="open the project")

    def _show_state(self, state: tasks.ProjectState) -> None:
        self._flush_draft_if_other(state)
        self.state = state
        qset = state.qset
        self.settings.setValue("last_project", str(state.project.path))
        files.remember_recent(self.settings, str(state.project.path))
        set_name = f" · {qset.name}" if qset else " · no question set yet"
        self.setWindowTitle(f"{state.title}{set_name} — honebench")
        self.setWindowFilePath(str(state.project.path))
        fields = list(qset.items[0].fields) if qset and qset.items else []
        self._loading_text = True
        self.editor.set_fields(fields)
        self.editor.set_wording(state.draft)
        self._loading_text = False
        self.shelf_control.restored_from = None
        self.preview.set_items(qset.items if qset else ())
        self.sheet.set_has_set(qset is not None)
        self.preview.set_wording(state.draft)
        self.shelf.set_rows(state.shelf)
        self.shelf.set_editor_text(state.draft.text)
        self.sheet.show_marks(state.marks, state.expected, tasks.run_caption(
            state.last_run, len(state.marks)) if state.last_run else "Grade sheet · no grade "
            "run yet")
        self.sheet.show_summary(state.summary)
        n = len(qset.items) if qset else 0
        self.statusBar().showMessage(
            f"Opened {state.project.path.name}: {n} items, {len(state.shelf)} on the shelf"
            if qset else "No question set yet: File › Import question set…, or drop a file "
                         "on the window")
        self._update_actions()
        self.project_loaded.emit(state)

    def _flush_draft_if_other(self, state) -> None:
        if self.state is not None and self._draft_timer.isActive() and \
                self.state.project.path != state.project.path:
            self.save_draft()

    def _project_and_check(self):
        return (self.state.project, self.state.check) if self.state else (None, None)

    def new_project(self) -> None:
        path = files.ask_new_project(self, self.settings)
        job = self.open_project(path) if path else None
        if job is not None:  # a new project starts with its question set
            job.done.connect(lambda _r: self.import_flow.choose())

    def choose_project(self) -> None:
        path = files.ask_open_project(self, self.settings)
        if path:
            self.open_project(path)

    def fill_recent_menu(self, menu) -> None:
        files.fill_recent_menu(menu, self.settings, self.open_project)

    # -- the draft -----------------------------------------------------------------------
    def _on_wording_changed(self, wording: Wording) -> None:
        self.preview.set_wording(wording)
        self._shelf_text_timer.start()
        if not self._loading_text and self.state is not None:
            self._draft_timer.start()
        self._update_actions()

    def save_draft(self):
        """Save the editor's text and placement to the project (a job)."""
        self._draft_timer.stop()
        if self.state is None:
            return None
        project, wording = self.state.project, self.editor.wording()
        self.state.draft = wording
        return self.runner.submit(lambda ctx: project.save_draft(wording),
                                  done=lambda _r: self.draft_saved.emit(wording),
                                  name="save the draft")

    # -- grading -------------------------------------------------------------------------
    def grade(self, split: str = "tuning", limit: int | None = None):
        """Grade the editor's wording over the tuning (or held-out) items in a job."""
        self._draft_timer.stop()
        wording = self.editor.wording()
        if self.state is not None:
            self.state.draft = wording
        return self.grading.grade(self.state, wording, split, limit or self.grade_limit)

    def cancel_grade(self) -> None:
        self.grading.cancel()

    def _on_graded(self, result: tasks.GradeResult) -> None:
        self.last_grade = result
        if self.state is not None:
            self.state.last_run = result.run
            self.state.marks, self.state.summary = self.sheet.model.marks(), result.summary
        self.shelf_control.show_rows(result.shelf)
        self.grade_finished.emit(result)

    # -- the item view -------------------------------------------------------------------
    def open_item_view(self, mark: Mark):
        """Show one mark's item in the item view (one view, reused while open)."""
        from .item_view import ItemView

        if self.state is None or self.state.qset is None:
            return None
        item = self._item(mark.item_id)
        if self.item_view is None:
            self.item_view = ItemView(item, mark, self.state.check.describe(), self)
            self.item_view.step_requested.connect(self._step_item_view)
            self.item_view.finished.connect(self._item_view_closed)
        self._show_in_item_view(item, mark)
        self.item_view.show()
        self.item_view.raise_()
        return self.item_view

    def _show_in_item_view(self, item, mark: Mark) -> None:
        row, rows = self.sheet.current_row(), self.sheet.proxy.rowCount()
        position = f"{row + 1} of {rows} shown" if row >= 0 else ""
        self.item_view.show_mark(item, mark, position)
        self.item_view.set_step_enabled(row > 0, 0 <= row < rows - 1)

    def _item(self, item_id: str):
        for item in self.state.qset.items:
            if item.id == item_id:
                return item
        raise LookupError(f"item {item_id} is not in the question set any more")

    def _step_item_view(self, delta: int) -> None:
        mark = self.sheet.select_row(self.sheet.current_row() + delta)
        if mark is not None and self.item_view is not None:
            self._show_in_item_view(self._item(mark.item_id), mark)

    def _item_view_closed(self, _result=0) -> None:
        view, self.item_view = self.item_view, None
        if view is not None:
            view.deleteLater()

    # -- the shelf -----------------------------------------------------------------------
    def keep_current(self):
        return self.shelf_control.keep()

    def restore(self, wording_id: int) -> None:
        self.shelf_control.restore(wording_id)

    # -- exporting, help, problems -------------------------------------------------------
    def export_marks(self) -> None:
        marks = list(self.sheet.model.marks())
        if not marks:
            self.show_problem("No marks to export", "Grade the wording first (Ctrl+Return).")
            return
        start = str(self.settings.value("export/last_dir", str(Path.home())))
        path, _ = QFileDialog.getSaveFileName(self, "Export marks as CSV",
                                              str(Path(start) / "marks.csv"), "CSV files (*.csv)")
        if path:
            self.settings.setValue("export/last_dir", str(Path(path).parent))
            project, run_id = self.state.project, self.state.last_run.id
            self.runner.submit(
                lambda ctx: tasks.export_marks(project, path, run_id),
                done=lambda n: self.statusBar().showMessage(f"Wrote {n} marks to {path}"),
                name="export the marks")

    def show_about(self) -> None:
        show_about(self)

    def show_tour(self) -> GuidedTour:
        tour = GuidedTour(self)
        tour.setAttribute(Qt.WidgetAttribute.WA_DeleteOnClose)
        tour.show()
        return tour

    def show_problem(self, title: str, message: str) -> None:
        """A dialog naming the problem (only the status line when quiet, as in snapshots)."""
        self.problems.append((title, message))
        self.statusBar().showMessage(f"{title}: {message.splitlines()[0]}")
        if not self.quiet:
            QMessageBox.warning(self, title, message)

    def _update_actions(self) -> None:
        a = getattr(self, "actions", None)
        if a is None:
            return
        running = self.grading.running
        can_grade = (not running and self.state is not None and self.state.qset is not None
                     and bool(self.editor.wording().text.strip()))
        a.grade.setEnabled(can_grade)
        a.grade_held_out.setEnabled(can_grade)
        a.cancel.setEnabled(running)
        a.keep.setEnabled(self.state is not None and bool(self.editor.wording().text.strip()))
        a.import_set.setEnabled(not running and self.state is not None)
        self.engine_bar.set_busy(running)

    # -- drag and drop, layout, closing --------------------------------------------------
    def _dropped_path(self, event) -> str | None:
        urls = event.mimeData().urls() if event.mimeData().hasUrls() else []
        path = urls[0].toLocalFile() if urls else ""
        return path if path and (is_question_set(path) or path.endswith(PROJECT_SUFFIX)) else None

    def dragEnterEvent(self, event):
        if self._dropped_path(event):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dropEvent(self, event):
        path = self._dropped_path(event)
        if path and self.grading.running:
            event.ignore()
            self.show_problem("A grade run is in progress", "Cancel it (Esc), then drop the "
                              "file again.")
        elif path:
            event.acceptProposedAction()
            if path.endswith(PROJECT_SUFFIX):
                self.open_project(path)
            else:
                self.import_flow.start(path)

    def _restore_layout(self) -> None:
        for key, restore in (("window/geometry", self.restoreGeometry),
                             ("window/state", self.restoreState),
                             ("window/main_split", self.main_split.restoreState),
                             ("window/top_split", self.top_split.restoreState)):
            value = self.settings.value(key)
            if isinstance(value, QByteArray):
                restore(value)

    def closeEvent(self, event):
        for key, value in (("window/geometry", self.saveGeometry()),
                           ("window/state", self.saveState()),
                           ("window/main_split", self.main_split.saveState()),
                           ("window/top_split", self.top_split.saveState())):
            self.settings.setValue(key, value)
        if self.state is not None and self.editor.wording() != self.state.draft:
            self.save_draft()
        self.grading.cancel()
        for job in self.runner.active():
            if job.name in ("prompt preview",):
                job.cancel()
        self.runner.wait_idle(30_000)
        self.engine_bar.close_engine()
        self.runner.wait_idle(30_000)
        if self.item_view is not None:
            self.item_view.close()
        self.settings.sync()
        super().closeEvent(event)

