"""The grade sheet's table model: one row per mark, formatted per role inside data().

No per-row widgets and no per-row work when a list of marks is handed over: a 100,000-mark
run opens at once and only visible rows are ever formatted. Marks streaming in from a grade
run appear one by one (the engine finishes several items per step; they are paced a few
hundredths of a second apart), and a backlog is inserted as one batch. Sorting reorders the list in one Python sort
(the proxy's own sort would call back into Python for every comparison).
"""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import (QModelIndex, QPointF, QSortFilterProxyModel, Qt,
                            QTimer)
from PySide6.QtGui import (QColor, QGuiApplication, QIcon, QPainter, QPainterPath, QPalette, QPen,
                           QPixmap)

from ...core.records import Mark
from ..tables import ColumnsModel

COLUMNS = ("result", "id", "expected", "extracted", "why", "tokens", "seconds")
RESULT, ID, EXPECTED, EXTRACTED, WHY, TOKENS, SECONDS = range(len(COLUMNS))
HEADER_TIPS = {
    RESULT: "pass, miss or error (the shape says it too: ✓ pass, ✗ miss, ⚠ error)",
    ID: "the item's id in the question set",
    EXPECTED: "the expected answer from the question set",
    EXTRACTED: "the answer pulled out of the model's output",
    WHY: "the answer check's one-line reason",
    TOKENS: "prompt + answer tokens",
    SECONDS: "model time for this item (cached answers cost none)",
}
MARK_ROLE = Qt.ItemDataRole.UserRole + 1  # the Mark itself
GLYPHS = {"pass": "✓", "miss": "✗", "error": "⚠"}
FLUSH_MS = 50  # a streaming mark is inserted at most this often
PACE_LIMIT = 8  # with more marks waiting than this, all of them are inserted at once
NONE = "(none)"  # the extracted answer when nothing was extracted


def outcome(mark: Mark) -> str:
    """pass, miss or error."""
    if mark.error is not None:
        return "error"
    return "pass" if mark.passed else "miss"


def one_line(text: str, limit: int = 200) -> str:
    flat = text.replace("\r\n", "\n").replace("\n", " ⏎ ").replace("\t", " ")
    return flat if len(flat) <= limit else flat[: limit - 1] + "…"


def _sort_keys() -> dict[int, Callable]:
    order = {"error": 0, "miss": 1, "pass": 2}
    return {
        RESULT: lambda m, e: order[outcome(m)],
        ID: lambda m, e: m.item_id,
        EXPECTED: lambda m, e: e.get(m.item_id, "").casefold(),
        EXTRACTED: lambda m, e: m.extracted.casefold(),
        WHY: lambda m, e: m.why.casefold(),
        TOKENS: lambda m, e: m.prompt_tokens + m.completion_tokens,
        SECONDS: lambda m, e: m.seconds,
    }


class OutcomeIcons:
    """Check, cross and warning shapes drawn in the palette's text colour (shape, not hue,
    tells them apart). Redrawn when the palette changes."""

    def __init__(self):
        self._icons: dict[str, QIcon] = {}
        self._colour: QColor | None = None

    def icon(self, kind: str) -> QIcon:
        colour = QGuiApplication.palette().color(QPalette.ColorRole.Text)
        if colour != self._colour:
            self._colour, self._icons = colour, {k: self._draw(k, colour) for k in GLYPHS}
        return self._icons[kind]

    @staticmethod
    def _draw(kind: str, colour: QColor) -> QIcon:
        icon = QIcon()
        for size in (16, 24, 32):
            pix = QPixmap(size, size)
            pix.fill(Qt.GlobalColor.transparent)
            p = QPainter(pix)
            p.setRenderHint(QPainter.RenderHint.Antialiasing)
            pen = QPen(colour, max(1.6, size / 8), Qt.PenStyle.SolidLine, Qt.PenCapStyle.RoundCap,
                       Qt.PenJoinStyle.RoundJoin)
            p.setPen(pen)
            s = size
            if kind == "pass":
                path = QPainterPath(QPointF(s * .18, s * .52))
                path.lineTo(s * .42, s * .76)
                path.lineTo(s * .84, s * .24)
                p.drawPath(path)
            elif kind == "miss":
                p.drawLine(QPointF(s * .24, s * .24), QPointF(s * .76, s * .76))
                p.drawLine(QPointF(s * .76, s * .24), QPointF(s * .24, s * .76))
            else:
                tri = QPainterPath(QPointF(s * .5, s * .12))
                tri.lineTo(s * .9, s * .86)
                tri.lineTo(s * .1, s * .86)
                tri.closeSubpath()
                p.drawPath(tri)
                p.drawLine(QPointF(s * .5, s * .38), QPointF(s * .5, s * .6))
                p.drawPoint(QPointF(s * .5, s * .74))
            p.end()
            icon.addPixmap(pix)
        return icon


class MarksModel(ColumnsModel):
    """Marks of one grade run. Takes the list it is given as is (no copy, no per-row work)."""

    COLUMNS, HEADER_TIPS = COLUMNS, HEADER_TIPS

    def __init__(self, marks: list[Mark] | None = None, expected: dict[str, str] | None = None,
                 parent=None):
        super().__init__(parent)
        self._marks: list[Mark] = marks if marks is not None else []
        self._expected: dict[str, str] = expected or {}
        self._pending: list[Mark] = []
        self._icons = OutcomeIcons()
        self._keys = _sort_keys()
        self._sorted: tuple[int, Qt.SortOrder] | None = None
        self._labels: frozenset[str] | None = None  # a label check's labels, else None
        self._flush_timer = QTimer(self)
        self._flush_timer.setInterval(FLUSH_MS)
        self._flush_timer.timeout.connect(self._tick)

    # -- filling -------------------------------------------------------------------------
    def set_marks(self, marks: list[Mark], expected: dict[str, str] | None = None) -> None:
        """Show another run's marks (the list is taken as is)."""
        self.beginResetModel()
        self._pending.clear()
        self._marks = marks
        if expected is not None:
            self._expected = expected
        self._sorted = None
        self.endResetModel()

    def clear(self, expected: dict[str, str] | None = None) -> None:
        self.set_marks([], expected)

    def set_labels(self, labels) -> None:
        """A label check's labels: an extracted answer that is none of them shows as
        "(none)" (the check found no label), not as the raw reply. None: any check."""
        self._labels = frozenset(labels) if labels else None

    def append(self, mark: Mark) -> None:
        """Queue a streaming mark; it is inserted on the next tick (one per tick)."""
        self._pending.append(mark)
        if not self._flush_timer.isActive():
            self._flush_timer.start()

    def _tick(self) -> None:
        if len(self._pending) > PACE_LIMIT:
            self.flush()
        else:
            self._insert(self._pending[:1])
            del self._pending[:1]
        if not self._pending:
            self._flush_timer.stop()

    def flush(self) -> None:
        """Insert every queued mark now (one beginInsertRows for the batch)."""
        self._flush_timer.stop()
        batch, self._pending = self._pending, []
        self._insert(batch)

    def _insert(self, batch: list[Mark]) -> None:
        if not batch:
            return
        start = len(self._marks)
        self.beginInsertRows(QModelIndex(), start, start + len(batch) - 1)
        self._marks.extend(batch)
        self.endInsertRows()

    def extracted_text(self, mark: Mark) -> str:
        """The extracted answer, or "(none)" when nothing (no label) was extracted. A scored
        label shows its confidence and the runner-up: "timetable 0.61, next refund 0.22"."""
        text = mark.extracted.strip()
        if not text or (self._labels is not None and text not in self._labels):
            return NONE
        return mark.choice_text or text

    def marks(self) -> list[Mark]:
        return self._marks

    def mark_at(self, row: int) -> Mark:
        return self._marks[row]

    def expected_for(self, item_id: str) -> str:
        return self._expected.get(item_id, "")

    # -- the Qt model --------------------------------------------------------------------
    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self._marks)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        mark = self._marks[index.row()]
        col = index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return self._display(mark, col)
        if role == Qt.ItemDataRole.DecorationRole and col == RESULT:
            return self._icons.icon(outcome(mark))
        if role == Qt.ItemDataRole.ToolTipRole:
            return self._tooltip(mark, col)
        if role == Qt.ItemDataRole.TextAlignmentRole and col in (TOKENS, SECONDS):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.AccessibleTextRole:
            return self._display(mark, col) if col else f"{outcome(mark)}: {mark.why}"
        if role == MARK_ROLE:
            return mark
        return None

    def _display(self, mark: Mark, col: int) -> str:
        if col == RESULT:
            return outcome(mark)
        if col == ID:
            return mark.item_id
        if col == EXPECTED:
            return one_line(self._expected.get(mark.item_id, ""))
        if col == EXTRACTED:
            return one_line(self.extracted_text(mark))
        if col == WHY:
            return one_line(mark.why)
        if col == TOKENS:
            return str(mark.prompt_tokens + mark.completion_tokens)
        if col == SECONDS:
            return "cached" if mark.cached else f"{mark.seconds:.2f}"
        return ""

    def _tooltip(self, mark: Mark, col: int) -> str | None:
        if col == WHY:
            return mark.why
        if col == EXTRACTED:
            return mark.output or mark.extracted or None
        if col == EXPECTED:
            return self._expected.get(mark.item_id) or None
        if col == TOKENS:
            return f"{mark.prompt_tokens} prompt + {mark.completion_tokens} answer tokens"
        return None

    def sort(self, column: int, order=Qt.SortOrder.AscendingOrder) -> None:
        """Reorder the marks by one column (one Python sort; persistent indexes follow)."""
        self.flush()
        if column not in self._keys:
            return
        key, expected, marks = self._keys[column], self._expected, self._marks
        self.layoutAboutToBeChanged.emit()
        keys = [key(m, expected) for m in marks]
        order_rows = sorted(range(len(marks)), key=keys.__getitem__,
                            reverse=order == Qt.SortOrder.DescendingOrder)
        marks[:] = [marks[i] for i in order_rows]
        old = self.persistentIndexList()
        if old:
            new_row = [0] * len(order_rows)
            for new, previous in enumerate(order_rows):
                new_row[previous] = new
            self.changePersistentIndexList(
                old, [self.index(new_row[i.row()], i.column()) for i in old])
        self._sorted = (column, order)
        self.layoutChanged.emit()

    def resort(self) -> None:
        """Apply the last sort again (after a run's streamed marks have all arrived)."""
        if self._sorted is not None:
            self.sort(*self._sorted)


class MarksFilter(QSortFilterProxyModel):
    """Misses only and free text (id, expected, extracted, why, output); sorting is done
    by the marks model itself."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self._misses_only = False
        self._text = ""
        self.setDynamicSortFilter(True)

    def set_misses_only(self, on: bool) -> None:
        if on != self._misses_only:
            self.beginFilterChange()
            self._misses_only = on
            self.endFilterChange(QSortFilterProxyModel.Direction.Rows)

    def set_text(self, text: str) -> None:
        text = text.strip().casefold()
        if text != self._text:
            self.beginFilterChange()
            self._text = text
            self.endFilterChange(QSortFilterProxyModel.Direction.Rows)

    def filterAcceptsRow(self, row: int, parent) -> bool:
        source: MarksModel = self.sourceModel()
        mark = source.mark_at(row)
        if self._misses_only and mark.passed:
            return False
        if self._text:
            hay = " ".join((mark.item_id, source.expected_for(mark.item_id), mark.extracted,
                            mark.why, mark.output)).casefold()
            return self._text in hay
        return True

    def sort(self, column: int, order=Qt.SortOrder.AscendingOrder) -> None:
        self.sourceModel().sort(column, order)

    def mark_at(self, row: int) -> Mark:
        return self.sourceModel().mark_at(self.mapToSource(self.index(row, 0)).row())
