"""Choosing which interrupted grade run to resume, when there are several: a short table of
each run's wording, items, marks done and when it started. One run needs no choosing."""
from __future__ import annotations

from datetime import datetime

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QAbstractItemView, QDialog, QDialogButtonBox, QHeaderView,
                               QLabel, QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from ...core.views import SPLIT_WORDS

COLUMNS = ("Run", "Wording", "Items", "Marks done", "Started")
WORDING_CHARS = 70


def started_text(stamp: str) -> str:
    """An ISO time (as the store saves it, UTC) in local time, to the minute."""
    try:
        return datetime.fromisoformat(stamp).astimezone().strftime("%Y-%m-%d %H:%M")
    except (TypeError, ValueError):
        return str(stamp or "")


def row_texts(unfinished) -> tuple[str, ...]:
    """One interrupted run (core.resume.Unfinished) as the table's cells."""
    run = unfinished.run
    text = " ".join(run.wording_text.split())
    short = text if len(text) <= WORDING_CHARS else text[:WORDING_CHARS - 1] + "…"
    return (str(run.id), short, SPLIT_WORDS.get(run.split, run.split),
            f"{unfinished.graded}/{run.n_items}", started_text(run.started_at))


class ResumePicker(QDialog):
    """Lists ``interrupted`` (oldest first, as ``Project.interrupted_runs`` gives them) with
    the newest selected; ``run_id()`` is the chosen run's id."""

    def __init__(self, interrupted: list, parent: QWidget | None = None):
        super().__init__(parent)
        self.setWindowTitle("Resume an interrupted run")
        self.setObjectName("resume_picker")
        self.runs = list(interrupted)
        intro = QLabel(f"{len(self.runs)} grade runs stopped before finishing. Choose the one "
                       "to finish: it is graded again as a new run, and the items it had "
                       "graded come from the cache.")
        intro.setWordWrap(True)
        self.table = QTableWidget(len(self.runs), len(COLUMNS))
        self.table.setAccessibleName("Interrupted grade runs")
        self.table.setHorizontalHeaderLabels(COLUMNS)
        self.table.verticalHeader().hide()
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(False)
        for row, unfinished in enumerate(self.runs):
            for column, text in enumerate(row_texts(unfinished)):
                item = QTableWidgetItem(text)
                if column == 1:
                    item.setToolTip(unfinished.run.wording_text)
                if column in (0, 3):
                    item.setTextAlignment(Qt.AlignmentFlag.AlignRight |
                                          Qt.AlignmentFlag.AlignVCenter)
                self.table.setItem(row, column, item)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        self.table.selectRow(len(self.runs) - 1)  # the latest, as the menu did before
        self.table.doubleClicked.connect(lambda _i: self.accept())
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok |
                                   QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Resume")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addWidget(intro)
        layout.addWidget(self.table, 1)
        layout.addWidget(buttons)
        self.resize(720, min(420, 150 + 30 * len(self.runs)))

    def run_id(self) -> int | None:
        rows = self.table.selectionModel().selectedRows()
        return self.runs[rows[0].row()].run.id if rows else None


def pick_interrupted_run(interrupted: list, parent: QWidget | None = None) -> int | None:
    """The run to resume: the only one, or the one the user chooses (None: cancelled)."""
    if not interrupted:
        return None
    if len(interrupted) == 1:
        return interrupted[0].run.id
    picker = ResumePicker(interrupted, parent)
    return picker.run_id() if picker.exec() == QDialog.DialogCode.Accepted else None
