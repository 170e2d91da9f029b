"""The shelf's table model and the cell texts and diff markup it shows."""
from __future__ import annotations

import html
from datetime import datetime

from PySide6.QtCore import QModelIndex, Qt, Signal
from PySide6.QtGui import QGuiApplication, QPalette
from PySide6.QtWidgets import QStyledItemDelegate

from ..tables import ColumnsModel

from ...core.diffing import word_diff
from ...core.project import ShelfRow
from ...core.stats import Score
from ...core.wording import PLACEMENT_LABELS

EMPTY_TEXT = ("Nothing on the shelf yet. Grade a wording, then press Keep (Ctrl+K) to put it "
              "here as v1.")
COLUMNS = ("version", "tuning", "held-out", "prompt", "answer", "wait s", "origin",
           "placement", "saved")
(VERSION, TUNING, HELD_OUT, PROMPT_TOKENS, ANSWER_TOKENS, SECONDS, ORIGIN, PLACEMENT,
 SAVED) = range(len(COLUMNS))
COST_COLUMNS = (PROMPT_TOKENS, ANSWER_TOKENS, SECONDS)
HEADER_TIPS = {
    VERSION: "the shelf number; set-aside versions say so and are greyed",
    TUNING: "pass rate on the tuning items, its 95% interval and the number of items",
    HELD_OUT: "pass rate on the held-out items, its 95% interval and the number of items",
    PROMPT_TOKENS: "mean prompt tokens per item, on the run behind the tuning score",
    ANSWER_TOKENS: "mean answer tokens per item, on the run behind the tuning score (0 when "
                   "the labels were scored rather than generated)",
    SECONDS: "mean seconds each item waited for its answer, on the run behind the tuning "
             "score; items decoded together wait together, so this is more than the run's "
             "time per item on the clock; seconds depend on the machine and its load, "
             "tokens do not",
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


def cost_cell(row: ShelfRow, col: int) -> str:
    """Mean prompt tokens '412', answer tokens '6.8' or seconds '0.38' per item; a dash
    when the version has no tuning run or its seconds were not measured."""
    cost = row.cost
    value = None if cost is None else {PROMPT_TOKENS: cost.mean_prompt_tokens,
                                       ANSWER_TOKENS: cost.mean_answer_tokens,
                                       SECONDS: cost.mean_seconds}[col]
    if value is None:
        return "—"
    if col == SECONDS:
        return f"{value:.2f}" if value < 10 else f"{value:.1f}"
    return f"{value:,.1f}" if value < 100 else f"{value:,.0f}"


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


def version_cell(row: ShelfRow, extra: tuple[str, ...] = ()) -> str:
    """'v3 · set aside'; ``extra`` tags (e.g. 'best', '⚠ check') follow in words."""
    tag = TAGS.get(row.entry.decision)
    return " · ".join([row.entry.label, *([tag] if tag else []), *extra])


class _RoomyDelegate(QStyledItemDelegate):
    """Cells a little wider than their text, so neighbouring columns do not touch."""

    def sizeHint(self, option, index):
        hint = super().sizeHint(option, index)
        hint.setWidth(hint.width() + 12)
        return hint


class ShelfModel(ColumnsModel):
    """The shelf rows, newest version first: the one copy every view reads (shelf panel,
    suggestions, compare, chart). Refreshed from ``project_changed`` by the shelf control.
    Signal: ``rows_changed(list[ShelfRow])`` after every refresh."""

    COLUMNS, HEADER_TIPS = COLUMNS, HEADER_TIPS
    rows_changed = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.rows: list[ShelfRow] = []
        self.palette = QGuiApplication.palette()
        self.tags: dict[int, tuple[str, ...]] = {}  # wording id -> extra tags in words
        self.tips: dict[int, list[str]] = {}  # wording id -> extra tooltip sentences

    def set_rows(self, rows: list[ShelfRow]) -> None:
        self.beginResetModel()
        self.rows = sorted(rows, key=lambda r: r.entry.version, reverse=True)
        self.endResetModel()
        self.rows_changed.emit(self.rows)

    def entry(self, wording_id: int | None):
        """The shelf entry with this id, or None."""
        return next((r.entry for r in self.rows if r.entry.id == wording_id), None)

    def row_for(self, wording_id: int | None):
        return next((r for r in self.rows if r.entry.id == wording_id), None)

    def set_palette(self, palette: QPalette) -> None:
        self.palette = palette
        if self.rows:
            self.dataChanged.emit(self.index(0, 0), self.index(len(self.rows) - 1, SAVED),
                                  [Qt.ItemDataRole.ForegroundRole])

    def row_of(self, wording_id: int) -> int | None:
        return next((n for n, r in enumerate(self.rows) if r.entry.id == wording_id), None)

    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self.rows)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        row, col = self.rows[index.row()], index.column()
        entry = row.entry
        if role == Qt.ItemDataRole.DisplayRole:
            if col == VERSION:
                return version_cell(row, self.tags.get(entry.id, ()))
            if col in (TUNING, HELD_OUT):
                return score_cell(row.tuning if col == TUNING else row.held_out)
            if col in COST_COLUMNS:
                return cost_cell(row, col)
            if col == PLACEMENT:
                return PLACEMENT_LABELS.get(entry.placement, entry.placement)
            if col == ORIGIN:
                return entry.origin.replace("_", " ")
            return saved_cell(entry.created_at)
        if role == Qt.ItemDataRole.TextAlignmentRole and col in COST_COLUMNS:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ForegroundRole and entry.decision == "set_aside":
            return self.palette.color(QPalette.ColorGroup.Disabled, QPalette.ColorRole.Text)
        if role == Qt.ItemDataRole.ToolTipRole:
            extra = "".join(f"<p>{html.escape(t)}</p>" for t in self.tips.get(entry.id, ()))
            return self._tooltip(row) + extra
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
        if row.cost is not None:
            lines.append(f"cost: {html.escape(row.cost.text())}")
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
