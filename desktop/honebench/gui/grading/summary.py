"""What a grade run adds up to: the score line, and for label checks a confusion table."""
from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QFont, QStandardItem, QStandardItemModel
from PySide6.QtGui import QPalette
from PySide6.QtWidgets import (QAbstractItemView, QHBoxLayout, QHeaderView, QLabel, QSizePolicy,
                               QTableView, QVBoxLayout, QWidget)

from ...core.stats import LabelReport
from ...core.summary import RunSummary


def caution_text(n: int, low: float, high: float) -> str:
    """The one line of caution beside a score: chance on few items, and overfitting."""
    spread = round((high - low) * 50)
    return (f"⚠ n={n}: ±{spread} points can be chance, and a wording tuned on "
            "these items flatters itself; compare on the same items and confirm on held-out "
            "items.")


class SummaryBar(QWidget):
    """Score with its 95% interval and n, one line of caution beside it, then the run's
    details in one line."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.score_label = QLabel()
        bold = self.score_label.font()
        bold.setBold(True)
        bold.setPointSizeF(bold.pointSizeF() * 1.1)
        self.score_label.setFont(bold)
        self.score_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.caution = QLabel()
        self.caution.setWordWrap(True)
        self.caution.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.caution.setAccessibleName("Caution: noise on few items and overfitting")
        self.detail_label = QLabel()
        self.detail_label.setWordWrap(True)
        self.score_label.setAccessibleName("Score of the shown grade run")
        self.detail_label.setAccessibleName("Details of the shown grade run")
        top = QHBoxLayout()
        top.setSpacing(12)
        top.addWidget(self.score_label)
        top.addWidget(self.caution, 1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(2)
        layout.addLayout(top)
        layout.addWidget(self.detail_label)
        self.set_summary(None)

    def set_summary(self, summary: RunSummary | None, caption: str = "") -> None:
        self.caution.setText("")
        if summary is None:
            self.score_label.setText(caption or "No score yet")
            self.detail_label.setText("Grade the tuning items (Ctrl+Return) to get a score "
                                      "with its 95% interval.")
            return
        s = summary.score
        self.score_label.setText(f"Score {s.text()}" if s.total else "Score: nothing graded")
        parts = [caption] if caption else []
        parts.append(f"check: {summary.check}")
        parts.append(f"errors: {summary.errors}")
        parts.append(f"from cache: {summary.cached}")
        parts.append(summary.time_text())  # model time beside wall time, as the CLI says it
        if summary.cost is not None:
            parts.append(f"cost: {summary.cost.text()}")
        if summary.mean_similarity is not None:
            parts.append(f"mean similarity: {summary.mean_similarity:.3f}")
        if s.total:
            self.caution.setText(caution_text(s.total, s.low, s.high))
        self.detail_label.setText(" · ".join(parts))

    def set_running(self) -> None:
        self.score_label.setText("Grading…")
        self.caution.setText("")
        self.detail_label.setText("The score and its 95% interval show when the run ends; "
                                  "marks appear above as they arrive. Esc cancels and keeps "
                                  "them.")


class LabelTable(QWidget):
    """Confusion table: rows are expected answers, columns the answer given; the diagonal
    (right answers) is bold. Per-label recall and precision close each row and column."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.title = QLabel()
        self.title.setWordWrap(True)
        self.model = QStandardItemModel(self)
        self.view = QTableView()
        self.view.setModel(self.model)
        self.view.setAccessibleName("Confusion table of labels")
        self.view.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.view.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.view.setFocusPolicy(Qt.FocusPolicy.TabFocus)
        self.view.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.view.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.view.setSizePolicy(QSizePolicy.Policy.Fixed, QSizePolicy.Policy.Fixed)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.title)
        layout.addWidget(self.view)
        layout.addStretch(1)

    def set_report(self, report: LabelReport | None) -> None:
        self.model.clear()
        self.view.setVisible(report is not None)
        if report is None:
            self.title.setText("The label table shows here after a grade run with the label "
                               "check: which answers were given for each expected label.")
            return
        self.title.setText("Rows: expected answer. Columns: answer given, numbered as the "
                           "rows. Right answers (the diagonal) in bold.")
        names = list(report.labels)
        numbers = [str(i) for i in range(1, len(names) + 1)]
        self.model.setHorizontalHeaderLabels(numbers + ["recall"])
        self.model.setVerticalHeaderLabels(
            [f"{n} {_short(name)}" for n, name in zip(numbers, names)] + ["precision"])
        bold = QFont(self.font())
        bold.setBold(True)
        for r, row in enumerate(report.confusion):
            for c, value in enumerate(row):
                cell = QStandardItem("·" if value == 0 and r != c else str(value))
                cell.setTextAlignment(Qt.AlignmentFlag.AlignCenter)
                cell.setToolTip(f"expected {names[r]}, given {names[c]}: {value}")
                if r == c:
                    cell.setFont(bold)
                    cell.setAccessibleText(f"{value} right answers for {names[r]}")
                self.model.setItem(r, c, cell)
        for i, stats in enumerate(report.per_label):
            recall = QStandardItem(f"{stats.recall:.2f}" if stats.support else "–")
            precision = QStandardItem(f"{stats.precision:.2f}" if stats.predicted else "–")
            for cell in (recall, precision):
                cell.setTextAlignment(Qt.AlignmentFlag.AlignCenter)
            recall.setToolTip(f"{stats.label}: {stats.support} items expect it")
            precision.setToolTip(f"{stats.label}: given {stats.predicted} times")
            self.model.setItem(i, len(names), recall)
            self.model.setItem(len(names), i, precision)
        self.model.setItem(len(names), len(names), QStandardItem(""))
        for i, name in enumerate(names):
            for orient in (Qt.Orientation.Horizontal, Qt.Orientation.Vertical):
                self.model.setHeaderData(i, orient, f"{i + 1}: {name}",
                                         Qt.ItemDataRole.ToolTipRole)
        self._fit()

    def _fit(self) -> None:
        """Wide and tall enough for the whole table, no wider."""
        view = self.view
        view.resizeColumnsToContents()
        view.resizeRowsToContents()
        frame = 2 * view.frameWidth() + 2
        width = view.verticalHeader().sizeHint().width() + frame + sum(
            view.columnWidth(c) for c in range(self.model.columnCount()))
        height = view.horizontalHeader().sizeHint().height() + frame + sum(
            view.rowHeight(r) for r in range(self.model.rowCount()))
        view.setMinimumWidth(width)
        view.setMaximumWidth(width)
        view.setMinimumHeight(min(height, 260))
        view.setMaximumHeight(height)


def _short(name: str, limit: int = 16) -> str:
    return name if len(name) <= limit else name[: limit - 1] + "…"
