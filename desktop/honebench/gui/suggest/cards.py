"""One scored suggestion shown as a small card: the wording, what changed, its score, where it
came from, and the buttons to keep it, set it aside or load it into the editor."""
from __future__ import annotations

import html

from PySide6.QtCore import QEvent, Qt, Signal
from PySide6.QtGui import QPalette
from PySide6.QtWidgets import (QFrame, QHBoxLayout, QLabel, QLineEdit, QPushButton, QSizePolicy,
                               QVBoxLayout)

from ...core.stats import Score
from ...core.suggest.pipeline import EARLY_RULE, Card, SuggestOutcome
from ...core.suggest.strategies import STRATEGY_LABELS
from ..shelf.model import diff_html, score_cell

STRATEGY_TIPS = {
    "scoreboard": "Show the model earlier shelf wordings with their tuning scores and ask for "
                  "a new one that scores higher",
    "misses": "Show the model missed tuning items, ask what the wording fails to convey, "
              "then ask for a rewrite that fixes it",
    "rephrase": "Same meaning, new words",
    "phrase-edits": "No model: delete, swap or borrow phrases (the same seed gives the same "
                    "edits)",
    "blend": "Combine the selected shelf entry with a second one",
}
EDITOR = "the editor's wording"


def early_rule(n_tuning: int) -> str:
    """The early-stop rule as the pipeline will apply it to this many tuning items."""
    return EARLY_RULE.format(n=min(n_tuning, max(10, n_tuning // 4)))


def small(label: QLabel) -> QLabel:
    """A small, word-wrapped, muted label (palette colours only)."""
    font = label.font()
    font.setPointSizeF(font.pointSizeF() * 0.88)
    label.setFont(font)
    label.setWordWrap(True)
    label.setForegroundRole(QPalette.ColorRole.PlaceholderText)
    return label


def outcome_text(outcome: SuggestOutcome, source: str) -> str:
    """The headline and the current wording's score, as rich text."""
    base = (f"{source[0].upper() + source[1:]} scores "
            f"{html.escape(score_cell(outcome.base_score))} on tuning items.")
    seconds = f"{outcome.seconds:.1f}" if outcome.seconds < 10 else f"{outcome.seconds:.0f}"
    took = f"{outcome.model_calls} model calls, {seconds} s."
    head = f"<b>{html.escape(outcome.message)}</b>" + (", best first." if outcome.cards else "")
    if outcome.cancelled:
        head = "<b>Cancelled.</b> " + (head if outcome.cards else
                                       "No suggestion was fully scored.")
    return f"<p>{head}</p><p>{base} {took}</p>"


def change_glyph(card: Card, base: Score) -> str:
    """A shape that reads without colour: ▲ better, ▼ worse, = the same pass rate."""
    points = round((card.score.rate - base.rate) * 100)
    return "▲" if points > 0 else "▼" if points < 0 else "="


def inputs_text(card: Card, labels: dict[int, str], base_name: str) -> str:
    """Plain words for where a suggestion came from, e.g. 'rephrase of v2' or
    'blend of v1 and v3 (sentence crossover)'."""
    inputs = card.inputs or {}
    parent = labels.get(inputs.get("parent_id")) if inputs.get("parent_id") else None
    source = parent or base_name
    strategy = STRATEGY_LABELS.get(card.strategy, card.strategy)
    if card.strategy == "blend":
        other = labels.get(inputs.get("other_id"), "the second entry")
        text = f"blend of {source} and {other}"
        if inputs.get("fallback") == "crossover":
            text += " (the model gave nothing usable, so sentences were crossed over)"
    elif card.strategy == "phrase-edits":
        text = f"phrase edits of {source}"
        if inputs.get("edit"):
            text += f": {inputs['edit']}"
    elif card.strategy == "scoreboard":
        n = inputs.get("scoreboard_size")
        text = f"from the scoreboard ({n} scored wordings shown), starting from {source}" if n \
            else f"from the scoreboard, starting from {source}"
    elif card.strategy == "misses":
        shown = len(inputs.get("misses_shown") or ())
        text = f"from the misses of {source} ({shown} missed items shown to the model)"
    else:
        text = f"{strategy} of {source}"
    return text


class SuggestionCard(QFrame):
    """Signals: ``keep_requested(card)``, ``set_aside_requested(card, reason)``,
    ``load_requested(card)``. After a decision is saved, ``mark_decided`` disables the
    buttons and says what happened."""

    keep_requested = Signal(object)
    set_aside_requested = Signal(object, str)
    load_requested = Signal(object)

    def __init__(self, number: int, card: Card, base_text: str, base_score: Score,
                 source: str, parent=None):
        super().__init__(parent)
        self.card, self.base_text, self.number = card, base_text, number
        self.decision: str = ""  # "kept" | "set_aside" once saved
        self.entry_id: int | None = None  # the shelf entry it became
        self.setFrameShape(QFrame.Shape.StyledPanel)
        self.setFrameShadow(QFrame.Shadow.Raised)
        self.setAutoFillBackground(True)
        self.setBackgroundRole(QPalette.ColorRole.Base)
        self.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Maximum)
        self.setAccessibleName(f"Suggestion {number}")

        glyph = change_glyph(card, base_score)
        self.heading = QLabel(f"<b>Suggestion {number}</b> · {html.escape(score_cell(card.score))}"
                              " on tuning items")
        self.heading.setAccessibleName(f"Suggestion {number} score: {card.score.text()}")
        self.change = QLabel(f"{glyph} {html.escape(card.change_text(base_score))}")
        self.change.setWordWrap(True)
        self.change.setAccessibleName(f"Suggestion {number} change vs the current wording")
        self.change.setToolTip(card.paired.text("This suggestion"))

        self.wording = QLabel(card.text)
        self.wording.setWordWrap(True)
        self.wording.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse |
                                             Qt.TextInteractionFlag.TextSelectableByKeyboard)
        self.wording.setTextFormat(Qt.TextFormat.PlainText)
        self.wording.setAccessibleName(f"Suggestion {number} wording")
        self.diff_title = QLabel(f"Changes vs {html.escape(source)} "
                                 "(<s>struck through</s>: removed · <b><u>underlined</u></b>: "
                                 "added)")
        self.diff_title.setWordWrap(True)
        self.diff = QLabel()
        self.diff.setWordWrap(True)
        self.diff.setTextFormat(Qt.TextFormat.RichText)
        self.diff.setAccessibleName(f"Suggestion {number} word differences")
        self.origin = QLabel()
        self.origin.setTextFormat(Qt.TextFormat.PlainText)
        self.origin.setWordWrap(True)
        self.origin.setAccessibleName(f"Suggestion {number} strategy, inputs and who wrote it")
        for label in (self.diff_title, self.origin):
            small = label.font()
            small.setPointSizeF(small.pointSizeF() * 0.9)
            label.setFont(small)
            label.setForegroundRole(QPalette.ColorRole.PlaceholderText)
        self._show_diff()

        self.load_button = QPushButton("Load into editor")
        self.load_button.setAccessibleName(f"Load suggestion {number} into the editor")
        self.load_button.setToolTip("Put this wording into the editor (Ctrl+Z takes it back)")
        self.keep_button = QPushButton("Keep")
        self.keep_button.setAccessibleName(f"Keep suggestion {number} on the shelf")
        self.keep_button.setToolTip("Add it to the shelf as the next version")
        self.aside_button = QPushButton("Set aside")
        self.aside_button.setAccessibleName(f"Set suggestion {number} aside")
        self.aside_button.setToolTip("Record it on the shelf, greyed, so it is not proposed "
                                     "again")
        self.reason = QLineEdit()
        self.reason.setPlaceholderText("Reason for setting aside (optional)")
        self.reason.setAccessibleName(f"Reason for setting suggestion {number} aside")
        self.reason.setClearButtonEnabled(True)
        self.reason.returnPressed.connect(self.aside_button.click)
        self.outcome = QLabel()
        self.outcome.setAccessibleName(f"Suggestion {number} decision")
        self.outcome.hide()
        self.load_button.clicked.connect(lambda: self.load_requested.emit(self))
        self.keep_button.clicked.connect(self._keep)
        self.aside_button.clicked.connect(self._aside)

        buttons = QHBoxLayout()
        buttons.addWidget(self.load_button)
        buttons.addStretch(1)
        buttons.addWidget(self.keep_button)
        buttons.addWidget(self.aside_button)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(8, 6, 8, 6)
        layout.setSpacing(4)
        for widget in (self.heading, self.change, self.wording, self.diff_title, self.diff,
                       self.origin):
            layout.addWidget(widget)
        layout.addLayout(buttons)
        layout.addWidget(self.reason)
        layout.addWidget(self.outcome)

    def set_origin(self, text: str) -> None:
        """Where it came from, and who wrote it (the suggestion engine, or no model)."""
        writer = f"\nWritten by: {self.card.proposer}" if self.card.proposer else ""
        self.origin.setText(f"Strategy: {text}{writer}")

    def _keep(self) -> None:
        self._set_buttons(False)
        self.keep_requested.emit(self)

    def _aside(self) -> None:
        self._set_buttons(False)
        self.set_aside_requested.emit(self, self.reason.text().strip())

    def _set_buttons(self, enabled: bool) -> None:
        for widget in (self.keep_button, self.aside_button, self.reason):
            widget.setEnabled(enabled)

    def mark_decided(self, decision: str, entry_id: int, label: str) -> None:
        """The decision is on the shelf: say so, and allow no second decision."""
        self.decision, self.entry_id = decision, entry_id
        self._set_buttons(False)
        self.reason.setVisible(False)
        text = f"✓ kept as {label}" if decision == "kept" else f"✗ set aside (on the shelf as " \
                                                                f"{label}, greyed)"
        self.outcome.setText(f"<b>{html.escape(text)}</b>")
        self.outcome.show()
        self.setForegroundRole(QPalette.ColorRole.PlaceholderText if decision != "kept"
                               else QPalette.ColorRole.WindowText)

    def decision_failed(self) -> None:
        self._set_buttons(True)

    def _show_diff(self) -> None:
        if self.base_text == self.card.text:
            self.diff.setText("(no change)")
        else:
            self.diff.setText(diff_html(self.base_text, self.card.text, self.palette()))

    def changeEvent(self, event):
        if event.type() == QEvent.Type.PaletteChange and hasattr(self, "diff"):
            self._show_diff()
        super().changeEvent(event)
