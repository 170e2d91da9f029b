"""Auto-hone: rounds of suggestions run unattended, keeping a variant only when it beats
the best so far on tuning items. Held-out items are graded only to confirm a kept version
(for the progress chart), never to choose.
"""
from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field
from typing import Callable

from .engines.base import Params
from .events import Listener, Stage
from .operations.grading import grade_wording
from .stats import Score, score
from .suggest.pipeline import base_marks, suggest
from .wording import Wording


@dataclass(frozen=True)
class HoneBudget:
    rounds: int = 5
    per_round: int = 4  # suggestions asked for each round
    patience: int = 3  # stop after this many rounds without improvement
    seconds: float | None = None  # stop once this much time has passed
    model_calls: int | None = None  # stop once this many model calls were made


@dataclass(frozen=True)
class HoneRound:
    number: int
    best_text: str
    best_tuning: Score
    kept_id: int | None  # the shelf entry kept this round, if any
    held_out: Score | None  # the kept entry's held-out score, for the chart
    suggestions: int
    dropped: int
    model_calls: int
    seconds: float


@dataclass
class HoneOutcome:
    session: int
    rounds: list[HoneRound] = field(default_factory=list)
    stop_reason: str = ""


def hone(project, engine, *, strategy: str = "scoreboard", budget: HoneBudget = HoneBudget(),
         start: Wording | None = None, params: Params | None = None, seed: int = 0,
         on_round: Callable[[HoneRound], None] | None = None,
         progress: Callable[[str, int, int], None] | None = None,
         cancel: threading.Event | None = None,
         on_event: Listener | None = None, proposer=None) -> HoneOutcome:
    """Rounds of suggestions from ``start`` (default: the draft); ``params`` default to the
    project's settings. ``proposer`` writes the suggestions (default: ``engine``, which
    grades everything). Each finished round goes to ``on_round`` and as a Stage event."""
    cancel = cancel or threading.Event()
    params = params or project.settings().params()
    began = time.perf_counter()
    best = start or project.draft()
    _, marks = base_marks(project, engine, best, params, cancel, on_event)
    best_score = score(sum(m.passed for m in marks), len(marks))
    parent = project.keep(best, note="auto-hone start").value
    session = project.store.start_hone(strategy=strategy, budget=budget.__dict__)
    outcome = HoneOutcome(session)
    calls, idle = 0, 0
    for number in range(1, budget.rounds + 1):
        if cancel.is_set():
            outcome.stop_reason = "cancelled"
            break
        t0 = time.perf_counter()
        result = suggest(project, engine, strategy, count=budget.per_round, base=best,
                         seed=seed + number * 101, params=params, progress=progress,
                         cancel=cancel, on_event=on_event, proposer=proposer)
        calls += result.model_calls
        kept_id, held = None, None
        top = result.cards[0] if result.cards else None
        for card in result.cards[1:]:
            project.set_aside(Wording(card.text, card.placement), parent_id=parent.id,
                              origin=f"auto-hone: {card.strategy}",
                              note="not the best of its round", inputs=card.inputs)
        if top and top.score.rate > best_score.rate and not result.cancelled:
            entry = project.keep(Wording(top.text, top.placement), parent_id=parent.id,
                                 origin=f"auto-hone: {top.strategy}", inputs=top.inputs).value
            best, best_score, parent, kept_id, idle = (Wording(top.text, top.placement),
                                                       top.score, entry, entry.id, 0)
            held = _confirm(project, engine, best, params, cancel)
        else:
            idle += 1
            if top:
                project.set_aside(Wording(top.text, top.placement), parent_id=parent.id,
                                  origin=f"auto-hone: {top.strategy}",
                                  note="did not beat the best so far", inputs=top.inputs)
        rnd = HoneRound(number, best.text, best_score, kept_id, held, len(result.cards),
                        len(result.dropped), result.model_calls, time.perf_counter() - t0)
        project.store.add_hone_round(session, rnd)
        outcome.rounds.append(rnd)
        if on_round:
            on_round(rnd)
        if on_event:
            kept = f", kept {entry.label}" if kept_id else ""
            on_event(Stage(f"round {number}: best {best_score.text()}{kept}"))
        if result.cancelled or cancel.is_set():
            outcome.stop_reason = "cancelled"
            break
        if idle >= budget.patience:
            outcome.stop_reason = f"{idle} rounds without improvement"
            break
        if budget.seconds is not None and time.perf_counter() - began >= budget.seconds:
            outcome.stop_reason = "time budget used"
            break
        if budget.model_calls is not None and calls >= budget.model_calls:
            outcome.stop_reason = "model-call budget used"
            break
    else:
        outcome.stop_reason = f"{budget.rounds} rounds done"
    project.store.finish_hone(session, outcome.stop_reason)
    return outcome


def _confirm(project, engine, wording: Wording, params: Params,
             cancel: threading.Event) -> Score | None:
    """Held-out score of a kept version: measured for the chart, never used to choose."""
    found = project.store.find_wording(wording.text, wording.placement)
    run = grade_wording(project, engine, wording, split="held_out", params=params,
                        wording_id=found.id if found else None, cancel=cancel,
                        what="confirming the kept version on the held-out items")
    if run.status != "finished":
        return None
    return score(sum(m.passed for m in run.marks), len(run.marks))
