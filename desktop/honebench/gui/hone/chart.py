"""The auto-hone progress chart: the best tuning score per round and the held-out score of
each kept version, in the palette's light or dark chart theme."""
from __future__ import annotations

from PySide6.QtCharts import QChart, QChartView, QLineSeries, QScatterSeries, QValueAxis
from PySide6.QtCore import QEvent, QMargins, QPointF, QSize, Qt
from PySide6.QtGui import QPainter, QPalette, QPen

from ...core.stats import Score


class HoneChart(QChartView):
    """Best tuning score per round (line with round dots) and the held-out score of each
    kept version (squares). Colours come from the chart theme chosen by palette lightness;
    the two series also differ in shape."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setAccessibleName("Progress chart: best tuning score per round and held-out "
                               "scores of kept versions")
        self.setRenderHint(QPainter.RenderHint.Antialiasing)
        self.setMinimumHeight(150)
        chart = QChart()
        chart.setMargins(QMargins(2, 2, 2, 2))
        chart.layout().setContentsMargins(0, 0, 0, 0)
        chart.legend().setAlignment(Qt.AlignmentFlag.AlignBottom)
        self.tuning = QLineSeries()
        self.tuning.setName("best, tuning items")
        self.tuning.setPointsVisible(True)
        self.held = QScatterSeries()
        self.held.setName("held-out, kept version")
        self.held.setMarkerShape(QScatterSeries.MarkerShape.MarkerShapeRectangle)
        self.held.setMarkerSize(10)
        chart.addSeries(self.tuning)
        chart.addSeries(self.held)
        self.x_axis, self.y_axis = QValueAxis(), QValueAxis()
        self.x_axis.setTitleText("round (0 = start)")
        self.setToolTip("Line with dots: the best wording's tuning score after each round.\n"
                        "Squares: each kept version graded on the held-out items.")
        self.x_axis.setLabelFormat("%d")
        self.y_axis.setTitleText("pass %")
        self.y_axis.setLabelFormat("%d")
        # a little room past 0 and 100 so edge points show whole; ticks stay at 0, 50, 100
        self.y_axis.setRange(-4, 104)
        self.y_axis.setTickType(QValueAxis.TickType.TicksDynamic)
        self.y_axis.setTickAnchor(0)
        self.y_axis.setTickInterval(50)
        self.y_axis.setMinorTickCount(1)
        self.x_axis.setTickType(QValueAxis.TickType.TicksDynamic)
        self.x_axis.setTickAnchor(0)
        chart.addAxis(self.x_axis, Qt.AlignmentFlag.AlignBottom)
        chart.addAxis(self.y_axis, Qt.AlignmentFlag.AlignLeft)
        for series in (self.tuning, self.held):
            series.attachAxis(self.x_axis)
            series.attachAxis(self.y_axis)
        self.setChart(chart)
        self.set_rounds(5)
        self.follow_palette()

    def sizeHint(self):
        return QSize(340, 230)

    def set_rounds(self, rounds: int) -> None:
        rounds = max(rounds, 1)
        self.x_axis.setRange(-0.25, rounds + 0.25)
        self.x_axis.setTickInterval(max(1, -(-rounds // 10)))  # at most about 10 labels

    def clear(self) -> None:
        self.tuning.clear()
        self.held.clear()

    def add_tuning(self, x: int, s: Score) -> None:
        self.tuning.append(QPointF(x, s.rate * 100))

    def add_held_out(self, x: int, s: Score) -> None:
        self.held.append(QPointF(x, s.rate * 100))

    def follow_palette(self) -> None:
        palette = self.palette()
        chart = self.chart()
        dark = palette.color(QPalette.ColorRole.Window).lightness() < 128
        chart.setTheme(QChart.ChartTheme.ChartThemeDark if dark else QChart.ChartTheme.ChartThemeLight)
        text = palette.color(QPalette.ColorRole.WindowText)
        chart.setBackgroundBrush(palette.brush(QPalette.ColorRole.Base))
        chart.setPlotAreaBackgroundVisible(False)
        chart.setTitleBrush(text)
        chart.legend().setLabelColor(text)
        for axis in (self.x_axis, self.y_axis):
            axis.setLabelsColor(text)
            axis.setTitleBrush(text)
        pen = QPen(self.tuning.pen())
        pen.setWidthF(2.0)
        self.tuning.setPen(pen)
        self.setBackgroundBrush(palette.brush(QPalette.ColorRole.Window))

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange:
            self.follow_palette()
        super().changeEvent(event)
