"""The live preview: the exact prompt the model sees for one tuning item, with its token
count. Held-out items are never shown here (they are kept for confirming).

Rendering (the chat template, no model) runs in a job a short while after the last edit;
counting tokens needs the model, so it waits its turn on the model lane and the count shows
"…" meanwhile. Answers of older requests are dropped.
"""
from __future__ import annotations

from PySide6.QtCore import QTimer, Signal
from PySide6.QtGui import QFontDatabase, QPalette
from PySide6.QtWidgets import QHBoxLayout, QLabel, QPlainTextEdit, QSpinBox, QVBoxLayout, QWidget

from ...core.sets import Item
from ...core.wording import Wording, build_prompt
from ..jobs import JobRunner

DEBOUNCE_MS = 250


TEMPLATE_NOTE = ("The system message at the top comes from the model's chat template (stored "
                 "in the model file), which adds its own when the prompt has none. Choose "
                 "placement “system message” to put your wording there instead.")


def template_note(engine, messages) -> str:
    """Why a system message shows that the user did not write, or ""."""
    if any(m.get("role") == "system" for m in messages):
        return ""
    head = engine.render([{"role": "user", "content": "\x00"}]).split("\x00")[0]
    return TEMPLATE_NOTE if "system" in head.casefold() else ""


def render_preview(handle, wording: Wording, item: Item) -> tuple[str, str]:
    """(rendered prompt, note on the template's own system message) for one item; runs on
    a worker thread and does not use the model itself."""
    prompt = build_prompt(wording, item.fields)
    with handle as engine:
        return engine.render(prompt.messages, prompt.prefill), \
            template_note(engine, prompt.messages)


def count_tokens(handle, text: str) -> int:
    """The prompt's length in the engine's tokens (uses the model: run on the lane)."""
    with handle as engine:
        return engine.count_tokens(text)


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
        self._count_job = None

        self.item_spin = QSpinBox()
        self.item_spin.setAccessibleName("Tuning item shown in the preview")
        self.item_spin.setToolTip("Which tuning item the preview fills in (held-out items "
                                  "are kept for confirming); selecting a mark in the grade "
                                  "sheet shows its item")
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
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setAccessibleName("Where the prompt's system message comes from")
        self.note.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self.note.hide()

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addLayout(head)
        layout.addWidget(self.text, 1)
        layout.addWidget(self.note)

        self._timer = QTimer(self, singleShot=True, interval=DEBOUNCE_MS)
        self._timer.timeout.connect(self._start)

    # -- method calls down ---------------------------------------------------------------
    def set_items(self, items) -> None:
        """The items the preview may fill in: give it the tuning items only."""
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
        for job in (self._job, self._count_job):
            if job is not None:
                job.cancel()
        self._job = self.runner.submit(
            lambda ctx: render_preview(handle, wording, item),
            done=lambda result: self._show(generation, handle, *result),
            failed=lambda msg: self._failed(generation, msg), name="prompt preview")

    def _show(self, generation: int, handle, text: str, note: str) -> None:
        if generation != self._generation:
            return
        bar = self.text.verticalScrollBar().value()
        self.text.setPlainText(text)
        self.text.verticalScrollBar().setValue(bar)
        self.note.setText(note)
        self.note.setVisible(bool(note))
        self.tokens.setText("tokens: …")
        self._count_job = self.runner.submit(
            lambda ctx: count_tokens(handle, text),
            done=lambda count: self._counted(generation, text, count),
            progress=lambda _e: self.tokens.setText("tokens: … (the model is busy)"),
            failed=lambda msg: self._failed(generation, msg), name="count the prompt's tokens",
            uses_model=True)

    def _counted(self, generation: int, text: str, count: int) -> None:
        if generation != self._generation:
            return
        self.tokens.setText(f"tokens: {count}")
        self.preview_shown.emit(text, count)

    def _failed(self, generation: int, message: str) -> None:
        if generation == self._generation:
            self.tokens.setText("tokens: –")
            self.text.setPlainText(f"(no preview: {message})")
