"""The grade sheet as the user sees it: filters, the marks table, the label table, the
progress of a running grade and the score of the shown run."""
from __future__ import annotations

from PySide6.QtCore import QEvent, QModelIndex, Qt, QTimer, Signal
from PySide6.QtWidgets import (QAbstractItemView, QCheckBox, QHBoxLayout, QHeaderView, QLabel,
                               QLineEdit, QProgressBar, QPushButton, QStackedWidget, QTableView,
                               QVBoxLayout, QWidget)

from ...core.events import Progress, progress_text
from ...core.records import Mark
from ...core.summary import RunSummary
from .marks_model import (COLUMNS, EXPECTED, EXTRACTED, ID, RESULT, SECONDS, TOKENS, WHY,
                          MarksFilter, MarksModel)

EMPTY_TEXT = ("No marks yet.\n\nWrite a wording above, then grade the tuning items with "
              "Ctrl+Return (Run › Grade tuning items).\nEach item's mark appears here as soon "
              "as the model has answered it.")
RUNNING_TEXT = "Grading… each item's mark appears here as soon as the model has answered it."
WAITING_TEXT = "Waiting for the model: {what}. Grading starts when it is free (Esc cancels)."
NO_SET_TEXT = ("No question set yet.\n\nImport one with File › Import question set… "
               "(Ctrl+I), or drop a CSV, TSV, JSONL, JSON, Parquet or XLSX file on this window.")


class MarksTable(QTableView):
    """The marks table; Enter or a double-click opens the item view."""

    open_requested = Signal(QModelIndex)

    def keyPressEvent(self, event):
        plain = event.modifiers() == Qt.KeyboardModifier.NoModifier
        if event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and plain and \
                self.currentIndex().isValid():
            self.open_requested.emit(self.currentIndex())
            return
        super().keyPressEvent(event)


class GradeSheetPanel(QWidget):
    """Signals: ``open_requested(Mark)``, ``current_item_changed(str)`` (item id),
    ``cancel_requested()``, ``summary_shown(RunSummary | None)``."""

    open_requested = Signal(object)
    summary_shown = Signal(object)
    current_item_changed = Signal(str)
    cancel_requested = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.model = MarksModel(parent=self)
        self.proxy = MarksFilter(self)
        self.proxy.setSourceModel(self.model)

        self.caption = QLabel("Grade sheet")
        self.caption.setAccessibleName("Which grade run the sheet shows")
        self.misses_only = QCheckBox("&Misses only")
        self.misses_only.setAccessibleName("Show misses only")
        self.misses_only.toggled.connect(self._on_misses_toggled)
        self.filter_edit = QLineEdit()
        self.filter_edit.setPlaceholderText("Filter: id, answer or why…")
        self.filter_edit.setClearButtonEnabled(True)
        self.filter_edit.setAccessibleName("Filter marks by text")
        self.filter_edit.setMaximumWidth(320)
        self._filter_timer = QTimer(self, singleShot=True, interval=200)
        self._filter_timer.timeout.connect(lambda: self._apply_text(self.filter_edit.text()))
        self.filter_edit.textChanged.connect(lambda _t: self._filter_timer.start())
        self.count_label = QLabel()
        self.count_label.setAccessibleName("How many marks are shown")

        top = QHBoxLayout()
        top.addWidget(self.caption, 1)
        top.addWidget(self.count_label)
        top.addSpacing(12)
        top.addWidget(self.misses_only)
        top.addWidget(self.filter_edit)

        self.table = MarksTable()
        self.table.setModel(self.proxy)
        self.table.setAccessibleName("Grade sheet: one row per item")
        self.table.setSortingEnabled(True)
        self.table.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setAlternatingRowColors(True)
        self.table.setWordWrap(False)
        self.table.setTextElideMode(Qt.TextElideMode.ElideRight)
        vh = self.table.verticalHeader()
        vh.setVisible(False)
        vh.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        vh.setDefaultSectionSize(self.fontMetrics().height() + 8)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        hh.setStretchLastSection(False)
        em = self.fontMetrics().horizontalAdvance("m")
        widths = {RESULT: 6, ID: 8, EXPECTED: 9, EXTRACTED: 24, WHY: 22, TOKENS: 5, SECONDS: 5}
        for col, w in widths.items():
            self.table.setColumnWidth(col, int(w * em))
        hh.setSectionResizeMode(WHY, QHeaderView.ResizeMode.Stretch)
        self.table.doubleClicked.connect(self._open_index)
        self.table.open_requested.connect(self._open_index)
        self.table.selectionModel().currentRowChanged.connect(self._on_current_changed)

        self.empty = QLabel(EMPTY_TEXT)
        self.empty.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.empty.setWordWrap(True)
        self.stack = QStackedWidget()
        self.stack.addWidget(self.empty)
        self.stack.addWidget(self.table)


        self.progress = QProgressBar()
        self.progress.setAccessibleName("Grade run progress")
        self.progress.setTextVisible(True)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setAccessibleName("Cancel the grade run (keeps finished marks)")
        self.cancel_button.setToolTip("Stop grading; marks already made are kept (Esc)")
        self.cancel_button.clicked.connect(self.cancel_requested)
        self.progress_row = QWidget()
        row = QHBoxLayout(self.progress_row)
        row.setContentsMargins(0, 0, 0, 0)
        row.addWidget(self.progress, 1)
        row.addWidget(self.cancel_button)
        self.progress_row.setVisible(False)

        from .summary import SummaryBar
        self.summary = SummaryBar()

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addLayout(top)
        layout.addWidget(self.stack, 1)
        layout.addWidget(self.progress_row)
        layout.addWidget(self.summary)

        for sig in (self.model.rowsInserted, self.model.modelReset, self.proxy.rowsInserted,
                    self.proxy.rowsRemoved, self.proxy.modelReset, self.proxy.layoutChanged):
            sig.connect(self._update_count)
        self._update_count()

    # -- showing runs --------------------------------------------------------------------
    def show_marks(self, marks: list[Mark], expected: dict[str, str], caption: str) -> None:
        """Show a finished run's marks (the list is taken as is)."""
        self.model.set_marks(marks, expected)
        self.table.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
        self.caption.setText(caption)
        self._update_count()

    def set_has_set(self, has_set: bool) -> None:
        """Say what to do first in the empty sheet: import a set, or grade."""
        self.empty.setText(EMPTY_TEXT if has_set else NO_SET_TEXT)

    def set_labels(self, labels) -> None:
        """A label check's labels (None for other checks): see MarksModel.set_labels."""
        self.model.set_labels(labels)

    def start_run(self, total: int, expected: dict[str, str], caption: str) -> None:
        """A run starts: the old marks, the empty-sheet text and the old score go."""
        self.model.clear(expected)
        self.caption.setText(caption)
        self.empty.setText(RUNNING_TEXT)
        self.progress.setRange(0, 0)  # busy until the run says how many items
        self.progress.setValue(0)
        self.progress.setFormat("starting…")
        self.progress_row.setVisible(True)
        self.cancel_button.setEnabled(True)
        self.summary.set_running()
        self.summary_shown.emit(None)
        self._update_count()

    def waiting(self, what: str) -> None:
        """The run waits for the model (another job uses it)."""
        self.empty.setText(WAITING_TEXT.format(what=what))
        self.progress.setFormat("waiting for the model…")

    def set_total(self, total: int) -> None:
        self.progress.setRange(0, max(total, 1))
        self.progress.setValue(0)
        self.progress.setFormat(progress_text(Progress(0, total)))

    def add_mark(self, mark: Mark, progress: Progress) -> None:
        self.model.append(mark)
        self.progress.setRange(0, max(progress.total, 1))
        self.progress.setValue(progress.done)
        self.progress.setFormat(progress_text(progress))

    def finish_run(self, caption: str, has_set: bool = True) -> None:
        self.set_has_set(has_set)
        self.model.flush()
        self.model.resort()
        self.progress_row.setVisible(False)
        self.caption.setText(caption)
        self._update_count()

    def cancelling(self) -> None:
        self.cancel_button.setEnabled(False)
        self.progress.setFormat(self.progress.format() + " · cancelling…")

    def show_summary(self, summary: RunSummary | None, caption: str = "") -> None:
        self.summary.set_summary(summary, caption)
        self.summary_shown.emit(summary)

    def select_row(self, row: int) -> Mark | None:
        """Make a (filtered) row current; returns its mark."""
        if not 0 <= row < self.proxy.rowCount():
            return None
        index = self.proxy.index(row, 0)
        self.table.setCurrentIndex(index)
        self.table.scrollTo(index)
        return self.proxy.mark_at(row)

    def current_row(self) -> int:
        index = self.table.currentIndex()
        return index.row() if index.isValid() else -1

    # -- internals -----------------------------------------------------------------------
    def _open_index(self, index: QModelIndex) -> None:
        if index.isValid():
            self.open_requested.emit(self.proxy.mark_at(index.row()))

    def _on_current_changed(self, current: QModelIndex, _previous) -> None:
        if current.isValid():
            self.current_item_changed.emit(self.proxy.mark_at(current.row()).item_id)

    def _on_misses_toggled(self, on: bool) -> None:
        self.proxy.set_misses_only(on)
        self._update_count()

    def _apply_text(self, text: str) -> None:
        self.proxy.set_text(text)
        self._update_count()

    def _update_count(self, *_args) -> None:
        total, shown = self.model.rowCount(), self.proxy.rowCount()
        self.stack.setCurrentWidget(self.table if total else self.empty)
        if not total:
            self.count_label.setText("")
        elif shown == total:
            self.count_label.setText(f"{total} marks")
        else:
            self.count_label.setText(f"showing {shown} of {total} marks")

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange:
            self.table.viewport().update()
        super().changeEvent(event)



__all__ = ["GradeSheetPanel", "COLUMNS"]
