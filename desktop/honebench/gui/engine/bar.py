"""The engine bar: the graded engine (the bundled model, a GGUF file or an OpenAI-protocol
endpoint) and the open project's generation settings (temperature, max tokens, how label
answers are found), which are the project's own ``ProjectSettings``, shared with the CLI so
both fronts share cached answers.

Loading an engine is a job on the model lane (an endpoint is asked once there, never on the
GUI thread): switching first cancels the model work running or waiting and starts once it
has stopped. An engine that cannot be loaded gets a dialog naming the problem (the file or
the server); the engine in use stays. Jobs use the engine through an ``EngineHandle``, so
an engine is closed only once no job is using it.
"""
from __future__ import annotations

from pathlib import Path
from typing import Callable

from PySide6.QtCore import QSettings, Qt, QTimer, Signal
from PySide6.QtWidgets import (QComboBox, QDoubleSpinBox, QFileDialog, QHBoxLayout, QLabel,
                               QPushButton, QSizePolicy, QSpinBox, QWidget)

from ...core.engines.choice import EngineChoice
from ...core.project import ProjectSettings
from ..jobs import JobRunner
from .endpoint_dialog import EndpointDialog
from .handle import EngineHandle, open_engine
from .remembered import RememberedEngines

BUNDLED = ""  # the combo's data for the bundled model (each item's data: EngineChoice.key())
CHOICE_ROLE = Qt.ItemDataRole.UserRole + 1  # the item's EngineChoice
SETTINGS_SAVE_MS = 600  # a setting is saved this long after the last change
ANSWER_MODES = (("score", "Answers: score the labels",
                 "The model ranks each allowed label; the most likely one is its answer"),
                ("generate", "Answers: let the model write",
                 "The model writes its answer; the label is found in the text"))


def as_choice(source: EngineChoice | str | None) -> EngineChoice:
    """A choice from a choice, or from a GGUF path ("" or None: the bundled model)."""
    if isinstance(source, EngineChoice):
        return source
    return EngineChoice.file(source) if source else EngineChoice.bundled()


def item_text(choice: EngineChoice) -> str:
    """How a choice reads in a combo box."""
    if choice.kind == "endpoint":
        from urllib.parse import urlsplit

        host = urlsplit(choice.url).netloc or choice.url
        model = choice.model if len(choice.model) <= 20 else choice.model[:19] + "…"
        return f"{model or 'Endpoint'} @ {host}"
    if choice.kind == "file":
        return Path(choice.path).name
    return "Bundled: SmolLM2-135M"


class EngineBar(QWidget):
    """Signals: ``engine_ready(EngineHandle)``; ``engine_failed(str)`` with a message that
    names the problem and says which engine stays in use; ``settings_edited(ProjectSettings)``
    when the user changed a generation setting (the session saves it to the project)."""

    engine_ready = Signal(object)
    settings_edited = Signal(object)
    engine_failed = Signal(str)
    switching = Signal(str)  # names the model work cancelled to switch engines

    def __init__(self, runner: JobRunner, settings: QSettings,
                 factory: Callable[[EngineChoice], object] = open_engine, parent=None):
        """``factory(choice)`` opens an engine on a worker thread (tests give a fake)."""
        super().__init__(parent)
        self.runner, self.settings, self.factory = runner, settings, factory
        self.remembered = RememberedEngines(settings)
        self.handle: EngineHandle | None = None
        self._loading = None
        self._shown: EngineChoice | None = None

        self.choice = QComboBox()
        self.choice.setAccessibleName("Engine")
        self.choice.setToolTip("The model that answers: the bundled model, a GGUF file or an "
                               "OpenAI-protocol endpoint")
        self._add_item(EngineChoice.bundled())
        self.choice.setItemData(0, "SmolLM2-135M-Instruct, installed with honebench",
                                Qt.ItemDataRole.ToolTipRole)
        self.choice.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.choice.setMinimumContentsLength(18)
        self.choice.setSizePolicy(QSizePolicy.Policy.Maximum, QSizePolicy.Policy.Fixed)
        for path in self.remembered.files():
            self._add_item(EngineChoice.file(path))
        for endpoint in self.remembered.endpoints():
            self._add_item(endpoint)
        self.choice.setMinimumWidth(self.choice.sizeHint().width() + 8)
        self.choice.activated.connect(self._on_choice)
        self.browse = QPushButton("GGUF file…")
        self.browse.setAccessibleName("Choose a GGUF model file")
        self.browse.setToolTip("Use a GGUF model file of your own")
        self.browse.clicked.connect(self.choose_file)
        self.endpoint = QPushButton("Endpoint…")
        self.endpoint.setAccessibleName("Use an OpenAI-protocol endpoint")
        self.endpoint.setToolTip("Use a server that speaks the OpenAI chat protocol "
                                 "(address, model name, timeout)")
        self.endpoint.clicked.connect(self.choose_endpoint)

        self._settings = ProjectSettings()
        self.temperature = QDoubleSpinBox()
        self.temperature.setRange(0.0, 2.0)
        self.temperature.setSingleStep(0.1)
        self.temperature.setDecimals(2)
        self.temperature.setAccessibleName("Temperature")
        self.temperature.setToolTip("0 gives the same answer every time; higher varies more "
                                    "(saved in the project)")
        self.max_tokens = QSpinBox()
        self.max_tokens.setRange(1, 4096)
        self.max_tokens.setAccessibleName("Max tokens per answer")
        self.max_tokens.setToolTip("The longest answer the model may give, in tokens "
                                   "(saved in the project)")
        self.answers = QComboBox()
        self.answers.setAccessibleName("How answers are found")
        for mode, text, tip in ANSWER_MODES:
            self.answers.addItem(text, mode)
            self.answers.setItemData(self.answers.count() - 1, tip,
                                     Qt.ItemDataRole.ToolTipRole)
        self._save_timer = QTimer(self, singleShot=True, interval=SETTINGS_SAVE_MS)
        self._save_timer.timeout.connect(self.commit_settings)
        self.show_settings(self._settings, label_check=True)
        self.temperature.valueChanged.connect(lambda _v: self._save_timer.start())
        self.max_tokens.valueChanged.connect(lambda _v: self._save_timer.start())
        self.answers.activated.connect(lambda _i: self.commit_settings())

        self.status = QLabel("no engine yet")
        self.status.setAccessibleName("Engine status")
        self.status.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)

        layout = QHBoxLayout(self)
        layout.setContentsMargins(4, 0, 4, 0)
        label = QLabel("&Engine")
        label.setBuddy(self.choice)
        layout.addWidget(label)
        layout.addWidget(self.choice)
        layout.addWidget(self.browse)
        layout.addWidget(self.endpoint)
        layout.addSpacing(10)
        t_label = QLabel("&Temperature")
        t_label.setBuddy(self.temperature)
        layout.addWidget(t_label)
        layout.addWidget(self.temperature)
        m_label = QLabel("Max to&kens")
        m_label.setBuddy(self.max_tokens)
        layout.addWidget(m_label)
        layout.addWidget(self.max_tokens)
        layout.addWidget(self.answers)
        layout.addSpacing(10)
        layout.addWidget(self.status)

    # -- choosing ------------------------------------------------------------------------
    # -- the project's generation settings ------------------------------------------------
    def show_settings(self, settings: ProjectSettings, label_check: bool) -> None:
        """Show an opened project's settings (nothing is saved). Scoring the labels needs a
        label check; with another check the model always writes its answer."""
        self._save_timer.stop()
        self._settings = settings
        for widget in (self.temperature, self.max_tokens, self.answers):
            widget.blockSignals(True)
        self.temperature.setValue(float(settings.temperature))
        self.max_tokens.setValue(int(settings.max_tokens))
        mode = settings.answer_mode if label_check else "generate"
        self.answers.setCurrentIndex(max(0, self.answers.findData(mode)))
        for widget in (self.temperature, self.max_tokens, self.answers):
            widget.blockSignals(False)
        self.answers.setEnabled(label_check)
        self.answers.setToolTip(
            "How the model's answer is found (saved in the project)" if label_check else
            "Only a label check can score the labels: here the model writes its answer")

    def project_settings(self) -> ProjectSettings:
        """The settings to grade with now: the project's, with the bar's current values."""
        mode = self.answers.currentData() if self.answers.isEnabled() else None
        return self._settings.override(max_tokens=self.max_tokens.value(),
                                       temperature=round(self.temperature.value(), 2),
                                       answer_mode=mode)

    def adopt_settings(self, settings: ProjectSettings) -> None:
        """Another view saved the project's settings (e.g. the suggestion engine): keep
        them, so the bar's next save does not undo that (its own widgets stay as shown)."""
        self._settings = settings  # project_settings() lays the widgets' values over it

    def commit_settings(self) -> None:
        """Send the edited settings on (at once; edits of a spin box are gathered first)."""
        self._save_timer.stop()
        settings = self.project_settings()
        if settings != self._settings:
            self._settings = settings
            self.settings_edited.emit(settings)

    def load_remembered(self) -> None:
        """Load the engine chosen last time (the bundled model at first)."""
        self.load(self.remembered.last())

    def load(self, choice: EngineChoice | str | None) -> None:
        """Load ``choice`` (an EngineChoice, or a GGUF path, "" for the bundled model) in a
        job on the model lane; an endpoint is asked there whether it answers."""
        choice = as_choice(choice)
        if self._loading is not None:
            self._loading.cancel()
        busy = [job.name for job in [self.runner.model_job(), *self.runner.waiting()]
                if job is not None and job is not self._loading]
        if busy and self.handle is not None:
            self.runner.cancel_model_jobs()
            self.switching.emit(", ".join(busy))
        self._select(choice)
        self.status.setText("asking the endpoint…" if choice.kind == "endpoint"
                            else "loading the model…")
        self.status.setToolTip(choice.label())
        self.set_busy(True)
        factory = self.factory
        self._loading = self.runner.submit(
            lambda ctx: EngineHandle(factory(choice), choice),
            done=self._on_loaded, failed=lambda msg: self._on_failed(choice, msg),
            name="load the model", uses_model=True)

    def choose_file(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Choose a GGUF model file",
                                              self.remembered.last_dir(),
                                              "GGUF model files (*.gguf);;All files (*)")
        if path:
            self.remembered.set_last_dir(path)
            self.load(EngineChoice.file(path))

    def choose_endpoint(self) -> None:
        """Ask for an endpoint (address, model name, timeout) and load it."""
        shown = self.handle.choice if self.handle is not None else None
        initial = shown if shown is not None and shown.kind == "endpoint" else \
            next(iter(self.remembered.endpoints()), None)
        choice = EndpointDialog.ask(self, "Answer with an endpoint", initial)
        if choice is not None:
            self.load(choice)

    def set_busy(self, busy: bool) -> None:
        """No second switch while a model is loading."""
        idle = not busy and self._loading is None
        for widget in (self.choice, self.browse, self.endpoint):
            widget.setEnabled(idle)

    def close_engine(self) -> None:
        """Close the engine in a job on the model lane, once nothing uses it."""
        handle, self.handle = self.handle, None
        if handle is not None:
            self.runner.submit(lambda ctx: handle.retire(), name="close the model",
                               uses_model=True)

    # -- internals -----------------------------------------------------------------------
    def _on_loaded(self, handle: EngineHandle) -> None:
        self._loading = None
        old, self.handle = self.handle, handle
        if old is not None:
            self.runner.submit(lambda ctx: old.retire(), name="close the old model",
                               uses_model=True)
        self._shown = handle.choice
        self.remembered.remember(handle.choice)
        self._select(handle.choice)
        self.status.setText("✓ ready")
        self.status.setToolTip(f"{handle.describe()}\n{handle.choice.label()}")
        self.set_busy(False)
        self.engine_ready.emit(handle)

    def _on_failed(self, choice: EngineChoice, message: str) -> None:
        self._loading = None
        self.set_busy(False)
        self._select(self._shown if self.handle is not None else choice)
        what = "endpoint" if choice.kind == "endpoint" else "model file"
        kept = (f"The engine in use stays: {self.handle.describe()}." if self.handle
                else f"No engine is loaded; choose another {what}.")
        self.status.setText("✓ ready" if self.handle else "✗ no engine: the model did not load")
        self.engine_failed.emit(f"{message}\n\n{kept}")

    def _on_choice(self, index: int) -> None:
        choice = self.choice.itemData(index, CHOICE_ROLE)
        if choice is not None and (self.handle is None or choice != self.handle.choice):
            self.load(choice)

    def _select(self, choice: EngineChoice | None) -> None:
        if choice is None:
            return
        index = self.choice.findData(choice.key())
        if index < 0:
            index = self._add_item(choice)
            self.choice.setMinimumWidth(0)
            self.choice.setMinimumWidth(self.choice.sizeHint().width() + 8)
        self.choice.setItemData(index, choice, CHOICE_ROLE)  # the latest timeout
        self.choice.setCurrentIndex(index)

    def _add_item(self, choice: EngineChoice) -> int:
        self.choice.addItem(item_text(choice), choice.key())
        index = self.choice.count() - 1
        self.choice.setItemData(index, choice, CHOICE_ROLE)
        tip = choice.path if choice.kind == "file" else (
            f"{choice.label()}, timeout {choice.timeout:g} s" if choice.kind == "endpoint"
            else None)
        if tip:
            self.choice.setItemData(index, tip, Qt.ItemDataRole.ToolTipRole)
        return index
