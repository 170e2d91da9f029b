"""Several items decoded together in one llama.cpp context (continuous batching).

The shared prompt prefix is evaluated once into sequence 0 and copied into each item's
sequence. Each ``llama_decode`` call then carries one next token for every active item and
the whole own part (suffix) of every item that has just taken a free slot, so items starting
together are evaluated together. When an item finishes, the next one takes its slot at once,
so the model is never idle between items. Runs only on the engine's owner thread.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable, Iterable, Iterator

import numpy as np

from .base import Request, Result


@dataclass
class Job:
    """One request on its way through the decoder."""

    request: Request
    tokens: list[int]
    prefix: int  # tokens shared with the other items (already in sequence 0)
    limit: int  # most tokens to generate
    started: float = 0.0
    seq: int = 0
    out: list[int] = field(default_factory=list)
    rng: np.random.Generator | None = None


class BatchDecoder:
    n_seq_max = 64  # sequences in the context: items, and label continuations when scoring
    # Pack the own parts of items that start together into one decode with the running
    # items' next tokens. Off for generation. llama.cpp's logits for a token move slightly
    # (up to ~0.5 in a logit, measured) with how many tokens share a decode call, so a
    # greedy token can change: over 16 routing items at 24 tokens, greedy texts differed
    # from one item at a time in 3 items with several items a call and the own parts
    # decoded alone, and in 6 with the own parts packed (one at a time, twice: no
    # difference). No setting of this llama.cpp build (flash attention on, unified memory)
    # made several sequences a call give one-at-a-time tokens. Label scoring always packs
    # (a label choice rarely moves, and the speed matters most there).
    pack = False
    # Cancel is checked between llama_decode calls, never inside one: llama.cpp's abort
    # callback would be a Python function called from C in the middle of a decode, and a
    # crash ("deallocating None") was seen while one was installed. A long prompt is
    # therefore evaluated ``chunk`` tokens per call, so cancel still lands within one
    # short decode.
    chunk = 128
    # Label scoring evaluates the own parts of a group of items (8 of ~30 tokens on the
    # routing sample) in calls of up to this many tokens: fewer, fuller calls evaluate more
    # tokens a second (measured on a busy machine: 8 items in 256-token calls took ~0.6x
    # the time of 128-token calls, same labels chosen), at the price of cancel waiting for
    # one such call. (Groups of 16 were faster still there, but then a short run's marks
    # all arrive at once; the group stays 8.)
    score_chunk = 512

    def __init__(self, llm, *, n_ctx: int, n_seq: int, n_threads: int,
                 cancelled: Callable[[], bool]):
        import llama_cpp

        self.lib, self.llm, self.n_seq = llama_cpp, llm, min(n_seq, self.n_seq_max - 1)
        self.cancelled = cancelled
        params = llama_cpp.llama_context_default_params()
        params.n_ctx = n_ctx
        params.n_batch = params.n_ubatch = 512
        params.n_seq_max = self.n_seq_max
        params.kv_unified = True
        # Flash attention on: an item's logits then do not depend on which other items sit
        # in memory (without it they moved by up to 0.5 in a logit, measured).
        params.flash_attn_type = llama_cpp.LLAMA_FLASH_ATTN_TYPE_ENABLED
        params.n_threads = params.n_threads_batch = n_threads
        self.ctx = llama_cpp.llama_init_from_model(llm._model.model, params)
        if not self.ctx:
            raise RuntimeError("llama.cpp could not make a decoding context")
        self.mem = llama_cpp.llama_get_memory(self.ctx)
        self.batch = llama_cpp.llama_batch_init(512, 0, self.n_seq_max)
        vocab = llama_cpp.llama_model_get_vocab(llm._model.model)
        self.vocab = vocab
        self.n_vocab = llama_cpp.llama_vocab_n_tokens(vocab)
        self.n_ctx = n_ctx
        self.cached_prefix: list[int] = []

    def close(self) -> None:
        if self.ctx:
            self.lib.llama_batch_free(self.batch)
            self.lib.llama_free(self.ctx)
            self.ctx = None

    # -- low-level helpers ---------------------------------------------------------------
    def decode_rows(self, entries: list[tuple[int, int, int, bool]],
                    abortable: bool = True, chunk: int | None = None) -> list[np.ndarray]:
        """Decode (token, position, sequence, wants_logits) entries; a copy of the logits of
        every entry that wants them, in order. With ``abortable`` the entries go in
        ``chunk``-token calls (default ``self.chunk``) and cancel is checked before each
        (RuntimeError when set)."""
        step = min(chunk or self.chunk, 512) if abortable else 512
        rows = []
        for start in range(0, len(entries), step):
            if abortable and self.cancelled():
                raise RuntimeError("cancelled")
            b = self.batch
            b.n_tokens = 0
            wanted = []
            for i, (tok, pos, seq, logits) in enumerate(entries[start:start + step]):
                b.token[i], b.pos[i], b.n_seq_id[i] = tok, pos, 1
                b.seq_id[i][0], b.logits[i] = seq, logits
                b.n_tokens = i + 1
                if logits:
                    wanted.append(i)
            code = self.lib.llama_decode(self.ctx, b)
            if code != 0:
                raise RuntimeError(f"llama_decode returned {code}")
            rows += [self._logits(i).copy() for i in wanted]
        return rows

    def _logits(self, index: int) -> np.ndarray:
        ptr = self.lib.llama_get_logits_ith(self.ctx, index)
        return np.ctypeslib.as_array(ptr, shape=(self.n_vocab,))

    def set_prefix(self, prefix: list[int]) -> None:
        if prefix == self.cached_prefix:
            return
        self.lib.llama_memory_clear(self.mem, True)
        self.cached_prefix = []
        if prefix:
            self.decode_rows([(t, i, 0, False) for i, t in enumerate(prefix)])
        self.cached_prefix = list(prefix)

    def fail_all(self, keys: list[str], prompt_tokens: list[int], exc: Exception):
        """A failed decode: those items get an error each; memory starts afresh."""
        self.lib.llama_memory_clear(self.mem, True)
        self.cached_prefix = []
        for key, count in zip(keys, prompt_tokens):
            yield Result(key=key, prompt_tokens=count,
                         error=f"the model failed on this item ({exc})")

    # -- the loop ------------------------------------------------------------------------
    def run(self, jobs: Iterable[Job]) -> Iterator[Result]:
        """Results in the order items finish; stops quietly when cancelled."""
        waiting = iter(jobs)
        free = list(range(self.n_seq, 0, -1))
        active: list[Job] = []
        pending: Job | None = None
        while not self.cancelled():
            joining: list[Job] = []
            while free:
                job = pending or next(waiting, None)
                pending = None
                if job is None:
                    break
                if active or joining:
                    shared = (joining or active)[0]
                    if (shared.tokens[:shared.prefix] != job.tokens[:job.prefix]
                            or self._load(active + joining) + _need(job) > self.n_ctx):
                        pending = job  # waits until the batch drains enough
                        break
                job.seq = free.pop()
                joining.append(job)
            if not active and not joining:
                return
            try:
                yield from self._advance(active, joining, free)
            except RuntimeError as exc:
                if self.cancelled():
                    return
                failed = active + joining
                active.clear()
                free[:] = list(range(self.n_seq, 0, -1))
                yield from self.fail_all([j.request.key for j in failed],
                                         [len(j.tokens) for j in failed], exc)

    def _load(self, active: list[Job]) -> int:
        return len(self.cached_prefix) + sum(_need(j) for j in active)

    def _advance(self, active: list[Job], joining: list[Job], free: list[int]):
        """The next token of every active item and the suffix of every joining item; finished
        items leave and free their slot. With ``pack`` all of it is one decode; without, each
        joining suffix is decoded on its own first (see ``pack``)."""
        if joining:
            self.set_prefix(joining[0].tokens[:joining[0].prefix])
        groups = [active + joining] if self.pack else [[j] for j in joining] + [active]
        for group in groups:
            group = list(group)  # ``active`` changes while its results are read
            entries = []
            for job in group:
                if job.out:
                    entries.append((job.out[-1], len(job.tokens) + len(job.out) - 1, job.seq, True))
                    continue
                job.started = time.perf_counter()
                req = job.request
                job.rng = np.random.default_rng(req.seed) if req.temperature > 0 else None
                self.lib.llama_memory_seq_rm(self.mem, job.seq, -1, -1)
                if job.prefix:
                    self.lib.llama_memory_seq_cp(self.mem, 0, job.seq, 0, job.prefix)
                suffix = job.tokens[job.prefix:]
                entries += [(t, job.prefix + i, job.seq, i == len(suffix) - 1)
                            for i, t in enumerate(suffix)]
            if not entries:
                continue
            rows = self.decode_rows(entries, abortable=any(not j.out for j in group))
            for job, row in zip(group, rows):
                job.out.append(self._pick(job, row))
                if job not in active:
                    active.append(job)
                done = self._finished(job)
                if done is not None:
                    active.remove(job)
                    self.lib.llama_memory_seq_rm(self.mem, job.seq, -1, -1)
                    free.append(job.seq)
                    yield done

    def _pick(self, job: Job, logits: np.ndarray) -> int:
        if job.rng is None:
            return int(np.argmax(logits))
        return sample(logits, job.request.temperature, job.rng)

    def _finished(self, job: Job) -> Result | None:
        """A Result once the job hit end of generation, a stop text or its token budget."""
        req = job.request
        ended = self.lib.llama_vocab_is_eog(self.vocab, job.out[-1])
        if not ended and not req.stop and req.until is None and len(job.out) < job.limit:
            return None  # the common case, decided without detokenising
        tokens = job.out[:-1] if ended else job.out
        text = self.llm.detokenize(tokens).decode("utf-8", "ignore")
        cuts = [text.find(s) for s in req.stop if s and s in text]
        if req.until is not None and (at := req.until.cut(text)) is not None:
            cuts.append(at)
        cut = min(cuts, default=-1)
        if not (ended or cut >= 0 or len(job.out) >= job.limit):
            return None
        reason = "stop" if ended or cut >= 0 else "length"
        if cut >= 0:
            text = text[:cut]
        return Result(key=req.key, text=text, prompt_tokens=len(job.tokens),
                      completion_tokens=len(tokens), seconds=time.perf_counter() - job.started,
                      finish_reason=reason)


def _need(job: Job) -> int:
    """Memory cells an item takes beyond the shared prefix."""
    return len(job.tokens) - job.prefix + job.limit


def sample(logits: np.ndarray, temperature: float, rng: np.random.Generator,
           top_k: int = 40, top_p: float = 0.95) -> int:
    """Temperature sampling over the top-k tokens, cut to the top-p share of probability."""
    top = np.argpartition(logits, -top_k)[-top_k:]
    top = top[np.argsort(logits[top])[::-1]]
    z = logits[top].astype(np.float64) / max(temperature, 1e-6)
    p = np.exp(z - z.max())
    p /= p.sum()
    keep = int(np.searchsorted(np.cumsum(p), top_p) + 1)
    p = p[:keep] / p[:keep].sum()
    return int(top[rng.choice(keep, p=p)])
