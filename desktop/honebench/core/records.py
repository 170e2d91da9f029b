"""Plain records passed between the store, the grader and the fronts (GUI, CLI)."""
from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class Mark:
    """One item's result in a grade run."""

    item_id: str
    output: str
    extracted: str
    passed: bool
    why: str
    score: float = 0.0
    prompt_tokens: int = 0
    completion_tokens: int = 0
    seconds: float = 0.0
    error: str | None = None
    cached: bool = False
    prompt: str = ""

    def as_dict(self) -> dict:
        return {
            "id": self.item_id,
            "output": self.output,
            "extracted": self.extracted,
            "passed": self.passed,
            "why": self.why,
            "score": self.score,
            "tokens": self.prompt_tokens + self.completion_tokens,
            "prompt_tokens": self.prompt_tokens,
            "completion_tokens": self.completion_tokens,
            "seconds": round(self.seconds, 4),
            "error": self.error,
            "cached": self.cached,
        }


@dataclass(frozen=True)
class ShelfEntry:
    """A wording on the shelf: v1, v2, ... Decision is "kept", "set_aside" or "" (undecided)."""

    id: int
    version: int
    text: str
    placement: str
    parent_id: int | None
    origin: str
    created_at: str
    decision: str = ""
    note: str = ""
    inputs: dict = field(default_factory=dict)

    @property
    def label(self) -> str:
        return f"v{self.version}"


@dataclass(frozen=True)
class RunInfo:
    """A grade run's header row."""

    id: int
    set_id: int
    wording_id: int | None
    wording_text: str
    placement: str
    split: str
    fingerprint: str
    params: dict
    check: dict
    started_at: str
    finished_at: str | None
    status: str
    n_items: int
