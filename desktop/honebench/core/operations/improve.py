"""Operations that ask the model for better wordings: suggest and auto-hone."""
from __future__ import annotations

import threading
import time
from typing import Callable

from ..changes import Changes, Done
from ..events import Finished, Listener
from ..settings import ProjectSettings
from ..views import SuggestResult
from ..wording import Wording

IMPROVED = Changes(shelf=True, runs=True, marks=True)


class ImproveOps:
    """Mixed into Project: suggest, hone."""

    def suggest(self, engine, strategy: str = "scoreboard", *, count: int = 4,
                base: Wording | int | None = None, other: int | None = None,
                proposal_temperature: float = 1.0, keep_best: bool = False,
                settings: ProjectSettings | None = None, on_event: Listener | None = None,
                cancel: threading.Event | None = None, proposer=None) -> Done[SuggestResult]:
        """Scored variants of ``base`` (a wording, a shelf id, or the draft); ``other`` is
        the second shelf id for blend. ``proposer`` is the engine that writes the variants
        (the suggestion engine; default: ``engine``); ``engine`` grades them. Each card's
        inputs name the proposer. With ``keep_best`` the top suggestion is kept when it
        beats the base on the tuning items (the base is kept as its parent)."""
        from ..suggest.pipeline import suggest

        began = time.perf_counter()
        settings = settings or self.settings()
        if isinstance(base, int):
            entry = self.store.wording(base)
            base = Wording(entry.text, entry.placement)
        outcome = suggest(self, engine, strategy, count=count, base=base, other_id=other,
                          seed=settings.seed, temperature=proposal_temperature,
                          params=settings.params(), cancel=cancel, on_event=on_event,
                          proposer=proposer)
        kept = None
        if (keep_best and outcome.cards and not outcome.cancelled
                and outcome.cards[0].score.rate > outcome.base_score.rate):
            top = outcome.cards[0]
            parent = self.keep(outcome.base).value
            kept = self.keep(Wording(top.text, top.placement), origin=top.strategy,
                             parent_id=parent.id, inputs=top.inputs).value
        if on_event:
            on_event(Finished("cancelled" if outcome.cancelled else "finished",
                              time.perf_counter() - began))
        return Done(SuggestResult(outcome, kept), IMPROVED)

    def hone(self, engine, *, strategy: str = "scoreboard", budget=None,
             start: Wording | None = None, settings: ProjectSettings | None = None,
             on_round: Callable | None = None, on_event: Listener | None = None,
             cancel: threading.Event | None = None, proposer=None) -> Done:
        """Auto-hone rounds from ``start`` (default: the draft) within ``budget``
        (core.hone.HoneBudget); ``proposer`` writes the suggestions (default: ``engine``,
        which grades them). Each round is committed as it ends and sent to ``on_round``
        (a HoneRound) and as a Stage event. Returns Done[HoneOutcome]."""
        from ..hone import HoneBudget, hone

        began = time.perf_counter()
        settings = settings or self.settings()
        outcome = hone(self, engine, strategy=strategy, budget=budget or HoneBudget(),
                       start=start, params=settings.params(), seed=settings.seed,
                       on_round=on_round, cancel=cancel, on_event=on_event,
                       proposer=proposer)
        if on_event:
            on_event(Finished("cancelled" if outcome.stop_reason == "cancelled" else "finished",
                              time.perf_counter() - began))
        return Done(outcome, IMPROVED)
