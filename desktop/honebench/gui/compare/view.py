"""Compare two versions: both scores on the same items, the paired test in plain words, and
the fixed and broken items, each opening both outputs side by side.

``ChooseVersions`` asks which two wordings (shelf versions or the editor's) and which items;
``CompareView`` shows a core ``Comparison``; ``PairView`` shows one item under both.
"""
from __future__ import annotations

import html

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import (QComboBox, QDialog, QDialogButtonBox, QFormLayout, QGridLayout,
                               QGroupBox, QHBoxLayout, QLabel, QListWidget, QListWidgetItem,
                               QPushButton, QRadioButton, QSplitter, QTextBrowser, QVBoxLayout,
                               QWidget)

from ...core.compare import Comparison, ItemPair
from ...core.importance import points
from ...core.records import Mark
from ..grading.item_view import _selectable, _shown, _text_box, _titled, result_text
from ...core.project import SPLIT_WORDS

PAIR_ROLE = Qt.ItemDataRole.UserRole + 1


def _bold(label: QLabel, scale: float = 1.0) -> QLabel:
    font = label.font()
    font.setBold(True)
    font.setPointSizeF(font.pointSizeF() * scale)
    label.setFont(font)
    return label


def first_input(pair: ItemPair, width: int = 60) -> str:
    text = " ".join(str(v) for v in pair.item.fields.values()).replace("\n", " ")
    return text if len(text) <= width else text[:width - 1] + "…"


def pair_row_text(pair: ItemPair) -> str:
    """'✗→✓ q017 · expected refund · Where is my refund for…' (glyphs say which way)."""
    arrow = "✗→✓" if pair.b.passed else "✓→✗"
    return f"{arrow}  {pair.item.id} · expected {pair.item.expected!r} · {first_input(pair)}"


class ChooseVersions(QDialog):
    """Pick the baseline (A), the version compared with it (B) and the items."""

    def __init__(self, choices: list[tuple[int, str]], a: int, b: int, parent=None):
        super().__init__(parent)
        self.setWindowTitle("Compare two versions")
        self.combo_a, self.combo_b = QComboBox(), QComboBox()
        for combo, chosen, name in ((self.combo_a, a, "Baseline version A"),
                                    (self.combo_b, b, "Version B, compared with A")):
            for key, text in choices:
                combo.addItem(text, key)
            combo.setCurrentIndex(max(0, combo.findData(chosen)))
            combo.setAccessibleName(name)
        self.tuning = QRadioButton("&tuning items")
        self.held_out = QRadioButton("&held-out items (confirming only: never choose by them)")
        self.tuning.setChecked(True)
        for button in (self.tuning, self.held_out):
            button.setAccessibleName(f"Compare on {button.text().replace('&', '')}")
        form = QFormLayout()
        label_a, label_b = QLabel("Baseline &A:"), QLabel("Compared version &B:")
        label_a.setBuddy(self.combo_a)
        label_b.setBuddy(self.combo_b)
        form.addRow(label_a, self.combo_a)
        form.addRow(label_b, self.combo_b)
        form.addRow("On:", self.tuning)
        form.addRow("", self.held_out)
        note = QLabel("Fixed items: A missed them, B passes. Broken items: the reverse. A "
                      "wording not yet graded on these items is graded first (answers already "
                      "in the cache are reused).")
        note.setWordWrap(True)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok
                                   | QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("&Compare")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(note)
        layout.addWidget(buttons)

    def choice(self) -> tuple[int, int, str]:
        """(A, B, split): wording ids, or EDITOR for the editor's wording."""
        split = "held_out" if self.held_out.isChecked() else "tuning"
        return self.combo_a.currentData(), self.combo_b.currentData(), split


class _Side(QWidget):
    """One version's mark of the item: result, extracted answer, why and raw output."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.heading = _bold(QLabel(), 1.1)
        self.result = _bold(_selectable(QLabel(), "Result of the answer check"))
        self.extracted = _selectable(QLabel(), "Extracted answer")
        self.why = _selectable(QLabel(), "Why")
        self.output = _text_box("Raw output of the model", monospace=True)
        form = QFormLayout()
        form.addRow("Extracted:", self.extracted)
        form.addRow("Why:", self.why)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.heading)
        layout.addWidget(self.result)
        layout.addLayout(form)
        layout.addWidget(_titled("Raw output", self.output), 1)

    def show_mark(self, name: str, mark: Mark) -> None:
        self.heading.setText(name)
        self.heading.setAccessibleName(f"Version {name}")
        self.output.setAccessibleName(f"Raw output of {name}")
        self.result.setText(result_text(mark))
        self.extracted.setText(_shown(mark.extracted, "(nothing extracted)"))
        self.why.setText(_shown(mark.why, "(no why recorded)"))
        self.output.setPlainText(mark.output or "(The model gave no output.)")


class PairView(QDialog):
    """One item under both versions. Signal: ``step_requested(-1 | +1)``."""

    step_requested = Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setModal(False)
        self.resize(900, 620)
        self.pair: ItemPair | None = None
        self.title = _bold(_selectable(QLabel(), "Item id and what changed"), 1.2)
        self.expected = _selectable(QLabel(), "Expected answer")
        self.inputs = QTextBrowser()
        self.inputs.setAccessibleName("Input fields of the item")
        self.inputs.setOpenLinks(False)
        self.side_a, self.side_b = _Side(), _Side()
        sides = QSplitter(Qt.Orientation.Horizontal)
        sides.addWidget(self.side_a)
        sides.addWidget(self.side_b)
        sides.setChildrenCollapsible(False)
        split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(_titled("Input fields", self.inputs, "&Input fields"))
        split.addWidget(sides)
        split.setStretchFactor(0, 1)
        split.setStretchFactor(1, 3)
        self.previous_button = QPushButton("◀ Pre&vious")
        self.next_button = QPushButton("&Next ▶")
        self.position = QLabel()
        for button, step, name in ((self.previous_button, -1, "Previous item in the list"),
                                   (self.next_button, 1, "Next item in the list")):
            button.setAccessibleName(name)
            button.setAutoDefault(False)
            button.clicked.connect(lambda _c=False, s=step: self.step_requested.emit(s))
        close = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        close.rejected.connect(self.reject)
        bottom = QHBoxLayout()
        for w in (self.previous_button, self.next_button, self.position):
            bottom.addWidget(w)
        bottom.addStretch(1)
        bottom.addWidget(close)
        form = QFormLayout()
        form.addRow("Expected answer:", self.expected)
        layout = QVBoxLayout(self)
        layout.addWidget(self.title)
        layout.addLayout(form)
        layout.addWidget(split, 1)
        layout.addLayout(bottom)

    def show_pair(self, pair: ItemPair, name_a: str, name_b: str, kind: str,
                  position: str = "", can_step: tuple[bool, bool] = (False, False)) -> None:
        self.pair = pair
        self.setWindowTitle(f"Item {pair.item.id} — {name_a} and {name_b}")
        self.title.setText(f"Item {pair.item.id} · {kind}")
        self.expected.setText(_shown(pair.item.expected))
        blocks = [f"<p><b>{html.escape(str(k))}</b><br><span style='white-space:pre-wrap'>"
                  f"{html.escape(str(v))}</span></p>" for k, v in pair.item.fields.items()]
        self.inputs.setHtml("".join(blocks) or "<p><i>(no input fields)</i></p>")
        self.side_a.show_mark(f"A · {name_a}", pair.a)
        self.side_b.show_mark(f"B · {name_b}", pair.b)
        self.position.setText(position)
        self.previous_button.setEnabled(can_step[0])
        self.next_button.setEnabled(can_step[1])


class CompareView(QDialog):
    """Shows one Comparison. ``fixed_list`` and ``broken_list`` hold ItemPairs (PAIR_ROLE);
    Enter or double-click opens ``pair_view``."""

    def __init__(self, comparison: Comparison, split: str = "tuning", parent=None):
        super().__init__(parent)
        self.setModal(False)
        self.resize(860, 640)
        self.comparison = comparison
        self.pair_view: PairView | None = None
        self._open_list: QListWidget | None = None
        self.heading = _bold(_selectable(QLabel(), "What is compared"), 1.2)
        self.score_a = _selectable(QLabel(), "Score of A")
        self.score_b = _selectable(QLabel(), "Score of B")
        self.name_a, self.name_b = _bold(QLabel()), _bold(QLabel())
        grid = QGridLayout()
        grid.addWidget(self.name_a, 0, 0)
        grid.addWidget(self.score_a, 0, 1)
        grid.addWidget(self.name_b, 1, 0)
        grid.addWidget(self.score_b, 1, 1)
        grid.setColumnStretch(1, 1)
        self.test = _selectable(QLabel(), "Paired test in plain words")
        self.test.setTextFormat(Qt.TextFormat.PlainText)
        self.bootstrap = _selectable(QLabel(), "Paired bootstrap interval of the mean difference")
        self.fixed_box, self.fixed_list = self._pair_list("Fixed items")
        self.broken_box, self.broken_list = self._pair_list("Broken items")
        lists = QSplitter(Qt.Orientation.Horizontal)
        lists.addWidget(self.fixed_box)
        lists.addWidget(self.broken_box)
        lists.setChildrenCollapsible(False)
        copy = QPushButton("Co&py as text")
        copy.setAccessibleName("Copy the comparison in words")
        copy.setAutoDefault(False)
        copy.clicked.connect(lambda: QGuiApplication.clipboard().setText(self.comparison.text()))
        close = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        close.rejected.connect(self.reject)
        bottom = QHBoxLayout()
        bottom.addWidget(copy)
        bottom.addStretch(1)
        bottom.addWidget(close)
        layout = QVBoxLayout(self)
        layout.addWidget(self.heading)
        layout.addLayout(grid)
        layout.addWidget(self.test)
        layout.addWidget(self.bootstrap)
        layout.addWidget(lists, 1)
        layout.addLayout(bottom)
        self.show_comparison(comparison, split)

    def _pair_list(self, title: str) -> tuple[QGroupBox, QListWidget]:
        box = QGroupBox(title)
        items = QListWidget()
        items.setAccessibleName(title)
        items.setUniformItemSizes(True)
        items.setTextElideMode(Qt.TextElideMode.ElideRight)
        items.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        items.itemActivated.connect(lambda it, lst=items: self.open_pair(lst, lst.row(it)))
        layout = QVBoxLayout(box)
        layout.addWidget(items)
        return box, items

    # -- method calls down ---------------------------------------------------------------
    def show_comparison(self, c: Comparison, split: str = "tuning") -> None:
        self.comparison, where = c, SPLIT_WORDS.get(split, split)
        self.setWindowTitle(f"Compare {c.name_a} and {c.name_b}")
        self.heading.setText(f"A · {c.name_a} against B · {c.name_b}, on the same {c.n} "
                             f"{where} both were graded on")
        self.name_a.setText(f"A · {c.name_a}")
        self.name_b.setText(f"B · {c.name_b}")
        self.score_a.setText(c.score_a.text())
        self.score_b.setText(c.score_b.text())
        p = c.paired
        agree = (f"Both pass {p.both_pass} and both miss {p.both_fail} of the {c.n} items.")
        if not c.fixed and not c.broken:
            test = (f"{c.name_a} and {c.name_b} agree on every item, so there is no difference "
                    "to test. " + agree)
        else:
            test = (f"Paired test (exact McNemar, on the {p.fixed + p.broken} items where they "
                    f"disagree): {p.text(c.name_b)}. {agree}")
        low, high = c.difference_interval
        test += (f" {c.name_b} minus {c.name_a}: {points(c.score_b.rate - c.score_a.rate)} "
                 f"(95% paired interval {points(low)} to {points(high)}).")
        self.test.setText(test)
        self.bootstrap.setVisible(c.mean_difference is not None)
        if c.mean_difference is not None:
            self.bootstrap.setText(c.mean_difference.text(c.name_a, c.name_b))
        for box, items, pairs, words in (
                (self.fixed_box, self.fixed_list, c.fixed,
                 f"missed by {c.name_a}, passed by {c.name_b}"),
                (self.broken_box, self.broken_list, c.broken,
                 f"passed by {c.name_a}, missed by {c.name_b}")):
            kind = "Fixed" if items is self.fixed_list else "Broken"
            box.setTitle(f"{kind} items ({len(pairs)} of {c.n}): {words}")
            items.clear()
            for pair in pairs:
                row = QListWidgetItem(pair_row_text(pair))
                row.setData(PAIR_ROLE, pair)
                row.setToolTip(f"{pair.item.id}: {first_input(pair, 300)}\n"
                               "Enter or double-click shows both outputs side by side")
                items.addItem(row)
            if not pairs:
                items.addItem(QListWidgetItem("(none)"))
                items.item(0).setFlags(Qt.ItemFlag.NoItemFlags)

    def pairs(self, which: str) -> list[ItemPair]:
        """The ItemPairs listed under "fixed" or "broken", in list order."""
        items = self.fixed_list if which == "fixed" else self.broken_list
        return [p for r in range(items.count())
                if (p := items.item(r).data(PAIR_ROLE)) is not None]

    def open_pair(self, items: QListWidget, row: int) -> PairView | None:
        """Show the pair in ``items`` at ``row`` in the side-by-side view (one, reused)."""
        if not 0 <= row < items.count() or items.item(row).data(PAIR_ROLE) is None:
            return None
        pair = items.item(row).data(PAIR_ROLE)
        items.setCurrentRow(row)
        if self.pair_view is None:
            self.pair_view = PairView(self)
            self.pair_view.step_requested.connect(self._step)
        self._open_list = items
        kind = "fixed: " if items is self.fixed_list else "broken: "
        c = self.comparison
        kind += (f"{c.name_a} missed it, {c.name_b} passes" if pair.b.passed
                 else f"{c.name_a} passed it, {c.name_b} misses")
        self.pair_view.show_pair(pair, c.name_a, c.name_b, kind,
                                 f"{row + 1} of {items.count()}",
                                 (row > 0, row < items.count() - 1))
        self.pair_view.show()
        self.pair_view.raise_()
        return self.pair_view

    def _step(self, delta: int) -> None:
        if self._open_list is not None:
            self.open_pair(self._open_list, self._open_list.currentRow() + delta)
