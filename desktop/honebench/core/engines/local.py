"""The local engine: a GGUF model run by llama.cpp (llama-cpp-python) on this machine.

One ``Llama`` object, owned by one worker thread; every call into it (tokenising, counting,
scoring, generating, loading and freeing) is handed to that thread, so two callers on
different threads never touch the model at once. ``render`` only fills the chat template
(a Jinja template read from the model file at load time) and never touches the model, so it
runs on the caller's thread and does not wait behind a running grade.
"""
from __future__ import annotations

import atexit
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
from .label_scoring import ScoreJob, plan_labels, run_scoring
from .model_files import bundled_model_path, check_model_file, file_sha256, physical_cores

log = logging.getLogger("honebench.llama")
_FALLBACK_TEMPLATE = (
    "{% for m in messages %}<|im_start|>{{ m['role'] }}\n{{ m['content'] }}<|im_end|>\n"
    "{% endfor %}{% if add_generation_prompt %}<|im_start|>assistant\n{% endif %}"
)
_UNUSED_CTX = 64  # tokens in the Llama object's own (unused) context
_LEVELS = {3: logging.WARNING, 4: logging.ERROR}  # ggml: 1 debug, 2 info, 3 warn, 4 error


def _install_log_callback() -> None:
    """Route llama.cpp's log to Python logging (instead of the racy fd redirection that
    ``verbose=False`` does around model loading). Installed once per process: replacing it
    would free a callback another engine's thread may be inside."""
    import llama_cpp

    if getattr(_install_log_callback, "keep", None) is not None:
        return

    @llama_cpp.llama_log_callback
    def _on_log(level, text, _user):
        if level in _LEVELS:
            log.log(_LEVELS[level], text.decode("utf-8", "replace").rstrip())

    llama_cpp.llama_log_set(_on_log, ctypes.c_void_p(0))
    _install_log_callback.keep = _on_log  # the C side holds only a pointer
    # At interpreter exit, models and contexts are freed during garbage collection and
    # llama.cpp logs while freeing; hand logging back to llama.cpp's own (C) logger first,
    # so no Python callback is called from C while the interpreter is being torn down.
    atexit.register(llama_cpp.llama_log_set, llama_cpp.llama_log_callback(), ctypes.c_void_p(0))


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
                 n_threads: int | None = None, n_batch: int = 512, n_seq: int = 8,
                 score_group: int = 8, score_all_tokens: bool = False):
        self.model_path = check_model_file(model_path or bundled_model_path())
        self.n_ctx, self.n_batch = n_ctx, n_batch
        self.n_threads = n_threads or physical_cores()
        # items generated together; batched decoding on 2 cores, measured: 1 sequence 112
        # tokens/s, 4: 177, 8: 204, 16: 217
        self.n_seq = n_seq
        self.score_group = score_group  # items whose labels are scored together
        self.score_all_tokens = score_all_tokens  # see label_scoring.py ("full")
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
                # The Llama object is used for its model, tokenizer and metadata only; all
                # decoding runs in the batched decoder's own context, so its context is
                # kept small (less memory to set up at load).
                llm = llama_cpp.Llama(
                    model_path=str(self.model_path), n_ctx=_UNUSED_CTX, n_batch=_UNUSED_CTX,
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
        meta = llm.metadata
        eos = llm._model.token_get_text(llm.token_eos()) if llm.token_eos() != -1 else ""
        bos = llm._model.token_get_text(llm.token_bos()) if llm.token_bos() != -1 else ""
        self._formatter = Jinja2ChatFormatter(
            template=meta.get("tokenizer.chat_template", _FALLBACK_TEMPLATE),
            eos_token=eos, bos_token=bos)
        self._eos_text = eos
        self._llm = llm
        self._end_of_turn = self._find_end_of_turn()

    def _find_end_of_turn(self) -> int:
        """The token the chat template writes right after an answer (``<|im_end|>`` for
        ChatML-style templates); the end-of-generation token when that cannot be found."""
        mark = "\u2063END\u2063"
        text = self._formatter(messages=[{"role": "user", "content": "x"},
                                         {"role": "assistant", "content": mark}]).prompt
        tail = text[text.find(mark) + len(mark):] if mark in text else ""
        tokens = self._llm.tokenize(tail.encode("utf-8"), add_bos=False, special=True)
        if tokens and self._llm._model.token_get_text(tokens[0]).strip():
            return tokens[0]
        return self._llm.token_eos()

    # -- the protocol --------------------------------------------------------------------
    def render(self, messages: Sequence[dict], prefill: str = "") -> str:
        return self._formatter(messages=list(messages)).prompt + prefill

    def count_tokens(self, text: str) -> int:
        return len(self.tokenize(text))

    def tokenize(self, text: str) -> list[int]:
        return self._owner.call(lambda: self._tokens(text))

    def _tokens(self, text: str) -> list[int]:
        return self._llm.tokenize(text.encode("utf-8"), add_bos=True, special=True)

    def fingerprint(self) -> str:
        extra = ";labels=all-tokens" if self.score_all_tokens else ""
        return f"{self.model_path.name}@sha256:{self._sha[:16]};n_ctx={self.n_ctx}{extra}"

    def describe(self) -> str:
        return (f"{self.model_path.name} (local, {self.n_threads} threads, context "
                f"{self.n_ctx}, {self.n_seq} items at a time)")

    def cancel(self) -> None:
        self._cancel.set()

    def complete(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Results as items finish (not necessarily in request order), several items
        decoded together. After ``cancel()`` the generator stops; items in flight are
        dropped."""
        return self._stream(lambda out: self._decoder().run(self._jobs(requests, out)))

    def score_labels(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Label scoring (see label_scoring.py) for requests whose ``labels`` are set:
        Result.text is the chosen label; results in the order groups finish."""
        return self._stream(lambda out: run_scoring(
            self._decoder(), self._score_jobs(requests, out), self.score_group))

    def _stream(self, make) -> Iterator[Result]:
        """Run ``make(out)``'s results on the owner thread; yield them here as they come."""
        self._cancel.clear()
        out: queue.Queue = queue.Queue()
        done = object()

        def work():
            try:
                for result in make(out):
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
        for req, prompt, tokens, prefix in self._prompts(requests, out):
            limit = max(1, min(req.max_tokens, self.n_ctx - len(tokens) - 1))
            yield Job(request=req, tokens=tokens, prefix=prefix, limit=limit)

    def _score_jobs(self, requests: Iterable[Request], out: queue.Queue) -> Iterator[ScoreJob]:
        for req, prompt, tokens, prefix in self._prompts(requests, out):
            if not req.labels:
                out.put(Result(key=req.key, error="label scoring needs the allowed labels"))
                continue
            paths = [self._tokens(prompt + label) + [self._end_of_turn] for label in req.labels]
            if max(len(p) for p in paths) + 1 >= self.n_ctx:
                out.put(Result(key=req.key, prompt_tokens=len(tokens),
                               error="prompt and label are longer than the context holds"))
                continue
            plan = plan_labels(tokens, paths, full=self.score_all_tokens)
            yield ScoreJob(request=req, tokens=tokens, prefix=min(prefix, plan.common - 1),
                           plan=plan)

    def _prompts(self, requests: Iterable[Request], out: queue.Queue):
        """(request, prompt text, its tokens, tokens in the shared prefix) for each request
        that fits the context; the others get an error Result at once."""
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
            yield req, prompt, tokens, prefix

    def _decoder(self) -> BatchDecoder:
        if self._batcher is None:
            self._batcher = BatchDecoder(self._llm, n_ctx=self.n_ctx * 2, n_seq=self.n_seq,
                                         n_threads=self.n_threads,
                                         cancelled=self._cancel.is_set)
        return self._batcher

    def score_choices(self, messages: Sequence[dict], choices: Sequence[str],
                      prefill: str = "") -> list[float]:
        """Log-probability of each choice as the start of the answer (label scoring of one
        prompt; see label_scoring.py for which tokens count)."""
        req = Request(key="choices", messages=tuple(messages), prefill=prefill,
                      labels=tuple(choices))
        result = next(iter(self.score_labels([req])))
        if result.error:
            raise EngineError(result.error)
        return list(result.label_logprobs)

    def _release(self) -> None:
        if self._batcher is not None:
            self._batcher.close()
            self._batcher = None
        self._llm = None  # freed here, on the thread that used it

    def close(self) -> None:
        if self._owner.is_alive():
            self._cancel.set()
            self._owner.call(self._release)
            self._owner.jobs.put((None, None))
            self._owner.join(timeout=10)
        self._llm = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def params_key(params: dict) -> str:
    return json.dumps(params, sort_keys=True)
