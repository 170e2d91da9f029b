"""The item view: one item's full detail in a grade run.

The result in words and a glyph (✓ passed, ✗ missed, ⚠ error), the answer check and its
why, the expected and extracted answers, the item's input fields, the model's raw output
and the exact prompt the model saw, with token counts and seconds. Previous / Next ask the
owner for the neighbouring mark; ``show_mark`` swaps the content in place.
"""
from __future__ import annotations

import html

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QFontDatabase
from PySide6.QtWidgets import (QDialog, QDialogButtonBox, QFormLayout, QHBoxLayout, QLabel,
                               QPlainTextEdit, QPushButton, QSplitter, QTextBrowser,
                               QVBoxLayout, QWidget)

from ...core.records import Mark
from ...core.sets import Item

SPLIT_WORDS = {"tuning": "tuning item", "held_out": "held-out item"}
NO_PROMPT = "(The rendered prompt was not recorded for this mark.)"
NO_OUTPUT = "(The model gave no output.)"


def result_text(mark: Mark) -> str:
    """'✓ passed', '✗ missed' or '⚠ error: …'."""
    if mark.error is not None:
        return f"⚠ error: {mark.error}"
    return "✓ passed" if mark.passed else "✗ missed"


def cost_text(mark: Mark) -> str:
    """'prompt 412 tokens + answer 7 tokens · 0.38 s'; a cached answer's cost is the one
    measured when the model first gave it."""
    text = f"prompt {mark.prompt_tokens:,} tokens + answer {mark.completion_tokens:,} tokens"
    if not mark.cached:
        return f"{text} · {mark.seconds:.2f} s"
    when = f" · {mark.seconds:.2f} s" if mark.seconds > 0 else ""
    return f"{text}{when} when first answered · answer taken from the cache"


def _shown(text: str, empty: str = "(empty)") -> str:
    return text if text.strip() else empty


def _selectable(label: QLabel, name: str) -> QLabel:
    label.setWordWrap(True)
    label.setTextFormat(Qt.TextFormat.PlainText)
    label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse
                                  | Qt.TextInteractionFlag.TextSelectableByKeyboard)
    label.setAccessibleName(name)
    return label


def _text_box(name: str, monospace: bool = False) -> QPlainTextEdit:
    box = QPlainTextEdit()
    box.setReadOnly(True)
    box.setAccessibleName(name)
    box.setTabChangesFocus(True)
    box.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse
                                | Qt.TextInteractionFlag.TextSelectableByKeyboard)
    if monospace:
        box.setFont(QFontDatabase.systemFont(QFontDatabase.SystemFont.FixedFont))
    return box


def _titled(title: str, widget: QWidget, buddy_text: str | None = None) -> QWidget:
    box = QWidget()
    label = QLabel(buddy_text or title)
    bold = label.font()
    bold.setBold(True)
    label.setFont(bold)
    label.setBuddy(widget)
    layout = QVBoxLayout(box)
    layout.setContentsMargins(0, 4, 0, 0)
    layout.setSpacing(2)
    layout.addWidget(label)
    layout.addWidget(widget, 1)
    box.title_label = label
    return box


class ItemView(QDialog):
    """Signal: ``step_requested(-1 | +1)`` for the previous / next mark."""

    step_requested = Signal(int)

    def __init__(self, item: Item, mark: Mark, check_text: str, parent=None):
        super().__init__(parent)
        self.setWindowTitle("Item view")
        self.setModal(False)
        self.resize(860, 760)

        self.title = QLabel()
        big = self.title.font()
        big.setBold(True)
        big.setPointSizeF(big.pointSizeF() * 1.2)
        self.title.setFont(big)
        _selectable(self.title, "Item id and split")
        self.result = _selectable(QLabel(), "Result of the answer check")
        result_font = self.result.font()
        result_font.setBold(True)
        result_font.setPointSizeF(result_font.pointSizeF() * 1.2)
        self.result.setFont(result_font)

        self.check = _selectable(QLabel(check_text), "Answer check")
        self.why = _selectable(QLabel(), "Why")
        self.expected = _selectable(QLabel(), "Expected answer")
        self.extracted = _selectable(QLabel(), "Extracted answer")
        self.cost = _selectable(QLabel(), "Tokens and seconds")
        form = QFormLayout()
        form.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
        form.setRowWrapPolicy(QFormLayout.RowWrapPolicy.DontWrapRows)
        for text, widget in (("Why", self.why), ("Expected answer", self.expected),
                             ("Extracted answer", self.extracted), ("Answer check", self.check),
                             ("Cost", self.cost)):
            form.addRow(f"{text}:", widget)

        self.inputs = QTextBrowser()
        self.inputs.setAccessibleName("Input fields of the item")
        self.inputs.setOpenLinks(False)
        self.output = _text_box("Raw output of the model", monospace=True)
        self.prompt = _text_box("Rendered prompt as the model saw it", monospace=True)
        self.prompt.setLineWrapMode(QPlainTextEdit.LineWrapMode.WidgetWidth)
        self.prompt_box = _titled("Rendered prompt", self.prompt, "Rendered &prompt")
        splitter = QSplitter(Qt.Orientation.Vertical)
        splitter.addWidget(_titled("Input fields", self.inputs, "&Input fields"))
        splitter.addWidget(_titled("Raw output", self.output, "Raw &output"))
        splitter.addWidget(self.prompt_box)
        splitter.setChildrenCollapsible(False)
        for n, stretch in enumerate((2, 2, 3)):
            splitter.setStretchFactor(n, stretch)

        self.previous_button = QPushButton("◀ Pre&vious")
        self.previous_button.setAccessibleName("Previous item")
        self.previous_button.setToolTip("Show the previous mark in the grade sheet (Alt+V)")
        self.next_button = QPushButton("&Next ▶")
        self.next_button.setAccessibleName("Next item")
        self.next_button.setToolTip("Show the next mark in the grade sheet (Alt+N)")
        self.previous_button.clicked.connect(lambda: self.step_requested.emit(-1))
        self.next_button.clicked.connect(lambda: self.step_requested.emit(1))
        self.position = QLabel()
        self.position.setAccessibleName("Position in the grade sheet")
        close = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        close.rejected.connect(self.reject)
        for button in (self.previous_button, self.next_button):
            button.setAutoDefault(False)
        close.button(QDialogButtonBox.StandardButton.Close).setAutoDefault(False)
        bottom = QHBoxLayout()
        bottom.addWidget(self.previous_button)
        bottom.addWidget(self.next_button)
        bottom.addWidget(self.position)
        bottom.addStretch(1)
        bottom.addWidget(close)

        layout = QVBoxLayout(self)
        layout.addWidget(self.title)
        layout.addWidget(self.result)
        layout.addLayout(form)
        layout.addWidget(splitter, 1)
        layout.addLayout(bottom)
        self.show_mark(item, mark)
        self.next_button.setFocus()

    # -- method calls down ---------------------------------------------------------------
    def show_mark(self, item: Item, mark: Mark, position: str = "",
                  extracted: str | None = None) -> None:
        """Show another item and its mark; ``position`` e.g. '3 of 40' (optional);
        ``extracted`` as the grade sheet shows it ("(none)" when no answer was found)."""
        self.item, self.mark = item, mark
        split = SPLIT_WORDS.get(item.split, item.split)
        self.setWindowTitle(f"Item {item.id} — item view")
        self.title.setText(f"Item {item.id} · {split} · row {item.row}")
        self.result.setText(result_text(mark))
        self.why.setText(_shown(mark.why, "(no why recorded)"))
        self.expected.setText(_shown(item.expected))
        self.extracted.setText(extracted if extracted is not None else _shown(
            (mark.choice_text or mark.extracted) if mark.extracted.strip() else "", "(none)"))
        self.cost.setText(cost_text(mark))
        self.inputs.setHtml(self._fields_html(item.fields))
        self.output.setPlainText(mark.output if mark.output else NO_OUTPUT)
        self.prompt.setPlainText(mark.prompt if mark.prompt else NO_PROMPT)
        self.prompt_box.title_label.setText(
            f"Rendered &prompt ({mark.prompt_tokens:,} tokens)" if mark.prompt_tokens
            else "Rendered &prompt")
        self.position.setText(position)

    def set_check_text(self, text: str) -> None:
        self.check.setText(text)

    def set_step_enabled(self, previous: bool, next_: bool) -> None:
        """Grey out Previous / Next at the ends of the grade sheet."""
        self.previous_button.setEnabled(previous)
        self.next_button.setEnabled(next_)

    # -- internals -----------------------------------------------------------------------
    @staticmethod
    def _fields_html(fields: dict[str, str]) -> str:
        if not fields:
            return "<p><i>(this item has no input fields)</i></p>"
        blocks = []
        for name, value in fields.items():
            text = html.escape(str(value)).replace("\n", "<br>") or "<i>(empty)</i>"
            blocks.append(f"<p><b>{html.escape(str(name))}</b><br>"
                          f"<span style='white-space:pre-wrap'>{text}</span></p>")
        return "".join(blocks)
