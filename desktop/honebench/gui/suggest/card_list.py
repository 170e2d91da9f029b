"""The suggestions' outcome in the panel: the cards, the dropped replies, and what a keep,
set aside or load does. A mixin of SuggestPanel (it uses the panel's widgets and job
runner)."""
from __future__ import annotations

from PySide6.QtCore import Qt

from ...core.suggest.pipeline import SuggestOutcome
from ...core.wording import Wording
from ..jobs import Job
from ..project import operations
from .cards import EDITOR, SuggestionCard, inputs_text, outcome_text


class CardList:
    # -- the outcome ---------------------------------------------------------------------
    def show_outcome(self, outcome: SuggestOutcome | None, source: str = EDITOR) -> None:
        """Cards for the survivors; the plain message when there are none."""
        for card in self.cards:
            card.setParent(None)
            card.deleteLater()
        self.cards = []
        self.diagnosis_box.setVisible(bool(outcome and outcome.notes.get("diagnosis")))
        if outcome is None:
            self.message.setText("")
            self.message.setVisible(False)
            self.dropped_toggle.hide()
            self.dropped.hide()
            self.rule.setText(self._rule_template())
            return
        self.message.setVisible(True)
        self.diagnosis.setText(outcome.notes.get("diagnosis", ""))
        self.rule.setText(outcome.rule or self._rule_template())
        self.message.setText(outcome_text(outcome, source))
        n = len(outcome.dropped)
        self.dropped_toggle.setVisible(bool(n))
        self.dropped_toggle.setText(f"{n} repl{'y' if n == 1 else 'ies'} dropped")
        self.dropped.setText("\n".join(f"• {why}" for why in outcome.dropped))
        self._toggle_dropped(self.dropped_toggle.isChecked())
        labels = self.labels()
        for number, card in enumerate(outcome.cards, 1):
            widget = SuggestionCard(number, card, outcome.base.text, outcome.base_score, source)
            widget.set_origin(inputs_text(card, labels, source))
            widget.keep_requested.connect(lambda w: self._decide(w, "kept", ""))
            widget.set_aside_requested.connect(lambda w, why: self._decide(w, "set_aside", why))
            widget.load_requested.connect(self._load)
            self.card_layout.addWidget(widget)
            self.cards.append(widget)

    def _toggle_dropped(self, shown: bool) -> None:
        self.dropped_toggle.setArrowType(Qt.ArrowType.DownArrow if shown
                                         else Qt.ArrowType.RightArrow)
        self.dropped.setVisible(shown and bool(self.outcome and self.outcome.dropped))

    def _decide(self, widget: SuggestionCard, verdict: str, reason: str) -> Job | None:
        state = self.state()
        if state is None:
            widget.decision_failed()
            return None
        project, card = state.project, widget.card

        def done(entry):
            widget.mark_decided(verdict, entry.id, entry.label)
            self.decided.emit(entry)
            word = "Kept" if verdict == "kept" else "Set aside"
            self.status.emit(f"{word} suggestion {widget.number} on the shelf as {entry.label}")

        def failed(message):
            widget.decision_failed()
            self.problem.emit("The decision was not saved", message)

        act = operations.keep if verdict == "kept" else operations.set_aside
        wording = Wording(card.text, card.placement)
        parent = (card.inputs or {}).get("parent_id")
        return self.runner.submit(
            lambda ctx: act(project, wording=wording, parent_id=parent, origin=card.strategy,
                            note=reason, inputs=card.inputs),
            done=done, failed=failed, name="save the decision")

    def _load(self, widget: SuggestionCard) -> None:
        card = widget.card
        parent = widget.entry_id if widget.decision == "kept" else \
            (card.inputs or {}).get("parent_id")
        self.load_requested.emit(Wording(card.text, card.placement), parent)
        self.status.emit(f"Loaded suggestion {widget.number} into the editor (Ctrl+Z undoes)")

