"""Opening the item view for a mark of the grade sheet, and stepping through the sheet's
rows from it (one view, reused while open)."""
from __future__ import annotations

from PySide6.QtCore import QObject
from PySide6.QtWidgets import QWidget

from ...core.records import Mark
from ..project.session import ProjectSession
from .item_view import ItemView
from .sheet import GradeSheetPanel


class ItemViewer(QObject):
    def __init__(self, session: ProjectSession, sheet: GradeSheetPanel, dialog_parent: QWidget,
                 parent=None):
        super().__init__(parent)
        self.session, self.sheet, self.dialog_parent = session, sheet, dialog_parent
        self.view: ItemView | None = None
        sheet.open_requested.connect(self.open)

    def open(self, mark: Mark) -> ItemView | None:
        state = self.session.state
        if state is None or state.qset is None:
            return None
        item = self._item(mark.item_id)
        if self.view is None:
            self.view = ItemView(item, mark, state.check.describe(), self.dialog_parent)
            self.view.step_requested.connect(self._step)
            self.view.finished.connect(self._closed)
        self._show(item, mark)
        self.view.show()
        self.view.raise_()
        return self.view

    def close(self) -> None:
        if self.view is not None:
            self.view.close()

    def _show(self, item, mark: Mark) -> None:
        row, rows = self.sheet.current_row(), self.sheet.proxy.rowCount()
        position = f"{row + 1} of {rows} shown" if row >= 0 else ""
        self.view.show_mark(item, mark, position, self.sheet.model.extracted_text(mark))
        self.view.set_step_enabled(row > 0, 0 <= row < rows - 1)

    def _item(self, item_id: str):
        for item in self.session.state.qset.items:
            if item.id == item_id:
                return item
        raise LookupError(f"item {item_id} is not in the question set any more")

    def _step(self, delta: int) -> None:
        mark = self.sheet.select_row(self.sheet.current_row() + delta)
        if mark is not None and self.view is not None:
            self._show(self._item(mark.item_id), mark)

    def _closed(self, _result=0) -> None:
        view, self.view = self.view, None
        if view is not None:
            view.deleteLater()
