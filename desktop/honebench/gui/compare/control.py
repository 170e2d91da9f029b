"""Compare and confirm: the honest checks of shelf versions.

``CompareControl`` owns the bar above the shelf list (the optimism note, which version is
best and why, the Compare and Confirm buttons), the shelf's "best" and "⚠ check" tags, the
progress chart and the compare view. Confirm is the one way to grade held-out items. Both
run as operations on the model lane; the shelf refreshes itself from ``project_changed``.
"""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QPalette
from PySide6.QtWidgets import QHBoxLayout, QLabel, QPushButton, QVBoxLayout, QWidget

from ...core.events import Marked, Stage, Started, progress_text
from ...core.honesty import assess_shelf
from ...core.wording import Wording
from ..jobs import Job, JobRunner
from ..project import operations
from ..project.operations import EDITOR
from ..project.session import ProjectSession
from ...core.project import SPLIT_WORDS
from ..shelf.model import ShelfModel
from ..shelf.panel import ShelfPanel
from .chart import ProgressChart
from .view import ChooseVersions, CompareView

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
        row = self.row = QHBoxLayout()
        row.addWidget(self.compare_button)
        row.addWidget(self.confirm_button)
        row.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 4)
        layout.addWidget(self.note)
        layout.addWidget(self.best)
        layout.addLayout(row)

    def add_button(self, button: QPushButton) -> None:
        """Another check beside Compare and Confirm (e.g. the transfer check)."""
        self.row.insertWidget(self.row.count() - 1, button)

    def show_assessment(self, found, has_rows: bool) -> None:
        self.note.setVisible(bool(found and found.optimism_note))
        if found and found.optimism_note:
            self.note.setText(f"⚠ {found.optimism_note}")
        self.best.setVisible(has_rows and found is not None)
        if found is not None:
            self.best.setText(found.best_reason)


class CompareControl(QObject):
    """Signals: ``compared(CompareView)``, ``confirmed(wording id)``, ``enabled_changed()``
    (when compare or confirm becomes possible or not)."""

    compared = Signal(object)
    confirmed = Signal(int)
    enabled_changed = Signal()

    def __init__(self, runner: JobRunner, session: ProjectSession, shelf: ShelfModel,
                 panel: ShelfPanel, engine, *, editor_wording: Callable[[], Wording],
                 show_problem: Callable[[str, str], None], status: Callable[[str], None],
                 dialog_parent: QWidget, parent=None):
        super().__init__(parent)
        self.runner, self.session, self.shelf, self.panel = runner, session, shelf, panel
        self.engine, self.editor_wording = engine, editor_wording
        self.show_problem, self.status, self.dialog_parent = show_problem, status, dialog_parent
        self.job: Job | None = None  # the compare or confirm job, if any
        self.compare_view: CompareView | None = None
        self.assessment = None
        self.bar = HonestyBar()
        panel.add_above(self.bar)
        self.chart = ProgressChart()
        self.bar.compare_clicked.connect(self.choose_and_compare)
        self.bar.confirm_clicked.connect(self.confirm_selected)
        shelf.rows_changed.connect(lambda _rows: self.refresh())
        panel.selection_changed.connect(lambda _id: self.update_enabled())
        engine.engine_ready.connect(lambda _h: self.update_enabled())
        session.opened.connect(lambda _s: self.update_enabled())
        self.refresh()

    # -- showing -------------------------------------------------------------------------
    def refresh(self) -> None:
        """The shelf rows changed: tags, note, best line and chart."""
        rows = list(self.shelf.rows)
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
        self.update_enabled()

    def can_compare(self) -> bool:
        return self.job is None and self.session.qset is not None and bool(self.shelf.rows)

    def can_confirm(self) -> bool:
        return (self.job is None and self.session.qset is not None
                and self.panel.selected_id() is not None and self.engine.handle is not None)

    def update_enabled(self) -> None:
        self.bar.compare_button.setEnabled(self.can_compare())
        self.bar.confirm_button.setEnabled(self.can_confirm())
        self.enabled_changed.emit()

    def _on_event(self, what: str):
        def show(event):
            if isinstance(event, Stage):
                self.status(f"{what}: {event.text}")
            elif isinstance(event, Marked):
                self.status(f"{what}: {progress_text(event.progress)}")
            elif isinstance(event, Started) and event.what:
                self.status(f"{what}: {event.what}")
        return show

    def _submit(self, fn, done, name: str, problem: str) -> Job:
        def finish(result):
            self.job = None
            self.update_enabled()
            done(result)

        def failed(message):
            self.job = None
            self.update_enabled()
            self.show_problem(problem, message)

        def cancelled():
            self.job = None
            self.update_enabled()
            self.status(f"Stopped: {name}")

        self.job = self.runner.submit(fn, done=finish, failed=failed, cancelled=cancelled,
                                      progress=self._on_event(name.capitalize()), name=name,
                                      uses_model=True)
        self.update_enabled()
        return self.job

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()

    # -- compare -------------------------------------------------------------------------
    def choose_and_compare(self) -> None:
        """Ask which two versions (default: the selected one against its parent or the
        version before it), then compare them."""
        rows = sorted(self.shelf.rows, key=lambda r: r.entry.version)
        if not rows or not self.can_compare():
            return
        selected = self.panel.selected_id() or rows[-1].entry.id
        entry = next(r.entry for r in rows if r.entry.id == selected)
        before = [r.entry.id for r in rows if r.entry.version < entry.version]
        base = entry.parent_id if entry.parent_id in {r.entry.id for r in rows} else (
            before[-1] if before else EDITOR)
        choices = [(EDITOR, "the editor's wording")] + [
            (r.entry.id, f"{r.entry.label} · {r.entry.text[:50]}") for r in rows]
        dialog = ChooseVersions(choices, base, selected, self.dialog_parent)
        if dialog.exec():
            self.compare(*dialog.choice())

    def compare(self, a: int, b: int, split: str = "tuning") -> Job | None:
        """Compare A and B (wording ids or EDITOR) in a job; the view opens when done."""
        if a == b:
            self.show_problem("Nothing to compare", "Choose two different wordings.")
            return None
        if self.job is not None or self.session.qset is None:
            return None
        project, handle = self.session.project, self.engine.handle
        settings, editor = self.engine.project_settings(), self.editor_wording()
        self.status(f"Comparing on the {SPLIT_WORDS[split]}…")
        return self._submit(
            lambda ctx: operations.compare(project, handle, a=a, b=b, split=split,
                                           editor=editor, settings=settings,
                                           cancel=ctx.cancel_event, on_event=ctx.report),
            lambda comparison: self._show_comparison(comparison, split), "compare",
            "The comparison did not finish")

    def _show_comparison(self, comparison, split: str) -> None:
        if self.compare_view is None:
            self.compare_view = CompareView(comparison, split, self.dialog_parent)
        else:
            self.compare_view.show_comparison(comparison, split)
        self.compare_view.show()
        self.compare_view.raise_()
        self.status(f"Compared {comparison.name_a} and {comparison.name_b}: "
                    f"{len(comparison.fixed)} fixed, {len(comparison.broken)} broken, "
                    f"n={comparison.n}")
        self.compared.emit(self.compare_view)

    # -- confirm -------------------------------------------------------------------------
    def confirm_selected(self) -> Job | None:
        """Grade the selected shelf version on the held-out items."""
        wid = self.panel.selected_id()
        if wid is None or self.job is not None or self.session.qset is None:
            return None
        handle = self.engine.handle
        if handle is None:
            self.show_problem("The model has not loaded yet",
                              "Wait for it to load, then confirm again.")
            return None
        project, settings = self.session.project, self.engine.project_settings()
        label = self.shelf.entry(wid).label
        self.status(f"Confirming {label} on held-out items…")
        return self._submit(
            lambda ctx: operations.confirm(project, handle, wording_id=wid, settings=settings,
                                           cancel=ctx.cancel_event, on_event=ctx.report),
            lambda _run: self._confirmed(wid, label), f"confirm {label}",
            "The confirmation did not finish")

    def _confirmed(self, wid: int, label: str) -> None:
        self.status(f"Confirmed {label} on the held-out items; the shelf shows its score")
        self.confirmed.emit(wid)
