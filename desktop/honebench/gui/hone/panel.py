"""Auto-hone: rounds of suggestions run unattended, with a live table of rounds and a
progress chart (best tuning score per round, held-out score of each kept version).
Every round is committed by the core as it finishes, so cancel keeps what is done."""
from __future__ import annotations

import html
from typing import Callable

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QAbstractItemView, QComboBox, QGridLayout, QHBoxLayout,
                               QHeaderView, QLabel, QProgressBar, QPushButton, QSpinBox,
                               QSplitter, QTableWidget, QTableWidgetItem, QToolButton,
                               QVBoxLayout, QWidget)

from ...core.events import Stage
from ..stage_display import show_stage
from ...core.hone import HoneBudget, HoneOutcome, HoneRound
from ...core.stats import Score
from ...core.suggest.strategies import STRATEGIES, STRATEGY_LABELS
from ...core.wording import Wording
from .chart import HoneChart
from ..jobs import Job, JobRunner
from ..project import operations
from ..project.operations import RoundDone
from ..project.session import ProjectSession
from ..shelf.model import score_cell
from ..suggest.cards import small

COLUMNS = ("round", "best on tuning items", "kept", "held-out of kept")
TIPS = ("the round number; “start” is the wording auto-hone began from",
        "the best wording so far: pass rate on the tuning items, 95% interval, item count",
        "the shelf version kept this round, if a suggestion beat the best so far",
        "the kept version graded on the held-out items (measured, never used to choose)")
EXPLAIN = ("Each round keeps its best suggestion only if it beats the best so far on tuning "
           "items. Held-out items only check kept versions.")


class HonePanel(QWidget):
    """Signals: ``status(str)``, ``problem(title, message)``, ``running_changed(bool)``,
    ``finished(HoneOutcome | None)``."""

    status = Signal(str)
    problem = Signal(str, str)
    running_changed = Signal(bool)
    finished = Signal(object)

    def __init__(self, runner: JobRunner, session: ProjectSession, engine, *,
                 editor_wording: Callable[[], Wording], proposers=None, parent=None):
        """``proposers``: the suggestion engine the suggestions panel keeps open
        (suggest.proposer.Proposers); None: the graded engine writes the suggestions."""
        super().__init__(parent)
        self.runner, self.session, self.engine = runner, session, engine
        self.proposers = proposers
        self.editor_wording = editor_wording
        session.opened.connect(self.set_project)
        self.job: Job | None = None
        self.outcome: HoneOutcome | None = None
        self.rounds: list[HoneRound] = []
        self.blocked_reason = ""

        self.strategy = QComboBox()
        for key in STRATEGIES:
            if key == "blend":  # blend needs a second entry chosen by hand
                continue
            label = STRATEGY_LABELS[key]
            self.strategy.addItem(label[0].upper() + label[1:], key)
        self.strategy.setAccessibleName("Auto-hone strategy")
        self.strategy.setToolTip("How each round asks for suggestions")
        self.rounds_spin = self._spin(1, 100, 5, "Rounds", "At most this many rounds")
        self.per_round = self._spin(1, 12, 4, "Suggestions per round",
                                    "Suggestions asked for in each round")
        self.patience = self._spin(1, 100, 3, "Patience",
                                   "Stop after this many rounds in a row without improvement")
        self.minutes = self._spin(0, 24 * 60, 0, "Time budget in minutes",
                                  "Stop once this much time has passed", "no limit", " min")
        self.calls = self._spin(0, 1_000_000, 0, "Model-call budget",
                                "Stop once this many model calls were made", "no limit",
                                " calls")
        self.calls.setSingleStep(50)
        self.start_button = QPushButton("&Start auto-hone")
        self.start_button.setAccessibleName("Start auto-hone")
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setAccessibleName("Cancel auto-hone; finished rounds are kept")
        self.cancel_button.setToolTip("Stop; every finished round stays on the shelf")
        self.cancel_button.setEnabled(False)
        self.explain = small(QLabel(EXPLAIN))
        self.progress = QProgressBar()
        self.progress.setAccessibleName("Auto-hone progress")
        self.stage = small(QLabel())
        self.stage.setAccessibleName("Auto-hone stage")
        self.result = QLabel()
        self.result.setWordWrap(True)
        self.result.setAccessibleName("Auto-hone outcome")

        self.table = QTableWidget(0, len(COLUMNS))
        self.table.setAccessibleName("Auto-hone rounds")
        self.table.setHorizontalHeaderLabels(list(COLUMNS))
        for col, tip in enumerate(TIPS):
            self.table.horizontalHeaderItem(col).setToolTip(tip)
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setAlternatingRowColors(True)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.chart = HoneChart()
        self.chart.setMinimumHeight(140)
        self.table.setMinimumHeight(4 * self.fontMetrics().height() + 12)

        self.settings_box = QWidget()
        grid = QGridLayout(self.settings_box)
        grid.setContentsMargins(0, 0, 0, 0)
        cells = (("S&trategy", self.strategy, 0, 0), ("&Rounds", self.rounds_spin, 1, 0),
                 ("&Per round", self.per_round, 1, 2), ("Pat&ience", self.patience, 2, 0),
                 ("Min&utes", self.minutes, 2, 2), ("&Model calls", self.calls, 3, 0))
        for text, widget, row, col in cells:
            label = QLabel(text)
            label.setBuddy(widget)
            label.setToolTip(widget.toolTip())
            grid.addWidget(label, row, col)
            grid.addWidget(widget, row, col + 1, 1, 3 if widget is self.strategy else 1)
        grid.setColumnStretch(1, 1)
        grid.setColumnStretch(3, 1)
        buttons = QHBoxLayout()
        buttons.addWidget(self.start_button)
        buttons.addWidget(self.cancel_button)
        buttons.addStretch(1)
        split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(self.table)
        split.addWidget(self.chart)
        split.setChildrenCollapsible(False)
        split.setStretchFactor(0, 1)
        split.setStretchFactor(1, 2)
        self.settings_toggle = QToolButton()  # folds the settings away while a run is shown
        self.settings_toggle.setCheckable(True)
        self.settings_toggle.setChecked(True)
        self.settings_toggle.setAutoRaise(True)
        self.settings_toggle.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
        self.settings_toggle.setAccessibleName("Show or hide the auto-hone settings")
        self.settings_toggle.toggled.connect(self._fold_settings)
        for spin in (self.rounds_spin, self.per_round, self.patience, self.minutes, self.calls):
            spin.valueChanged.connect(lambda _v: self._fold_settings(
                self.settings_toggle.isChecked()))
        self.strategy.currentIndexChanged.connect(lambda _i: self._fold_settings(
            self.settings_toggle.isChecked()))
        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.addWidget(self.explain)
        layout.addWidget(self.settings_toggle)
        layout.addWidget(self.settings_box)
        layout.addLayout(buttons)
        layout.addWidget(self.progress)
        layout.addWidget(self.stage)
        layout.addWidget(self.result)
        layout.addWidget(split, 1)
        self.start_button.clicked.connect(self.start)
        self.cancel_button.clicked.connect(self.cancel)
        self.rounds_spin.valueChanged.connect(self.chart.set_rounds)
        self._fold_settings(True)
        self._show_idle()

    def _fold_settings(self, shown: bool) -> None:
        b = self.budget()
        limits = "".join([f", {self.minutes.value()} min" if b.seconds else "",
                          f", {b.model_calls} calls" if b.model_calls else ""])
        self.settings_toggle.setArrowType(Qt.ArrowType.DownArrow if shown
                                          else Qt.ArrowType.RightArrow)
        self.settings_toggle.setText(
            "Settings" if shown else f"Settings: {self.strategy.currentText().lower()}, "
            f"{b.rounds} rounds × {b.per_round}, patience {b.patience}{limits}")
        self.settings_box.setVisible(shown)

    def _spin(self, low: int, high: int, value: int, name: str, tip: str, special: str = "",
              suffix: str = "") -> QSpinBox:
        spin = QSpinBox()
        spin.setToolTip(tip)
        spin.setRange(low, high)
        spin.setValue(value)
        spin.setAccessibleName(name)
        if special:
            spin.setSpecialValueText(special)
        if suffix:
            spin.setSuffix(suffix)
        return spin

    def budget(self) -> HoneBudget:
        return HoneBudget(rounds=self.rounds_spin.value(), per_round=self.per_round.value(),
                          patience=self.patience.value(),
                          seconds=self.minutes.value() * 60 if self.minutes.value() else None,
                          model_calls=self.calls.value() or None)

    # -- method calls down ---------------------------------------------------------------
    def set_project(self, _state) -> None:
        self.cancel()
        self.set_blocked(self.blocked_reason)

    def set_blocked(self, reason: str) -> None:
        """No auto-hone while something else (the suggestions panel) drives the engine."""
        self.blocked_reason = reason
        if self.job is None:
            self._show_idle()

    def start(self) -> Job | None:
        state, handle = self.session.state, self.engine.handle
        if self.job is not None or state is None:
            return None
        wording = self.editor_wording()
        if state.qset is None or not wording.text.strip():
            self.problem.emit("Nothing to hone", "Import a question set and write a wording "
                              "in the editor first.")
            return None
        if handle is None:
            self.problem.emit("No engine yet", "The model is still loading (or did not load); "
                              "wait for “ready” in the engine bar, then try again.")
            return None
        project, strategy, budget, settings = (state.project, self.strategy.currentData(),
                                             self.budget(), self.engine.project_settings())
        self.rounds, self.outcome = [], None
        self.table.setRowCount(0)
        self.chart.clear()
        self.chart.set_rounds(budget.rounds)
        self.result.setText("")
        self.settings_toggle.setChecked(False)  # room for the table and the chart
        lease = self.proposers.lease(state.settings.suggest_engine) if self.proposers else None

        def settled(then):
            def after(*args):
                if lease is not None:
                    state = self.session.state
                    self.proposers.settle(lease, state.settings.suggest_engine
                                          if state is not None else None)
                then(*args)
            return after

        self.job = self.runner.submit(
            lambda ctx: operations.hone(project, handle, wording=wording, strategy=strategy,
                                        budget=budget, settings=settings,
                                        cancel=ctx.cancel_event, on_event=ctx.report,
                                        proposer=lease.open() if lease else None),
            done=settled(self._finished), failed=settled(self._failed),
            progress=self._progress, cancelled=settled(lambda: self._finished(None)),
            name="auto-hone", uses_model=True)
        self._show_running()
        return self.job

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()
            self.stage.setText("Cancelling… finished rounds are kept")

    # -- reports from the job ------------------------------------------------------------
    def _progress(self, event) -> None:
        if isinstance(event, RoundDone) and event.label == "start":
            self._add_row("start", event.round, "", None)
            self.chart.add_tuning(0, event.round)
        elif isinstance(event, RoundDone):
            rnd = event.round
            self.rounds.append(rnd)
            self._add_row(str(rnd.number), rnd.best_tuning, event.label or "— (none better)",
                          rnd.held_out)
            self.chart.add_tuning(rnd.number, rnd.best_tuning)
            if rnd.held_out is not None:
                self.chart.add_held_out(rnd.number, rnd.held_out)
        elif isinstance(event, Stage):
            n = len(self.rounds) + 1
            where = f"Round {n} of {self.rounds_spin.value()}: {event.text}"
            show_stage(self.progress, self.stage, where, event.progress)

    def _add_row(self, name: str, best: Score, kept: str, held: Score | None) -> None:
        row = self.table.rowCount()
        self.table.insertRow(row)
        cells = (name, score_cell(best), kept, score_cell(held) if held else "—")
        for col, text in enumerate(cells):
            item = QTableWidgetItem(text)
            if col == 1:
                item.setToolTip(best.text())
            self.table.setItem(row, col, item)
        self.table.scrollToBottom()

    def _finished(self, result) -> None:
        self.job = None
        self._show_idle()
        self.running_changed.emit(False)
        if result is None:
            self.result.setText("Cancelled before the first round; nothing changed.")
            self.finished.emit(None)
            return
        outcome = result
        self.outcome = outcome
        kept = [r for r in outcome.rounds if r.kept_id]
        best = outcome.rounds[-1].best_tuning if outcome.rounds else None
        text = f"<b>Stopped: {html.escape(outcome.stop_reason)}.</b> "
        text += (f"{len(outcome.rounds)} round(s), {len(kept)} version(s) kept"
                 + (f"; best on tuning items {html.escape(score_cell(best))}." if best else "."))
        text += " Check kept versions on held-out items before trusting the gain."
        self.result.setText(text)
        self.status.emit(f"Auto-hone stopped: {outcome.stop_reason}")
        self.finished.emit(outcome)

    def _failed(self, message: str) -> None:
        self.job = None
        self._show_idle()
        self.running_changed.emit(False)
        self.result.setText(f"✗ Auto-hone stopped: {html.escape(message)} Finished rounds "
                            "are kept on the shelf.")
        self.problem.emit("Auto-hone stopped", message)
        self.finished.emit(None)

    def _show_running(self) -> None:
        self.start_button.setEnabled(False)
        self.cancel_button.setEnabled(True)
        self.progress.setVisible(True)
        self.progress.setRange(0, 0)
        self.stage.setVisible(True)
        self.stage.setText("Grading the starting wording…")
        self.running_changed.emit(True)

    def _show_idle(self) -> None:
        self.start_button.setEnabled(not self.blocked_reason)
        self.start_button.setToolTip(self.blocked_reason or "Run rounds of suggestions "
                                     "unattended, starting from the editor's wording")
        self.cancel_button.setEnabled(False)
        self.progress.setVisible(False)
        self.stage.setVisible(False)
