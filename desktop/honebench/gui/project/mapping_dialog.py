"""The column mapping dialog: which columns are input fields, the expected answer, the id and
the split; how many items are held out; and the answer check.

It is handed the first rows, a guessed mapping and the problems found (from
``honebench.core.sets.preview``, run in a background job by its owner) and reads no file.
"""
from __future__ import annotations

import html
import os
from dataclasses import replace

import pandas as pd
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QAbstractItemView, QComboBox, QDialog, QDialogButtonBox,
                               QDoubleSpinBox, QFormLayout, QGroupBox, QHBoxLayout, QHeaderView,
                               QLabel, QLineEdit, QListWidget, QListWidgetItem, QSpinBox,
                               QTableView, QVBoxLayout, QWidget)

from ...core.checks import CHECKS, EXTRACTIONS, CheckSpec
from ...core.sets import ColumnMapping
from .reading_options import HeadModel, ReadingOptions

CHECK_NOTES = {
    "exact": "exact — the same text, ignoring case, punctuation and articles",
    "label": "label — the closest of a fixed list of labels",
    "number": "number — the same number, within a tolerance",
    "fuzzy": "fuzzy — similar enough text",
    "pattern": "pattern — a regular expression finds a match",
    "contains": "contains — the expected answer appears in the output",
    "json_field": "JSON field — a field of a JSON object in the output",
}
EXTRACTION_NOTES = {
    "auto": "chosen by the check", "whole": "whole text", "first_line": "first line",
    "after_marker": "after a marker", "last_number": "last number", "label": "label match",
}
ROLE_WORDS = {"input": "input field", "expected": "expected answer", "id": "item id",
              "split": "split"}
OPTION_FOR = {  # check kind -> (label, placeholder)
    "label": ("&Labels", "taken from the expected answers if empty"),
    "pattern": ("&Pattern", "empty: the expected answer as a whole word; {expected} stands for it"),
    "json_field": ("JSON &field", "path of the field, e.g. answer or result.label"),
}


class MappingDialog(QDialog):
    """Accessors after exec(): ``mapping()``, ``check_spec()``, ``split_settings()``,
    ``reading()``. Changing the sheet or the title rows emits ``reread_requested(sheet,
    skip_rows)``; the owner reads the file again in a job and calls ``show_preview`` (or
    ``show_read_error``) with the result."""

    reread_requested = Signal(object, int)

    def __init__(self, path: str, head: pd.DataFrame, guessed: ColumnMapping | None,
                 problems: list[str], check: CheckSpec, parent=None,
                 sheets: list[str] | None = None):
        super().__init__(parent)
        self.path = path
        self.base_check = check
        self.read_error, self.rereading = "", False
        self.setWindowTitle(f"Columns of {os.path.basename(path)}")

        self.intro = QLabel()
        self.intro.setWordWrap(True)
        self.reading_options = ReadingOptions(sheets)
        self.reading_options.changed.connect(self._reread)
        self.table = QTableView()
        self.table.setAccessibleName("First rows of the file")
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(False)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self.table.horizontalHeader().setStretchLastSection(True)

        self.problems = QLabel()
        self.problems.setWordWrap(True)
        self.problems.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.problems.setAccessibleName("Problems found in the file")

        layout = QVBoxLayout(self)
        top = QHBoxLayout()
        top.addWidget(self.intro, 1)
        top.addWidget(self.reading_options)
        layout.addLayout(top)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.problems)
        groups = QHBoxLayout()
        groups.addWidget(self._columns_group(), 1, Qt.AlignmentFlag.AlignTop)
        right = QVBoxLayout()
        right.addWidget(self._split_group())
        right.addWidget(self._check_group(check))
        right.addStretch(1)
        groups.addLayout(right, 1)
        layout.addLayout(groups)
        layout.addStretch(1)

        self.reason = QLabel()
        self.reason.setWordWrap(True)
        self.reason.setAccessibleName("Why OK is not available")
        self.buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok
                                        | QDialogButtonBox.StandardButton.Cancel)
        self.ok_button = self.buttons.button(QDialogButtonBox.StandardButton.Ok)
        self.ok_button.setText("Use these columns")
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        bottom = QHBoxLayout()
        bottom.addWidget(self.reason, 1)
        bottom.addWidget(self.buttons)
        layout.addLayout(bottom)

        self.show_preview(head, guessed, problems)
        self.resize(900, min(720, self.sizeHint().height() + 20))

    # -- reading the file again ----------------------------------------------------------
    def show_preview(self, head: pd.DataFrame, guessed: ColumnMapping | None,
                     problems: list[str]) -> None:
        """Show the first rows of the file as read now, with its columns offered anew."""
        self.read_error, self.rereading = "", False
        columns = [str(c) for c in head.columns]
        sheet, skip = self.reading()
        where = f" (sheet {sheet!r})" if sheet is not None else ""
        name = html.escape(os.path.basename(self.path), quote=False)
        rows = f"{len(head)} row{'' if len(head) == 1 else 's'}"
        self.intro.setText(f"<b>{name}</b>{html.escape(where, quote=False)}: the first {rows} "
                           "as read. Say which columns the model reads and which holds the "
                           "expected answer.")
        old = getattr(self, "head_model", None)
        self.head_model = HeadModel(head, self)
        self.table.setModel(self.head_model)
        if old is not None:
            old.deleteLater()
        self.table.resizeColumnsToContents()
        for col in range(len(columns)):
            self.table.setColumnWidth(col, min(self.table.columnWidth(col) + 12, 380))
        self._fit_table_height()
        self.inputs.blockSignals(True)
        self.inputs.clear()
        for name in columns:
            entry = QListWidgetItem(name)
            entry.setFlags(entry.flags() | Qt.ItemFlag.ItemIsUserCheckable)
            entry.setCheckState(Qt.CheckState.Unchecked)
            self.inputs.addItem(entry)
        self.inputs.setMaximumHeight(max(70, min(6, len(columns)) * 24 + 8))
        self.inputs.blockSignals(False)
        for combo in (self.expected, self.id_column, self.split_column):
            combo.blockSignals(True)
            while combo.count() > 1:
                combo.removeItem(1)
            for c in columns:
                combo.addItem(c, c)
            combo.setCurrentIndex(0)
            combo.blockSignals(False)
        self._show_problems(problems, guessed is not None)
        self._preselect(guessed)
        self._update()

    def show_read_error(self, message: str) -> None:
        """The file could not be read with the chosen sheet or title rows."""
        self.read_error, self.rereading = message, False
        self.problems.setText(f"<b>⚠ Not readable this way:</b> {html.escape(message)}")
        self._update()

    def _reread(self, sheet, skip_rows: int) -> None:
        self.rereading = True
        self.problems.setText("Reading the file again…")
        self._update()
        self.reread_requested.emit(sheet, skip_rows)

    def reading(self) -> tuple[str | None, int]:
        """(the workbook sheet to read or None, title rows to skip)."""
        return self.reading_options.values()

    # -- building ------------------------------------------------------------------------
    def _fit_table_height(self) -> None:
        """As tall as the rows shown (up to about 12 rows), no taller."""
        rows = self.table.verticalHeader()
        wanted = (self.table.horizontalHeader().sizeHint().height()
                  + rows.defaultSectionSize() * min(max(self.head_model.rowCount(), 1), 12)
                  + self.table.horizontalScrollBar().sizeHint().height()
                  + 2 * self.table.frameWidth() + 2)
        self.table.setMinimumHeight(min(wanted, 300))
        self.table.setMaximumHeight(wanted)

    def _columns_group(self) -> QGroupBox:
        group = QGroupBox("Columns")
        self.inputs = QListWidget()
        self.inputs.setAccessibleName("Input fields: columns the model reads")
        self.inputs.itemChanged.connect(lambda _i: self._update())
        self.expected = self._column_combo("choose a column…", "Expected answer column")
        self.id_column = self._column_combo("none: number the items by row", "Item id column")
        self.split_column = self._column_combo("none: draw the split",
                                               "Split column (tuning / held-out)")
        form = QFormLayout(group)
        form.addRow(self._buddy("&Input fields", self.inputs), self.inputs)
        form.addRow(self._buddy("&Expected answer", self.expected), self.expected)
        form.addRow(self._buddy("Item i&d", self.id_column), self.id_column)
        form.addRow(self._buddy("&Split column", self.split_column), self.split_column)
        return group

    def _split_group(self) -> QGroupBox:
        group = QGroupBox("Held-out items")
        self.fraction = QDoubleSpinBox()
        self.fraction.setRange(0.1, 0.5)
        self.fraction.setSingleStep(0.05)
        self.fraction.setDecimals(2)
        self.fraction.setValue(0.3)
        self.fraction.setAccessibleName("Fraction of items held out")
        self.fraction.setToolTip("Held-out items are never shown to a suggestion strategy; "
                                 "confirm a wording on them")
        self.seed = QSpinBox()
        self.seed.setRange(0, 2_147_483_647)
        self.seed.setAccessibleName("Split seed")
        self.seed.setToolTip("The same seed gives the same split, whatever the row order")
        self.split_note = QLabel("The split column decides which items are held out.")
        self.split_note.setWordWrap(True)
        form = QFormLayout(group)
        form.addRow(self._buddy("&Held-out fraction", self.fraction), self.fraction)
        form.addRow(self._buddy("Split s&eed", self.seed), self.seed)
        form.addRow(self.split_note)
        return group

    def _check_group(self, check: CheckSpec) -> QGroupBox:
        group = QGroupBox("Answer check")
        self.kind = QComboBox()
        self.kind.setAccessibleName("Answer check kind")
        for kind in CHECKS:
            self.kind.addItem(CHECK_NOTES.get(kind, kind), kind)
        self.kind.setCurrentIndex(max(0, self.kind.findData(check.kind)))
        self.extraction = QComboBox()
        self.extraction.setAccessibleName("Extraction")
        for how in ("auto",) + EXTRACTIONS:
            self.extraction.addItem(EXTRACTION_NOTES.get(how, how), how)
        self.extraction.setCurrentIndex(max(0, self.extraction.findData(check.extraction)))
        self.option = QLineEdit()
        self.option_label = self._buddy("&Labels", self.option)
        self._options = {"label": ", ".join(check.labels), "pattern": check.pattern,
                         "json_field": check.json_field}
        self._option_kind: str | None = None
        self.marker = QLineEdit(check.marker)
        self.marker.setAccessibleName("Marker before the answer")
        self.marker.setPlaceholderText("e.g. Answer:")
        self.marker_label = self._buddy("&Marker", self.marker)
        self.check_error = QLabel()
        self.check_error.setWordWrap(True)
        self.check_error.setAccessibleName("Problem with the answer check")
        self.form = QFormLayout(group)
        self.form.addRow(self._buddy("Chec&k", self.kind), self.kind)
        self.form.addRow(self._buddy("E&xtraction", self.extraction), self.extraction)
        self.form.addRow(self.option_label, self.option)
        self.form.addRow(self.marker_label, self.marker)
        self.form.addRow(self.check_error)
        self.kind.currentIndexChanged.connect(lambda _i: self._update())
        self.extraction.currentIndexChanged.connect(lambda _i: self._update())
        self.option.textEdited.connect(lambda _t: self._describe_check())
        self.marker.textEdited.connect(lambda _t: self._describe_check())
        return group

    def _column_combo(self, none_text: str, name: str) -> QComboBox:
        combo = QComboBox()
        combo.setAccessibleName(name)
        combo.addItem(none_text, None)
        combo.currentIndexChanged.connect(lambda _i: self._update())
        return combo

    @staticmethod
    def _buddy(text: str, widget: QWidget) -> QLabel:
        label = QLabel(text)
        label.setBuddy(widget)
        return label

    def _preselect(self, guessed: ColumnMapping | None) -> None:
        if guessed is None:
            return
        for n in range(self.inputs.count()):
            entry = self.inputs.item(n)
            on = entry.text() in guessed.inputs
            entry.setCheckState(Qt.CheckState.Checked if on else Qt.CheckState.Unchecked)
        for combo, column in ((self.expected, guessed.expected), (self.id_column, guessed.id),
                              (self.split_column, guessed.split)):
            combo.setCurrentIndex(max(0, combo.findData(column)) if column else 0)

    def _show_problems(self, problems: list[str], guessed: bool) -> None:
        if not problems:
            self.problems.setText("No problems found with the guessed columns." if guessed
                                  else "Choose the columns below.")
            return
        lines = "".join(f"<li>{html.escape(str(p), quote=False)}</li>" for p in problems)
        title = ("Found when reading the file with the guessed columns" if guessed
                 else "The columns could not be guessed")
        self.problems.setText(f"<b>⚠ {title} ({len(problems)}):</b>"
                              f"<ul style='margin-top:2px'>{lines}</ul>"
                              "The whole file is checked again when you press OK.")

    # -- state ---------------------------------------------------------------------------
    def _checked_inputs(self) -> tuple[str, ...]:
        return tuple(self.inputs.item(n).text() for n in range(self.inputs.count())
                     if self.inputs.item(n).checkState() == Qt.CheckState.Checked)

    def _blocker(self) -> str:
        """Why the mapping cannot be used yet ('' when it can)."""
        inputs, expected = self._checked_inputs(), self.expected.currentData()
        id_col, split_col = self.id_column.currentData(), self.split_column.currentData()
        if self.rereading:
            return "Reading the file again…"
        if self.read_error:
            return "Choose another sheet or number of title rows: the file is not readable so."
        if not inputs:
            return "Tick at least one input field: a column the model reads."
        if expected is None:
            return "Choose the column that holds the expected answer."
        if expected in inputs:
            return (f"'{expected}' is the expected answer, so it cannot also be an input "
                    "field: untick it.")
        if id_col is not None and id_col == expected:
            return f"'{expected}' cannot be both the item id and the expected answer."
        if split_col is not None and split_col in inputs + (expected, id_col):
            return f"'{split_col}' is the split column, so it can have no other role."
        return ""

    def _update(self) -> None:
        blocker = self._blocker()
        self.ok_button.setEnabled(not blocker)
        self.reason.setText(f"⚠ {blocker}" if blocker else "")
        roles = {c: ROLE_WORDS["input"] for c in self._checked_inputs()}
        for combo, name in ((self.id_column, "id"), (self.split_column, "split"),
                            (self.expected, "expected")):
            if combo.currentData() is not None:
                roles[combo.currentData()] = ROLE_WORDS[name]
        self.head_model.set_roles(roles)
        drawn = self.split_column.currentData() is None
        self.fraction.setEnabled(drawn)
        self.seed.setEnabled(drawn)
        self.split_note.setVisible(not drawn)
        self._update_check_fields()

    def _update_check_fields(self) -> None:
        kind = self.kind.currentData()
        if self._option_kind in OPTION_FOR:
            self._options[self._option_kind] = self.option.text()
        self._option_kind = kind
        shown = kind in OPTION_FOR
        self.form.setRowVisible(self.option, shown)
        if shown:
            label, hint = OPTION_FOR[kind]
            self.option_label.setText(label)
            self.option.setPlaceholderText(hint)
            self.option.setAccessibleName(label.replace("&", ""))
            self.option.setText(self._options.get(kind, ""))
        how = self.extraction.currentData()
        self.form.setRowVisible(self.marker, how == "after_marker")
        self._describe_check()

    def _describe_check(self) -> None:
        """The check in one line as it stands, or what is wrong with it."""
        try:
            self.check_error.setText("Judged by: " + self.check_spec().describe())
        except ValueError as e:
            self.check_error.setText(f"⚠ {e}")

    # -- accessors -----------------------------------------------------------------------
    def mapping(self) -> ColumnMapping:
        return ColumnMapping(self._checked_inputs(), self.expected.currentData() or "",
                             self.id_column.currentData(), self.split_column.currentData())

    def check_spec(self) -> CheckSpec:
        """The answer check as set here (other settings kept from the one given). Raises
        ValueError naming the bad field."""
        kind = self.kind.currentData()
        text = self.option.text().strip() if kind in OPTION_FOR else ""
        changes = {"kind": kind, "extraction": self.extraction.currentData(),
                   "marker": self.marker.text()}
        if kind == "label":
            changes["labels"] = tuple(p.strip() for p in text.split(",") if p.strip())
        elif kind == "pattern":
            changes["pattern"] = text
        elif kind == "json_field":
            changes["json_field"] = text
        spec = replace(self.base_check, **changes)
        spec.validate()
        return spec

    def split_settings(self) -> tuple[int, float]:
        """(seed, held-out fraction)."""
        return self.seed.value(), round(self.fraction.value(), 4)

    def accept(self) -> None:
        if self._blocker():
            return
        try:
            self.check_spec()
        except ValueError as e:
            self.check_error.setText(f"⚠ {e}")
            if self.option.isVisible():
                self.option.setFocus()
            return
        super().accept()
