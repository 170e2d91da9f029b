"""The five suggestion strategies. Each turns a context (shelf, tuning items, misses) into
proposals; only tuning items are ever put in a meta-prompt."""
from __future__ import annotations

import random
from dataclasses import dataclass, field, replace

from ..engines.base import Request
from ..engines.choice import engine_label
from ..records import Mark
from ..sets import Item
from ..templates import template
from ..wording import Wording, build_prompt, fill
from .cleaning import clean_reply
from .phrase_edits import phrase_edits, phrases

STRATEGIES = ("scoreboard", "misses", "rephrase", "phrase-edits", "blend")
STRATEGY_LABELS = {
    "scoreboard": "from the scoreboard",
    "misses": "from the misses",
    "rephrase": "rephrase",
    "phrase-edits": "phrase edits",
    "blend": "blend",
}
SCOREBOARD_SIZE = 20
EXAMPLES = 3
MAX_MISSES = 5
PROPOSAL_TOKENS = 80
NO_MODEL = {"phrase-edits": "no model (phrase edits)", "crossover": "no model (sentence crossover)"}


@dataclass(frozen=True)
class SuggestContext:
    """What a strategy may see. ``tuning_items`` and ``misses`` hold tuning items only."""

    base: Wording
    base_id: int | None
    tuning_items: tuple[Item, ...]
    scoreboard: tuple[tuple[str, float], ...] = ()  # (wording, tuning rate) of shelf entries
    misses: tuple[tuple[Item, Mark], ...] = ()  # the base wording's missed tuning items
    other: Wording | None = None  # the second entry, for blend
    other_id: int | None = None
    donors: tuple[str, ...] = ()  # shelf wordings, for phrase edits


@dataclass(frozen=True)
class Proposal:
    text: str
    strategy: str
    inputs: dict  # what it came from: parent, other entry, diagnosis, edit, proposer


@dataclass
class ProposalBatch:
    proposals: list[Proposal] = field(default_factory=list)
    dropped: list[str] = field(default_factory=list)  # one reason per dropped reply
    notes: dict = field(default_factory=dict)  # e.g. the diagnosis, shown to the user
    prompts: list[str] = field(default_factory=list)  # every meta-prompt sent


def scoreboard_prompt(ctx: SuggestContext, rng: random.Random) -> str:
    ranked = sorted(ctx.scoreboard, key=lambda pair: pair[1])[-SCOREBOARD_SIZE:]
    board = "\n\n".join(f"Instruction: {text}\nScore: {round(rate * 100)}%"
                        for text, rate in ranked) or "(none yet)"
    shown = rng.sample(list(ctx.tuning_items), min(EXAMPLES, len(ctx.tuning_items)))
    examples = "\n\n".join(_example(ctx.base.placement, item) for item in shown)
    return fill(template("scoreboard"), {"scoreboard": board, "examples": examples})


def _example(placement: str, item: Item) -> str:
    built = build_prompt(Wording("[INSTRUCTION]", placement), item.fields)
    text = "\n".join(m["content"] for m in built.messages)
    if built.prefill:
        text += "\n" + built.prefill
    return f"Question:\n{text}\nRight answer: {item.expected}"


def misses_prompt(ctx: SuggestContext) -> str:
    lines = []
    for item, mark in ctx.misses[:MAX_MISSES]:
        said = (mark.output or mark.error or "").strip().replace("\n", " ")[:200]
        lines.append(f"Input: {_one_line(item)}\nExpected: {item.expected}\nModel said: {said}")
    return fill(template("misses_diagnose"), {"wording": ctx.base.text,
                                              "misses": "\n\n".join(lines)})


def _one_line(item: Item) -> str:
    return " / ".join(str(v) for v in item.fields.values()).replace("\n", " ")[:300]


def _ask(engine, prompts: list[str], temperature: float, seed: int) -> list[str]:
    """One reply per prompt, in prompt order."""
    reqs = [Request(key=str(i), messages=({"role": "user", "content": p},),
                    max_tokens=PROPOSAL_TOKENS, temperature=temperature, seed=seed + i)
            for i, p in enumerate(prompts)]
    replies = {}
    for result in engine.complete(reqs):
        replies[result.key] = "" if result.error else result.text
    return [replies.get(str(i), "") for i in range(len(prompts))]


def _collect(batch: ProposalBatch, replies: list[str], strategy: str, inputs: dict) -> None:
    for reply in replies:
        cleaned = clean_reply(reply)
        if cleaned.text is None:
            batch.dropped.append(cleaned.reason)
        else:
            batch.proposals.append(Proposal(cleaned.text, strategy, dict(inputs)))


def propose(strategy: str, ctx: SuggestContext, engine, *, count: int, seed: int = 0,
            temperature: float = 1.0) -> ProposalBatch:
    """Ask ``engine`` (the proposer) for ``count`` variants with one strategy. Model replies
    are cleaned here; the pipeline de-duplicates and scores them. Each proposal's inputs
    name who wrote it (``inputs["proposer"]``: the engine's label, or no model)."""
    if strategy not in STRATEGIES:
        raise ValueError(f"strategy must be one of {', '.join(STRATEGIES)}, not {strategy!r}")
    batch = _propose(strategy, ctx, engine, count=count, seed=seed, temperature=temperature)
    label = None
    for i, prop in enumerate(batch.proposals):
        if prop.strategy == "phrase-edits" or prop.inputs.get("fallback") == "crossover":
            who = NO_MODEL["phrase-edits" if prop.strategy == "phrase-edits" else "crossover"]
        else:
            who = label = label or engine_label(engine)
        batch.proposals[i] = replace(prop, inputs={**prop.inputs, "proposer": who})
    return batch


def _propose(strategy: str, ctx: SuggestContext, engine, *, count: int, seed: int,
             temperature: float) -> ProposalBatch:
    batch = ProposalBatch()
    rng = random.Random(seed)
    parent = {"parent_id": ctx.base_id}
    if strategy == "phrase-edits":
        for text, what in phrase_edits(ctx.base.text, list(ctx.donors), count, seed):
            batch.proposals.append(Proposal(text, strategy, {**parent, "edit": what}))
        if not batch.proposals:
            batch.dropped.append("the wording has one phrase and no other entry to borrow from")
        return batch
    if strategy == "scoreboard":
        prompts = [scoreboard_prompt(ctx, rng) for _ in range(count)]
        inputs = {**parent, "scoreboard_size": min(SCOREBOARD_SIZE, len(ctx.scoreboard))}
    elif strategy == "rephrase":
        prompts = [fill(template("rephrase"), {"wording": ctx.base.text})] * count
        inputs = parent
    elif strategy == "blend":
        if ctx.other is None:
            raise ValueError("blend needs two shelf entries: select a second one")
        prompts = [fill(template("blend"), {"first": ctx.base.text,
                                            "second": ctx.other.text})] * count
        inputs = {**parent, "other_id": ctx.other_id}
    else:  # misses
        if not ctx.misses:
            batch.notes["diagnosis"] = "no missed tuning items to learn from"
            return batch
        diagnose = misses_prompt(ctx)
        batch.prompts.append(diagnose)
        diagnosis = _ask(engine, [diagnose], 0.0, seed)[0].strip().split("\n\n")[0][:400]
        batch.notes["diagnosis"] = diagnosis or "(the model gave no diagnosis)"
        prompts = [fill(template("misses_rewrite"), {"wording": ctx.base.text,
                                                     "diagnosis": diagnosis})] * count
        inputs = {**parent, "diagnosis": diagnosis,
                  "misses_shown": [it.id for it, _ in ctx.misses[:MAX_MISSES]]}
    batch.prompts.extend(prompts)
    _collect(batch, _ask(engine, prompts, temperature, seed), strategy, inputs)
    if strategy == "blend" and not batch.proposals:
        for text in crossover(ctx.base.text, ctx.other.text, count, seed):
            batch.proposals.append(Proposal(text, strategy, {**inputs, "fallback": "crossover"}))
    return batch


def crossover(first: str, second: str, count: int, seed: int) -> list[str]:
    """Deterministic sentence-level crossover: leading phrases of one, the rest of the other."""
    a, b = phrases(first), phrases(second)
    rng = random.Random(seed)
    out: list[str] = []
    for _ in range(count * 10):
        if len(out) >= count or not a or not b:
            break
        cut_a, cut_b = rng.randint(1, len(a)), rng.randint(0, len(b) - 1)
        child = " ".join(a[:cut_a] + b[cut_b:]) if rng.random() < 0.5 else " ".join(
            b[:max(1, cut_b)] + a[cut_a - 1:])
        if child not in (first, second) and child not in out:
            out.append(child)
    return out
