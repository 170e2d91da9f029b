"""The engines the window remembers between sessions (QSettings, per user): the last one
chosen, and the GGUF files and endpoints used before, newest first."""
from __future__ import annotations

import json
from pathlib import Path

from PySide6.QtCore import QSettings

from ...core.engines.base import EngineError
from ...core.engines.choice import EngineChoice

KEEP = 8  # files and endpoints remembered, each


class RememberedEngines:
    def __init__(self, settings: QSettings):
        self.settings = settings

    def last(self) -> EngineChoice:
        """The engine chosen last time (the bundled model at first, or when its file is
        gone). Endpoints are not asked here: loading one checks it."""
        saved = self._json(self.settings.value("engine/choice", ""))
        if saved is not None:
            choice = EngineChoice.from_dict(saved)
        else:  # remembered before endpoints could be chosen: a path, "" the bundled model
            source = str(self.settings.value("engine/source", "") or "")
            choice = EngineChoice.file(source) if source else EngineChoice.bundled()
        try:
            choice.validate()
        except EngineError:
            return EngineChoice.bundled()
        if choice.kind == "file" and not Path(choice.path).exists():
            return EngineChoice.bundled()
        return choice

    def files(self) -> list[str]:
        return [f for f in self._list("engine/files") if f]

    def endpoints(self) -> list[EngineChoice]:
        found = []
        for text in self._list("engine/endpoints"):
            saved = self._json(text)
            if saved:
                try:
                    found.append(EngineChoice.from_dict(saved).validate())
                except (EngineError, TypeError):
                    continue
        return found

    def remember(self, choice: EngineChoice) -> None:
        """``choice`` loaded: it becomes the last one, and first in its list."""
        self.settings.setValue("engine/choice", json.dumps(choice.as_dict()))
        self.settings.setValue("engine/source", choice.path if choice.kind == "file" else "")
        if choice.kind == "file":
            files = [f for f in self.files() if f != choice.path]
            self.settings.setValue("engine/files", [choice.path] + files[:KEEP - 1])
        elif choice.kind == "endpoint":
            others = [json.dumps(c.as_dict()) for c in self.endpoints()
                      if c.key() != choice.key()]
            self.settings.setValue("engine/endpoints",
                                   [json.dumps(choice.as_dict())] + others[:KEEP - 1])

    def last_dir(self) -> str:
        return str(self.settings.value("engine/last_dir", str(Path.home())))

    def set_last_dir(self, path: str) -> None:
        self.settings.setValue("engine/last_dir", str(Path(path).parent))

    def _list(self, key: str) -> list[str]:
        value = self.settings.value(key, []) or []
        return [value] if isinstance(value, str) else [str(v) for v in value]

    @staticmethod
    def _json(text) -> dict | None:
        try:
            value = json.loads(str(text)) if text else None
        except ValueError:
            return None
        return value if isinstance(value, dict) else None
