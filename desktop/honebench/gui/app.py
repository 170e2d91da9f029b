"""Composing the window, and starting it.

``compose`` is the one place that knows every feature: it builds each one with what it
needs, docks it, adds its actions and connects features to each other through signals.
Features never reach into each other; they hear of project changes through the job
runner's ``project_changed`` and of an opened project through the session's ``opened``.
Starting the window (``run_app``) is in launch.py; it composes in the same order as the
tests do.
"""
from __future__ import annotations

import os
import sys

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import QSplitter, QStyle

from ..core.store import PROJECT_SUFFIX
from .actions import make_action
from .compare.control import CompareControl
from .engine import EngineBar, open_engine
from .grading.control import GradeControl
from .grading.editor import WordingEditor
from .grading.items import ItemViewer
from .grading.preview import PromptPreview
from .grading.sheet import GradeSheetPanel
from .grading.summary import LabelTable
from .hone.panel import HonePanel
from .jobs import JobRunner
from .project import files
from .project.exports import ExportControl
from .project.import_flow import ImportFlow, is_question_set
from .project.session import ProjectSession
from .project.state import interrupted_text
from .shelf.control import ShelfControl
from .shelf.importance import ImportanceControl
from .shelf.model import ShelfModel
from .shelf.panel import ShelfPanel
from .suggest.panel import SuggestPanel
from .tour import GuidedTour, show_about
from .transfer import control as transfer_control
from .window import SIZE, MainWindow



class App:
    """The composed window and its features (plain references; see ``compose``)."""

    def __init__(self, runner: JobRunner, settings: QSettings, *,
                 engine_factory=open_engine, quiet: bool = False):
        self.runner, self.settings = runner, settings
        w = self.window = MainWindow(runner, settings, quiet=quiet)
        problem, status = w.show_problem, w.status
        self.session = ProjectSession(runner, settings, problem, w)
        self.engine = EngineBar(runner, settings, engine_factory)
        self.editor = WordingEditor()
        self.preview = PromptPreview(runner)
        self.sheet = GradeSheetPanel()
        self.label_table = LabelTable()
        self.label_table.set_report(None)
        self.shelf_model = ShelfModel(w)
        self.shelf_panel = ShelfPanel(self.shelf_model)
        self.shelf_panel.setAccessibleName("Shelf of kept wordings")
        self.grading = GradeControl(runner, self.session, self.sheet, self.engine, problem,
                                    status, w)
        self.items = ItemViewer(self.session, self.sheet, w, w)
        self.shelf = ShelfControl(runner, self.session, self.shelf_model, self.shelf_panel,
                                  self.editor, status, problem, w)
        self.import_flow = ImportFlow(runner, settings, w, self.session, problem, w)
        self.compare = CompareControl(runner, self.session, self.shelf_model, self.shelf_panel,
                                      self.engine, editor_wording=self.editor.wording,
                                      show_problem=problem, status=status, dialog_parent=w,
                                      parent=w)
        self.transfer = transfer_control.TransferControl(runner, self.session, self.shelf_model,
                                                         self.shelf_panel, self.engine,
                                                         show_problem=problem, status=status,
                                                         dialog_parent=w, parent=w)
        self.compare.bar.add_button(self.transfer.button)
        self.importance = ImportanceControl(
            runner, self.session, self.shelf_model, self.shelf_panel, self.editor, self.engine,
            load_into_editor=self.shelf.load_into_editor, status=status, show_problem=problem,
            window=w, parent=w)
        self.exports = ExportControl(runner, self.session, settings, w, problem, status, w)
        self.suggest = SuggestPanel(runner, self.session, self.shelf_model, self.engine,
                                    editor_wording=self.editor.wording,
                                    selected_id=self.shelf_panel.selected_id)
        self.suggest.setAccessibleName("Suggestions")
        self.hone = HonePanel(runner, self.session, self.engine,
                              editor_wording=self.editor.wording,
                              proposers=self.suggest.proposers)
        self.hone.setAccessibleName("Auto-hone")
        self._layout()
        self._actions()
        self._connect()

    # -- layout --------------------------------------------------------------------------
    def _layout(self) -> None:
        w = self.window
        self.top_split = QSplitter(Qt.Orientation.Horizontal)
        self.top_split.setObjectName("top_split")
        self.top_split.addWidget(self.editor)
        self.top_split.addWidget(self.preview)
        self.main_split = QSplitter(Qt.Orientation.Vertical)
        self.main_split.setObjectName("main_split")
        self.main_split.addWidget(self.top_split)
        self.main_split.addWidget(self.sheet)
        self.main_split.setStretchFactor(0, 2)
        self.main_split.setStretchFactor(1, 3)
        w.set_central(self.main_split)
        w.toolbar("grading", "Grading")
        w.toolbar("engine", "Engine", self.engine)
        w.add_dock("shelf", "Shelf", self.shelf_panel, view_text="&Shelf",
                   shortcut="Ctrl+Shift+S")
        w.add_dock("suggest", "Suggest", self.suggest, view_text="S&uggestions")
        w.add_dock("hone", "Auto-hone", self.hone, view_text="Auto-&hone", tab_with="suggest")
        w.add_dock("labels", "Labels", self.label_table, view_text="&Label table",
                   tab_with="suggest")
        w.add_dock("chart", "Chart", self.compare.chart, view_text="&Progress chart",
                   tab_with="suggest")
        w.docks["suggest"].raise_()
        w.resize(*SIZE)
        self.main_split.setSizes([300, 380])
        self.top_split.setSizes([460, 460])
        w.resizeDocks([w.docks["shelf"]], [400], Qt.Orientation.Horizontal)
        w.resizeDocks([w.docks["shelf"], w.docks["suggest"]], [330, 330],
                      Qt.Orientation.Vertical)
        w.restore_layout()

    # -- actions -------------------------------------------------------------------------
    def _actions(self) -> None:
        w, sp, key = self.window, QStyle.StandardPixmap, QKeySequence.StandardKey
        act = lambda *a, **k: make_action(w, *a, **k)  # noqa: E731
        self.new_action = w.add_action("file", act(
            "&New project…", self.new_project, QKeySequence(key.New),
            "Start a project file for another task", sp.SP_FileIcon))
        w.add_action("file", act("&Open project…", self.choose_project, QKeySequence(key.Open),
                                 "Open a project file (.hone)", sp.SP_DialogOpenButton))
        recent = w.add_submenu("file", "Open &recent")
        recent.aboutToShow.connect(lambda: files.fill_recent_menu(
            recent, self.settings, self.session.open_project))
        w.add_separator("file")
        self.import_action = w.add_action("file", act(
            "&Import question set…", self.import_flow.choose, "Ctrl+I",
            "Read a question set (CSV, TSV, JSONL, JSON, Parquet, XLSX) into this project"))
        self.report_action = w.add_action("file", act(
            "Export &report…", self.exports.export_report, "Ctrl+E",
            "Write one self-contained HTML report of the project"))
        self.marks_action = w.add_action("file", act(
            "Export &marks as CSV…", self.exports.export_marks, "",
            "Write the grade sheet's marks to a CSV file"))
        self.wording_action = w.add_action("file", act(
            "Export chosen &wording…", self.exports.export_wording, "",
            "Write the chosen wording alone as a text file"))
        w.add_separator("file")
        quit_ = w.add_action("file", act("&Quit", w.close, QKeySequence(key.Quit),
                                         "Close honebench"))
        quit_.setMenuRole(quit_.MenuRole.QuitRole)

        self.undo_action = w.add_action("edit", act("&Undo", self.editor.undo,
                                                    QKeySequence(key.Undo),
                                                    "Undo the last edit of the wording"))
        self.redo_action = w.add_action("edit", act("&Redo", self.editor.redo,
                                                    QKeySequence(key.Redo),
                                                    "Redo the edit of the wording"))
        for action, available in ((self.undo_action, self.editor.text_edit.undoAvailable),
                                  (self.redo_action, self.editor.text_edit.redoAvailable)):
            action.setEnabled(False)
            available.connect(action.setEnabled)

        self.grade_action = w.add_action("run", act(
            "&Grade tuning items", self.grade, ["Ctrl+Return", "Ctrl+Enter"],
            "Grade the wording over the tuning items (Ctrl+Return)", "play", "Grade"),
            toolbar="grading")
        self.cancel_action = w.add_action("run", act(
            "&Cancel grading", self.grading.cancel, "Esc",
            "Stop the grade run; finished marks are kept (Esc)", "stop", "Cancel"),
            toolbar="grading")
        w.add_separator("run", toolbar="grading")
        self.keep_action = w.add_action("run", act(
            "&Keep on the shelf", self.shelf.keep, "Ctrl+K",
            "Put the editor's wording on the shelf as the next version (Ctrl+K)", "keep",
            "Keep"), toolbar="grading")
        self.resume_action = w.add_action("run", act(
            "&Resume interrupted run", lambda: self.grading.resume(), "",
            "Finish a grade run that stopped before finishing (you choose which when there "
            "are several); the items it graded come from the cache"))
        w.add_separator("run")
        self.suggest_action = w.add_action("run", act(
            "Suggest &variants…", lambda: self._focus_dock("suggest", self.suggest.strategy),
            "Ctrl+Alt+S", "Ask the model for variant wordings, scored on the tuning items"))
        self.hone_action = w.add_action("run", act(
            "&Auto-hone…", lambda: self._focus_dock("hone", self.hone.strategy), "",
            "Run rounds of suggestions unattended, keeping only improvements"))
        w.add_separator("run")
        self.compare_action = w.add_action("run", act(
            "Com&pare…", self.compare.choose_and_compare, "Ctrl+Shift+C",
            "Compare two versions: fixed and broken items, paired test"))
        self.confirm_action = w.add_action("run", act(
            "Con&firm on held-out items", self.compare.confirm_selected, "Ctrl+Shift+H",
            "Grade the selected shelf version on the held-out items (the one way to grade "
            "them)"))
        self.transfer_action = w.add_action("run", act(
            transfer_control.TEXT, self.transfer.open_dialog, "", transfer_control.TIP))

        w.menus["view"].addSeparator()
        for text, target, shortcut in (
                ("Focus the &wording", self.editor.text_edit, "Ctrl+1"),
                ("Focus the grade &sheet", self.sheet.table, "Ctrl+2"),
                ("Focus the &filter", self.sheet.filter_edit, QKeySequence(key.Find))):
            w.add_action("view", act(text, target.setFocus, shortcut,
                                     "Move the keyboard focus"))
        w.add_action("help", act("Guided &tour", self.show_tour, QKeySequence(key.HelpContents),
                                 "A short walk through the sample project"))
        about = w.add_action("help", act("&About honebench", lambda: show_about(w),
                                         tip="About honebench"))
        about.setMenuRole(about.MenuRole.AboutRole)

    def _focus_dock(self, key: str, widget) -> None:
        self.window.show_dock(key)
        widget.setFocus()

    # -- wiring --------------------------------------------------------------------------
    def _connect(self) -> None:
        w, s = self.window, self.session
        self._loading_text = False
        self._shelf_text_timer = QTimer(w, singleShot=True, interval=300)
        self._shelf_text_timer.timeout.connect(
            lambda: self.shelf_panel.set_editor_text(self.editor.wording().text))
        self.editor.wording_changed.connect(self._on_wording_changed)
        self.sheet.current_item_changed.connect(self.preview.show_item)
        self.sheet.summary_shown.connect(
            lambda summary: self.label_table.set_report(summary.labels if summary else None))
        self.engine.engine_ready.connect(self.preview.set_engine)
        self.engine.engine_failed.connect(lambda m: w.show_problem("The model did not load", m))
        self.engine.switching.connect(
            lambda names: w.status(f"Cancelled {names} to switch the model"))
        s.opened.connect(self._show_state)
        self.engine.settings_edited.connect(s.save_settings)
        s.settings_changed.connect(self.engine.adopt_settings)
        s.busy = lambda: "A grade run is in progress." if self.grading.running else ""
        self.suggest.load_requested.connect(self.shelf.load_into_editor)
        self.suggest.status.connect(w.status)
        self.suggest.problem.connect(w.show_problem)
        self.hone.status.connect(w.status)
        self.hone.problem.connect(w.show_problem)
        self.suggest.running_changed.connect(lambda busy: self.hone.set_blocked(
            "Wait for the suggestions to finish (or cancel them)." if busy else ""))
        self.hone.running_changed.connect(lambda busy: self.suggest.set_blocked(
            "Auto-hone is running; cancel it or wait for it to finish." if busy else ""))
        self.shelf_panel.selection_changed.connect(lambda _id: self.suggest.refresh_base())
        self.grading.running_changed.connect(lambda _r: self.update_actions())
        self.compare.enabled_changed.connect(self.update_actions)
        w.accepts_drop = lambda p: is_question_set(p) or p.endswith(PROJECT_SUFFIX)
        w.file_dropped.connect(self._dropped)
        w.closing_hooks += [self.engine.commit_settings, self.session.save_draft, self.grading.cancel,
                            self.runner.cancel_model_jobs, self.items.close]
        w.closed_hooks += [self.suggest.close_proposer, self.engine.close_engine]
        self.update_actions()
        self.engine.load_remembered()

    def _on_wording_changed(self, wording) -> None:
        self.preview.set_wording(wording)
        self._shelf_text_timer.start()
        if not self._loading_text:
            self.session.draft_edited(wording)
        self.suggest.refresh_base()
        self.update_actions()

    def _show_state(self, state) -> None:
        qset = state.qset
        set_name = f" · {qset.name}" if qset else " · no question set yet"
        self.window.setWindowTitle(f"{state.title}{set_name} — honebench")
        self.window.setWindowFilePath(str(state.project.path))
        self._loading_text = True
        self.editor.set_fields(list(qset.items[0].fields) if qset and qset.items else [])
        self.editor.set_wording(state.draft)
        self._loading_text = False
        self.preview.set_items(qset.tuning() if qset else ())
        self.preview.set_wording(state.draft)
        self.shelf_panel.set_editor_text(state.draft.text)
        self.engine.show_settings(state.settings, state.check.kind == "label"
                                  and bool(state.check.labels))
        n = len(qset.items) if qset else 0
        opened = (f"Opened {state.project.path.name}: {n} items, {len(state.shelf)} on the "
                  "shelf" if qset else "No question set yet: File › Import question set…, "
                  "or drop a file on the window")
        self.window.status(interrupted_text(state) or opened)
        self.update_actions()

    def update_actions(self) -> None:
        state, running = self.session.state, self.grading.running
        has_text = bool(self.editor.wording().text.strip())
        self.grade_action.setEnabled(not running and state is not None
                                     and state.qset is not None and has_text)
        self.cancel_action.setEnabled(running)
        self.resume_action.setEnabled(not running and state is not None
                                      and bool(state.interrupted))
        self.keep_action.setEnabled(state is not None and has_text)
        self.import_action.setEnabled(not running and state is not None)
        has_set = state is not None and state.qset is not None
        for action in (self.report_action, self.wording_action, self.marks_action):
            action.setEnabled(has_set)
        self.compare_action.setEnabled(self.compare.can_compare())
        self.confirm_action.setEnabled(self.compare.can_confirm())
        self.transfer_action.setEnabled(self.transfer.can_open())

    # -- acts the actions call -----------------------------------------------------------
    def grade(self, limit: int | None = None):
        """Grade the editor's wording over the tuning items."""
        return self.grading.grade(self.editor.wording(), limit)

    def new_project(self) -> None:
        path = files.ask_new_project(self.window, self.settings)
        job = self.session.open_project(path) if path else None
        if job is not None:  # a new project starts with its question set
            job.done.connect(lambda _r: self.import_flow.choose())

    def choose_project(self) -> None:
        path = files.ask_open_project(self.window, self.settings)
        if path:
            self.session.open_project(path)

    def show_tour(self) -> GuidedTour:
        tour = GuidedTour(self.window)
        tour.setAttribute(Qt.WidgetAttribute.WA_DeleteOnClose)
        tour.show()
        return tour

    def _dropped(self, path: str) -> None:
        if self.grading.running:
            self.window.show_problem("A grade run is in progress",
                                     "Cancel it (Esc), then drop the file again.")
        elif path.endswith(PROJECT_SUFFIX):
            self.session.open_project(path)
        else:
            self.import_flow.start(path)


def compose(runner: JobRunner, settings: QSettings, *, engine_factory=open_engine,
            quiet: bool = False) -> App:
    """Build the window with every feature (the same order for run_app and the tests)."""
    app = App(runner, settings, engine_factory=engine_factory, quiet=quiet)
    app.grading.limit = grade_limit()
    return app


def grade_limit() -> int | None:
    """$HONEBENCH_GRADE_LIMIT: grade at most this many items per run (checks, pictures)."""
    raw = os.environ.get("HONEBENCH_GRADE_LIMIT", "").strip()
    try:
        return max(1, int(raw)) if raw else None
    except ValueError:
        print(f"honebench: ignoring HONEBENCH_GRADE_LIMIT={raw!r}: give a whole number",
              file=sys.stderr)
        return None
