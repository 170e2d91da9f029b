"""The live preview: the exact prompt the model sees for one item, with its token count.

Rendering and counting run in a job (counting goes to the model's thread), a short while
after the last edit; the count shows "…" meanwhile. Answers of older requests are dropped.
"""
from __future__ import annotations

from PySide6.QtCore import QTimer, Signal
from PySide6.QtGui import QFontDatabase
from PySide6.QtWidgets import QHBoxLayout, QLabel, QPlainTextEdit, QSpinBox, QVBoxLayout, QWidget

from ..core.sets import Item
from ..core.wording import Wording, build_prompt
from .jobs import JobRunner

DEBOUNCE_MS = 250


def render_preview(handle, wording: Wording, item: Item) -> tuple[str, int]:
    """(rendered prompt, token count) for one item; runs on a worker thread."""
    prompt = build_prompt(wording, item.fields)
    with handle as engine:
        text = engine.render(prompt.messages, prompt.prefill)
        return text, engine.count_tokens(text)


class PromptPreview(QWidget):
    """Signals: ``preview_shown(str, int)`` once a prompt and its count are displayed."""

    preview_shown = Signal(str, int)

    def __init__(self, runner: JobRunner, parent=None):
        super().__init__(parent)
        self.runner = runner
        self.items: tuple[Item, ...] = ()
        self.handle = None
        self.wording: Wording | None = None
        self._generation = 0
        self._job = None

        self.item_spin = QSpinBox()
        self.item_spin.setAccessibleName("Item shown in the preview (number in the set)")
        self.item_spin.setToolTip("Which item the preview fills in; selecting a mark in the "
                                  "grade sheet shows its item")
        self.item_spin.setRange(0, 0)
        self.item_spin.valueChanged.connect(lambda _v: self.refresh())
        self.item_label = QLabel()
        self.item_label.setAccessibleName("Id of the previewed item")
        self.tokens = QLabel("tokens: …")
        self.tokens.setAccessibleName("Prompt length in tokens")
        self.tokens.setToolTip("Length of the whole prompt in the engine's tokens")
        item_label = QLabel("&Item")
        item_label.setBuddy(self.item_spin)
        self.item_caption = item_label

        head = QHBoxLayout()
        head.addWidget(QLabel("<b>Prompt preview</b>"))
        head.addStretch(1)
        head.addWidget(item_label)
        head.addWidget(self.item_spin)
        head.addWidget(self.item_label)
        head.addSpacing(8)
        head.addWidget(self.tokens)

        self.text = QPlainTextEdit()
        self.text.setReadOnly(True)
        self.text.setFont(QFontDatabase.systemFont(QFontDatabase.SystemFont.FixedFont))
        self.text.setLineWrapMode(QPlainTextEdit.LineWrapMode.WidgetWidth)
        self.text.setAccessibleName("The exact prompt the model sees, chat template included")
        self.text.setPlaceholderText("The prompt shows here once a question set and the "
                                     "engine are loaded.")

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addLayout(head)
        layout.addWidget(self.text, 1)

        self._timer = QTimer(self, singleShot=True, interval=DEBOUNCE_MS)
        self._timer.timeout.connect(self._start)

    # -- method calls down ---------------------------------------------------------------
    def set_items(self, items) -> None:
        self.items = tuple(items)
        self.item_spin.blockSignals(True)
        self.item_spin.setRange(1 if self.items else 0, len(self.items))
        self.item_spin.setSuffix(f" of {len(self.items)}" if self.items else "")
        self.item_spin.blockSignals(False)
        for widget in (self.item_spin, self.item_caption, self.item_label):
            widget.setVisible(bool(self.items))
        self.refresh()

    def set_engine(self, handle) -> None:
        self.handle = handle
        self.refresh()

    def set_wording(self, wording: Wording) -> None:
        self.wording = wording
        self.refresh()

    def show_item(self, item_id: str) -> None:
        for n, item in enumerate(self.items, 1):
            if item.id == item_id:
                self.item_spin.setValue(n)
                return

    def current_item(self) -> Item | None:
        n = self.item_spin.value()
        return self.items[n - 1] if self.items and 1 <= n <= len(self.items) else None

    def refresh(self) -> None:
        """Ask for a new preview shortly (debounced)."""
        self._generation += 1
        item = self.current_item()
        self.item_label.setText(item.id if item else "")
        self.tokens.setText("tokens: …")
        self._timer.start()

    # -- internals -----------------------------------------------------------------------
    def _start(self) -> None:
        item, handle, wording = self.current_item(), self.handle, self.wording
        if item is None or handle is None or wording is None:
            self.tokens.setText("tokens: –")
            if item is None:
                self.text.setPlainText("")
            elif handle is None:
                self.text.setPlainText("")
                self.text.setPlaceholderText("The prompt shows here once the engine has loaded.")
            return
        generation = self._generation
        if self._job is not None:
            self._job.cancel()
        self._job = self.runner.submit(
            lambda ctx: render_preview(handle, wording, item),
            done=lambda result: self._show(generation, *result),
            failed=lambda msg: self._failed(generation, msg), name="prompt preview")

    def _show(self, generation: int, text: str, count: int) -> None:
        if generation != self._generation:
            return
        bar = self.text.verticalScrollBar().value()
        self.text.setPlainText(text)
        self.text.verticalScrollBar().setValue(bar)
        self.tokens.setText(f"tokens: {count}")
        self.preview_shown.emit(text, count)

    def _failed(self, generation: int, message: str) -> None:
        if generation == self._generation:
            self.tokens.setText("tokens: –")
            self.text.setPlainText(f"(no preview: {message})")
