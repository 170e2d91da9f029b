"""The one base of the window's table models: column names and their header tooltips."""
from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, Qt


class ColumnsModel(QAbstractTableModel):
    """A table model with fixed, named columns. Subclasses set ``COLUMNS`` (header texts)
    and ``HEADER_TIPS`` (column -> tooltip) and provide ``rowCount`` and ``data``."""

    COLUMNS: tuple[str, ...] = ()
    HEADER_TIPS: dict[int, str] = {}

    def columnCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self.COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation != Qt.Orientation.Horizontal or not 0 <= section < len(self.COLUMNS):
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return self.COLUMNS[section]
        if role == Qt.ItemDataRole.ToolTipRole:
            return self.HEADER_TIPS.get(section)
        return None
