"""Compare, confirm, the progress chart and the exports, attached to a MainWindow.

``attach_compare_and_confirm(window)`` adds: Run › Compare… and Run › Confirm on held-out
items (and the same two buttons above the shelf list), the shelf's "best" and "⚠ check"
tags with the optimism note, a Progress chart dock, and File › Export report… / Export
chosen wording…. Grading and file writes run as jobs; the shelf is refreshed from them.
"""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QEvent, QObject, Qt, Signal
from PySide6.QtGui import QAction, QKeySequence, QPalette
from PySide6.QtWidgets import (QDockWidget, QFileDialog, QHBoxLayout, QLabel, QPushButton,
                               QVBoxLayout, QWidget)

from ..core.honesty import assess_shelf
from ..core.report import chosen_wording_text, write_html_report
from .compare_tasks import EDITOR, SPLIT_WORDS, compare_choice, confirm_entry, write_text
from .compare_view import ChooseVersions, CompareView
from .progress_chart import ProgressChart

BEST_TAG, CHECK_TAG = "best", "⚠ check"


# -- widgets ---------------------------------------------------------------------------------
class HonestyBar(QWidget):
    """Above the shelf list: the optimism note, which version is best and why, and the
    Compare / Confirm buttons. Signals: ``compare_clicked()``, ``confirm_clicked()``."""

    compare_clicked = Signal()
    confirm_clicked = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setAccessibleName("Caution: the top tuning score is optimistic")
        self.best = QLabel()
        self.best.setWordWrap(True)
        self.best.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.best.setAccessibleName("Which version is best, and why")
        self.compare_button = QPushButton("Com&pare…")
        self.compare_button.setAccessibleName("Compare the selected version with another")
        self.compare_button.setToolTip("Fixed and broken items between two versions, with "
                                       "the paired test")
        self.confirm_button = QPushButton("Con&firm on held-out items")
        self.confirm_button.setAccessibleName("Confirm the selected version on held-out items")
        self.confirm_button.setToolTip("Grade the selected version on the held-out items, "
                                       "which were never used to choose it")
        self.compare_button.clicked.connect(self.compare_clicked)
        self.confirm_button.clicked.connect(self.confirm_clicked)
        small = self.best.font()
        small.setPointSizeF(small.pointSizeF() * 0.9)
        for label in (self.note, self.best):
            label.setFont(small)
        row = QHBoxLayout()
        row.addWidget(self.compare_button)
        row.addWidget(self.confirm_button)
        row.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 4)
        layout.addWidget(self.note)
        layout.addWidget(self.best)
        layout.addLayout(row)

    def show_assessment(self, found, has_rows: bool) -> None:
        self.note.setVisible(bool(found and found.optimism_note))
        if found and found.optimism_note:
            self.note.setText(f"⚠ {found.optimism_note}")
        self.best.setVisible(has_rows and found is not None)
        if found is not None:
            self.best.setText(found.best_reason)


class CompareAndConfirm(QObject):
    """What attach_compare_and_confirm returns. Signals: ``compared(CompareView)``,
    ``confirmed(list[ShelfRow])``, ``exported(str)`` (the path written)."""

    compared = Signal(object)
    confirmed = Signal(object)
    exported = Signal(str)

    def __init__(self, window):
        super().__init__(window)
        self.window, self.runner, self.panel = window, window.runner, window.shelf
        self.job = None  # the compare or confirm job running, if any
        self.compare_view: CompareView | None = None
        self.assessment = None
        self.bar = HonestyBar()
        window.shelf.layout().insertWidget(0, self.bar)
        self.chart = ProgressChart()
        self.chart_dock = QDockWidget("Progress chart", window)
        self.chart_dock.setObjectName("progress_chart_dock")
        self.chart_dock.setWidget(self.chart)
        window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.chart_dock)
        window.tabifyDockWidget(window.labels_dock, self.chart_dock)
        window.resizeDocks([window.shelf_dock, self.chart_dock], [520, 300],
                           Qt.Orientation.Vertical)
        self._install_actions()
        self.bar.compare_clicked.connect(self.choose_and_compare)
        self.bar.confirm_clicked.connect(self.confirm_selected)
        self.panel.model.modelReset.connect(self.refresh)
        self.panel.selection_changed.connect(lambda _id: self._update_enabled())
        window.engine_bar.engine_ready.connect(lambda _h: self._update_enabled())
        window.grading.running_changed.connect(lambda _r: self._update_enabled())
        window.installEventFilter(self)
        self.refresh()

    def _install_actions(self) -> None:
        w, key = self.window, QKeySequence
        menus = {m.title().replace("&", ""): m for m in
                 (a.menu() for a in w.menuBar().actions()) if m is not None}

        def action(text, slot, tip, shortcut=None):
            act = QAction(text, w)
            act.setToolTip(tip)
            act.setStatusTip(tip)
            if shortcut:
                act.setShortcut(key(shortcut))
            act.triggered.connect(lambda _c=False: slot())
            return act

        self.compare_action = action("Com&pare…", self.choose_and_compare,
                                     "Compare two versions: fixed and broken items, paired "
                                     "test", "Ctrl+Shift+C")
        self.confirm_action = action("Con&firm on held-out items", self.confirm_selected,
                                     "Grade the selected shelf version on the held-out items",
                                     "Ctrl+Shift+H")
        self.report_action = action("Export &report…", self.export_report,
                                    "Write one self-contained HTML report of the project")
        self.wording_action = action("Export chosen &wording…", self.export_wording,
                                     "Write the chosen wording alone as a text file")
        run = menus.get("Run")
        if run is not None:
            run.addSeparator()
            run.addActions([self.compare_action, self.confirm_action])
        file_menu = menus.get("File")
        if file_menu is not None:
            file_menu.insertActions(w.actions.quit, [self.report_action, self.wording_action])
            file_menu.insertSeparator(w.actions.quit)
        view = menus.get("View")
        if view is not None:
            toggle = self.chart_dock.toggleViewAction()
            toggle.setText("&Progress chart")
            view.insertAction(view.actions()[2] if len(view.actions()) > 2 else None, toggle)

    # -- showing -------------------------------------------------------------------------
    def refresh(self) -> None:
        """Re-read the shelf rows the panel shows: tags, note, best line and chart."""
        rows = list(self.panel.model.rows)
        found = assess_shelf(rows) if rows else None
        self.assessment = found
        tags, tips = {}, {}
        if found is not None:
            if found.best_id is not None:
                tags[found.best_id] = (BEST_TAG,)
                tips[found.best_id] = [found.best_reason]
            for wid, sentences in found.warnings.items():
                tags[wid] = tags.get(wid, ()) + (CHECK_TAG,)
                tips[wid] = tips.get(wid, []) + sentences
        self.panel.set_tags(tags, tips)
        self.bar.show_assessment(found, bool(rows))
        self.chart.set_rows(rows)
        self._update_enabled()

    def _update_enabled(self) -> None:
        w = self.window
        idle = self.job is None and not w.grading.running and w.state is not None
        has_rows = bool(self.panel.model.rows)
        selected = self.panel.selected_id() is not None
        can_confirm = idle and selected and w.engine_bar.handle is not None
        for widget in (self.compare_action, self.bar.compare_button):
            widget.setEnabled(idle and has_rows)
        for widget in (self.confirm_action, self.bar.confirm_button):
            widget.setEnabled(can_confirm)
        for act in (self.report_action, self.wording_action):
            act.setEnabled(w.state is not None and w.state.qset is not None)

    def _status(self, text: str) -> None:
        self.window.statusBar().showMessage(text)

    def _progress(self, what: str):
        def show(payload):
            if payload[0] == "grading":
                self._status(f"Grading {payload[1]} first…")
            else:
                self._status(f"{what}: {payload[1]}/{payload[2]} graded…")
        return show

    def _submit(self, fn, done, name: str, problem: str):
        def finish(result):
            self.job = None
            self._update_enabled()
            done(result)

        def failed(message):
            self.job = None
            self._update_enabled()
            self.window.show_problem(problem, message)

        def cancelled():
            self.job = None
            self._update_enabled()
            self._status(f"Stopped: {name}")

        self.job = self.runner.submit(fn, done=finish, failed=failed, cancelled=cancelled,
                                      progress=self._progress(name.capitalize()), name=name)
        self._update_enabled()
        return self.job

    def _busy(self) -> bool:
        if self.job is not None or self.window.grading.running:
            self.window.show_problem("Busy grading", "Wait for the grade run in progress to "
                                     "finish (or cancel it), then try again.")
            return True
        return self.window.state is None or self.window.state.qset is None

    # -- compare -------------------------------------------------------------------------
    def choose_and_compare(self) -> CompareView | None:
        """Ask which two versions (default: the selected one against its parent or the
        version before it), then compare them."""
        rows = sorted(self.panel.model.rows, key=lambda r: r.entry.version)
        if self._busy() or not rows:
            return None
        selected = self.panel.selected_id() or rows[-1].entry.id
        entry = next(r.entry for r in rows if r.entry.id == selected)
        before = [r.entry.id for r in rows if r.entry.version < entry.version]
        base = entry.parent_id if entry.parent_id in {r.entry.id for r in rows} else (
            before[-1] if before else EDITOR)
        choices = [(EDITOR, "the editor's wording")] + [
            (r.entry.id, f"{r.entry.label} · {r.entry.text[:50]}") for r in rows]
        dialog = ChooseVersions(choices, base, selected, self.window)
        if not dialog.exec():
            return None
        a, b, split = dialog.choice()
        self.compare(a, b, split)
        return None

    def compare(self, a: int, b: int, split: str = "tuning"):
        """Compare A and B (wording ids or EDITOR) in a job; the view opens when done."""
        if a == b:
            self.window.show_problem("Nothing to compare", "Choose two different wordings.")
            return None
        if self._busy():
            return None
        w = self.window
        project, handle, params = w.state.project, w.engine_bar.handle, w.engine_bar.params()
        editor = w.editor.wording()
        self._status(f"Comparing on the {SPLIT_WORDS[split]}…")
        return self._submit(
            lambda ctx: compare_choice(project, handle, params, a, b, split, editor,
                                       ctx.cancel_event, ctx.report),
            lambda result: self._show_comparison(result, split), "compare",
            "The comparison did not finish")

    def _show_comparison(self, result, split: str) -> None:
        comparison, rows = result
        self.window.shelf_control.show_rows(rows)
        if self.compare_view is None:
            self.compare_view = CompareView(comparison, split, self.window)
        else:
            self.compare_view.show_comparison(comparison, split)
        self.compare_view.show()
        self.compare_view.raise_()
        self._status(f"Compared {comparison.name_a} and {comparison.name_b}: "
                     f"{len(comparison.fixed)} fixed, {len(comparison.broken)} broken, "
                     f"n={comparison.n}")
        self.compared.emit(self.compare_view)

    # -- confirm -------------------------------------------------------------------------
    def confirm_selected(self):
        """Grade the selected shelf version on the held-out items, then refresh the shelf."""
        wid = self.panel.selected_id()
        if wid is None or self._busy():
            return None
        handle = self.window.engine_bar.handle
        if handle is None:
            self.window.show_problem("The model has not loaded yet",
                                     "Wait for it to load, then confirm again.")
            return None
        project, params = self.window.state.project, self.window.engine_bar.params()
        label = next(r.entry.label for r in self.panel.model.rows if r.entry.id == wid)
        self._status(f"Confirming {label} on held-out items…")
        return self._submit(
            lambda ctx: confirm_entry(project, handle, params, wid, ctx.cancel_event,
                                      ctx.report),
            lambda result: self._confirmed(wid, label, result[1]),
            f"confirm {label}", "The confirmation did not finish")

    def _confirmed(self, wid: int, label: str, rows) -> None:
        self.window.shelf_control.show_rows(rows)
        self.window.shelf_changed.emit(rows)
        row = next((r for r in rows if r.entry.id == wid), None)
        if row is not None and row.held_out is not None:
            self._status(f"{label} on held-out items: {row.held_out.text()}")
        self.confirmed.emit(rows)

    # -- exports -------------------------------------------------------------------------
    def _ask_path(self, title: str, name: str, filter_: str) -> str:
        w = self.window
        start = Path(str(w.settings.value("export/last_dir", str(Path.home()))))
        path, _ = QFileDialog.getSaveFileName(w, title, str(start / name), filter_)
        if path:
            w.settings.setValue("export/last_dir", str(Path(path).parent))
        return path

    def export_report(self, path: str | None = None):
        """Write the HTML report (write_html_report) in a job; status names the path."""
        if self.window.state is None:
            return None
        project = self.window.state.project
        path = path or self._ask_path("Export report", f"{project.path.stem}-report.html",
                                      "HTML files (*.html)")
        if not path:
            return None
        return self.runner.submit(
            lambda ctx: str(write_html_report(project, path)),
            done=self._wrote("report"), name="export the report",
            failed=lambda m: self.window.show_problem("The report was not written", m))

    def export_wording(self, path: str | None = None):
        """Write the chosen wording's text alone (chosen_wording_text) in a job."""
        if self.window.state is None:
            return None
        project = self.window.state.project
        path = path or self._ask_path("Export chosen wording", "wording.txt",
                                      "Text files (*.txt)")
        if not path:
            return None
        return self.runner.submit(
            lambda ctx: write_text(path, chosen_wording_text(project)),
            done=self._wrote("chosen wording"), name="export the chosen wording",
            failed=lambda m: self.window.show_problem("The wording was not written", m))

    def _wrote(self, what: str):
        def done(path):
            self._status(f"Wrote the {what} to {path}")
            self.exported.emit(str(path))
        return done

    def eventFilter(self, obj, event):
        if obj is self.window and event.type() == QEvent.Type.Close and self.job is not None:
            self.job.cancel()  # the window then waits for jobs and closes the engine
        return False


def attach_compare_and_confirm(window) -> CompareAndConfirm:
    """Add compare, confirm, the progress chart and the report exports to ``window``."""
    return CompareAndConfirm(window)
