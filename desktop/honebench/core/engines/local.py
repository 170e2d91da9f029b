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
import time
from concurrent.futures import Future
from pathlib import Path
from typing import Callable, Iterable, Iterator, Sequence

from .base import EngineError, Request, Result
from .model_files import bundled_model_path, check_model_file, file_sha256, physical_cores

log = logging.getLogger("honebench.llama")
_FALLBACK_TEMPLATE = (
    "{% for m in messages %}<|im_start|>{{ m['role'] }}\n{{ m['content'] }}<|im_end|>\n"
    "{% endfor %}{% if add_generation_prompt %}<|im_start|>assistant\n{% endif %}"
)
_LEVELS = {2: logging.WARNING, 3: logging.ERROR}


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

    def call(self, fn: Callable):
        fut: Future = Future()
        self.jobs.put((fn, fut))
        return fut.result()


class LocalEngine:
    """llama.cpp on this machine. ``model_path=None`` means the bundled SmolLM2-135M-Instruct."""

    kind = "local"

    def __init__(self, model_path: str | Path | None = None, *, n_ctx: int = 2048,
                 n_threads: int | None = None, n_batch: int = 512):
        self.model_path = check_model_file(model_path or bundled_model_path())
        self.n_ctx, self.n_batch = n_ctx, n_batch
        self.n_threads = n_threads or physical_cores()
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
        return f"{self.model_path.name} (local, {self.n_threads} threads, context {self.n_ctx})"

    def cancel(self) -> None:
        self._cancel.set()

    def complete(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Results in request order, each as soon as it is done. After ``cancel()`` the
        generator stops; the item in flight is dropped."""
        self._cancel.clear()
        for req in requests:
            if self._cancel.is_set():
                return
            result = self._owner.call(lambda r=req: self._one(r))
            if result is None:  # cancelled mid-item
                return
            yield result

    def _one(self, req: Request) -> Result | None:
        prompt = self.render(req.messages, req.prefill)
        start = time.perf_counter()
        try:
            tokens = self._tokens(prompt)
            if len(tokens) + 1 >= self.n_ctx:
                return Result(key=req.key, prompt_tokens=len(tokens),
                              error=f"prompt is {len(tokens)} tokens; the context holds "
                                    f"{self.n_ctx}. Shorten the wording or the item.")
            self._settle_prefix(tokens, prompt[:req.prefix_chars])
            text, n_out, finish = self._generate(tokens, req)
        except RuntimeError as exc:
            self._llm.reset()
            if self._cancel.is_set():
                return None
            return Result(key=req.key, error=f"the model failed on this item ({exc})",
                          seconds=time.perf_counter() - start)
        except ValueError as exc:
            return Result(key=req.key, error=f"the model refused this item ({exc})",
                          seconds=time.perf_counter() - start)
        if text is None:
            return None
        return Result(key=req.key, text=text, prompt_tokens=len(tokens),
                      completion_tokens=n_out, seconds=time.perf_counter() - start,
                      finish_reason=finish)

    def _settle_prefix(self, tokens: list[int], prefix: str) -> None:
        """Leave exactly the shared prefix in the model's memory, evaluated on its own, so
        the item's part is always decoded the same way whatever ran before."""
        llm = self._llm
        k = 0
        if prefix:
            head = self._tokens(prefix)
            while k < min(len(head), len(tokens) - 1) and head[k] == tokens[k]:
                k += 1
        cached = llm.input_ids[:llm.n_tokens].tolist()
        if k and len(cached) >= k and cached[:k] == tokens[:k]:
            llm._ctx.kv_cache_seq_rm(-1, k, -1)
            llm.n_tokens = k
        else:
            llm.reset()
            if k:
                llm.eval(tokens[:k])

    def _generate(self, tokens: list[int], req: Request):
        """Sample the answer; (None, 0, "") when cancelled between tokens."""
        llm = self._llm
        pieces, finish = [], "length"
        room = self.n_ctx - len(tokens) - 1
        stream = llm.create_completion(
            prompt=tokens, max_tokens=max(1, min(req.max_tokens, room)),
            temperature=req.temperature, seed=req.seed, stream=True, repeat_penalty=1.0,
            stop=[s for s in (*req.stop, self._eos_text) if s],
        )
        for chunk in stream:
            if self._cancel.is_set():
                stream.close()
                llm.reset()
                return None, 0, ""
            choice = chunk["choices"][0]
            pieces.append(choice["text"])
            finish = choice.get("finish_reason") or finish
        text = "".join(pieces)
        n_out = len(llm.tokenize(text.encode("utf-8"), add_bos=False, special=True)) if text else 0
        return text, n_out, finish

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
