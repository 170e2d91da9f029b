"""Several items decoded together in one llama.cpp context (continuous batching).

The shared prompt prefix is evaluated once into sequence 0 and copied into each item's
sequence; every item's own part is evaluated on its own, then all active items advance one
token per ``llama_decode`` call. When an item finishes, the next one takes its slot at once,
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
    def __init__(self, llm, *, n_ctx: int, n_seq: int, n_threads: int,
                 cancelled: Callable[[], bool]):
        import llama_cpp

        self.lib, self.llm, self.n_seq = llama_cpp, llm, n_seq
        self.cancelled = cancelled
        params = llama_cpp.llama_context_default_params()
        params.n_ctx = n_ctx
        params.n_batch = params.n_ubatch = 512
        params.n_seq_max = n_seq + 1
        params.kv_unified = True
        params.n_threads = params.n_threads_batch = n_threads
        self.ctx = llama_cpp.llama_init_from_model(llm._model.model, params)
        if not self.ctx:
            raise RuntimeError("llama.cpp could not make a decoding context")
        # The abort check runs inside llama.cpp many times per decode and costs about a
        # fifth of the speed, so it is on only while a prompt is evaluated; generation
        # steps are short and cancel is checked between them.
        self._abort = llama_cpp.ggml_abort_callback(lambda _d: bool(self.cancelled()))
        self._no_abort = llama_cpp.ggml_abort_callback()
        self._abort_on = False
        self.mem = llama_cpp.llama_get_memory(self.ctx)
        self.batch = llama_cpp.llama_batch_init(512, 0, n_seq + 1)
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
    def _decode(self, entries: list[tuple[int, int, int, bool]], abortable: bool = True) -> None:
        """Decode (token, position, sequence, wants_logits) entries, 512 at a time."""
        if abortable != self._abort_on:
            self.lib.llama_set_abort_callback(
                self.ctx, self._abort if abortable else self._no_abort, None)
            self._abort_on = abortable
        for start in range(0, len(entries), 512):
            b = self.batch
            b.n_tokens = 0
            for i, (tok, pos, seq, logits) in enumerate(entries[start:start + 512]):
                b.token[i], b.pos[i], b.n_seq_id[i] = tok, pos, 1
                b.seq_id[i][0], b.logits[i] = seq, logits
                b.n_tokens = i + 1
            code = self.lib.llama_decode(self.ctx, b)
            if code != 0:
                raise RuntimeError(f"llama_decode returned {code}")

    def _logits(self, index: int) -> np.ndarray:
        ptr = self.lib.llama_get_logits_ith(self.ctx, index)
        return np.ctypeslib.as_array(ptr, shape=(self.n_vocab,))

    def _set_prefix(self, prefix: list[int]) -> None:
        if prefix == self.cached_prefix:
            return
        self.lib.llama_memory_clear(self.mem, True)
        self.cached_prefix = []
        if prefix:
            self._decode([(t, i, 0, False) for i, t in enumerate(prefix)])
        self.cached_prefix = list(prefix)

    # -- the loop ------------------------------------------------------------------------
    def run(self, jobs: Iterable[Job]) -> Iterator[Result]:
        """Results in the order items finish; stops quietly when cancelled."""
        waiting = iter(jobs)
        free = list(range(self.n_seq, 0, -1))
        active: list[Job] = []
        pending: Job | None = None
        while True:
            while free and not self.cancelled():
                job = pending or next(waiting, None)
                pending = None
                if job is None:
                    break
                if active and (self.cached_prefix != job.tokens[:job.prefix]
                               or self._load(active) + _need(job) > self.n_ctx):
                    pending = job  # waits until the batch drains enough
                    break
                try:
                    yield from self._admit(job, free.pop(), active, free)
                except RuntimeError as exc:
                    if self.cancelled():
                        return
                    yield from self._fail([job, *active], exc, active, free)
            if not active or self.cancelled():
                return
            try:
                self._step(active)
            except RuntimeError as exc:
                if self.cancelled():
                    return
                yield from self._fail(list(active), exc, active, free)
                continue
            for job in list(active):
                done = self._finished(job)
                if done is not None:
                    active.remove(job)
                    self.lib.llama_memory_seq_rm(self.mem, job.seq, -1, -1)
                    free.append(job.seq)
                    yield done

    def _load(self, active: list[Job]) -> int:
        return len(self.cached_prefix) + sum(_need(j) for j in active)

    def _fail(self, jobs: list[Job], exc: Exception, active: list[Job], free: list[int]):
        """A failed decode: those items get an error each; memory starts afresh."""
        self.lib.llama_memory_clear(self.mem, True)
        self.cached_prefix = []
        for job in jobs:
            if job in active:
                active.remove(job)
            if job.seq and job.seq not in free:
                free.append(job.seq)
            yield Result(key=job.request.key, prompt_tokens=len(job.tokens),
                         error=f"the model failed on this item ({exc})")

    def _admit(self, job: Job, seq: int, active: list[Job], free: list[int]):
        job.seq, job.started = seq, time.perf_counter()
        req = job.request
        job.rng = np.random.default_rng(req.seed) if req.temperature > 0 else None
        self._set_prefix(job.tokens[:job.prefix])
        self.lib.llama_memory_seq_rm(self.mem, seq, -1, -1)
        if job.prefix:
            self.lib.llama_memory_seq_cp(self.mem, 0, seq, 0, job.prefix)
        suffix = job.tokens[job.prefix:]
        self._decode([(t, job.prefix + i, seq, i == len(suffix) - 1)
                      for i, t in enumerate(suffix)])
        job.out.append(self._pick(job, self._logits(-1)))
        done = self._finished(job)
        if done is None:
            active.append(job)
        else:
            self.lib.llama_memory_seq_rm(self.mem, seq, -1, -1)
            free.append(seq)
            yield done

    def _step(self, active: list[Job]) -> None:
        self._decode([(j.out[-1], len(j.tokens) + len(j.out) - 1, j.seq, True) for j in active],
                     abortable=False)
        for i, job in enumerate(active):
            job.out.append(self._pick(job, self._logits(i)))

    def _pick(self, job: Job, logits: np.ndarray) -> int:
        if job.rng is None:
            return int(np.argmax(logits))
        return sample(logits, job.request.temperature, job.rng)

    def _finished(self, job: Job) -> Result | None:
        """A Result once the job hit end of generation, a stop text or its token budget."""
        req = job.request
        ended = self.lib.llama_vocab_is_eog(self.vocab, job.out[-1])
        if not ended and not req.stop and len(job.out) < job.limit:
            return None  # the common case, decided without detokenising
        tokens = job.out[:-1] if ended else job.out
        text = self.llm.detokenize(tokens).decode("utf-8", "ignore")
        cut = min((text.find(s) for s in req.stop if s and s in text), default=-1)
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
