"""The suggestion engine in the window: who writes the suggestions ("Proposals by": the graded
engine, a GGUF file or an endpoint), saved in the project's settings; the graded engine
always scores them.

``ProposerChoice`` is the chooser. ``Proposers`` opens the chosen engine inside the
suggestion's job, on the model lane (never on the GUI thread), keeps it open for the next
run, and closes it in a model-lane job when the choice or the project changes or the
window closes.
"""
from __future__ import annotations

from PySide6.QtCore import QObject, Qt, Signal
from PySide6.QtWidgets import QComboBox, QFileDialog, QSizePolicy

from ...core.engines.choice import EngineChoice
from ..engine.bar import item_text
from ..engine.endpoint_dialog import EndpointDialog
from ..engine.handle import EngineHandle
from ..jobs import JobRunner

SAME = "same"  # the chooser's data for "the graded engine writes"
ASK_FILE, ASK_ENDPOINT = "ask-file", "ask-endpoint"
CHOICE_ROLE = Qt.ItemDataRole.UserRole + 1


class ProposerChoice(QComboBox):
    """Signal ``chosen(EngineChoice | None)`` when the user picks who writes suggestions
    (None: the graded engine). ``show_choice`` shows the project's setting, sending
    nothing."""

    chosen = Signal(object)

    def __init__(self, remembered, parent=None):
        super().__init__(parent)
        self.remembered = remembered  # gui.engine.remembered.RememberedEngines
        self.current: EngineChoice | None = None
        self.setAccessibleName("Who writes the suggestions")
        self.setToolTip("The engine that writes the suggestions; the graded engine always "
                        "scores them (saved in the project)")
        self.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.setMinimumContentsLength(16)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.activated.connect(self._on_activated)
        self.show_choice(None)

    def show_choice(self, choice: EngineChoice | None) -> None:
        self.current = choice
        self.blockSignals(True)
        self.clear()
        self.addItem("Same as the graded engine", SAME)
        known = [EngineChoice.bundled()]
        known += [EngineChoice.file(p) for p in self.remembered.files()]
        known += self.remembered.endpoints()
        if choice is not None and all(c.key() != choice.key() for c in known):
            known.insert(0, choice)
        for engine in known:
            self.addItem(item_text(engine), engine.key())
            index = self.count() - 1
            self.setItemData(index, engine, CHOICE_ROLE)
            self.setItemData(index, engine.label(), Qt.ItemDataRole.ToolTipRole)
        self.insertSeparator(self.count())
        self.addItem("GGUF file…", ASK_FILE)
        self.addItem("Endpoint…", ASK_ENDPOINT)
        index = 0 if choice is None else self.findData(choice.key())
        if index > 0:
            self.setItemData(index, choice, CHOICE_ROLE)  # with its own timeout
        self.setCurrentIndex(max(index, 0))
        self.blockSignals(False)

    def _on_activated(self, index: int) -> None:
        data = self.itemData(index)
        if data == SAME:
            choice = None
        elif data == ASK_FILE:
            path, _ = QFileDialog.getOpenFileName(
                self, "Choose a GGUF model file to write suggestions",
                self.remembered.last_dir(), "GGUF model files (*.gguf);;All files (*)")
            if path:
                self.remembered.set_last_dir(path)
            choice = EngineChoice.file(path) if path else self.current
        elif data == ASK_ENDPOINT:
            initial = self.current if self.current is not None and \
                self.current.kind == "endpoint" else None
            choice = EndpointDialog.ask(self, "Write suggestions with an endpoint", initial,
                                        purpose="suggestions") or self.current
        else:
            choice = self.itemData(index, CHOICE_ROLE)
        if choice == self.current:
            self.show_choice(choice)
            return
        self.show_choice(choice)
        self.chosen.emit(choice)


class Lease:
    """How one job gets its suggestion engine: ``open()`` (in the job) gives the handle,
    or None when the graded engine writes; ``opened`` is what it gave."""

    def __init__(self, choice: EngineChoice | None, cached: EngineHandle | None, factory):
        self.choice, self.cached, self.factory = choice, cached, factory
        self.opened: EngineHandle | None = None

    def open(self) -> EngineHandle | None:
        if self.choice is None:
            return None
        if self.opened is None:
            self.opened = self.cached or EngineHandle(self.factory(self.choice), self.choice)
        return self.opened

    def label(self, graded: EngineHandle) -> str:
        return (self.choice or graded.choice).label()


class Proposers(QObject):
    """The open suggestion engine, when it is not the graded one (one at a time)."""

    def __init__(self, runner: JobRunner, bar, parent=None):
        super().__init__(parent)
        self.runner, self.bar = runner, bar  # bar: the EngineBar (graded engine, factory)
        self.handle: EngineHandle | None = None

    def lease(self, choice: EngineChoice | None) -> Lease:
        """On the GUI thread, before a job: the graded engine writes when nothing else is
        chosen or the choice is the graded engine itself."""
        graded = self.bar.handle
        if choice is None or (graded is not None and choice.key() == graded.choice.key()):
            self.release()  # no second copy of the graded engine stays open
            return Lease(None, None, None)
        cached = self.handle if self.handle is not None and self.handle.choice == choice \
            else None
        return Lease(choice, cached, self.bar.factory)

    def settle(self, lease: Lease, wanted: EngineChoice | None) -> None:
        """On the GUI thread, after the job: keep what it opened while it is still the
        chosen engine, else close it."""
        opened = lease.opened
        if opened is None or opened is lease.cached:  # a cached one lives on in self.handle
            return
        if opened.choice == wanted:
            self._retire(self.handle)
            self.handle = opened
        else:
            self._retire(opened)

    def release(self) -> None:
        """Close the open suggestion engine (choice or project changed, window closing)."""
        handle, self.handle = self.handle, None
        self._retire(handle)

    def _retire(self, handle: EngineHandle | None) -> None:
        if handle is not None:
            self.runner.submit(lambda ctx: handle.retire(), name="close the suggestion engine",
                               uses_model=True)
