"""Help: the About box and a short guided tour of the sample project."""
from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QDialog, QDialogButtonBox, QLabel, QMessageBox, QPushButton,
                               QVBoxLayout, QWidget)

from .. import __version__

STEPS = (
    ("The task",
     "The sample project routes messages sent to a ferry company's passenger desk to one "
     "of five departments: refund, booking_change, lost_property, accessibility or "
     "timetable. Each row of the question set is an item: a message and the department "
     "that should handle it. Most items are for tuning; some are held out for the final "
     "check."),
    ("Write a wording",
     "The editor holds the wording of the instruction. Choose its placement: the system "
     "message, before or after the question, or the start of the answer. {message} is "
     "filled from each item. The preview beside it shows the exact prompt the model will "
     "read for one tuning item, with its length in tokens."),
    ("Grade and read the misses",
     "Ctrl+Return grades the tuning items; marks appear one by one and Esc cancels, keeping "
     "what is finished. The score comes with its 95% interval. Tick Misses only and press "
     "Enter on a row for the item view: prompt, raw output, extracted answer and why."),
    ("Ask for suggestions",
     "In the Suggest tab pick a strategy and press Suggest. The model writes variants; "
     "each is scored on the tuning items while you watch its running score, and the "
     "survivors come back as cards, best first."),
    ("Keep or set aside",
     "Keep a card (or Ctrl+K for the editor's wording) to put it on the shelf as the next "
     "version, v1, v2, …, with its score. Set aside the ones you do not want: they stay on "
     "the shelf, greyed, and are never proposed again."),
    ("Compare",
     "Select a version on the shelf and press Compare: both versions on the same items, "
     "the items one fixed and the other broke, and the paired test on them. A few points "
     "apart on a small set is often chance."),
    ("Confirm on held-out items",
     "The best of many tries looks better on the items it was chosen on. Confirm on "
     "held-out items grades the selected version on the items never used to choose it: "
     "the fair score, and the only way held-out items are spent."),
    ("Export",
     "File › Export report writes one self-contained HTML page with the shelf, the scores "
     "and the comparisons; Export chosen wording writes the winner as plain text. "
     "Everything is saved in the project file as it happens."),
)


class GuidedTour(QDialog):
    """A few pages with Back / Next; the tour of the sample project."""

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        self.setWindowTitle("Guided tour")
        self.page = 0
        self.heading = QLabel()
        font = self.heading.font()
        font.setBold(True)
        font.setPointSizeF(font.pointSizeF() * 1.2)
        self.heading.setFont(font)
        self.body = QLabel()
        self.body.setWordWrap(True)
        self.body.setAlignment(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
        self.body.setMinimumHeight(self.fontMetrics().height() * 7)
        self.step_label = QLabel()
        self.body.setAccessibleName("Tour text")
        self.buttons = QDialogButtonBox()
        self.back = QPushButton("&Back")
        self.next = QPushButton("&Next")
        self.next.setDefault(True)
        self.buttons.addButton(self.back, QDialogButtonBox.ButtonRole.ActionRole)
        self.buttons.addButton(self.next, QDialogButtonBox.ButtonRole.ActionRole)
        self.buttons.addButton(QDialogButtonBox.StandardButton.Close)
        self.buttons.rejected.connect(self.reject)
        self.back.clicked.connect(lambda: self.show_page(self.page - 1))
        self.next.clicked.connect(self._next)
        layout = QVBoxLayout(self)
        layout.addWidget(self.step_label)
        layout.addWidget(self.heading)
        layout.addWidget(self.body, 1)
        layout.addWidget(self.buttons)
        self.resize(460, 260)
        self.show_page(0)

    def show_page(self, n: int) -> None:
        self.page = max(0, min(n, len(STEPS) - 1))
        title, text = STEPS[self.page]
        self.step_label.setText(f"Step {self.page + 1} of {len(STEPS)}")
        self.heading.setText(title)
        self.body.setText(text)
        self.back.setEnabled(self.page > 0)
        self.next.setText("&Finish" if self.page == len(STEPS) - 1 else "&Next")

    def _next(self) -> None:
        if self.page == len(STEPS) - 1:
            self.accept()
        else:
            self.show_page(self.page + 1)


def show_about(parent: QWidget) -> None:
    QMessageBox.about(
        parent, "About honebench",
        f"<b>honebench {__version__}</b><p>Find the instruction wording that makes your local "
        "model do one task well: edit a wording, grade it over your own labelled question "
        "set, read each miss, keep the versions that work on the shelf and check them on "
        "held-out items.</p><p>Runs models on this machine with llama.cpp. The bundled "
        "model is SmolLM2-135M-Instruct.</p>")
