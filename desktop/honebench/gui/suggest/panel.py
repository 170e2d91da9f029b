"""The suggestions panel: pick a strategy, ask for variants, read the scored cards, and keep
or set aside each one onto the shelf. The model and the store are used only in jobs."""
from __future__ import annotations

import html
from dataclasses import replace
from typing import Callable

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QCheckBox, QComboBox, QFormLayout, QHBoxLayout, QLabel,
                               QProgressBar, QPushButton, QSpinBox, QVBoxLayout, QWidget)

from ...core.project import ShelfRow
from ...core.events import Stage
from ..stage_display import show_stage
from ...core.suggest.pipeline import EARLY_RULE, SuggestOutcome
from ...core.suggest.strategies import STRATEGIES, STRATEGY_LABELS
from ...core.wording import Wording
from ..jobs import Job, JobRunner
from ..project import operations
from ..project.operations import Candidates
from ..project.session import ProjectSession
from ..shelf.model import ShelfModel
from .card_list import CardList
from .cards import EDITOR, STRATEGY_TIPS, early_rule, small
from .outcome import OutcomeArea
from .proposer import Proposers, ProposerChoice


class SuggestPanel(CardList, QWidget):
    """Signals: ``decided(ShelfEntry)`` after a keep or set aside is saved,
    ``load_requested(Wording, parent_id)``, ``status(str)``, ``problem(title, message)``,
    ``running_changed(bool)``, ``finished(SuggestOutcome)``."""

    decided = Signal(object)
    load_requested = Signal(object, object)
    status = Signal(str)
    problem = Signal(str, str)
    running_changed = Signal(bool)
    finished = Signal(object)

    def __init__(self, runner: JobRunner, session: ProjectSession, shelf: ShelfModel, engine,
                 *, editor_wording: Callable[[], Wording],
                 selected_id: Callable[[], int | None], parent=None):
        super().__init__(parent)
        self.runner, self.session, self.shelf, self.engine = runner, session, shelf, engine
        self.editor_wording, self.selected_id = editor_wording, selected_id
        self.job: Job | None = None
        self.outcome: SuggestOutcome | None = None
        self.cards: list = []  # SuggestionCard widgets
        self._source = EDITOR
        self.blocked_reason = ""  # set while auto-hone uses the engine
        self.proposers = Proposers(runner, engine, self)  # the open suggestion engine

        self.strategy = QComboBox()
        for key in STRATEGIES:
            label = STRATEGY_LABELS[key]
            self.strategy.addItem(label[0].upper() + label[1:], key)
            self.strategy.setItemData(self.strategy.count() - 1, STRATEGY_TIPS[key],
                                      Qt.ItemDataRole.ToolTipRole)
        self.strategy.setCurrentIndex(STRATEGIES.index("rephrase"))
        self.strategy.setAccessibleName("Suggestion strategy")
        self.count = QSpinBox()
        self.count.setRange(1, 12)
        self.count.setValue(4)
        self.count.setAccessibleName("How many suggestions to ask for")
        self.from_shelf = QCheckBox("Start from the selected shelf entry")
        self.from_shelf.setAccessibleName("Start from the selected shelf entry instead of the "
                                          "editor's wording")
        self.other = QComboBox()
        self.other.setAccessibleName("Second shelf entry to blend with")
        self.other_label = QLabel("Blend &with")
        self.other_label.setBuddy(self.other)
        self.proposer = ProposerChoice(engine.remembered)
        self.proposer.chosen.connect(self._proposer_chosen)
        self.base_label = small(QLabel())
        self.base_label.setAccessibleName("What the suggestions start from")
        self.go = QPushButton("&Suggest")
        self.go.setAccessibleName("Ask for suggestions")
        self.go.setDefault(True)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setAccessibleName("Cancel the suggestions")
        self.cancel_button.setEnabled(False)
        self.progress = QProgressBar()
        self.progress.setAccessibleName("Suggestion progress")
        self.stage = small(QLabel())
        self.stage.setAccessibleName("Suggestion stage")
        self.rule = small(QLabel())
        self.rule.setAccessibleName("Early-stop rule")
        self.scores = small(QLabel())
        self.scores.setTextFormat(Qt.TextFormat.PlainText)
        self.scores.setAccessibleName("Running score of each suggestion being scored")

        self.scroll = OutcomeArea()
        self.diagnosis_box, self.diagnosis = self.scroll.diagnosis_box, self.scroll.diagnosis
        self.message, self.dropped = self.scroll.message, self.scroll.dropped
        self.dropped_toggle, self.card_layout = self.scroll.dropped_toggle, self.scroll.card_layout
        self.dropped_toggle.toggled.connect(self._toggle_dropped)

        form = QFormLayout()
        form.setContentsMargins(0, 0, 0, 0)
        strategy_label = QLabel("S&trategy")
        strategy_label.setBuddy(self.strategy)
        form.addRow(strategy_label, self.strategy)
        form.addRow(self.other_label, self.other)
        form.addRow("", self.from_shelf)
        proposer_label = QLabel("Proposals &by")
        proposer_label.setBuddy(self.proposer)
        form.addRow(proposer_label, self.proposer)
        count_label = QLabel("&How many")
        count_label.setBuddy(self.count)
        buttons = QHBoxLayout()
        buttons.addWidget(self.count)
        buttons.addStretch(1)
        buttons.addWidget(self.go)
        buttons.addWidget(self.cancel_button)
        form.addRow(count_label, buttons)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addLayout(form)
        layout.addWidget(self.base_label)
        layout.addWidget(self.rule)
        layout.addWidget(self.progress)
        layout.addWidget(self.stage)
        layout.addWidget(self.scores)
        layout.addWidget(self.scroll, 1)

        self.strategy.currentIndexChanged.connect(lambda _i: self.refresh_base())
        self.from_shelf.toggled.connect(lambda _c: self.refresh_base())
        self.other.currentIndexChanged.connect(lambda _i: self.refresh_base())
        self.go.clicked.connect(self.start)
        self.cancel_button.clicked.connect(self.cancel)
        self._show_idle()
        self.show_outcome(None)
        session.opened.connect(self.set_project)
        shelf.rows_changed.connect(self.set_shelf_rows)

    @property
    def rows(self) -> list[ShelfRow]:
        return self.shelf.rows

    def state(self):
        return self.session.state

    # -- method calls down ---------------------------------------------------------------
    def set_project(self, state) -> None:
        """A project was (re)opened: forget the cards; show its suggestion engine."""
        self.cancel()
        self.outcome = None
        self.show_outcome(None)
        self.proposers.release()
        self.proposer.show_choice(state.settings.suggest_engine if state is not None else None)

    def close_proposer(self) -> None:
        """The window closes: close the suggestion engine (a job on the model lane)."""
        self.proposers.release()

    def set_shelf_rows(self, _rows=None) -> None:
        """The shelf changed: refresh the blend chooser and the version names on cards."""
        keep = self.other.currentData()
        self.other.blockSignals(True)
        self.other.clear()
        for row in sorted(self.rows, key=lambda r: -r.entry.version):
            entry = row.entry
            tag = " (set aside)" if entry.decision == "set_aside" else ""
            short = entry.text if len(entry.text) <= 50 else entry.text[:49] + "…"
            self.other.addItem(f"{entry.label}{tag}: {short}", entry.id)
            self.other.setItemData(self.other.count() - 1, entry.text,
                                   Qt.ItemDataRole.ToolTipRole)
        index = self.other.findData(keep)
        self.other.setCurrentIndex(index if index >= 0 else min(1, self.other.count() - 1))
        self.other.blockSignals(False)
        self.refresh_base()

    def set_blocked(self, reason: str) -> None:
        """No suggestions while something else (auto-hone) drives the engine."""
        self.blocked_reason = reason
        self._show_idle()

    def labels(self) -> dict[int, str]:
        return {r.entry.id: r.entry.label for r in self.rows}

    def refresh_base(self) -> None:
        """Say what the next suggestions start from; show the controls the strategy uses."""
        strategy = self.strategy.currentData()
        blend = strategy == "blend"
        self.other_label.setVisible(blend)
        self.other.setVisible(blend)
        self.from_shelf.setVisible(not blend)
        selected = self.selected_id()
        if blend and self.other.currentData() == selected:  # offer a different second entry
            index = next((i for i in range(self.other.count())
                          if self.other.itemData(i) != selected), -1)
            if index >= 0:
                self.other.blockSignals(True)
                self.other.setCurrentIndex(index)
                self.other.blockSignals(False)
        base, _other, why = self._choice()
        self.base_label.setText(why if base is None else f"Starts from {self._source}.")
        self.go.setEnabled(self.job is None and base is not None and not self.blocked_reason)
        if self.job is None and self.outcome is None:
            self.rule.setText(self._rule_template())

    # -- running -------------------------------------------------------------------------
    def start(self) -> Job | None:
        """Ask for suggestions in a job; the cards appear when it is done."""
        state, handle = self.state(), self.engine.handle
        base, other_id, why = self._choice()
        if self.job is not None or state is None:
            return None
        if base is None:
            self.problem.emit("Nothing to start from", why)
            return None
        if handle is None:
            self.problem.emit("No engine yet", "The model is still loading (or did not load); "
                              "wait for “ready” in the engine bar, then try again.")
            return None
        project, strategy, count = state.project, self.strategy.currentData(), self.count.value()
        settings, source = self.engine.project_settings(), self._source
        wanted = state.settings.suggest_engine
        lease = self.proposers.lease(wanted)

        def work(ctx):
            return operations.suggest(project, handle, strategy=strategy, count=count,
                                      base=base, other_id=other_id, settings=settings,
                                      cancel=ctx.cancel_event, on_event=ctx.report,
                                      proposer=lease.open())

        def settled(then):
            def after(*args):
                self.proposers.settle(lease, self.state().settings.suggest_engine
                                      if self.state() is not None else None)
                then(*args)
            return after

        self.outcome = None
        self.show_outcome(None)
        writer = "" if strategy == "phrase-edits" else f", written by {lease.label(handle)}"
        self.message.setText(f"Asking for {count} suggestion(s), {STRATEGY_LABELS[strategy]}, "
                             f"starting from {source}{writer}…")
        self.job = self.runner.submit(
            work, done=settled(lambda out: self._finished(out, source)),
            failed=settled(self._failed), progress=self._progress,
            cancelled=settled(lambda: self._finished(None, source)), name="suggestions",
            uses_model=True)
        self._show_running()
        return self.job

    def _proposer_chosen(self, choice) -> None:
        """Save who writes suggestions in the project's settings (a job); the engine is
        opened by the next suggestions' job, and the one open till now is closed."""
        state = self.state()
        if state is None:
            return
        self.proposers.release()
        self.session.save_settings(replace(state.settings, suggest_engine=choice))
        who = choice.label() if choice is not None else "the graded engine"
        self.status.emit(f"Suggestions will be written by {who}; the graded engine scores "
                         "them")

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()
            self.stage.setText("Cancelling… scored suggestions are kept")

    def _progress(self, event) -> None:
        """Stage events: the step, items scored so far and the time left; Candidates: each
        suggestion's running score."""
        if isinstance(event, Candidates):
            self.scores.setText("\n".join(
                f"• {c.passed}/{c.done} passed so far (of {c.total}): "
                f"{c.text[:56]}{'…' if len(c.text) > 56 else ''}" for c in event.items))
            return
        if not isinstance(event, Stage):
            return
        show_stage(self.progress, self.stage, event.text[0].upper() + event.text[1:],
                   event.progress)

    def _finished(self, outcome: SuggestOutcome | None, source: str) -> None:
        self.job = None
        self._show_idle()
        self.running_changed.emit(False)
        if outcome is None:
            self.message.setText("Cancelled before any suggestion was scored.")
            return
        self.outcome = outcome
        self.show_outcome(outcome, source)
        self.status.emit(outcome.message)
        self.finished.emit(outcome)

    def _failed(self, message: str) -> None:
        self.job = None
        self._show_idle()
        self.running_changed.emit(False)
        self.message.setText(f"✗ The suggestions stopped: {html.escape(message)}")
        self.problem.emit("The suggestions stopped", message)

    def _show_running(self) -> None:
        self.go.setEnabled(False)
        self.cancel_button.setEnabled(True)
        self.progress.setVisible(True)
        self.progress.setRange(0, 0)
        self.stage.setVisible(True)
        self.stage.setText("Starting…")
        self.scores.setText("")
        self.scores.setVisible(True)
        self.running_changed.emit(True)

    def _show_idle(self) -> None:
        self.cancel_button.setEnabled(False)
        self.progress.setVisible(False)
        self.stage.setVisible(False)
        self.scores.setVisible(False)
        self.refresh_base()
        if self.blocked_reason:
            self.base_label.setText(self.blocked_reason)

    # -- internals -----------------------------------------------------------------------
    def _entry(self, wording_id: int | None):
        return next((r.entry for r in self.rows if r.entry.id == wording_id), None)

    def _choice(self) -> tuple[Wording | None, int | None, str]:
        """(base wording, other id for blend, why not) for the current controls."""
        strategy = self.strategy.currentData()
        selected = self._entry(self.selected_id())
        if strategy == "blend":
            other = self._entry(self.other.currentData())
            if selected is None:
                return None, None, "Blend needs two shelf entries: select the first on the shelf."
            if other is None or other.id == selected.id:
                return None, None, (f"Blend needs a second entry: choose one other than "
                                    f"{selected.label} under “Blend with”.")
            self._source = selected.label
            return Wording(selected.text, selected.placement), other.id, ""
        if self.from_shelf.isChecked():
            if selected is None:
                return None, None, "Select an entry on the shelf, or untick “Start from the " \
                                   "selected shelf entry”."
            self._source = selected.label
            return Wording(selected.text, selected.placement), None, ""
        wording = self.editor_wording()
        if not wording.text.strip():
            return None, None, "The editor is empty: write a wording first, or start from a " \
                               "shelf entry."
        self._source = EDITOR
        return wording, None, ""

    def _rule_template(self) -> str:
        state = self.state()
        qset = state.qset if state is not None else None
        n = len(qset.tuning()) if qset is not None else 0
        return early_rule(n) if n else EARLY_RULE.format(n="N")
