"""A fake engine for unit tests of logic that does not depend on the model's behaviour."""
from __future__ import annotations

import threading
from typing import Callable, Iterable, Sequence

from honebench.core.engines.base import Request, Result


class FakeEngine:
    """Answers each request with ``answer(request)``; counts calls; can be cancelled."""

    kind = "fake"

    def __init__(self, answer: Callable[[Request], str] = lambda r: "refund",
                 on_call: Callable[[int], None] | None = None):
        self.answer, self.on_call = answer, on_call
        self.calls = 0
        self._cancel = threading.Event()

    def render(self, messages: Sequence[dict], prefill: str = "") -> str:
        return "".join(f"<{m['role']}>{m['content']}</{m['role']}>" for m in messages) + prefill

    def count_tokens(self, text: str) -> int:
        return len(text.split())

    def fingerprint(self) -> str:
        return "fake-engine"

    def cancel(self) -> None:
        self._cancel.set()

    def complete(self, requests: Iterable[Request]):
        self._cancel.clear()
        for req in requests:
            if self._cancel.is_set():
                return
            self.calls += 1
            if self.on_call:
                self.on_call(self.calls)
            text = self.answer(req)
            if isinstance(text, Exception):
                yield Result(key=req.key, error=str(text))
            else:
                yield Result(key=req.key, text=text, prompt_tokens=3, completion_tokens=1,
                             seconds=0.001, finish_reason="stop")

    def score_choices(self, messages, choices):
        return [0.0 for _ in choices]

    def close(self) -> None:
        pass
