"""The progress chart: score per shelf version in order of creation (QtCharts).

Tuning items are a solid line, held-out items a dashed one; each has its 95% interval as a
shaded band. The marker's shape gives the decision: a filled circle for kept, a cross for
set aside, a hollow square for not decided. Colours come from the palette (dark too).
A toggle above switches to the score-vs-cost view (cost_chart.py) with the Pareto front.
"""
from __future__ import annotations

from typing import Sequence

from PySide6.QtCharts import (QAreaSeries, QCategoryAxis, QChart, QChartView, QLineSeries,
                              QScatterSeries, QValueAxis)
from PySide6.QtCore import QEvent, QMargins, QPointF, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPalette, QPen
from PySide6.QtWidgets import (QButtonGroup, QHBoxLayout, QLabel, QPushButton,
                               QStackedWidget, QVBoxLayout, QWidget)

from ...core.project import ShelfRow
from .chart_marks import mark_style, paint_axes, split_colour
from .cost_chart import CostChart

SPLITS = (("tuning", "tuning items"), ("held_out", "held-out items"))
DECISIONS = (("kept", "kept"), ("set_aside", "set aside"), ("", "not decided"))
STEP = (-0.14, 0.14)  # half-width of each version's interval step, in versions
EMPTY_TEXT = "No version has a score yet: grade a wording and keep it to start the chart."


def _scored(row: ShelfRow, split: str):
    s = getattr(row, split)
    return s if s is not None and s.total > 0 else None


class ProgressChart(QWidget):
    """Call ``set_rows(rows)``; rows in any order, shown by version number.

    Attributes for tests and readers: ``lines[split]`` (QLineSeries of rates in percent),
    ``bands[split]`` (QAreaSeries), ``markers[(split, decision)]`` (QScatterSeries;
    decision "kept", "set_aside" or ""); ``cost`` (the score-vs-cost view, a CostChart)
    and ``show_cost(on)``, the toggle between the two views."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.rows: list[ShelfRow] = []
        self.chart = QChart()
        self.chart.setMargins(QMargins(4, 4, 4, 4))  # the dock's title names the chart
        self.view = QChartView(self.chart)
        self.view.setRenderHint(QPainter.RenderHint.Antialiasing)
        self.view.setAccessibleName("Progress chart of scores per shelf version")
        self.view.setMinimumHeight(220)
        self.empty = QLabel(EMPTY_TEXT)
        self.empty.setWordWrap(True)
        self.empty.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.legend = QLabel()
        self.legend.setWordWrap(True)
        self.legend.setAccessibleName("Legend: line per item split, marker shape per decision")
        self.caption = QLabel()
        self.caption.setWordWrap(True)
        self.caption.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.caption.setAccessibleName("What the chart shows")
        by_version = QWidget()
        layout = QVBoxLayout(by_version)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.view, 1)
        layout.addWidget(self.legend)
        layout.addWidget(self.empty)
        layout.addWidget(self.caption)
        self.cost = CostChart()  # the score-vs-cost view
        self.pages = QStackedWidget()
        self.pages.addWidget(by_version)
        self.pages.addWidget(self.cost)
        outer = QVBoxLayout(self)
        outer.setContentsMargins(4, 4, 4, 4)
        outer.addLayout(self._view_buttons())
        outer.addWidget(self.pages, 1)
        self.show_cost(False)
        self.lines: dict[str, QLineSeries] = {}
        self.bands: dict[str, QAreaSeries] = {}
        self.markers: dict[tuple[str, str], QScatterSeries] = {}
        self._setup()
        self._style()
        self.set_rows([])

    # -- method calls down ---------------------------------------------------------------
    def set_rows(self, rows: Sequence[ShelfRow]) -> None:
        self.rows = sorted(rows, key=lambda r: r.entry.version)
        self._fill()
        self.cost.set_rows(self.rows)

    def show_cost(self, on: bool) -> None:
        """Score against cost (True) or score by version (False)."""
        self.pages.setCurrentIndex(1 if on else 0)
        self.cost.measure_row.setVisible(on)
        (self.cost_button if on else self.version_button).setChecked(True)
        for button in (self.version_button, self.cost_button):  # the view shown, in bold
            font = button.font()
            font.setBold(button.isChecked())
            button.setFont(font)

    def point_count(self, split: str) -> int:
        return self.lines[split].count()

    # -- internals -----------------------------------------------------------------------
    def _view_buttons(self) -> QHBoxLayout:
        """Two linked toggles: score by version, or score against cost."""
        self.version_button = QPushButton("B&y version")
        self.version_button.setToolTip("Score per shelf version, in order of creation")
        self.cost_button = QPushButton("Score vs cost")
        self.cost_button.setToolTip("Tuning score against tokens (or seconds) per item, "
                                    "with the Pareto front")
        group = QButtonGroup(self)
        row = QHBoxLayout()
        for n, button in enumerate((self.version_button, self.cost_button)):
            button.setCheckable(True)
            group.addButton(button, n)
            row.addWidget(button)
        row.addSpacing(12)
        row.addWidget(self.cost.measure_row)  # the cost measure, shown with its view
        self.cost.measure_row.hide()
        row.addStretch(1)
        group.idClicked.connect(lambda n: self.show_cost(n == 1))
        return row

    def _setup(self) -> None:
        """Series and axes, made once; set_rows only replaces their points."""
        chart = self.chart
        self.x_axis = QCategoryAxis()
        self.x_axis.setLabelsPosition(QCategoryAxis.AxisLabelsPosition.AxisLabelsPositionOnValue)
        self.x_axis.setTitleText("shelf version, in order of creation")
        self.y_axis = QValueAxis()
        self.y_axis.setRange(-4, 104)  # room for markers at 0% and 100%
        self.y_axis.setTickType(QValueAxis.TickType.TicksDynamic)
        self.y_axis.setTickAnchor(0)
        self.y_axis.setTickInterval(25)
        self.y_axis.setLabelFormat("%d%%")
        self.y_axis.setTitleText("% of items passed")
        chart.addAxis(self.x_axis, Qt.AlignmentFlag.AlignBottom)
        chart.addAxis(self.y_axis, Qt.AlignmentFlag.AlignLeft)
        self.edges: dict[str, tuple[QLineSeries, QLineSeries]] = {}
        added = []
        for split, name in SPLITS:
            line, low, high = QLineSeries(), QLineSeries(), QLineSeries()
            line.setName(name)
            band = QAreaSeries(high, low)
            band.setName(f"{name}, 95% interval")
            self.lines[split], self.bands[split], self.edges[split] = line, band, (low, high)
            added += [band, line]
            for decision, words in DECISIONS:
                dots = QScatterSeries()
                dots.setName(f"{name}: {words}")
                dots.hovered.connect(lambda point, on, sp=split: self._tip(point, on, sp))
                self.markers[(split, decision)] = dots
                added.append(dots)
        for series in added:
            chart.addSeries(series)
            series.attachAxis(self.x_axis)
            series.attachAxis(self.y_axis)
        chart.legend().hide()  # the legend is a label below: it wraps in a narrow dock

    def _fill(self) -> None:
        n = len(self.rows)
        for label in list(self.x_axis.categoriesLabels()):
            self.x_axis.remove(label)
        step = max(1, -(-n // 12))
        for i, row in enumerate(self.rows):
            if (n - 1 - i) % step == 0:  # the newest version always has its label
                self.x_axis.append(row.entry.label, i)
        self.x_axis.setRange(-0.5, max(n - 0.5, 0.5))
        for split, _name in SPLITS:
            points = [(i, s, row) for i, row in enumerate(self.rows)
                      if (s := _scored(row, split)) is not None]
            low, high = self.edges[split]
            self.lines[split].replace([QPointF(i, s.rate * 100) for i, s, _ in points])
            # each version's interval is a short flat step, so a lone version shows its band
            low.replace([QPointF(i + d, s.low * 100) for i, s, _ in points for d in STEP])
            high.replace([QPointF(i + d, s.high * 100) for i, s, _ in points for d in STEP])
            for decision, _words in DECISIONS:
                self.markers[(split, decision)].replace(
                    [QPointF(i, s.rate * 100) for i, s, row in points
                     if row.entry.decision == decision or (
                         decision == "" and row.entry.decision not in ("kept", "set_aside"))])
        tuning, held = self.lines["tuning"].count(), self.lines["held_out"].count()
        self.empty.setVisible(not (tuning or held))
        self.caption.setText(
            f"{n} version{'s' if n != 1 else ''} in order of creation; {tuning} with a "
            f"tuning score, {held} with a held-out score. Shape: the decision. Bands: 95% "
            "interval. Hover a marker for its score and n.")

    def _style(self) -> None:
        """Colours from the current palette (called again when it changes)."""
        pal = self.palette()
        paint_axes(self.chart, self.view, (self.x_axis, self.y_axis), pal)
        self.chart.setTitleBrush(QBrush(pal.color(QPalette.ColorRole.Text)))
        for split, _name in SPLITS:
            colour = split_colour(pal, split)
            pen = QPen(colour, 2.2)
            if split == "held_out":
                pen.setStyle(Qt.PenStyle.DashLine)
            self.lines[split].setPen(pen)
            fill = QColor(colour)
            fill.setAlpha(55)
            self.bands[split].setBrush(fill)
            self.bands[split].setPen(QPen(Qt.PenStyle.NoPen))
            for decision, _words in DECISIONS:
                mark_style(self.markers[(split, decision)], decision, colour)
        tuning, held = (split_colour(pal, sp).name() for sp in ("tuning", "held_out"))
        self.legend.setText(
            f"<span style='color:{tuning}'>━━</span>&nbsp;tuning items &nbsp; "
            f"<span style='color:{held}'>╍╍</span>&nbsp;held-out items &nbsp; "
            "●&nbsp;kept &nbsp; ✕&nbsp;set aside &nbsp; □&nbsp;not decided")

    def _tip(self, point: QPointF, on: bool, split: str) -> None:
        if not on:
            self.view.setToolTip("")
            return
        i = round(point.x())
        if 0 <= i < len(self.rows):
            s = _scored(self.rows[i], split)
            words = dict(SPLITS)[split]
            if s is not None:
                self.view.setToolTip(f"{self.rows[i].entry.label} on {words}: {s.text()}")

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange:
            self._style()
        super().changeEvent(event)
