"""How the charts draw a version: colours by split, markers by decision, and axes in the
current palette (shared by the progress chart and the score-vs-cost view)."""
from __future__ import annotations

from PySide6.QtCharts import QChart, QChartView, QScatterSeries
from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import QBrush, QColor, QImage, QPainter, QPalette, QPen

MARKER = 11.0


def paint_axes(chart: QChart, view: QChartView, axes, pal: QPalette) -> None:
    """Background, axis labels, titles and grid lines in the palette's colours."""
    text, grid = pal.color(QPalette.ColorRole.Text), pal.color(QPalette.ColorRole.Mid)
    chart.setBackgroundBrush(pal.brush(QPalette.ColorRole.Base))
    view.setBackgroundBrush(pal.brush(QPalette.ColorRole.Base))
    for axis in axes:
        axis.setLabelsColor(text)
        axis.setTitleBrush(QBrush(text))
        axis.setGridLineColor(grid)
        axis.setLinePenColor(grid)


def split_colour(palette: QPalette, split: str) -> QColor:
    """Tuning: the palette's highlight; held-out: its link colour, moved away in hue when
    the two are alike. The lines differ by dash too, so colour is never the only cue."""
    tuning = palette.color(QPalette.ColorRole.Highlight)
    if split == "tuning":
        return tuning
    other = QColor(palette.color(QPalette.ColorRole.Link))
    if abs(other.hslHue() - tuning.hslHue()) < 60:
        other = QColor.fromHsl((tuning.hslHue() + 150) % 360, 170,
                               max(90, min(170, other.lightness())))
    return other


def cross_image(colour: QColor, size: int = int(MARKER) + 3) -> QImage:
    """An ✕ in ``colour`` on a transparent square, the brush of the set-aside markers."""
    image = QImage(size, size, QImage.Format.Format_ARGB32)
    image.fill(Qt.GlobalColor.transparent)
    p = QPainter(image)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.setPen(QPen(colour, 2.4, Qt.PenStyle.SolidLine, Qt.PenCapStyle.RoundCap))
    p.drawLine(QPointF(2, 2), QPointF(size - 2, size - 2))
    p.drawLine(QPointF(2, size - 2), QPointF(size - 2, 2))
    p.end()
    return image


def mark_style(dots: QScatterSeries, decision: str, colour: QColor) -> None:
    """Marker by decision: filled circle kept, cross set aside, hollow square not decided."""
    dots.setMarkerSize(MARKER)
    if decision == "kept":
        dots.setMarkerShape(QScatterSeries.MarkerShape.MarkerShapeCircle)
        dots.setColor(colour)
        dots.setBorderColor(colour)
    elif decision == "set_aside":
        image = cross_image(colour)
        dots.setMarkerShape(QScatterSeries.MarkerShape.MarkerShapeRectangle)
        dots.setMarkerSize(image.width())
        dots.setBrush(QBrush(image))
        dots.setPen(QPen(Qt.PenStyle.NoPen))
    else:
        dots.setMarkerShape(QScatterSeries.MarkerShape.MarkerShapeRectangle)
        dots.setBrush(QBrush(Qt.BrushStyle.NoBrush))
        dots.setPen(QPen(colour, 1.8))
