"""The transfer check's window: choose shelf versions and a second engine (a GGUF file or an
endpoint), run the check, read the result (versions × engines, intervals, p, flags).

It only shows and asks; ``TransferControl`` (control.py) runs the check as a job. Nothing
here opens a file, an engine or the network: the choice is validated as a plain record.
"""
from __future__ import annotations

from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtWidgets import (QAbstractItemView, QButtonGroup, QDialog, QDoubleSpinBox,
                               QFileDialog, QFormLayout, QGridLayout, QHBoxLayout, QHeaderView,
                               QLabel, QLineEdit, QListWidget, QListWidgetItem, QProgressBar,
                               QPushButton, QRadioButton, QTableWidget, QTableWidgetItem,
                               QVBoxLayout, QWidget)

from ...core.engines.base import EngineError
from ...core.engines.choice import DEFAULT_TIMEOUT, EngineChoice
from ...core.events import Finished, Marked, Stage, Started, progress_text
from ...core.transfer import CAUTION, TransferResult

COLUMNS = ("Version", "Here", "Rank", "There", "Rank", "There vs here", "Flag")


def _cell(text: str, tip: str = "") -> QTableWidgetItem:
    item = QTableWidgetItem(text)
    item.setFlags(Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable)
    if tip:
        item.setToolTip(tip)
    return item


def _short(s) -> str:
    """'62% (52/84, 51–72%)': the shelf's score with its interval, compact."""
    return (f"{round(s.rate * 100)}% ({s.passed}/{s.total}, "
            f"{round(s.low * 100)}–{round(s.high * 100)}%)")


class EnginePicker(QWidget):
    """A GGUF file or an endpoint (URL, model name, timeout)."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.file_button = QRadioButton("GGUF model &file")
        self.endpoint_button = QRadioButton("&Endpoint (OpenAI protocol)")
        group = QButtonGroup(self)
        for button in (self.file_button, self.endpoint_button):
            group.addButton(button)
        self.file_button.setChecked(True)
        self.path = QLineEdit()
        self.path.setPlaceholderText("another model, or the same model in another quantisation")
        self.path.setAccessibleName("Path of the other GGUF model file")
        self.browse = QPushButton("&Browse…")
        self.browse.clicked.connect(self._browse)
        self.url = QLineEdit()
        self.url.setPlaceholderText("http://127.0.0.1:8080/v1")
        self.url.setAccessibleName("Address of the other engine's endpoint")
        self.model = QLineEdit()
        self.model.setPlaceholderText("the server's default")
        self.model.setAccessibleName("Model name to ask the endpoint for")
        self.timeout = QDoubleSpinBox()
        self.timeout.setRange(1, 3600)
        self.timeout.setValue(DEFAULT_TIMEOUT)
        self.timeout.setSuffix(" s per item")
        self.timeout.setAccessibleName("How long each endpoint request may take")
        grid = QGridLayout(self)
        grid.setContentsMargins(0, 0, 0, 0)
        grid.addWidget(self.file_button, 0, 0)
        grid.addWidget(self.path, 0, 1, 1, 3)
        grid.addWidget(self.browse, 0, 4)
        grid.addWidget(self.endpoint_button, 1, 0)
        grid.addWidget(self.url, 1, 1, 1, 4)
        grid.addWidget(QLabel("model:"), 2, 0, Qt.AlignmentFlag.AlignRight)
        grid.addWidget(self.model, 2, 1)
        grid.addWidget(QLabel("timeout:"), 2, 2, Qt.AlignmentFlag.AlignRight)
        grid.addWidget(self.timeout, 2, 3)
        grid.setColumnStretch(1, 1)
        self.file_button.toggled.connect(self._enable)
        self._enable()

    def _enable(self) -> None:
        file = self.file_button.isChecked()
        for widget in (self.path, self.browse):
            widget.setEnabled(file)
        for widget in (self.url, self.model, self.timeout):
            widget.setEnabled(not file)

    def _browse(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "The other engine's model file", "",
                                              "GGUF model (*.gguf);;All files (*)")
        if path:
            self.path.setText(path)

    def choice(self) -> EngineChoice:
        """The engine named, validated as a record (EngineError saying what is wrong)."""
        if self.file_button.isChecked():
            return EngineChoice.file(self.path.text().strip()).validate()
        return EngineChoice.endpoint(self.url.text(), self.model.text().strip(),
                                     self.timeout.value()).validate()


class TransferDialog(QDialog):
    """Signals: ``run_requested(EngineChoice, [wording ids])``, ``cancel_requested()``."""

    run_requested = Signal(object, list)
    cancel_requested = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setWindowTitle("Check on another engine")
        self.versions = QListWidget()
        self.versions.setAccessibleName("Shelf versions to check")
        self.versions.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.versions.setMaximumHeight(90)
        self.graded = QLabel()
        self.graded.setWordWrap(True)
        self.picker = EnginePicker()
        self.run_button = QPushButton("&Run check")
        self.run_button.setDefault(True)
        self.stop_button = QPushButton("&Stop")
        self.stop_button.setEnabled(False)
        self.close_button = QPushButton("Close")
        self.run_button.clicked.connect(self._run)
        self.stop_button.clicked.connect(self.cancel_requested)
        self.close_button.clicked.connect(self.close)
        self.progress = QProgressBar()
        self.progress.setAccessibleName("Progress of the transfer check")
        self.progress.setVisible(False)
        self.stage = QLabel()
        self.stage.setWordWrap(True)
        self.stage.setAccessibleName("What the transfer check is doing")
        self.heading = QLabel()
        self.heading.setWordWrap(True)
        self.table = QTableWidget(0, len(COLUMNS))
        self.table.setHorizontalHeaderLabels(COLUMNS)
        self.table.setAccessibleName("Transfer check: versions on both engines")
        self.table.verticalHeader().setVisible(False)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(len(COLUMNS) - 1, QHeaderView.ResizeMode.Stretch)
        header.sectionResized.connect(lambda *_: self.table.resizeRowsToContents())
        self.caution = QLabel(f"⚠ {CAUTION}")
        self.caution.setWordWrap(True)
        form = QFormLayout()
        form.addRow("Versions:", self.versions)
        form.addRow("Graded engine (here):", self.graded)
        form.addRow("Other engine (there):", self.picker)
        buttons = QHBoxLayout()
        buttons.addWidget(self.run_button)
        buttons.addWidget(self.stop_button)
        buttons.addStretch(1)
        buttons.addWidget(self.close_button)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addLayout(buttons)
        layout.addWidget(self.progress)
        layout.addWidget(self.stage)
        layout.addWidget(self.heading)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.caution)
        self.resize(860, 560)

    # -- filling ---------------------------------------------------------------------------
    def set_versions(self, rows, chosen: set[int]) -> None:
        """Shelf rows (core ShelfRow) to choose from; ``chosen`` ids start ticked."""
        self.versions.clear()
        for row in sorted(rows, key=lambda r: r.entry.version):
            score = _short(row.tuning) if row.tuning else "not graded"
            text = row.entry.text.replace("\n", " ")
            item = QListWidgetItem(f"{row.entry.label} · {score} · "
                                   f"{text[:60] + ('…' if len(text) > 60 else '')}")
            item.setData(Qt.ItemDataRole.UserRole, row.entry.id)
            item.setFlags(Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsUserCheckable)
            item.setCheckState(Qt.CheckState.Checked if row.entry.id in chosen
                               else Qt.CheckState.Unchecked)
            item.setToolTip(row.entry.text)
            self.versions.addItem(item)

    def set_graded_engine(self, text: str) -> None:
        self.graded.setText(text)

    def chosen_ids(self) -> list[int]:
        return [self.versions.item(n).data(Qt.ItemDataRole.UserRole)
                for n in range(self.versions.count())
                if self.versions.item(n).checkState() == Qt.CheckState.Checked]

    def _run(self) -> None:
        ids = self.chosen_ids()
        if not ids:
            self.stage.setText("Tick at least one version to check.")
            return
        try:
            choice = self.picker.choice()
        except EngineError as exc:
            self.stage.setText(f"⚠ {exc}")
            return
        self.run_requested.emit(choice, ids)

    def set_running(self, running: bool) -> None:
        self.run_button.setEnabled(not running)
        self.stop_button.setEnabled(running)
        self.picker.setEnabled(not running)
        self.versions.setEnabled(not running)
        self.progress.setVisible(running)
        if running:
            self.progress.setRange(0, 0)

    def show_event(self, event) -> None:
        """A progress event of the running check, in the core's words."""
        if isinstance(event, Started):
            self.stage.setText(event.what)
            self.progress.setRange(0, max(event.total, 1))
            self.progress.setValue(0)
        elif isinstance(event, Marked):
            p = event.progress
            self.progress.setRange(0, max(p.total, 1))
            self.progress.setValue(p.done)
            self.progress.setFormat(progress_text(p))
            self.progress.setTextVisible(True)
        elif isinstance(event, Stage):
            self.stage.setText(event.text)
        elif isinstance(event, Finished):
            self.progress.setVisible(False)

    def show_message(self, text: str) -> None:
        self.stage.setText(text)

    def show_result(self, result: TransferResult | None) -> None:
        self.table.setRowCount(0)
        if result is None:
            self.heading.setText("No transfer check yet: tick versions, name the other engine "
                                 "and run the check.")
            return
        self.heading.setText(
            f"On the same {result.n} {result.split.replace('_', '-')} items. Here: "
            f"{result.here_engine}. There: {result.there_engine}.")
        of = len(result.versions)
        for v in result.versions:
            n = self.table.rowCount()
            self.table.insertRow(n)
            p = v.paired
            chance = "p < 0.001" if p.p_value < 0.001 else f"p = {p.p_value:.2g}"
            test = ("agree on every item" if p.fixed == p.broken == 0
                    else f"gains {p.fixed}, loses {p.broken}; {chance}")
            flags = "; ".join(v.flags) + (f" (against {', '.join(v.flips)})" if v.flips else "")
            errors = f" ⚠ {v.errors_there} errors" if v.errors_there else ""
            cells = [
                _cell(v.label),
                _cell(_short(v.here), v.here.text()),
                _cell(f"{v.rank_here} of {of}"),
                _cell(_short(v.there) + errors, v.there.text() + (
                    f"; {v.errors_there} items got an error mark there (each counts as a "
                    "miss)" if v.errors_there else "")),
                _cell(f"{v.rank_there} of {of}"),
                _cell(test, "Items passed there but missed here (gains) and passed here but "
                            "missed there (losses); exact paired (McNemar) test on them"),
                _cell(flags or "—"),
            ]
            for column, cell in enumerate(cells):
                self.table.setItem(n, column, cell)
            if v.flags:
                bold = cells[-1].font()
                bold.setBold(True)
                cells[-1].setFont(bold)
        QTimer.singleShot(0, self.table.resizeRowsToContents)  # once the columns have room
