"""Phrase importance shown in the wording editor: each phrase shaded by its effect.

A diverging scale: blue where leaving the phrase out lowers the score (the phrase helps),
orange where it raises it (the phrase hurts), stronger for a bigger change. Both hues are
mixed into the palette's base colour and held back until the palette's text keeps a
contrast of at least 4.5 : 1 on them, so the scale reads on light and dark palettes alike.
A phrase with no measurable effect (its interval holds 0) gets no colour, only a dotted
underline. Hovering a phrase shows its numbers; the legend under the editor says all this
in words. The shading describes the wording as analysed: the first edit clears it.
"""
from __future__ import annotations

from html import escape

from PySide6.QtCore import QEvent, QObject, Qt, Signal
from PySide6.QtGui import QColor, QPalette, QTextCharFormat, QTextCursor
from PySide6.QtWidgets import QLabel, QPlainTextEdit, QTextEdit, QToolTip

HELPS = QColor(40, 110, 220)  # blue
HURTS = QColor(235, 120, 20)  # orange
MIN_CONTRAST = 4.5  # WCAG 2 contrast for body text
STRONGEST = 0.6  # at most this share of the hue in a fill


def relative_luminance(colour: QColor) -> float:
    """WCAG 2 relative luminance of an sRGB colour."""
    def channel(c: float) -> float:
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4
    return (0.2126 * channel(colour.redF()) + 0.7152 * channel(colour.greenF())
            + 0.0722 * channel(colour.blueF()))


def contrast(a: QColor, b: QColor) -> float:
    """WCAG 2 contrast ratio, 1 to 21."""
    la, lb = sorted((relative_luminance(a), relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def _mix(base: QColor, hue: QColor, t: float) -> QColor:
    return QColor.fromRgbF(base.redF() + (hue.redF() - base.redF()) * t,
                           base.greenF() + (hue.greenF() - base.greenF()) * t,
                           base.blueF() + (hue.blueF() - base.blueF()) * t)


def shade(delta: float, scale: float, palette: QPalette) -> QColor:
    """The fill for a phrase whose removal changes the score by ``delta`` (a fraction);
    ``scale`` is the size that gets the strongest fill."""
    base = palette.color(QPalette.ColorRole.Base)
    text = palette.color(QPalette.ColorRole.Text)
    hue = HELPS if delta < 0 else HURTS
    t = STRONGEST * min(1.0, abs(delta) / scale) if scale > 0 else 0.0
    t = max(t, 0.15)
    fill = _mix(base, hue, t)
    while t > 0.05 and contrast(fill, text) < MIN_CONTRAST:
        t -= 0.02
        fill = _mix(base, hue, t)
    return fill


def _scale(effects) -> float:
    sizes = [abs(e.delta) for e in effects if e.measurable]
    return max(sizes + [0.05])


class PhraseShading(QObject):
    """Shades one QPlainTextEdit's phrases and explains them in ``legend``. Signals:
    ``cleared()`` when the shading goes (an edit, or the legend's Clear link)."""

    cleared = Signal()

    def __init__(self, text_edit: QPlainTextEdit):
        super().__init__(text_edit)
        self.text_edit = text_edit
        self.result = None
        self.legend = QLabel()
        self.legend.setWordWrap(True)
        self.legend.setTextFormat(Qt.TextFormat.RichText)
        self.legend.setAccessibleName("Legend of the phrase shading")
        self.legend.linkActivated.connect(lambda _link: self.clear())
        self.legend.hide()
        text_edit.viewport().installEventFilter(self)
        text_edit.textChanged.connect(self._text_changed)

    def show_result(self, result) -> bool:
        """Shade the editor's phrases by this ImportanceResult; False (nothing shown) when
        the editor does not hold the analysed wording."""
        if self.text_edit.toPlainText() != result.text:
            return False
        self.result = result
        self.repaint()
        return True

    def clear(self) -> None:
        if self.result is None:
            return
        self.result = None
        self.text_edit.setExtraSelections([])
        self.legend.hide()
        self.cleared.emit()

    def repaint(self) -> None:
        """Draw the shading again (a palette change)."""
        if self.result is None:
            return
        palette = self.text_edit.palette()
        scale = _scale(self.result.effects)
        text = self.result.text
        selections = []
        for effect in self.result.effects:
            sel = QTextEdit.ExtraSelection()
            cursor = QTextCursor(self.text_edit.document())
            cursor.setPosition(_utf16(text, effect.start))
            cursor.setPosition(_utf16(text, effect.end), QTextCursor.MoveMode.KeepAnchor)
            sel.cursor = cursor
            fmt = QTextCharFormat()
            if effect.measurable:
                fmt.setBackground(shade(effect.delta, scale, palette))
            else:
                fmt.setUnderlineStyle(QTextCharFormat.UnderlineStyle.DotLine)
                fmt.setUnderlineColor(palette.color(QPalette.ColorRole.PlaceholderText))
            sel.format = fmt
            selections.append(sel)
        self.text_edit.setExtraSelections(selections)
        self.legend.setText(self._legend_html(palette, scale))
        self.legend.show()

    def effect_at(self, position: int):
        """The phrase effect under a document position (UTF-16 units), or None."""
        if self.result is None:
            return None
        text = self.result.text
        for effect in self.result.effects:
            if _utf16(text, effect.start) <= position < _utf16(text, effect.end):
                return effect
        return None

    def eventFilter(self, watched, event) -> bool:
        if event.type() == QEvent.Type.ToolTip and self.result is not None:
            cursor = self.text_edit.cursorForPosition(event.pos())
            effect = self.effect_at(cursor.position())
            if effect is not None:
                QToolTip.showText(event.globalPos(), effect.tip(), self.text_edit.viewport())
            else:
                QToolTip.hideText()
            return True
        return False

    def _text_changed(self) -> None:
        if self.result is not None and self.text_edit.toPlainText() != self.result.text:
            self.clear()

    def _legend_html(self, palette: QPalette, scale: float) -> str:
        from ...core.importance import points

        r = self.result

        def swatch(delta: float) -> str:
            return (f"<span style='background-color:{shade(delta, scale, palette).name()}'>"
                    "&nbsp;&nbsp;&nbsp;&nbsp;</span>")

        quiet = sum(not e.measurable for e in r.effects)
        early = sum(e.stopped_early for e in r.effects)
        rate = r.base_passed / r.n_items if r.n_items else 0.0
        helps = [e.delta for e in r.effects if e.measurable and e.delta < 0]
        hurts = [e.delta for e in r.effects if e.measurable and e.delta > 0]
        keys = []
        if helps:
            keys.append(f"{swatch(min(helps))} helps: leaving it out lowers the score (by up "
                        f"to {points(-min(helps)).lstrip('+')})")
        if hurts:
            keys.append(f"{swatch(max(hurts))} hurts: leaving it out raises the score (by up "
                        f"to {points(max(hurts)).lstrip('+')})")
        if keys:
            keys.append(f"dotted underline: no measurable effect, its 95% interval holds 0 "
                        f"({quiet} of {len(r.effects)})")
        else:
            keys.append(f"No phrase changes the score measurably on these {r.n_items} items: "
                        "each one's 95% interval holds 0 (dotted underline).")
        parts = [
            f"<b>Phrase importance of {escape(r.label)}</b>: {r.base_passed}/{r.n_items} = "
            f"{rate:.0%} on the tuning items; each phrase left out alone.",
            " &nbsp; ".join(keys),
        ]
        if early:
            parts.append(f"{early} of {len(r.effects)} stopped early (they clearly matter; "
                         "graded on fewer items, so the size may be overstated).")
        parts.append("Paler: a smaller change; hover a phrase for its numbers. <i>Small sets "
                     "are noisy, and a phrase's effect can depend on the others.</i> Any edit "
                     "clears the shading. <a href='clear'>Clear</a>")
        return "<br>".join(parts)


def _utf16(text: str, index: int) -> int:
    """A Python string index as a Qt document position (UTF-16 code units)."""
    return len(text[:index].encode("utf-16-le")) // 2
