"""Checking saved window pictures."""
from __future__ import annotations

from pathlib import Path

from PySide6.QtGui import QImage


def non_blank(path: Path) -> bool:
    """True when the PNG exists, is window-sized and shows more than a flat fill."""
    image = QImage(str(path))
    if image.isNull() or image.width() < 400:
        return False
    colours = {image.pixel(x, y) for x in range(0, image.width(), 7)
               for y in range(0, image.height(), 7)}
    return len(colours) > 20
