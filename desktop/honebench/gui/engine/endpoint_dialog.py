"""Choosing an OpenAI-protocol endpoint: its address, the model name to ask for and how long
each request may take. The dialog only checks what it can without the network (through
``EngineChoice.validate``); whether the server answers is found out when it is loaded, in a
job."""
from __future__ import annotations

import html

from PySide6.QtWidgets import (QDialog, QDialogButtonBox, QDoubleSpinBox, QFormLayout, QLabel,
                               QLineEdit, QVBoxLayout, QWidget)

from ...core.engines.base import EngineError
from ...core.engines.choice import DEFAULT_TIMEOUT, EngineChoice

EXAMPLE_URL = "http://127.0.0.1:8080/v1"


class EndpointDialog(QDialog):
    """``EndpointDialog.ask(parent, title, initial)`` returns the EngineChoice or None.
    OK with a bad field keeps the dialog open and says which field and what to do."""

    def __init__(self, parent: QWidget | None = None, title: str = "Use an endpoint",
                 initial: EngineChoice | None = None, purpose: str = "answers"):
        super().__init__(parent)
        self.setWindowTitle(title)
        self.setObjectName("endpoint_dialog")
        initial = initial if initial is not None and initial.kind == "endpoint" else None
        self.url = QLineEdit(initial.url if initial else "")
        self.url.setPlaceholderText(EXAMPLE_URL)
        self.url.setAccessibleName("Endpoint address")
        self.url.setToolTip("The server's base URL, ending where /chat/completions and "
                            "/models start")
        self.model = QLineEdit(initial.model if initial else "")
        self.model.setPlaceholderText("the server's default")
        self.model.setAccessibleName("Model name to ask the endpoint for")
        self.timeout = QDoubleSpinBox()
        self.timeout.setRange(1.0, 3600.0)
        self.timeout.setDecimals(0)
        self.timeout.setSuffix(" s")
        self.timeout.setValue(float(initial.timeout) if initial else DEFAULT_TIMEOUT)
        self.timeout.setAccessibleName("Timeout per request, in seconds")
        self.timeout.setToolTip(f"Default {DEFAULT_TIMEOUT:g} s")
        intro = QLabel(f"A server that speaks the OpenAI chat protocol writes the {purpose}. "
                       "It is asked once when you choose it; your items are sent to it.")
        intro.setWordWrap(True)
        timeout_note = QLabel("How long each request may wait for an answer; an item that "
                              "gets none gets an error mark and the run goes on.")
        timeout_note.setWordWrap(True)
        self.error = QLabel()
        self.error.setWordWrap(True)
        self.error.setAccessibleName("What is wrong with the endpoint")
        self.error.hide()

        form = QFormLayout()
        for text, widget in (("&Address", self.url), ("&Model name", self.model),
                             ("&Timeout", self.timeout)):
            label = QLabel(text)
            label.setBuddy(widget)
            form.addRow(label, widget)
        self.buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok |
                                        QDialogButtonBox.StandardButton.Cancel)
        self.buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Use this endpoint")
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addWidget(intro)
        layout.addLayout(form)
        layout.addWidget(timeout_note)
        layout.addWidget(self.error)
        layout.addWidget(self.buttons)
        self.url.textEdited.connect(lambda _t: self.error.hide())
        self.setMinimumWidth(460)

    def choice(self) -> EngineChoice:
        """The endpoint as given (not yet validated)."""
        return EngineChoice.endpoint(self.url.text(), self.model.text().strip(),
                                     timeout=float(self.timeout.value()))

    def problem(self) -> str:
        """What is wrong with the fields ("" when nothing is)."""
        try:
            self.choice().validate()
        except EngineError as exc:
            return str(exc)
        return ""

    def accept(self) -> None:
        why = self.problem()
        if why:
            why = why[0].upper() + why[1:]
            self.error.setText(f"<b>✗</b> {html.escape(why)}. Give the server's base URL, "
                               f"for example {EXAMPLE_URL}.")
            self.error.show()
            self.adjustSize()
            self.url.setFocus()
            self.url.selectAll()
            return
        super().accept()

    @classmethod
    def ask(cls, parent: QWidget | None, title: str = "Use an endpoint",
            initial: EngineChoice | None = None, purpose: str = "answers"
            ) -> EngineChoice | None:
        dialog = cls(parent, title, initial, purpose)
        return dialog.choice() if dialog.exec() == QDialog.DialogCode.Accepted else None
