"""The engine protocol: what every model backend offers the grader.

Kept small and batch-capable from the start: ``complete`` takes many requests and yields
results as they finish, so a backend may decode several at once or send them concurrently.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable, Iterator, Protocol, Sequence


class EngineError(RuntimeError):
    """A backend could not be set up or used; the message says what to do."""


@dataclass(frozen=True)
class Request:
    """One completion to make. ``prefill`` is text the answer must start with.

    ``prefix_chars`` is how many characters at the start of the rendered prompt are the same
    for every item (the part before any item text). A local engine evaluates that part
    separately and keeps it between items, so an item's output does not depend on which
    item came before it.
    """

    key: str
    messages: tuple[dict, ...]
    prefill: str = ""
    max_tokens: int = 64
    stop: tuple[str, ...] = ()
    temperature: float = 0.0
    seed: int = 0
    prefix_chars: int = 0
    labels: tuple[str, ...] = ()  # for ``score_labels``: the allowed answers to score
    until: "StopRule | None" = None  # stop generating once the check can decide


@dataclass(frozen=True)
class Result:
    """What came back for one request. ``error`` is set for that item alone."""

    key: str
    text: str = ""
    prompt_tokens: int = 0
    completion_tokens: int = 0
    seconds: float = 0.0
    finish_reason: str = ""
    error: str | None = None
    cached: bool = False
    # label scoring: per request label, its log-probability and its share among the labels
    label_logprobs: tuple[float, ...] = ()
    label_shares: tuple[float, ...] = ()
    note: str = ""  # e.g. why an engine generated instead of scoring


class StopRule(Protocol):
    """Where to cut a growing answer: the index to cut ``text`` at, or None to go on."""

    def cut(self, text: str) -> int | None: ...


ANSWER_MODES = ("score", "generate")
DEFAULT_MAX_TOKENS = 48  # the one project-wide default answer budget


@dataclass(frozen=True)
class Params:
    """Generation settings that change the output; part of every cache key.

    ``answer_mode`` "score" means: for a label check, score each allowed label instead of
    generating an answer; other checks always generate. ``calibrate``: in score mode, divide
    each item's label shares by the wording's content-free label prior (calibration.py).
    """

    max_tokens: int = DEFAULT_MAX_TOKENS
    temperature: float = 0.0
    stop: tuple[str, ...] = field(default_factory=tuple)
    seed: int = 0
    answer_mode: str = "score"
    calibrate: bool = True  # measured on the routing sample: see sample_sets/README.md

    def __post_init__(self):
        if self.answer_mode not in ANSWER_MODES:
            raise ValueError(f"answer mode must be score or generate, not {self.answer_mode!r}")

    def as_dict(self) -> dict:
        """``calibrate`` appears only in score mode (it changes nothing else), so the cache
        keys of generated answers stay as they were."""
        out = {
            "max_tokens": self.max_tokens,
            "temperature": self.temperature,
            "stop": list(self.stop),
            "seed": self.seed,
            "answer_mode": self.answer_mode,
        }
        if self.answer_mode == "score":
            out["calibrate"] = self.calibrate
        return out


class Engine(Protocol):
    def render(self, messages: Sequence[dict], prefill: str = "") -> str:
        """The exact prompt text the model sees, chat template included."""

    def count_tokens(self, text: str) -> int: ...

    def complete(self, requests: Iterable[Request]) -> Iterator[Result]: ...

    def score_choices(self, messages: Sequence[dict], choices: Sequence[str]) -> list[float]:
        """Log-probability of each choice as the start of the answer."""

    # Optional: ``score_labels(requests) -> Iterator[Result]`` scores ``Request.labels`` for
    # each request (Result.text is the chosen label, label_shares the shares). An engine
    # without it is asked to generate instead.

    def fingerprint(self) -> str: ...

    def cancel(self) -> None:
        """Ask a running ``complete`` to stop at the next token."""

    def close(self) -> None: ...
