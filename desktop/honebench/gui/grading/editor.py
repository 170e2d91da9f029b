"""The wording editor: the text, its placement, and placeholder highlighting.

``{name}`` placeholders that name an input field are bold and in the palette's link colour;
unknown names get a wavy underline and italics (shape as well as colour), and the note
under the editor says in words what each placement and placeholder does.
"""
from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import (QFont, QPalette, QSyntaxHighlighter, QTextCharFormat, QTextCursor,
                           QTextDocument)
from PySide6.QtWidgets import (QComboBox, QHBoxLayout, QLabel, QPlainTextEdit, QSizePolicy,
                               QVBoxLayout, QWidget)

from ...core.wording import PLACEMENT_LABELS, PLACEMENTS, Wording, placeholders
from .phrase_shading import PhraseShading

PLACEMENT_NOTES = {
    "system": "The wording is the system message; each item's input follows as the user message.",
    "before": "The wording comes first, then a blank line and the item's input.",
    "after": "The item's input comes first, then a blank line and the wording.",
    "answer": "The item's input is the user message; the answer starts with the wording and "
              "the model carries on from there.",
}


class PlaceholderHighlighter(QSyntaxHighlighter):
    """Marks ``{field}`` placeholders: known fields one way, unknown names another."""

    def __init__(self, document: QTextDocument, palette: QPalette):
        super().__init__(document)
        self.fields: set[str] = set()
        self.set_palette(palette)

    def set_palette(self, palette: QPalette) -> None:
        self.known = QTextCharFormat()
        self.known.setFontWeight(QFont.Weight.Bold)
        self.known.setForeground(palette.color(QPalette.ColorRole.Link))
        self.unknown = QTextCharFormat()
        self.unknown.setFontItalic(True)
        self.unknown.setUnderlineStyle(QTextCharFormat.UnderlineStyle.WaveUnderline)
        self.unknown.setUnderlineColor(palette.color(QPalette.ColorRole.Text))
        self.rehighlight()

    def set_fields(self, fields) -> None:
        self.fields = set(fields)
        self.rehighlight()

    def highlightBlock(self, text: str) -> None:
        for name in placeholders(text):
            token = "{" + name + "}"
            fmt = self.known if name in self.fields else self.unknown
            at = text.find(token)
            while at >= 0:
                self.setFormat(at, len(token), fmt)
                at = text.find(token, at + len(token))


class WordingEditor(QWidget):
    """Signals: ``wording_changed(Wording)`` on every edit or placement change."""

    wording_changed = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.fields: list[str] = []
        self.text_edit = QPlainTextEdit()
        self.text_edit.setAccessibleName("Wording of the instruction")
        self.text_edit.setPlaceholderText(
            "Write the instruction here. {field} placeholders are filled from each item, "
            "e.g. {message}.")
        self.text_edit.setTabChangesFocus(True)
        self.highlighter = PlaceholderHighlighter(self.text_edit.document(), self.palette())
        self.shading = PhraseShading(self.text_edit)  # phrase importance, when shown

        self.placement = QComboBox()
        self.placement.setAccessibleName("Placement of the wording")
        for key in PLACEMENTS:
            self.placement.addItem(PLACEMENT_LABELS[key], key)
        self.placement.setToolTip("Where the wording goes in the prompt")
        place_label = QLabel("&Placement")
        place_label.setBuddy(self.placement)

        title = QLabel("<b>Wording</b>")
        head = QHBoxLayout()
        head.addWidget(title)
        head.addStretch(1)
        head.addWidget(place_label)
        head.addWidget(self.placement)

        self.notes = QLabel()
        self.notes.setWordWrap(True)
        self.notes.setTextFormat(Qt.TextFormat.PlainText)
        self.notes.setAccessibleName("What the placement and placeholders do")
        self.notes.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Minimum)

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addLayout(head)
        layout.addWidget(self.text_edit, 1)
        layout.addWidget(self.notes)
        layout.addWidget(self.shading.legend)

        self.text_edit.textChanged.connect(self._changed)
        self.placement.currentIndexChanged.connect(self._changed)
        self._update_notes()

    # -- method calls down ---------------------------------------------------------------
    def wording(self) -> Wording:
        return Wording(self.text_edit.toPlainText(), self.placement.currentData() or "system")

    def set_wording(self, wording: Wording, *, undoable: bool = False) -> None:
        """Show a wording. ``undoable``: as one edit that Ctrl+Z takes back (restoring from
        the shelf); otherwise the undo history starts afresh (opening a project)."""
        if undoable:
            cursor = QTextCursor(self.text_edit.document())
            cursor.beginEditBlock()
            cursor.select(QTextCursor.SelectionType.Document)
            cursor.insertText(wording.text)
            cursor.endEditBlock()
            self.text_edit.setTextCursor(cursor)
        else:
            self.text_edit.setPlainText(wording.text)
        self.placement.setCurrentIndex(max(0, self.placement.findData(wording.placement)))

    def set_fields(self, fields) -> None:
        """The question set's input field names, for highlighting and notes."""
        self.fields = list(fields)
        self.highlighter.set_fields(self.fields)
        self._update_notes()

    def show_importance(self, result) -> bool:
        """Shade the phrases by a core ImportanceResult (False when the editor does not
        hold the analysed wording)."""
        return self.shading.show_result(result)

    def undo(self) -> None:
        self.text_edit.undo()

    def redo(self) -> None:
        self.text_edit.redo()

    # -- internals -----------------------------------------------------------------------
    def _changed(self, *_args) -> None:
        shown = self.shading.result
        if shown is not None and self.placement.currentData() != shown.placement:
            self.shading.clear()  # the shading describes the wording as analysed
        self._update_notes()
        self.wording_changed.emit(self.wording())

    def _update_notes(self) -> None:
        w = self.wording()
        names = placeholders(w.text)
        known = [n for n in names if n in self.fields]
        unknown = [n for n in names if n not in self.fields]
        lines = [PLACEMENT_NOTES[w.placement]]
        if known:
            lines.append("Filled from each item: " + ", ".join("{%s}" % n for n in known) + ".")
            if w.placement in ("before", "after") and set(known) >= set(self.fields):
                lines.append("The wording names every input field, so the input is not "
                             "added again.")
        if unknown:
            fields = ", ".join(self.fields) if self.fields else "none yet"
            lines.append("Not an input field (sent exactly as typed): "
                         + ", ".join("{%s}" % n for n in unknown)
                         + f". This set's fields: {fields}.")
        self.notes.setText("\n".join(lines))

    def changeEvent(self, event):
        from PySide6.QtCore import QEvent

        if event.type() == QEvent.Type.PaletteChange:
            self.highlighter.set_palette(self.palette())
            self.shading.repaint()
        super().changeEvent(event)
