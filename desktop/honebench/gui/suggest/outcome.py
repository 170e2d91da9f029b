"""Where the suggestions' outcome shows: the model's diagnosis, the headline, the dropped
replies (folded) and the cards, in one scrolling area."""
from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QFrame, QGroupBox, QLabel, QScrollArea, QToolButton, QVBoxLayout,
                               QWidget)

from .cards import small


class OutcomeArea(QScrollArea):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.diagnosis_box = QGroupBox("What the model thinks the misses show")
        self.diagnosis = QLabel()
        self.diagnosis.setWordWrap(True)
        self.diagnosis.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.diagnosis.setAccessibleName("The model's diagnosis of the misses")
        QVBoxLayout(self.diagnosis_box).addWidget(self.diagnosis)
        self.message = QLabel()
        self.message.setWordWrap(True)
        self.message.setAccessibleName("Suggestion outcome")
        self.message.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.dropped_toggle = QToolButton()
        self.dropped_toggle.setCheckable(True)
        self.dropped_toggle.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
        self.dropped_toggle.setArrowType(Qt.ArrowType.RightArrow)
        self.dropped_toggle.setAutoRaise(True)
        self.dropped_toggle.setAccessibleName("Show the dropped replies")
        self.dropped = small(QLabel())
        self.dropped.setAccessibleName("Why replies were dropped")
        self.dropped.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        card_box = QWidget()
        self.card_layout = QVBoxLayout(card_box)
        self.card_layout.setContentsMargins(0, 0, 0, 0)
        self.setWidgetResizable(True)
        self.setFrameShape(QFrame.Shape.NoFrame)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setAccessibleName("Scored suggestions")
        inner = QWidget()
        layout = QVBoxLayout(inner)
        layout.setContentsMargins(0, 0, 4, 0)
        for widget in (self.diagnosis_box, self.message, self.dropped_toggle, self.dropped,
                       card_box):
            layout.addWidget(widget)
        layout.addStretch(1)
        self.setWidget(inner)
