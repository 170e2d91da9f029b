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
    # label scoring: the chosen label's share among the labels, and the next most likely
    confidence: float | None = None
    runner_up: str | None = None
    runner_up_share: float | None = None

    @property
    def choice_text(self) -> str:
        """"timetable 0.61, next refund 0.22" for a scored label; "" otherwise."""
        return choice_text(self.extracted, self.confidence, self.runner_up, self.runner_up_share)

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
            "confidence": self.confidence,
            "runner_up": self.runner_up,
            "runner_up_share": self.runner_up_share,
        }


def choice_text(chosen: str, share: float | None, runner_up: str | None = None,
                runner_share: float | None = None) -> str:
    """A scored label and the next most likely: "timetable 0.61, next refund 0.22"."""
    if share is None:
        return ""
    text = f"{chosen} {share:.2f}"
    if runner_up is not None and runner_share is not None:
        text += f", next {runner_up} {runner_share:.2f}"
    return text


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
    wall_seconds: float | None = None  # from start to end of the run, on the clock
    purpose: str = ""  # "" an ordinary grade run; "transfer"/"importance": an analysis' run
