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
     "that should handle it."),
    ("Write a wording",
     "The editor holds the wording of the instruction. Choose its placement: the system "
     "message, before or after the question, or the start of the answer. {message} is "
     "filled from each item. The preview on the right shows the exact prompt the model "
     "will read for one item, with its length in tokens."),
    ("Grade",
     "Press Ctrl+Return to grade the tuning items. Marks appear in the grade sheet as the "
     "model answers, with a progress bar; Esc cancels and keeps what is finished. The "
     "score comes with its 95% interval: on a hundred items a few points up or down can be "
     "chance."),
    ("Read the misses",
     "Tick Misses only, then press Enter or double-click a row for the item view: the "
     "prompt, the raw output, the answer pulled out of it, the expected answer and the "
     "check's reason. The label table shows which departments get mixed up."),
    ("Keep what works",
     "Ctrl+K keeps the wording on the shelf as v1, v2, … with its score. Restore any "
     "version into the editor, compare its words with the editor's, add a note, or set it "
     "aside. Set-aside versions stay on the shelf, greyed."),
    ("Check honestly",
     "When a version looks best on the tuning items, grade the held-out items with "
     "Ctrl+Shift+Return. They were never used while tuning, so their score is the fair "
     "one. Everything is saved in the project file as it happens."),
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
