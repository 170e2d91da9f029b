"""An open engine shared by jobs, and the one way the window opens an engine."""
from __future__ import annotations

import threading

from ...core.engines.base import EngineError
from ...core.engines.choice import EngineChoice


def open_engine(choice: EngineChoice):
    """The engine ``choice`` names, loaded or asked once (on a worker thread: a job)."""
    return choice.open()


class EngineHandle:
    """An engine shared by jobs: ``with handle as engine:`` marks it in use; ``retire()``
    (on a worker thread) waits until no job uses it, then closes it. ``choice`` is the
    EngineChoice it was opened from; ``source`` its key (EngineChoice.key())."""

    def __init__(self, engine, choice: EngineChoice | str | None = None):
        if not isinstance(choice, EngineChoice):  # a GGUF path ("" or None: the bundled model)
            choice = EngineChoice.file(choice) if choice else EngineChoice.bundled()
        self.engine, self.choice = engine, choice
        self.source = choice.key()
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
