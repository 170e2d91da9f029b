"""The local engine: a GGUF model run by llama.cpp (llama-cpp-python) on this machine.

One ``Llama`` object, owned by one worker thread; every call into it is handed to that
thread, so the model is never touched from two threads. The shared instruction goes first
in the prompt and items run back to back, so llama.cpp reuses the common token prefix.
"""
from __future__ import annotations

import contextlib
import ctypes
import io
import json
import logging
import queue
import threading
from concurrent.futures import Future
from pathlib import Path
from typing import Callable, Iterable, Iterator, Sequence

from .base import EngineError, Request, Result
from .batched import BatchDecoder, Job
from .model_files import bundled_model_path, check_model_file, file_sha256, physical_cores

log = logging.getLogger("honebench.llama")
_FALLBACK_TEMPLATE = (
    "{% for m in messages %}<|im_start|>{{ m['role'] }}\n{{ m['content'] }}<|im_end|>\n"
    "{% endfor %}{% if add_generation_prompt %}<|im_start|>assistant\n{% endif %}"
)
_LEVELS = {3: logging.WARNING, 4: logging.ERROR}  # ggml: 1 debug, 2 info, 3 warn, 4 error


def _install_log_callback() -> None:
    """Route llama.cpp's log to Python logging (instead of the racy fd redirection that
    ``verbose=False`` does around model loading)."""
    import llama_cpp

    @llama_cpp.llama_log_callback
    def _on_log(level, text, _user):
        if level in _LEVELS:
            log.log(_LEVELS[level], text.decode("utf-8", "replace").rstrip())

    llama_cpp.llama_log_set(_on_log, ctypes.c_void_p(0))
    _install_log_callback.keep = _on_log  # the C side holds only a pointer


class _Owner(threading.Thread):
    """The one thread that touches the model. Work arrives as callables; answers as futures."""

    def __init__(self):
        super().__init__(name="honebench-model", daemon=True)
        self.jobs: queue.Queue = queue.Queue()

    def run(self) -> None:
        while True:
            fn, fut = self.jobs.get()
            if fn is None:
                return
            if fut.set_running_or_notify_cancel():
                try:
                    fut.set_result(fn())
                except BaseException as exc:  # handed back to the caller
                    fut.set_exception(exc)

    def submit(self, fn: Callable) -> Future:
        fut: Future = Future()
        self.jobs.put((fn, fut))
        return fut

    def call(self, fn: Callable):
        return self.submit(fn).result()


class LocalEngine:
    """llama.cpp on this machine. ``model_path=None`` means the bundled SmolLM2-135M-Instruct."""

    kind = "local"

    def __init__(self, model_path: str | Path | None = None, *, n_ctx: int = 2048,
                 n_threads: int | None = None, n_batch: int = 512, n_seq: int = 4):
        self.model_path = check_model_file(model_path or bundled_model_path())
        self.n_ctx, self.n_batch = n_ctx, n_batch
        self.n_threads = n_threads or physical_cores()
        self.n_seq = n_seq  # items decoded together
        self._batcher: BatchDecoder | None = None
        self._cancel = threading.Event()
        self._owner = _Owner()
        self._owner.start()
        self._llm = None
        try:
            self._owner.call(self._load)
        except BaseException:
            self.close()
            raise
        self._sha = file_sha256(self.model_path)

    # -- set-up on the owner thread ------------------------------------------------------
    def _load(self) -> None:
        try:
            import llama_cpp
        except ImportError as exc:
            raise EngineError(
                f"llama-cpp-python is not installed ({exc}). Install honebench's "
                "dependencies with `pip install -e .`."
            ) from exc
        from llama_cpp.llama_chat_format import Jinja2ChatFormatter

        _install_log_callback()
        chatter = io.StringIO()
        try:
            with contextlib.redirect_stderr(chatter), contextlib.redirect_stdout(chatter):
                llm = llama_cpp.Llama(
                    model_path=str(self.model_path), n_ctx=self.n_ctx, n_batch=self.n_batch,
                    n_threads=self.n_threads, n_threads_batch=self.n_threads, verbose=True,
                    seed=0,
                )
        except (ValueError, RuntimeError, OSError) as exc:
            raise EngineError(
                f"llama.cpp could not load {self.model_path} ({exc}). The file may be "
                "truncated, damaged or of a model type this llama.cpp does not know; "
                "download it again or pick another GGUF file."
            ) from None
        llm.verbose = False  # later chatter off; load-time chatter went to the buffer
        log.debug(chatter.getvalue())
        self._abort_cb = llama_cpp.ggml_abort_callback(lambda _data: self._cancel.is_set())
        llama_cpp.llama_set_abort_callback(llm._ctx.ctx, self._abort_cb, None)
        meta = llm.metadata
        eos = llm._model.token_get_text(llm.token_eos()) if llm.token_eos() != -1 else ""
        bos = llm._model.token_get_text(llm.token_bos()) if llm.token_bos() != -1 else ""
        self._formatter = Jinja2ChatFormatter(
            template=meta.get("tokenizer.chat_template", _FALLBACK_TEMPLATE),
            eos_token=eos, bos_token=bos)
        self._eos_text = eos
        self._llm = llm

    # -- the protocol --------------------------------------------------------------------
    def render(self, messages: Sequence[dict], prefill: str = "") -> str:
        return self._formatter(messages=list(messages)).prompt + prefill

    def count_tokens(self, text: str) -> int:
        return len(self._owner.call(lambda: self._tokens(text)))

    def _tokens(self, text: str) -> list[int]:
        return self._llm.tokenize(text.encode("utf-8"), add_bos=True, special=True)

    def fingerprint(self) -> str:
        return f"{self.model_path.name}@sha256:{self._sha[:16]};n_ctx={self.n_ctx}"

    def describe(self) -> str:
        return (f"{self.model_path.name} (local, {self.n_threads} threads, context "
                f"{self.n_ctx}, {self.n_seq} items at a time)")

    def cancel(self) -> None:
        self._cancel.set()

    def complete(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Results as items finish (not necessarily in request order), several items
        decoded together. After ``cancel()`` the generator stops; items in flight are
        dropped."""
        self._cancel.clear()
        out: queue.Queue = queue.Queue()
        done = object()

        def work():
            try:
                for result in self._decoder().run(self._jobs(requests, out)):
                    out.put(result)
            finally:
                out.put(done)

        fut = self._owner.submit(work)
        try:
            while (item := out.get()) is not done:
                yield item
        finally:
            if not fut.done():
                self._cancel.set()
            fut.result()

    def _jobs(self, requests: Iterable[Request], out: queue.Queue) -> Iterator[Job]:
        """Tokenised work for the decoder; prompts too long for the context are answered
        with an error at once."""
        for req in requests:
            if self._cancel.is_set():
                return
            prompt = self.render(req.messages, req.prefill)
            tokens = self._tokens(prompt)
            if len(tokens) + 1 >= self.n_ctx:
                out.put(Result(key=req.key, prompt_tokens=len(tokens),
                               error=f"prompt is {len(tokens)} tokens; the context holds "
                                     f"{self.n_ctx}. Shorten the wording or the item."))
                continue
            prefix = 0
            if req.prefix_chars:
                head = self._tokens(prompt[:req.prefix_chars])
                while prefix < min(len(head), len(tokens) - 1) and head[prefix] == tokens[prefix]:
                    prefix += 1
            limit = max(1, min(req.max_tokens, self.n_ctx - len(tokens) - 1))
            yield Job(request=req, tokens=tokens, prefix=prefix, limit=limit)

    def _decoder(self) -> BatchDecoder:
        if self._batcher is None:
            self._batcher = BatchDecoder(self._llm, n_ctx=self.n_ctx * 2, n_seq=self.n_seq,
                                         n_threads=self.n_threads,
                                         cancelled=self._cancel.is_set)
        return self._batcher

    def score_choices(self, messages: Sequence[dict], choices: Sequence[str],
                      prefill: str = "") -> list[float]:
        """Sum of log-probabilities of each choice's tokens as the start of the answer.
        Prompt and choice are tokenised together, so merges at the boundary are right."""
        self._cancel.clear()
        return self._owner.call(lambda: self._score(self.render(messages, prefill), choices))

    def _score(self, prompt: str, choices: Sequence[str]) -> list[float]:
        import numpy as np

        llm = self._llm
        base = self._tokens(prompt)
        scores = []
        for choice in choices:
            full = self._tokens(prompt + choice)
            keep = 0
            while keep < min(len(base), len(full)) and base[keep] == full[keep]:
                keep += 1
            keep = max(1, min(keep, len(full) - 1))
            llm.reset()
            llm.eval(full[:keep])
            total = 0.0
            for token in full[keep:]:
                logits = np.ctypeslib.as_array(llm._ctx.get_logits(), shape=(llm.n_vocab(),))
                top = logits.max()
                total += float(logits[token] - top - np.log(np.exp(logits - top).sum()))
                llm.eval([token])
            scores.append(total)
        return scores

    def close(self) -> None:
        if self._batcher is not None and self._owner.is_alive():
            self._owner.call(self._batcher.close)
            self._batcher = None
        if self._owner.is_alive():
            self._cancel.set()
            self._owner.jobs.put((None, None))
            self._owner.join(timeout=10)
        self._llm = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def params_key(params: dict) -> str:
    return json.dumps(params, sort_keys=True)
