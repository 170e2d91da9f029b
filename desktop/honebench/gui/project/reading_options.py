"""What the import dialog reads a file with: the first rows as a table model, and the
workbook sheet and title rows to skip (changing either asks its owner to read again)."""
from __future__ import annotations

import pandas as pd
from PySide6.QtCore import QAbstractTableModel, QModelIndex, Qt, Signal
from PySide6.QtWidgets import QComboBox, QFormLayout, QLabel, QSpinBox, QWidget

CELL_LIMIT = 80
MAX_TITLE_ROWS = 50


class HeadModel(QAbstractTableModel):
    """The first rows of a file, as read. Row headers are the rows' numbers in the file;
    column headers also say which role each column has in the current mapping."""

    def __init__(self, head: pd.DataFrame, parent=None):
        super().__init__(parent)
        self.head = head
        self.columns = [str(c) for c in head.columns]
        self.roles: dict[str, str] = {}
        self.row_word = head.attrs.get("row_word", "row")

    def set_roles(self, roles: dict[str, str]) -> None:
        self.roles = roles
        if self.columns:
            self.headerDataChanged.emit(Qt.Orientation.Horizontal, 0, len(self.columns) - 1)

    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self.head)

    def columnCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self.columns)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        value = self.head.iat[index.row(), index.column()]
        text = "" if value is None or (isinstance(value, float) and pd.isna(value)) else str(value)
        if role == Qt.ItemDataRole.DisplayRole:
            flat = " ".join(text.split())
            return flat if len(flat) <= CELL_LIMIT else flat[: CELL_LIMIT - 1] + "…"
        if role == Qt.ItemDataRole.ToolTipRole:
            return text if len(text) <= 2000 else text[:1999] + "…"
        return None

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation == Qt.Orientation.Horizontal:
            name = self.columns[section]
            if role == Qt.ItemDataRole.DisplayRole:
                role_name = self.roles.get(name)
                return f"{name}\n({role_name})" if role_name else f"{name}\n(not used)"
            if role == Qt.ItemDataRole.ToolTipRole:
                return f"column {name!r}" + (f": {self.roles[name]}" if name in self.roles else "")
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return str(self.head.index[section])
        if role == Qt.ItemDataRole.ToolTipRole:
            return f"{self.row_word} {self.head.index[section]} in the file"
        return None


class ReadingOptions(QWidget):
    """The sheet of a workbook (shown only when there are sheets) and how many title rows
    to skip before the column names. Signal ``changed(sheet, skip_rows)``: ``sheet`` is the
    sheet's name, or None when the file is not a workbook."""

    changed = Signal(object, int)

    def __init__(self, sheets: list[str] | None = None, parent=None):
        super().__init__(parent)
        self.sheet = QComboBox()
        self.sheet.setAccessibleName("Workbook sheet to read")
        self.sheet.setToolTip("The sheet that holds the items")
        for name in sheets or ():
            self.sheet.addItem(name, name)
        self.skip = QSpinBox()
        self.skip.setRange(0, MAX_TITLE_ROWS)
        self.skip.setAccessibleName("Title rows to skip")
        self.skip.setToolTip("Rows above the column names (a title, a date, notes) that are "
                             "not part of the table")
        self.skip.setSuffix(" rows")
        form = QFormLayout(self)
        form.setContentsMargins(0, 0, 0, 0)
        sheet_label = QLabel("S&heet")
        sheet_label.setBuddy(self.sheet)
        skip_label = QLabel("&Title rows to skip")
        skip_label.setBuddy(self.skip)
        form.addRow(sheet_label, self.sheet)
        form.addRow(skip_label, self.skip)
        form.setRowVisible(self.sheet, bool(sheets))
        self.sheet.currentIndexChanged.connect(lambda _i: self._emit())
        self.skip.valueChanged.connect(lambda _v: self._emit())

    def values(self) -> tuple[str | None, int]:
        """(sheet name or None, title rows to skip)."""
        return self.sheet.currentData(), self.skip.value()

    def _emit(self) -> None:
        self.changed.emit(*self.values())
