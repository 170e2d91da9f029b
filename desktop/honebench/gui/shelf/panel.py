"""The shelf: every wording tried so far (v1, v2, ...), newest first, with its scores.

Below the list: what differs between the editor and the selected version, a note, and the
buttons to restore it, keep it or set it aside. Set-aside versions stay listed, greyed and
tagged "set aside" in words.
"""
from __future__ import annotations

from PySide6.QtCore import QEvent, Qt, QTimer, Signal
from PySide6.QtWidgets import (QAbstractItemView, QHBoxLayout, QHeaderView, QLabel, QLineEdit,
                               QPushButton, QSplitter, QStackedWidget, QTextBrowser, QTreeView,
                               QVBoxLayout, QWidget)

from ...core.diffing import diff_counts
from ...core.project import ShelfRow
from .model import (COLUMNS, EMPTY_TEXT, ID_ROLE, SAVED, VERSION,
                          ShelfModel, _RoomyDelegate, diff_html)


class ShelfPanel(QWidget):
    """Signals: ``restore_requested(id)``, ``note_edited(id, note)``,
    ``decision_requested(id, "kept" | "set_aside")``, ``selection_changed(id)``
    (id is the wording id; selection_changed fires only when the selected id changes)."""

    restore_requested = Signal(int)
    note_edited = Signal(int, str)
    decision_requested = Signal(int, str)
    selection_changed = Signal(int)

    def __init__(self, model: ShelfModel | None = None, parent=None):
        super().__init__(parent)
        self.editor_text = ""
        self._selected: int | None = None
        self._note_id: int | None = None
        self.model = model if model is not None else ShelfModel(self)
        self.model.modelAboutToBeReset.connect(self._flush_note)
        self.model.modelReset.connect(self._rows_reset)

        self.view = QTreeView()
        self.view.setMinimumHeight(4 * self.fontMetrics().height() + 12)
        self.view.setModel(self.model)
        self.view.setItemDelegate(_RoomyDelegate(self.view))
        self.view.setAccessibleName("Shelf of wordings, newest first")
        self.view.setRootIsDecorated(False)
        self.view.setUniformRowHeights(True)
        self.view.setAlternatingRowColors(True)
        self.view.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.view.setToolTip("Double-click or press Enter to restore a version into the editor")
        header = self.view.header()
        header.setStretchLastSection(False)
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)  # fitted in set_rows
        self.view.selectionModel().currentRowChanged.connect(lambda *_a: self._show_selected())
        self.view.activated.connect(lambda _i: self._restore())

        self.empty = QLabel(EMPTY_TEXT)
        self.empty.setWordWrap(True)
        self.empty.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.empty.setMargin(16)
        self.empty.setAccessibleName("The shelf is empty")
        self.stack = QStackedWidget()
        self.stack.addWidget(self.empty)
        self.stack.addWidget(self.view)

        self.details = self._build_details()
        splitter = QSplitter(Qt.Orientation.Vertical)
        splitter.addWidget(self.stack)
        splitter.addWidget(self.details)
        splitter.setChildrenCollapsible(False)
        splitter.setStretchFactor(0, 3)
        splitter.setStretchFactor(1, 2)

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addWidget(splitter, 1)
        self._rows_reset()

    def _build_details(self) -> QWidget:
        box = QWidget()
        self.heading = QLabel()
        self.heading.setWordWrap(True)
        bold = self.heading.font()
        bold.setBold(True)
        self.heading.setFont(bold)
        self.heading.setAccessibleName("What differs between the editor and the selected version")
        self.legend = QLabel()
        self.legend.setWordWrap(True)
        self.diff = QTextBrowser()
        line = self.fontMetrics().height()
        self.diff.setMinimumHeight(2 * line + 10)  # small minimums: the dock never overflows
        self.diff.setOpenLinks(False)
        self.diff.setAccessibleName("Word differences between the editor and the selected version")
        self.note = QLineEdit()
        self.note.setAccessibleName("Note for the selected version")
        self.note.setClearButtonEnabled(True)
        self.note.editingFinished.connect(self._flush_note)
        note_label = QLabel("&Note")
        note_label.setBuddy(self.note)
        self.restore_button = QPushButton("&Restore into editor")
        self.restore_button.setAccessibleName("Restore the selected version into the editor")
        self.restore_button.setToolTip("Put this wording and its placement into the editor "
                                       "(Ctrl+Z in the editor takes it back)")
        self.keep_button = QPushButton("&Keep")
        self.keep_button.setAccessibleName("Keep the selected version")
        self.aside_button = QPushButton("Set &aside")
        self.aside_button.setAccessibleName("Set the selected version aside")
        self.aside_button.setToolTip("It stays on the shelf, greyed, so it is not proposed again")
        self.restore_button.clicked.connect(self._restore)
        self.keep_button.clicked.connect(lambda: self._decide("kept"))
        self.aside_button.clicked.connect(lambda: self._decide("set_aside"))

        note_row = QHBoxLayout()
        note_row.addWidget(note_label)
        note_row.addWidget(self.note, 1)
        buttons = QHBoxLayout()
        buttons.addWidget(self.restore_button)
        buttons.addStretch(1)
        buttons.addWidget(self.keep_button)
        buttons.addWidget(self.aside_button)
        layout = QVBoxLayout(box)
        layout.setContentsMargins(0, 4, 0, 0)
        layout.addWidget(self.heading)
        layout.addWidget(self.legend)
        layout.addWidget(self.diff, 1)
        layout.addLayout(note_row)
        layout.addLayout(buttons)
        return box

    # -- method calls down ---------------------------------------------------------------
    def add_above(self, widget: QWidget) -> None:
        """Put a widget above the list (e.g. the compare and confirm bar)."""
        self.layout().insertWidget(0, widget)

    def set_rows(self, rows: list[ShelfRow]) -> None:
        """Show these shelf rows (sets the model's rows; used alone in tests)."""
        self.model.set_rows(rows)

    def _rows_reset(self) -> None:
        """The model has new rows. The selected version stays selected; with none
        selected, the newest is."""
        rows = self.model.rows
        keep = self._selected
        self.stack.setCurrentWidget(self.view if rows else self.empty)
        self._fit_columns()
        QTimer.singleShot(0, self._fit_columns)  # again once the view is laid out
        self.details.setVisible(bool(rows))
        row = self.model.row_of(keep) if keep is not None else None
        if row is None and rows:
            row = 0
        if row is not None:
            self.view.setCurrentIndex(self.model.index(row, 0))
        self._show_selected()

    def _fit_columns(self) -> None:
        for col in range(len(COLUMNS)):
            self.view.resizeColumnToContents(col)

    def set_editor_text(self, text: str) -> None:
        self.editor_text = text
        self._show_diff()

    def selected_id(self) -> int | None:
        return self._selected

    def select(self, wording_id: int) -> None:
        row = self.model.row_of(wording_id)
        if row is not None:
            self.view.setCurrentIndex(self.model.index(row, 0))

    def set_tags(self, tags: dict[int, tuple[str, ...]], tips: dict[int, list[str]]) -> None:
        """Extra words after a version (e.g. 'best') and extra tooltip sentences, by id."""
        self.model.tags, self.model.tips = dict(tags), dict(tips)
        if self.model.rows:
            self.model.dataChanged.emit(self.model.index(0, 0),
                                        self.model.index(len(self.model.rows) - 1, SAVED))
        self.view.resizeColumnToContents(VERSION)

    # -- internals -----------------------------------------------------------------------
    def _selected_row(self) -> ShelfRow | None:
        row = self.model.row_of(self._selected) if self._selected is not None else None
        return None if row is None else self.model.rows[row]

    def _show_selected(self) -> None:
        index = self.view.currentIndex()
        new_id = self.model.data(index, ID_ROLE) if index.isValid() else None
        changed = new_id != self._selected
        if changed:
            self._flush_note()
        self._selected = new_id
        row = self._selected_row()
        for button in (self.restore_button, self.keep_button, self.aside_button):
            button.setEnabled(row is not None)
        self.note.setEnabled(row is not None)
        if row is not None:
            self.keep_button.setEnabled(row.entry.decision != "kept")
            self.aside_button.setEnabled(row.entry.decision != "set_aside")
            if changed or not (self.note.hasFocus() and self.note.isModified()):
                self.note.setText(row.entry.note)
                self.note.setModified(False)
            self.note.setPlaceholderText(f"Note for {row.entry.label} (Enter saves it)")
            self.note.setToolTip("Saved when you press Enter or leave the field")
        else:
            self.note.clear()
        self._note_id = new_id
        self._show_diff()
        if changed and new_id is not None:
            self.selection_changed.emit(new_id)

    def _show_diff(self) -> None:
        row = self._selected_row()
        if row is None:
            self.heading.setText("Select a version to compare it with the editor.")
            self.legend.clear()
            self.diff.clear()
            return
        label = row.entry.label
        self.legend.setText(f"<s>struck through</s>: only in {label} · "
                            "<b><u>underlined</u></b>: only in the editor")
        old, new = row.entry.text, self.editor_text
        removed, added = diff_counts(old, new)
        self.legend.setVisible(old != new)
        if old == new:
            self.heading.setText(f"Editor vs {label}: the same wording")
        elif removed == added == 0:
            self.heading.setText(f"Editor vs {label}: only spacing or line breaks differ")
        else:
            words = "word" if removed == 1 else "words"
            self.heading.setText(f"Editor vs {label}: {removed} {words} removed, {added} added")
        self.diff.setHtml(diff_html(old, new, self.palette()))

    def _flush_note(self) -> None:
        """Send a changed note for the version it was typed for."""
        if self._note_id is None or not self.note.isModified():
            return
        self.note.setModified(False)
        row = self.model.row_of(self._note_id)
        old = self.model.rows[row].entry.note if row is not None else None
        if self.note.text() != old:
            self.note_edited.emit(self._note_id, self.note.text())

    def _restore(self) -> None:
        if self._selected is not None:
            self.restore_requested.emit(self._selected)

    def _decide(self, verdict: str) -> None:
        if self._selected is not None:
            self.decision_requested.emit(self._selected, verdict)

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange:
            self.model.set_palette(self.palette())
            self._show_diff()
        super().changeEvent(event)
