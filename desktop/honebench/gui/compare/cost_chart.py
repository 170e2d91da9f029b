"""The progress chart's score-vs-cost view (QtCharts): each shelf version's tuning score
against what answering one item costs, with the Pareto front marked.

Points and the front come from core/cost.py (the same function the report uses). The front
is a step line through its versions, each ringed; a whisker is the score's 95% interval;
the marker's shape is the decision, as on the by-version view. Colours come from the palette.
"""
from __future__ import annotations

from typing import Sequence

from PySide6.QtCharts import QChart, QChartView, QLineSeries, QScatterSeries, QValueAxis
from PySide6.QtCore import QEvent, QMargins, QPointF, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPalette, QPen
from PySide6.QtWidgets import (QComboBox, QGraphicsSimpleTextItem, QHBoxLayout, QLabel,
                               QVBoxLayout, QWidget)

from ...core.chart_cost_svg import nice_ticks
from ...core.cost import MEASURES, SECONDS_CAUTION, CostPoint, cost_points, front_of, front_steps
from ...core.project import ShelfRow
from .chart_marks import mark_style, paint_axes, split_colour

DECISIONS = (("kept", "kept"), ("set_aside", "set aside"), ("", "not decided"))
EMPTY_TEXT = ("No version has both a tuning score and a measured cost yet: grade a wording "
              "on the tuning items to place it here.")
MEASURE_WORDS = (("tokens", "tokens per item"), ("seconds", "seconds each item waited"))


class CostChart(QWidget):
    """Call ``set_rows(rows)``. For tests and readers: ``points`` (core CostPoint list),
    ``front_line`` (QLineSeries of the step line), ``rings`` (QScatterSeries of the front),
    ``markers[decision]`` (QScatterSeries), ``labels`` (text items), ``measure``."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.rows: list[ShelfRow] = []
        self.points: list[CostPoint] = []
        self.measure = "tokens"
        self.chart = QChart()
        self.chart.setMargins(QMargins(4, 4, 4, 4))
        self.chart.legend().hide()
        self.view = QChartView(self.chart)
        self.view.setRenderHint(QPainter.RenderHint.Antialiasing)
        self.view.setAccessibleName("Tuning score against cost per shelf version")
        self.view.setMinimumHeight(220)
        self.measure_box = QComboBox()
        for key, words in MEASURE_WORDS:
            self.measure_box.addItem(words, key)
        self.measure_box.setAccessibleName("Cost measure on the horizontal axis")
        self.measure_box.setToolTip("Tokens do not depend on the machine; seconds do")
        self.measure_box.currentIndexChanged.connect(
            lambda _i: self.set_measure(self.measure_box.currentData()))
        cost_label = QLabel("Cost:")
        cost_label.setBuddy(self.measure_box)
        self.legend = QLabel()
        self.legend.setWordWrap(True)
        self.legend.setAccessibleName("Legend: the Pareto front and the marker shapes")
        self.empty = QLabel(EMPTY_TEXT)
        self.empty.setWordWrap(True)
        self.empty.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.caption = QLabel()
        self.caption.setWordWrap(True)
        self.caption.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.caption.setAccessibleName("What the score-vs-cost view shows")
        self.measure_row = QWidget()  # a host may move it into its own toolbar row
        row = QHBoxLayout(self.measure_row)
        row.setContentsMargins(0, 0, 0, 0)
        row.addWidget(cost_label)
        row.addWidget(self.measure_box)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.measure_row, 0, Qt.AlignmentFlag.AlignLeft)
        layout.addWidget(self.view, 1)
        layout.addWidget(self.legend)
        layout.addWidget(self.empty)
        layout.addWidget(self.caption)
        self.whiskers: list[QLineSeries] = []
        self.labels: list[QGraphicsSimpleTextItem] = []
        self._setup()
        self._style()
        self.set_rows([])

    # -- method calls down ---------------------------------------------------------------
    def set_rows(self, rows: Sequence[ShelfRow]) -> None:
        self.rows = list(rows)
        self._fill()

    def set_measure(self, measure: str) -> None:
        if measure not in MEASURES:
            raise ValueError(f"unknown cost measure {measure!r}")
        self.measure = measure
        index = self.measure_box.findData(measure)
        if index != self.measure_box.currentIndex():
            self.measure_box.setCurrentIndex(index)  # comes back here once
            return
        self._fill()

    # -- internals -----------------------------------------------------------------------
    def _setup(self) -> None:
        self.x_axis, self.y_axis = QValueAxis(), QValueAxis()
        self.y_axis.setRange(-4, 104)
        self.y_axis.setTickType(QValueAxis.TickType.TicksDynamic)
        self.y_axis.setTickAnchor(0)
        self.y_axis.setTickInterval(25)
        self.y_axis.setLabelFormat("%d%%")
        self.y_axis.setTitleText("% of tuning items passed")
        self.chart.addAxis(self.x_axis, Qt.AlignmentFlag.AlignBottom)
        self.chart.addAxis(self.y_axis, Qt.AlignmentFlag.AlignLeft)
        self.front_line = QLineSeries()
        self.front_line.setName("Pareto front")
        self.rings = QScatterSeries()
        self.rings.setName("on the Pareto front")
        self.markers: dict[str, QScatterSeries] = {}
        series = [self.front_line, self.rings]
        for decision, words in DECISIONS:
            dots = QScatterSeries()
            dots.setName(words)
            dots.hovered.connect(self._tip)
            self.markers[decision] = dots
            series.append(dots)
        for s in series:
            self.chart.addSeries(s)
            s.attachAxis(self.x_axis)
            s.attachAxis(self.y_axis)
        self.chart.plotAreaChanged.connect(lambda _r: self._place_labels())

    def _fill(self) -> None:
        self.points = cost_points(self.rows, self.measure)
        pts = self.points
        values = [p.cost_value for p in pts]
        ticks = nice_ticks(min(values, default=0.0), max(values, default=1.0))
        pad = (ticks[-1] - ticks[0]) * 0.04
        self.x_axis.setRange(ticks[0] - pad, ticks[-1] + pad)
        self.x_axis.setTickType(QValueAxis.TickType.TicksDynamic)
        self.x_axis.setTickAnchor(ticks[0])
        self.x_axis.setTickInterval(ticks[1] - ticks[0])
        step = ticks[1] - ticks[0]
        self.x_axis.setLabelFormat("%.0f" if step >= 1 else "%.2f")
        self.x_axis.setTitleText(dict(MEASURE_WORDS)[self.measure])
        front = front_of(pts)
        self.front_line.replace([QPointF(c, s * 100) for c, s in
                                 front_steps([(p.cost_value, p.score.rate) for p in front])])
        self.rings.replace([QPointF(p.cost_value, p.score.rate * 100) for p in front])
        for decision, _words in DECISIONS:
            self.markers[decision].replace(
                [QPointF(p.cost_value, p.score.rate * 100) for p in pts
                 if p.decision == decision or (decision == "" and p.decision not in
                                               ("kept", "set_aside"))])
        self._fill_whiskers(pts)
        for item in self.labels:
            self.chart.scene().removeItem(item)
        self.labels = []
        for p in pts:
            item = QGraphicsSimpleTextItem(p.label, self.chart)
            item.setBrush(QBrush(self.palette().color(QPalette.ColorRole.Text)))
            self.labels.append(item)
        self._place_labels()
        self.empty.setVisible(not pts)
        names = ", ".join(p.label for p in front) or "none"
        n = max((p.score.total for p in pts), default=0)
        text = (f"{len(pts)} version{'s' if len(pts) != 1 else ''} with a tuning score and a "
                f"measured cost ({MEASURES[self.measure]}; lower is cheaper). Pareto front: "
                f"{names} — no other version scores at least as high for no more cost. "
                "Scores are on "
                f"{n} tuning items, so a few points can be chance: hover a marker for its "
                "interval and compare before choosing.")
        if self.measure == "seconds":
            text += " " + SECONDS_CAUTION
        self.caption.setText(text)

    def _fill_whiskers(self, pts: Sequence[CostPoint]) -> None:
        for old in self.whiskers:
            self.chart.removeSeries(old)
        self.whiskers = []
        colour = QColor(self._colours()[0])
        colour.setAlpha(110)
        for p in pts:
            line = QLineSeries()
            line.append(p.cost_value, p.score.low * 100)
            line.append(p.cost_value, p.score.high * 100)
            line.setPen(QPen(colour, 4))
            self.chart.addSeries(line)
            line.attachAxis(self.x_axis)
            line.attachAxis(self.y_axis)
            self.whiskers.append(line)

    def _place_labels(self) -> None:
        for item, p in zip(self.labels, self.points):
            at = self.chart.mapToPosition(QPointF(p.cost_value, p.score.rate * 100))
            item.setPos(at.x() + 9, at.y() - item.boundingRect().height() - 2)

    def _colours(self) -> tuple[QColor, QColor]:
        """(points, front): the palette's highlight, and a colour set apart in hue."""
        pal = self.palette()
        return split_colour(pal, "tuning"), split_colour(pal, "held_out")

    def _style(self) -> None:
        pal = self.palette()
        text = pal.color(QPalette.ColorRole.Text)
        paint_axes(self.chart, self.view, (self.x_axis, self.y_axis), pal)
        point, front = self._colours()
        self.front_line.setPen(QPen(front, 2.2))
        self.rings.setMarkerShape(QScatterSeries.MarkerShape.MarkerShapeCircle)
        self.rings.setMarkerSize(22)
        self.rings.setBrush(QBrush(Qt.BrushStyle.NoBrush))
        self.rings.setPen(QPen(front, 2.2))
        for decision, _words in DECISIONS:
            mark_style(self.markers[decision], decision, point)
        for item in self.labels:
            item.setBrush(QBrush(text))
        self.legend.setText(
            f"<span style='color:{front.name()}'>━◯</span>&nbsp;Pareto front &nbsp; "
            f"<span style='color:{point.name()}'>┃</span>&nbsp;95% interval &nbsp; "
            "●&nbsp;kept &nbsp; ✕&nbsp;set aside &nbsp; □&nbsp;not decided")

    def _tip(self, point: QPointF, on: bool) -> None:
        if not on:
            self.view.setToolTip("")
            return
        near = min(self.points, default=None, key=lambda p: (
            abs(p.cost_value - point.x()), abs(p.score.rate * 100 - point.y())))
        if near is not None:
            front = "; on the Pareto front" if near.on_front else ""
            self.view.setToolTip(f"{near.label}: tuning {near.score.text()}\n"
                                 f"cost: {near.cost.text()}{front}")

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange:
            self._style()
            self._fill_whiskers(self.points)
        super().changeEvent(event)
