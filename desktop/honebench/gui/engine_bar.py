"""Choosing the engine: the bundled model or a GGUF file; and the open project's
generation settings (temperature, max tokens, how label answers are found), which are the
project's own ``ProjectSettings``, shared with the CLI so both fronts share cached answers.

Loading a model is a job on the model lane: switching first cancels the model work running
or waiting and starts once it has stopped. A file that cannot be loaded gets a dialog
naming the problem; the engine in use stays. Jobs use the engine through an
``EngineHandle``, so an engine is closed only once no job is using it.
"""
from __future__ import annotations

import threading
from pathlib import Path
from typing import Callable

from PySide6.QtCore import QSettings, Qt, QTimer, Signal
from PySide6.QtWidgets import (QComboBox, QDoubleSpinBox, QFileDialog, QHBoxLayout, QLabel,
                               QPushButton, QSizePolicy, QSpinBox, QWidget)

from ..core.engines.base import EngineError
from ..core.project import ProjectSettings
from .jobs import JobRunner

BUNDLED = ""  # the combo's data for the bundled model
SETTINGS_SAVE_MS = 600  # a setting is saved this long after the last change
ANSWER_MODES = (("score", "Answers: score the labels",
                 "The model ranks each allowed label; the most likely one is its answer"),
                ("generate", "Answers: let the model write",
                 "The model writes its answer; the label is found in the text"))


def open_local_engine(path: str | None):
    from ..core.engines.local import LocalEngine

    return LocalEngine(path or None)


class EngineHandle:
    """An engine shared by jobs: ``with handle as engine:`` marks it in use; ``retire()``
    (on a worker thread) waits until no job uses it, then closes it."""

    def __init__(self, engine, source: str):
        self.engine, self.source = engine, source
        self._users = 0
        self._retired = False
        self._cond = threading.Condition()

    def describe(self) -> str:
        describe = getattr(self.engine, "describe", None)
        return describe() if describe else str(getattr(self.engine, "kind", "engine"))

    def __enter__(self):
        with self._cond:
            if self._retired:
                raise EngineError("The engine was switched or closed while this was waiting; "
                                  "try again.")
            self._users += 1
        return self.engine

    def __exit__(self, *exc):
        with self._cond:
            self._users -= 1
            self._cond.notify_all()

    def retire(self, timeout: float | None = 60) -> None:
        with self._cond:
            self._retired = True
            self._cond.wait_for(lambda: self._users == 0, timeout)
        self.engine.close()


class EngineBar(QWidget):
    """Signals: ``engine_ready(EngineHandle)``; ``engine_failed(str)`` with a message that
    names the problem and says which engine stays in use; ``settings_edited(ProjectSettings)``
    when the user changed a generation setting (the session saves it to the project)."""

    engine_ready = Signal(object)
    settings_edited = Signal(object)
    engine_failed = Signal(str)
    switching = Signal(str)  # names the model work cancelled to switch engines

    def __init__(self, runner: JobRunner, settings: QSettings,
                 factory: Callable[[str | None], object] = open_local_engine, parent=None):
        super().__init__(parent)
        self.runner, self.settings, self.factory = runner, settings, factory
        self.handle: EngineHandle | None = None
        self._loading = None
        self._shown_source: str | None = None

        self.choice = QComboBox()
        self.choice.setAccessibleName("Engine")
        self.choice.setToolTip("The model that answers: the bundled model or a GGUF file")
        self.choice.addItem("Bundled: SmolLM2-135M", BUNDLED)
        self.choice.setItemData(0, "SmolLM2-135M-Instruct, installed with honebench",
                                Qt.ItemDataRole.ToolTipRole)
        self.choice.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.choice.setMinimumContentsLength(18)
        self.choice.setSizePolicy(QSizePolicy.Policy.Maximum, QSizePolicy.Policy.Fixed)
        for path in self._remembered_files():
            self._add_file_item(path)
        self.choice.setMinimumWidth(self.choice.sizeHint().width() + 8)
        self.choice.activated.connect(self._on_choice)
        self.browse = QPushButton("GGUF file…")
        self.browse.setAccessibleName("Choose a GGUF model file")
        self.browse.setToolTip("Use a GGUF model file of your own")
        self.browse.clicked.connect(self.choose_file)

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

    def commit_settings(self) -> None:
        """Send the edited settings on (at once; edits of a spin box are gathered first)."""
        self._save_timer.stop()
        settings = self.project_settings()
        if settings != self._settings:
            self._settings = settings
            self.settings_edited.emit(settings)

    def load_remembered(self) -> None:
        """Load the engine chosen last time (the bundled model at first)."""
        source = str(self.settings.value("engine/source", BUNDLED) or "")
        if source and not Path(source).exists():
            source = BUNDLED
        self.load(source)

    def load(self, source: str) -> None:
        """Load ``source`` (a GGUF path, or "" for the bundled model) in a job."""
        if self._loading is not None:
            self._loading.cancel()
        busy = [job.name for job in [self.runner.model_job(), *self.runner.waiting()]
                if job is not None and job is not self._loading]
        if busy and self.handle is not None:
            self.runner.cancel_model_jobs()
            self.switching.emit(", ".join(busy))
        self._select(source)
        self.status.setText("loading the model…")
        self.status.setToolTip(source or "the bundled model")
        self.choice.setEnabled(False)
        self.browse.setEnabled(False)
        factory = self.factory
        self._loading = self.runner.submit(
            lambda ctx: EngineHandle(factory(source or None), source),
            done=self._on_loaded, failed=lambda msg: self._on_failed(source, msg),
            name="load the model", uses_model=True)

    def choose_file(self) -> None:
        start = str(self.settings.value("engine/last_dir", str(Path.home())))
        path, _ = QFileDialog.getOpenFileName(self, "Choose a GGUF model file", start,
                                              "GGUF model files (*.gguf);;All files (*)")
        if path:
            self.settings.setValue("engine/last_dir", str(Path(path).parent))
            self.load(path)

    def set_busy(self, busy: bool) -> None:
        """No second switch while a model is loading."""
        idle = not busy and self._loading is None
        self.choice.setEnabled(idle)
        self.browse.setEnabled(idle)

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
        self._shown_source = handle.source
        self.settings.setValue("engine/source", handle.source)
        if handle.source:
            self._remember_file(handle.source)
        self.status.setText("✓ ready")
        self.status.setToolTip(f"{handle.describe()}\n{handle.source or 'the bundled model'}")
        self.set_busy(False)
        self.engine_ready.emit(handle)

    def _on_failed(self, source: str, message: str) -> None:
        self._loading = None
        self.set_busy(False)
        self._select(self._shown_source if self.handle is not None else source)
        kept = (f"The engine in use stays: {self.handle.describe()}." if self.handle
                else "No engine is loaded; choose another model file.")
        self.status.setText("✓ ready" if self.handle else "✗ no engine: the model did not load")
        self.engine_failed.emit(f"{message}\n\n{kept}")

    def _on_choice(self, index: int) -> None:
        source = self.choice.itemData(index) or ""
        if source != (self.handle.source if self.handle else None):
            self.load(source)

    def _select(self, source: str | None) -> None:
        if source is None:
            return
        index = self.choice.findData(source)
        if index < 0:
            index = self._add_file_item(source)
        self.choice.setCurrentIndex(index)

    def _add_file_item(self, path: str) -> int:
        self.choice.addItem(Path(path).name, path)
        index = self.choice.count() - 1
        self.choice.setItemData(index, path, role=Qt.ItemDataRole.ToolTipRole)
        return index

    def _remembered_files(self) -> list[str]:
        value = self.settings.value("engine/files", []) or []
        files = [value] if isinstance(value, str) else list(value)
        return [f for f in files if f]

    def _remember_file(self, path: str) -> None:
        files = [f for f in self._remembered_files() if f != path]
        self.settings.setValue("engine/files", [path] + files[:7])
