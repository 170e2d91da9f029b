"""Which engine to use, as a plain record both fronts and the project settings can hold:
the bundled model, a GGUF file, or an OpenAI-protocol endpoint.

``EngineChoice.open()`` makes the engine (a LocalEngine or an EndpointEngine, checked);
``check()`` refuses a bad choice without loading a model. ``as_dict``/``from_dict`` keep it
in a project's settings (e.g. the suggestion engine) or the window's remembered state.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, fields

from .base import EngineError

KINDS = ("bundled", "file", "endpoint")
DEFAULT_TIMEOUT = 30.0  # seconds one endpoint request may take (common practice)


@dataclass(frozen=True)
class EngineChoice:
    kind: str = "bundled"
    path: str = ""  # a GGUF file (kind "file")
    url: str = ""  # the endpoint's base URL (kind "endpoint"), e.g. http://127.0.0.1:8080/v1
    model: str = ""  # the model name the endpoint is asked for ("" = its default)
    timeout: float = DEFAULT_TIMEOUT

    @classmethod
    def bundled(cls) -> "EngineChoice":
        return cls()

    @classmethod
    def file(cls, path: str) -> "EngineChoice":
        return cls(kind="file", path=str(path))

    @classmethod
    def endpoint(cls, url: str, model: str = "",
                 timeout: float = DEFAULT_TIMEOUT) -> "EngineChoice":
        return cls(kind="endpoint", url=str(url).strip(), model=model, timeout=timeout)

    def validate(self) -> "EngineChoice":
        """This choice, or EngineError saying which field is wrong and what to do."""
        if self.kind not in KINDS:
            raise EngineError(f"engine kind must be one of {', '.join(KINDS)}, not {self.kind!r}")
        if self.kind == "file" and not self.path:
            raise EngineError("choose a GGUF model file for this engine")
        if self.kind == "endpoint":
            if not self.url.startswith(("http://", "https://")):
                raise EngineError(f"the endpoint address must start with http:// or https://, "
                                  f"not {self.url!r}")
            if (isinstance(self.timeout, bool) or not isinstance(self.timeout, (int, float))
                    or not math.isfinite(self.timeout) or self.timeout <= 0):
                raise EngineError(f"the endpoint timeout must be a positive number of seconds, "
                                  f"not {self.timeout!r}")
        return self

    def label(self) -> str:
        """A short name for cards, lists and reports."""
        if self.kind == "file":
            from pathlib import Path
            return Path(self.path).name
        if self.kind == "endpoint":
            return f"{self.model or 'endpoint'} at {self.url}"
        return "bundled SmolLM2-135M"

    def key(self) -> str:
        """One string naming the engine (to find or remember it): "" for the bundled model,
        the file's path, or the endpoint's address and model name (the timeout is left
        out: it does not change which engine this is)."""
        if self.kind == "file":
            return self.path
        if self.kind == "endpoint":
            return f"{self.url}#{self.model}"
        return ""

    def check(self) -> None:
        """Refuse a bad choice without loading a model (an endpoint is asked once)."""
        self.validate()
        if self.kind == "file":
            from .model_files import check_model_file
            check_model_file(self.path)
        elif self.kind == "endpoint":
            self.open().close()

    def open(self):
        """The engine this choice names (the caller closes it)."""
        self.validate()
        if self.kind == "endpoint":
            from .remote import EndpointEngine
            engine = EndpointEngine(self.url, self.model, timeout=float(self.timeout))
            engine.check()
            return engine
        from .local import LocalEngine
        return LocalEngine(self.path or None)

    def as_dict(self) -> dict:
        return asdict(self)

    @classmethod
    def from_dict(cls, saved: dict | None) -> "EngineChoice":
        known = {f.name for f in fields(cls)}
        return cls(**{k: v for k, v in (saved or {}).items() if k in known})


BUNDLED_LABEL = EngineChoice().label()


def engine_label(engine) -> str:
    """The short name of an open engine, in ``EngineChoice.label()``'s words (what a
    suggestion records as the engine that proposed it)."""
    kind = getattr(engine, "kind", "")
    if kind == "endpoint":
        return EngineChoice.endpoint(engine.base_url, engine.model).label()
    if kind == "local":
        from .model_files import bundled_model_path

        try:
            bundled = bundled_model_path()
        except EngineError:
            bundled = None
        path = engine.model_path
        return BUNDLED_LABEL if bundled is not None and path == bundled else path.name
    label = getattr(engine, "label", None)
    if callable(label):
        return str(label())
    fingerprint = getattr(engine, "fingerprint", None)
    return str(fingerprint()) if callable(fingerprint) else str(kind or "engine")
