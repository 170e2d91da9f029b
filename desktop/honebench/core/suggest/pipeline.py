"""The shared pipeline: propose -> clean -> drop duplicates -> score with early stopping.

Two engines may take part: the proposer writes the variants (the suggestion engine; by
default the graded engine itself) and the graded engine scores every one of them.

Candidates are scored on tuning items only. A first slice of items is graded for every
candidate at once; a candidate whose 95% interval on that slice lies wholly below the current
wording's tuning score cannot plausibly beat it and stops there. The rest are graded on all
tuning items (the slice comes from the cache).
"""
from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field
from typing import Callable

from ..diffing import word_diff
from ..engines.base import Params
from ..events import Listener, Progress, Stage
from ..grading import Plan
from ..operations.grading import grade_plans, grade_wording
from ..records import Mark
from ..stats import Paired, Score, paired_exact, score
from ..wording import Wording
from .cleaning import DUPLICATE_SIMILARITY, find_duplicate
from .strategies import STRATEGY_LABELS, SuggestContext, propose

EARLY_RULE = ("Early stop: after the first {n} tuning items, a suggestion is dropped when even "
              "the top of its 95% interval is below the current wording's tuning score.")


@dataclass(frozen=True)
class Card:
    """One scored suggestion that survived."""

    text: str
    placement: str
    strategy: str
    inputs: dict
    score: Score
    run_id: int
    paired: Paired
    diff: list

    @property
    def proposer(self) -> str:
        """Who wrote this suggestion: an engine's label, or no model (phrase edits)."""
        return str((self.inputs or {}).get("proposer", ""))

    def change_text(self, base: Score) -> str:
        points = round((self.score.rate - base.rate) * 100)
        sign = "+" if points > 0 else ""
        return (f"{sign}{points} points vs the current wording on the same {self.score.total} "
                f"items (fixes {self.paired.fixed}, breaks {self.paired.broken})")


@dataclass
class SuggestOutcome:
    strategy: str
    base: Wording
    base_score: Score
    cards: list[Card] = field(default_factory=list)
    dropped: list[str] = field(default_factory=list)
    notes: dict = field(default_factory=dict)
    rule: str = ""
    model_calls: int = 0
    seconds: float = 0.0
    cancelled: bool = False

    @property
    def message(self) -> str:
        if self.cards:
            return f"{len(self.cards)} usable suggestion(s) from {STRATEGY_LABELS[self.strategy]}"
        counts: dict[str, int] = {}
        for reason in self.dropped:
            key = reason.split(":")[0]
            counts[key] = counts.get(key, 0) + 1
        reasons = "; ".join(f"{n} {why}" for why, n in counts.items()) or "no replies"
        return (f"The model gave no usable wording ({len(self.dropped)} replies dropped: "
                f"{reasons}). Try again, another strategy, or a larger model.")


def base_marks(project, engine, base: Wording, params: Params | None = None,
               cancel: threading.Event | None = None, on_event: Listener | None = None
               ) -> tuple[int, list[Mark]]:
    """The current wording graded on all tuning items (from the cache when graded before);
    ``params`` default to the project's settings."""
    found = project.store.find_wording(base.text, base.placement)
    out = grade_wording(project, engine, base, split="tuning", params=params,
                        wording_id=found.id if found else None, on_event=on_event,
                        cancel=cancel, what="grading the current wording")
    return out.run_id, list(out.marks)


def build_context(project, base: Wording, marks: list[Mark], other_id: int | None = None
                  ) -> SuggestContext:
    """What the strategies may see: shelf scores, tuning items and the base's misses."""
    _, qset = project.current_set()
    tuning = qset.tuning()
    by_id = {it.id: it for it in tuning}
    rows = project.shelf_rows()
    board = {r.entry.text: r.tuning.rate for r in rows if r.tuning and r.tuning.total}
    passed = sum(m.passed for m in marks)
    board[base.text] = passed / len(marks) if marks else 0.0
    found = project.store.find_wording(base.text, base.placement)
    other = project.store.wording(other_id) if other_id else None
    return SuggestContext(
        base=base, base_id=found.id if found else None, tuning_items=tuning,
        scoreboard=tuple(board.items()),
        misses=tuple((by_id[m.item_id], m) for m in marks if not m.passed and m.item_id in by_id),
        other=Wording(other.text, other.placement) if other else None, other_id=other_id,
        donors=tuple(r.entry.text for r in rows))


def suggest(project, engine, strategy: str, *, count: int = 4, base: Wording | None = None,
            other_id: int | None = None, seed: int = 0, temperature: float = 1.0,
            params: Params | None = None, early_slice: int | None = None,
            progress: Callable[[str, int, int], None] | None = None,
            cancel: threading.Event | None = None,
            on_event: Listener | None = None, proposer=None) -> SuggestOutcome:
    """Propose, clean and score variants of ``base`` (default: the draft). ``proposer``
    writes the variants (default: ``engine``); ``engine`` grades the base and every
    variant. Progress goes to ``on_event`` as Stage and Marked events (and to the older
    ``progress(stage, done, total)`` callback); ``params`` default to the project's
    settings."""
    start = time.perf_counter()
    cancel = cancel or threading.Event()
    params = params or project.settings().params()

    def report(stage: str, done: int, total: int) -> None:
        if progress:
            progress(stage, done, total)
        if on_event:
            on_event(Stage(stage, Progress(done, total)))

    base = base or project.draft()
    _, qset = project.current_set()
    tuning = qset.tuning()
    report("grading the current wording", 0, len(tuning))
    _, marks = base_marks(project, engine, base, params, cancel, on_event)
    base_score = score(sum(m.passed for m in marks), len(marks))
    outcome = SuggestOutcome(strategy, base, base_score)
    if cancel.is_set():
        outcome.cancelled = True
        return outcome
    report(f"asking for suggestions ({STRATEGY_LABELS[strategy]})", 0, count)
    batch = propose(strategy, build_context(project, base, marks, other_id),
                    proposer if proposer is not None else engine, count=count, seed=seed,
                    temperature=temperature)
    outcome.notes, outcome.dropped = batch.notes, list(batch.dropped)
    outcome.model_calls += len(batch.prompts)
    known = [(e.label, e.text) for e in project.store.shelf()] + [("the current wording", base.text)]
    questions = [("a tuning item", " ".join(map(str, it.fields.values()))) for it in tuning]
    fresh: list = []
    # Phrase edits are real edits by construction, often a few characters apart: for them
    # only an exact repeat (after normalising) counts as a duplicate.
    threshold = 100.0 if strategy == "phrase-edits" else DUPLICATE_SIMILARITY
    for prop in batch.proposals:
        dup = find_duplicate(prop.text, known + [("another suggestion", p.text) for p in fresh],
                             threshold)
        copied = find_duplicate(prop.text, questions, threshold=80.0)
        if copied:
            outcome.dropped.append("copied a question instead of writing an instruction")
        elif dup:
            outcome.dropped.append(f"duplicate: repeats {dup[0]} (similarity {dup[1]:.0f})")
        else:
            fresh.append(prop)
    if not fresh or cancel.is_set():
        outcome.cancelled = cancel.is_set()
        outcome.seconds = time.perf_counter() - start
        return outcome

    n_slice = min(len(tuning), early_slice or max(10, len(tuning) // 4))
    outcome.rule = EARLY_RULE.format(n=n_slice)

    def staged(stage):
        def relay(event):
            if on_event:
                on_event(event)
            if progress and hasattr(event, "progress") and hasattr(event, "mark"):
                progress(stage, event.progress.done, event.progress.total)
        return relay

    wordings = [Wording(p.text, base.placement) for p in fresh]
    report("scoring on the first items", 0, n_slice * len(wordings))
    first = grade_plans(project, engine, [Plan(w, tuning[:n_slice]) for w in wordings],
                        params=params, on_event=staged("scoring on the first items"),
                        cancel=cancel, what="scoring suggestions on the first items")
    outcome.model_calls += sum(r.model_calls for r in first)
    alive = []
    for prop, wording, run in zip(fresh, wordings, first):
        s = score(sum(m.passed for m in run.marks), len(run.marks))
        if n_slice < len(tuning) and s.high < base_score.rate:
            outcome.dropped.append(
                f"stopped early: {s.passed}/{s.total} on the first items; even the top of its "
                f"interval ({s.high:.0%}) is below the current {base_score.rate:.0%}")
        else:
            alive.append((prop, wording))
    if alive and not cancel.is_set():
        report("scoring on all tuning items", 0, len(tuning) * len(alive))
        full = grade_plans(project, engine, [Plan(w, tuning) for _, w in alive],
                           params=params, on_event=staged("scoring on all tuning items"),
                           cancel=cancel, what="scoring suggestions on all tuning items")
        outcome.model_calls += sum(r.model_calls for r in full)
        base_pass = {m.item_id: m.passed for m in marks}
        for (prop, wording), run in zip(alive, full):
            if run.status != "finished":
                continue
            ids = [m.item_id for m in run.marks if m.item_id in base_pass]
            got = {m.item_id: m.passed for m in run.marks}
            paired = paired_exact([base_pass[i] for i in ids], [got[i] for i in ids])
            outcome.cards.append(Card(
                text=wording.text, placement=wording.placement, strategy=prop.strategy,
                inputs=prop.inputs, score=score(sum(got.values()), len(got)), run_id=run.run_id,
                paired=paired, diff=word_diff(base.text, wording.text)))
    outcome.cards.sort(key=lambda c: -c.score.rate)
    outcome.cancelled = cancel.is_set()
    outcome.seconds = time.perf_counter() - start
    return outcome
