"""Label scoring: instead of generating an answer, ask how likely each allowed label is as
the start of the answer, and pick the most likely one.

Each label is tokenised together with the prompt (so merges at the boundary are right) and
followed by the end-of-turn token, the token the chat template writes after an answer. The
label paths form a tree of tokens that starts where the prompt and every label still agree.
A label's log-probability is the sum of log P(token | everything before) over the tokens
where its path *branches* from another label's (``full=False``, the default) or over all its
tokens, end-of-turn included (``full=True``).

With branch points only, a label whose first token no other label shares is decided by that
first token alone: its later tokens are the only allowed way on, so they are not evaluated.
The first-token distribution is in the logits of the prompt's last position, so for labels
that differ in their first token the prompt is all that has to be evaluated. Labels that
share a first token are told apart by the tokens after it (end-of-turn included, so "no"
and "no change" stay distinct).

The share of a label is exp(its log-probability) over the sum for all labels: the chance the
model picks it when it must pick one of the labels. Shares sum to 1.

``run_scoring`` does the work in the batched decoder: the shared prefix once in sequence 0;
the own part of several items in one ``llama_decode`` (each on its own sequence, which
starts as a copy of sequence 0); then the label tokens that need evaluating, each label on
its own sequence copied from its item's, all waiting labels of those items in one decode.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Iterable, Iterator

import numpy as np

from .base import Request, Result


@dataclass
class LabelPlan:
    """The token tree of one item's labels."""

    common: int  # tokens the prompt and every label path share
    paths: list[list[int]]  # per label: its tokens after ``common`` (end-of-turn last)
    nodes: list[tuple[int, ...]]  # tree nodes whose next-token distribution is needed
    chains: list[tuple[list[int], list[int]]] = field(default_factory=list)
    # (tokens to evaluate after ``common``, indexes among them whose logits are needed)


def plan_labels(prompt: list[int], label_tokens: list[list[int]], *, full: bool = False) -> LabelPlan:
    """The tree for one item: ``prompt`` alone and each label's tokens with the prompt
    (end-of-turn included)."""
    common = len(prompt)
    for path in label_tokens:
        same = 0
        top = min(common, len(path) - 1)
        while same < top and path[same] == prompt[same]:
            same += 1
        common = same
    common = max(1, common)
    paths = [list(path[common:]) for path in label_tokens]
    children: dict[tuple[int, ...], set[int]] = {}
    for path in paths:
        for depth in range(len(path)):
            children.setdefault(tuple(path[:depth]), set()).add(path[depth])
    nodes = [node for node, kids in children.items() if full or len(kids) > 1 or not node]
    deeper = {node for node in nodes if node}
    plan = LabelPlan(common, paths, nodes)
    claimed: set[tuple[int, ...]] = set()
    for path in paths:  # one evaluation chain per label that reaches an unclaimed node
        wanted = [len(n) for n in deeper if n == tuple(path[:len(n)]) and n not in claimed]
        if not wanted:
            continue
        claimed.update(tuple(path[:d]) for d in wanted)
        plan.chains.append((path[:max(wanted)], sorted(d - 1 for d in wanted)))
    return plan


def log_softmax(logits: np.ndarray) -> np.ndarray:
    z = logits.astype(np.float64)
    top = z.max()
    return z - top - math.log(np.exp(z - top).sum())


def label_logprobs(plan: LabelPlan, dists: dict[tuple[int, ...], np.ndarray]) -> list[float]:
    """Each label's log-probability from the next-token log-distributions at the plan's
    nodes."""
    out = []
    for path in plan.paths:
        total = 0.0
        for depth in range(len(path)):
            node = tuple(path[:depth])
            if node in dists:
                total += float(dists[node][path[depth]])
        out.append(total)
    return out


def shares(logprobs: list[float]) -> list[float]:
    top = max(logprobs)
    weights = [math.exp(v - top) for v in logprobs]
    total = sum(weights)
    return [w / total for w in weights]


@dataclass
class ScoreJob:
    request: Request
    tokens: list[int]  # the prompt
    prefix: int  # tokens shared with the other items (in sequence 0)
    plan: LabelPlan
    started: float = 0.0
    seq: int = 0
    dists: dict = field(default_factory=dict)

    def need(self) -> int:
        """Memory cells this item takes beyond the shared prefix."""
        return (self.plan.common - self.prefix) + sum(len(c) for c, _ in self.plan.chains)


def run_scoring(dec, jobs: Iterable[ScoreJob], group: int) -> Iterator[Result]:
    """Score items ``group`` at a time on decoder ``dec``; results as groups finish."""
    waiting = iter(jobs)
    pending: ScoreJob | None = None
    while not dec.cancelled():
        batch: list[ScoreJob] = []
        cells = 0
        while len(batch) < group:
            job = pending or next(waiting, None)
            pending = None
            if job is None:
                break
            if batch and (job.tokens[:job.prefix] != batch[0].tokens[:batch[0].prefix]
                          or job.prefix + cells + job.need() > dec.n_ctx):
                pending = job
                break
            batch.append(job)
            cells += job.need()
        if not batch:
            return
        try:
            yield from _score_group(dec, batch)
        except RuntimeError as exc:
            if dec.cancelled():
                return
            yield from dec.fail_all([j.request.key for j in batch],
                                    [len(j.tokens) for j in batch], exc)


def _score_group(dec, batch: list[ScoreJob]) -> Iterator[Result]:
    lib, mem = dec.lib, dec.mem
    dec.set_prefix(batch[0].tokens[:batch[0].prefix])
    entries = []
    for seq, job in enumerate(batch, start=1):
        job.seq, job.started = seq, time.perf_counter()
        lib.llama_memory_seq_rm(mem, seq, -1, -1)
        if job.prefix:
            lib.llama_memory_seq_cp(mem, 0, seq, 0, job.prefix)
        own = job.tokens[job.prefix:job.plan.common]
        entries += [(t, job.prefix + i, seq, i == len(own) - 1) for i, t in enumerate(own)]
    for job, row in zip(batch, dec.decode_rows(entries, chunk=dec.score_chunk)):
        job.dists[()] = log_softmax(row)
    chains = [(job, tokens, wanted) for job in batch for tokens, wanted in job.plan.chains]
    free = list(range(dec.n_seq_max - 1, len(batch), -1))
    used: list[int] = []
    try:
        while chains and not dec.cancelled():
            round_, chains = chains[:len(free)], chains[len(free):]
            entries, owners = [], []
            for job, tokens, wanted in round_:
                seq = free.pop()
                used.append(seq)
                lib.llama_memory_seq_rm(mem, seq, -1, -1)
                lib.llama_memory_seq_cp(mem, job.seq, seq, 0, job.plan.common)
                for i, t in enumerate(tokens):
                    entries.append((t, job.plan.common + i, seq, i in wanted))
                owners += [(job, tuple(tokens[:i + 1])) for i in wanted]
            rows = dec.decode_rows(entries, chunk=dec.score_chunk)
            for (job, node), row in zip(owners, rows):
                job.dists[node] = log_softmax(row)
            for seq in used:
                lib.llama_memory_seq_rm(mem, seq, -1, -1)
            free += used
            used = []
    finally:
        for seq in used + [job.seq for job in batch]:
            lib.llama_memory_seq_rm(mem, seq, -1, -1)
    if dec.cancelled():
        return
    for job in batch:
        yield scored_result(job.request, job.plan, job.dists, len(job.tokens),
                            time.perf_counter() - job.started)


def scored_result(req: Request, plan: LabelPlan, dists: dict, prompt_tokens: int,
                  seconds: float) -> Result:
    logprobs = label_logprobs(plan, dists)
    share = shares(logprobs)
    best = max(range(len(logprobs)), key=lambda i: (logprobs[i], -i))
    return Result(key=req.key, text=req.labels[best], prompt_tokens=prompt_tokens,
                  completion_tokens=0, seconds=seconds, finish_reason="scored",
                  label_logprobs=tuple(logprobs), label_shares=tuple(share))
