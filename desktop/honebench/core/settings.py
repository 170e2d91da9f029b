"""The project's generation settings: one record both fronts read, so the window and the
CLI grade with the same settings and share the completion cache.

Defaults come from the engine protocol's ``Params()``. A CLI flag overrides a setting for one
run only (``override``); the window changes them for good (``Project.set_settings``).

``suggest_engine`` is the engine that writes suggestions (an ``EngineChoice``; None: the
graded engine writes them). It is not a generation setting: ``params()`` leaves it out, so
it never changes a cache key.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass, fields, replace

from .engines.base import ANSWER_MODES, EngineError, Params
from .engines.choice import EngineChoice

_DEFAULT = Params()


@dataclass(frozen=True)
class ProjectSettings:
    max_tokens: int = _DEFAULT.max_tokens
    temperature: float = _DEFAULT.temperature
    seed: int = _DEFAULT.seed
    answer_mode: str = _DEFAULT.answer_mode  # score: rank the allowed labels; generate: write
    calibrate: bool = _DEFAULT.calibrate  # score mode: divide by the content-free label prior
    # who writes suggestions; given as an EngineChoice or its as_dict() (kept as the choice,
    # so the record stays hashable); None: the graded engine
    suggest_engine: EngineChoice | None = None

    def __post_init__(self):
        if isinstance(self.suggest_engine, dict):
            object.__setattr__(self, "suggest_engine",
                               EngineChoice.from_dict(self.suggest_engine))

    def validate(self) -> "ProjectSettings":
        if not isinstance(self.max_tokens, int) or not 1 <= self.max_tokens <= 4096:
            raise ValueError(f"max tokens must be a whole number from 1 to 4096, not "
                             f"{self.max_tokens!r}")
        if not 0.0 <= float(self.temperature) <= 2.0:
            raise ValueError(f"temperature must be between 0 and 2, not {self.temperature!r}")
        if not isinstance(self.seed, int):
            raise ValueError(f"seed must be a whole number, not {self.seed!r}")
        if self.answer_mode not in ANSWER_MODES:
            raise ValueError(f"answer mode must be one of {', '.join(ANSWER_MODES)}, not "
                             f"{self.answer_mode!r}")
        if not isinstance(self.calibrate, bool):
            raise ValueError(f"calibrate must be true or false, not {self.calibrate!r}")
        if self.suggest_engine is not None:
            if not isinstance(self.suggest_engine, EngineChoice):
                raise ValueError(f"the suggestion engine must be an engine choice or None, "
                                 f"not {self.suggest_engine!r}")
            try:
                self.suggest_engine.validate()
            except EngineError as exc:
                raise ValueError(f"suggestion engine: {exc}") from None
        return self

    def override(self, **changes) -> "ProjectSettings":
        """These settings with the given values replaced; None means "not given"."""
        given = {k: v for k, v in changes.items() if v is not None}
        return replace(self, **given).validate() if given else self

    def params(self) -> Params:
        """The engine parameters these settings stand for (part of every cache key)."""
        return Params(max_tokens=self.max_tokens, temperature=float(self.temperature),
                      seed=self.seed, answer_mode=self.answer_mode,
                      calibrate=self.calibrate)

    def as_dict(self) -> dict:
        return asdict(self)  # the suggestion engine becomes its as_dict() (or None)

    @classmethod
    def from_dict(cls, saved: dict | None) -> "ProjectSettings":
        """Read saved settings; unknown keys are ignored, missing ones take the defaults."""
        known = {f.name for f in fields(cls)}
        values = {k: v for k, v in (saved or {}).items() if k in known}
        if not isinstance(values.get("suggest_engine"), dict):  # missing or unreadable
            values["suggest_engine"] = None
        return cls(**values)
