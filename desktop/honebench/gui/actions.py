"""The one action builder and the toolbar's drawn icons."""
from __future__ import annotations

from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import (QAction, QGuiApplication, QIcon, QKeySequence, QPainter, QPainterPath,
                           QPalette, QPixmap, QPolygonF)


def drawn_icon(kind: str) -> QIcon:
    """Toolbar shapes in the palette's button-text colour (readable on light and dark):
    play (grade), stop (cancel), ribbon (keep)."""
    palette = QGuiApplication.palette()
    icon = QIcon()
    for mode, group in ((QIcon.Mode.Normal, QPalette.ColorGroup.Active),
                        (QIcon.Mode.Disabled, QPalette.ColorGroup.Disabled)):
        colour = palette.color(group, QPalette.ColorRole.ButtonText)
        for size in (16, 24, 32):
            pix = QPixmap(size, size)
            pix.fill(Qt.GlobalColor.transparent)
            p = QPainter(pix)
            p.setRenderHint(QPainter.RenderHint.Antialiasing)
            p.setPen(Qt.PenStyle.NoPen)
            p.setBrush(colour)
            s = float(size)

            def tri(x0: float, x1: float) -> None:
                p.drawPolygon(QPolygonF([QPointF(x0, s * .18), QPointF(x1, s * .5),
                                         QPointF(x0, s * .82)]))

            if kind == "play":
                tri(s * .25, s * .82)
            elif kind == "stop":
                p.drawRoundedRect(s * .22, s * .22, s * .56, s * .56, s * .06, s * .06)
            else:
                path = QPainterPath(QPointF(s * .26, s * .12))
                path.lineTo(s * .74, s * .12)
                path.lineTo(s * .74, s * .88)
                path.lineTo(s * .5, s * .66)
                path.lineTo(s * .26, s * .88)
                path.closeSubpath()
                p.drawPath(path)
            p.end()
            icon.addPixmap(pix, mode)
    return icon


def make_action(parent, text: str, slot, shortcut=None, tip: str = "", icon=None,
                short: str = "") -> QAction:
    """The one action builder: text, slot, shortcut(s), tooltip and status tip, an icon
    (a drawn kind: play, stop, keep; or a standard pixmap) and the toolbar's short text."""
    action = QAction(text, parent)
    if shortcut:
        keys = shortcut if isinstance(shortcut, list) else [shortcut]
        action.setShortcuts([QKeySequence(k) if isinstance(k, str) else k for k in keys])
    if tip:
        action.setToolTip(tip)
        action.setStatusTip(tip)
    if isinstance(icon, str):
        action.setIcon(drawn_icon(icon))
    elif icon is not None:
        action.setIcon(parent.style().standardIcon(icon))
    if short:
        action.setIconText(short)
    action.triggered.connect(lambda _checked=False: slot())
    return action
