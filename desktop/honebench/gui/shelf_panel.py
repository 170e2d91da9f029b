"""The shelf: every wording tried so far (v1, v2, ...), newest first, with its scores.

Below the list: what differs between the editor and the selected version, a note, and the
buttons to restore it, keep it or set it aside. Set-aside versions stay listed, greyed and
tagged "set aside" in words.
"""
from __future__ import annotations

import html
from datetime import datetime

from PySide6.QtCore import QAbstractTableModel, QEvent, QModelIndex, Qt, Signal
from PySide6.QtGui import QGuiApplication, QPalette
from PySide6.QtWidgets import (QAbstractItemView, QHBoxLayout, QHeaderView, QLabel, QLineEdit,
                               QPushButton, QSplitter, QStackedWidget, QStyledItemDelegate,
                               QTextBrowser, QTreeView, QVBoxLayout, QWidget)

from ..core.diffing import diff_counts, word_diff
from ..core.project import ShelfRow
from ..core.stats import Score
from ..core.wording import PLACEMENT_LABELS

EMPTY_TEXT = ("Nothing on the shelf yet. Grade a wording, then press Keep (Ctrl+K) to put it "
              "here as v1.")
CAUTION_TEXT = ("Scores on few items are noisy; a wording tuned on these items can overfit. "
                "Confirm on held-out items.")
COLUMNS = ("version", "tuning", "held-out", "origin", "placement", "saved")
VERSION, TUNING, HELD_OUT, ORIGIN, PLACEMENT, SAVED = range(len(COLUMNS))
HEADER_TIPS = {
    VERSION: "the shelf number; set-aside versions say so and are greyed",
    TUNING: "pass rate on the tuning items, its 95% interval and the number of items",
    HELD_OUT: "pass rate on the held-out items, its 95% interval and the number of items",
    PLACEMENT: "where the wording goes in the prompt",
    ORIGIN: "typed by you, or the strategy that suggested it",
    SAVED: "when it was put on the shelf",
}
TAGS = {"set_aside": "set aside", "": "undecided"}
ID_ROLE = Qt.ItemDataRole.UserRole + 1


def _percent(x: float) -> str:
    return f"{x * 100:.1f}".rstrip("0").rstrip(".") + "%"


def score_cell(s: Score | None) -> str:
    """'62.5% (47–76, n=40)': the rate, its 95% interval in percent and the item count;
    a dash when not graded."""
    if s is None:
        return "—"
    if s.total == 0:
        return "n=0"
    return f"{_percent(s.rate)} ({round(s.low * 100)}–{round(s.high * 100)}, n={s.total})"


def saved_cell(created_at: str, now: datetime | None = None) -> str:
    """Local time: '14:05' today, '3 Mar 14:05' this year, '3 Mar 2024' before."""
    try:
        when = datetime.fromisoformat(created_at).astimezone()
    except (TypeError, ValueError):
        return created_at
    now = now or datetime.now().astimezone()
    if when.date() == now.date():
        return when.strftime("%H:%M")
    if when.year == now.year:
        return f"{when.day} {when.strftime('%b %H:%M')}"
    return f"{when.day} {when.strftime('%b %Y')}"


def version_cell(row: ShelfRow) -> str:
    tag = TAGS.get(row.entry.decision)
    return f"{row.entry.label} · {tag}" if tag else row.entry.label


class _RoomyDelegate(QStyledItemDelegate):
    """Cells a little wider than their text, so neighbouring columns do not touch."""

    def sizeHint(self, option, index):
        hint = super().sizeHint(option, index)
        hint.setWidth(hint.width() + 12)
        return hint


class ShelfModel(QAbstractTableModel):
    """Shelf rows, newest version first."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.rows: list[ShelfRow] = []
        self.palette = QGuiApplication.palette()

    def set_rows(self, rows: list[ShelfRow]) -> None:
        self.beginResetModel()
        self.rows = sorted(rows, key=lambda r: r.entry.version, reverse=True)
        self.endResetModel()

    def set_palette(self, palette: QPalette) -> None:
        self.palette = palette
        if self.rows:
            self.dataChanged.emit(self.index(0, 0), self.index(len(self.rows) - 1, SAVED),
                                  [Qt.ItemDataRole.ForegroundRole])

    def row_of(self, wording_id: int) -> int | None:
        return next((n for n, r in enumerate(self.rows) if r.entry.id == wording_id), None)

    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation != Qt.Orientation.Horizontal:
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return COLUMNS[section]
        if role == Qt.ItemDataRole.ToolTipRole:
            return HEADER_TIPS[section]
        return None

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        row, col = self.rows[index.row()], index.column()
        entry = row.entry
        if role == Qt.ItemDataRole.DisplayRole:
            if col == VERSION:
                return version_cell(row)
            if col in (TUNING, HELD_OUT):
                return score_cell(row.tuning if col == TUNING else row.held_out)
            if col == PLACEMENT:
                return PLACEMENT_LABELS.get(entry.placement, entry.placement)
            if col == ORIGIN:
                return entry.origin.replace("_", " ")
            return saved_cell(entry.created_at)
        if role == Qt.ItemDataRole.ForegroundRole and entry.decision == "set_aside":
            return self.palette.color(QPalette.ColorGroup.Disabled, QPalette.ColorRole.Text)
        if role == Qt.ItemDataRole.ToolTipRole:
            return self._tooltip(row)
        if role == Qt.ItemDataRole.AccessibleTextRole and col in (TUNING, HELD_OUT):
            s = row.tuning if col == TUNING else row.held_out
            return s.text() if s is not None else "not graded"
        if role == ID_ROLE:
            return entry.id
        return None

    @staticmethod
    def _tooltip(row: ShelfRow) -> str:
        e = row.entry
        lines = [f"<b>{e.label}</b> ({html.escape(TAGS.get(e.decision, 'kept'))}, "
                 f"{html.escape(PLACEMENT_LABELS.get(e.placement, e.placement))})"]
        for name, s in (("tuning", row.tuning), ("held-out", row.held_out)):
            lines.append(f"{name}: {html.escape(s.text()) if s is not None else 'not graded'}")
        if e.note:
            lines.append(f"note: {html.escape(e.note)}")
        text = e.text if len(e.text) <= 2000 else e.text[:1999] + "…"
        lines.append(f"<p style='white-space:pre-wrap'>{html.escape(text)}</p>")
        return "<br>".join(lines[:-1]) + lines[-1]


def diff_html(old: str, new: str, palette: QPalette) -> str:
    """Removed words struck through, added words bold and underlined; colours from the
    palette only, so the marks still read without colour."""
    gone = palette.color(QPalette.ColorRole.PlaceholderText).name()
    came = palette.color(QPalette.ColorRole.Link).name()
    parts = []
    pieces = word_diff(old, new)
    for n, (op, text) in enumerate(pieces):
        shown = html.escape(text).replace("\n", "<br>")
        if op == "added" and n and pieces[n - 1][0] == "removed" and \
                not pieces[n - 1][1][-1:].isspace() and not text[:1].isspace():
            parts.append(" ")  # a gap on screen only, so "word.New" reads as two pieces
        if op == "removed":
            if not text.strip():
                shown = "·" * min(len(text), 3) if "\n" not in text else "⏎<br>"
            parts.append(f"<s style='color:{gone}'>{shown}</s>")
        elif op == "added":
            parts.append(f"<b><u style='color:{came}'>{shown}</u></b>")
        else:
            parts.append(shown)
    return f"<p style='white-space:pre-wrap'>{''.join(parts)}</p>"


class ShelfPanel(QWidget):
    """Signals: ``restore_requested(id)``, ``note_edited(id, note)``,
    ``decision_requested(id, "kept" | "set_aside")``, ``selection_changed(id)``
    (id is the wording id; selection_changed fires only when the selected id changes)."""

    restore_requested = Signal(int)
    note_edited = Signal(int, str)
    decision_requested = Signal(int, str)
    selection_changed = Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.editor_text = ""
        self._selected: int | None = None
        self._note_id: int | None = None
        self.model = ShelfModel(self)

        self.view = QTreeView()
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

        self.caution = QLabel(CAUTION_TEXT)
        self.caution.setWordWrap(True)
        small = self.caution.font()
        small.setPointSizeF(small.pointSizeF() * 0.85)
        self.caution.setFont(small)
        self.caution.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.caution.setAccessibleName("Caution about scores on few items")

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addWidget(splitter, 1)
        layout.addWidget(self.caution)
        self.set_rows([])

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
    def set_rows(self, rows: list[ShelfRow]) -> None:
        """Show these shelf rows. The selected version stays selected; with none selected,
        the newest is."""
        self._flush_note()
        keep = self._selected
        self.model.set_rows(rows)
        self.stack.setCurrentWidget(self.view if rows else self.empty)
        for col in range(len(COLUMNS)):
            self.view.resizeColumnToContents(col)
        self.details.setVisible(bool(rows))
        row = self.model.row_of(keep) if keep is not None else None
        if row is None and rows:
            row = 0
        if row is not None:
            self.view.setCurrentIndex(self.model.index(row, 0))
        self._show_selected()

    def set_editor_text(self, text: str) -> None:
        self.editor_text = text
        self._show_diff()

    def selected_id(self) -> int | None:
        return self._selected

    def select(self, wording_id: int) -> None:
        row = self.model.row_of(wording_id)
        if row is not None:
            self.view.setCurrentIndex(self.model.index(row, 0))

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
