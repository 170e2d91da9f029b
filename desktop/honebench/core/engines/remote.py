"""The endpoint engine: any HTTP server that speaks the OpenAI chat-completions protocol
(for example llama.cpp's server, vLLM, Ollama's /v1, or a hosted service).

Standard library only. A thread pool sends a few requests at a time; each result is yielded
as soon as it is back, so results arrive in order of completion, keyed by ``Request.key``.
"""
from __future__ import annotations

import json
import math
import threading
import time
import urllib.error
import urllib.request
from concurrent.futures import FIRST_COMPLETED, Future, ThreadPoolExecutor, wait
from http.client import HTTPException
from typing import Iterable, Iterator, Sequence
from urllib.parse import urlsplit

from .base import EngineError, Request, Result

RETRY_STATUSES = (429, 503)  # "too many requests" and "busy": worth one more try
DEFAULT_RETRY_DELAY = 1.0  # seconds before the one retry when the server names none; common practice
MAX_RETRY_DELAY = 10.0  # a longer Retry-After is cut to this; common practice
_POLL_SECONDS = 0.05  # how often a running complete() looks at the cancel flag
_HINT = ("Is the server running, and is the URL right? It usually ends in /v1, "
         "for example http://127.0.0.1:8080/v1.")


def one_line(text: str, limit: int = 200) -> str:
    """``text`` with all whitespace runs made single spaces, cut to ``limit`` characters."""
    flat = " ".join(str(text).split())
    return flat if len(flat) <= limit else flat[: limit - 1] + "…"


def retry_delay(header: str | None) -> float:
    """Seconds to wait before the one retry. A Retry-After given in seconds is honoured up
    to MAX_RETRY_DELAY; anything else (absent, a date, junk) gives DEFAULT_RETRY_DELAY."""
    try:
        value = float((header or "").strip())
    except ValueError:
        return DEFAULT_RETRY_DELAY
    if not math.isfinite(value) or value < 0:
        return DEFAULT_RETRY_DELAY
    return min(value, MAX_RETRY_DELAY)


def _json(raw: bytes):
    """Parsed JSON, or raise ValueError (deep nesting included)."""
    try:
        return json.loads(raw.decode("utf-8", "replace"))
    except RecursionError:
        raise ValueError("nested too deeply") from None


def server_message(body: bytes, limit: int = 200) -> str:
    """The server's own error message from an error body, on one line ('' if the body is
    empty). Understands {"error": {"message": ...}}, {"error": "..."} and {"detail": ...}."""
    try:
        data = _json(body)
    except ValueError:
        return one_line(body.decode("utf-8", "replace"), limit)
    found = data
    if isinstance(data, dict):
        found = next((data[k] for k in ("error", "detail", "message") if k in data), data)
        if isinstance(found, dict) and "message" in found:
            found = found["message"]
    return one_line(found if isinstance(found, str) else json.dumps(found), limit)


def _count(value) -> int:
    return value if isinstance(value, int) and not isinstance(value, bool) and value >= 0 else 0


def read_reply(key: str, body: bytes, seconds: float = 0.0) -> Result:
    """Turn a chat-completions answer body into a Result; anything malformed becomes an
    error Result for this item (never an exception)."""
    def failed(message: str) -> Result:
        return Result(key=key, seconds=seconds, error=message)

    try:
        data = _json(body)
    except ValueError:
        start = one_line(body.decode("utf-8", "replace"), 60)
        return failed(f"the endpoint's answer is not JSON (it starts {start!r}); "
                      "is the URL an OpenAI-protocol endpoint?")
    try:
        choice = data["choices"][0]
        content = choice["message"]["content"]
    except (KeyError, IndexError, TypeError):
        if isinstance(data, dict) and "error" in data:
            return failed(f"the endpoint reported an error: {server_message(body)}")
        return failed("the endpoint's answer has no choices[0].message.content; "
                      "is the URL an OpenAI-protocol chat endpoint?")
    if not isinstance(content, str):
        return failed("the endpoint's answer has no text in choices[0].message.content "
                      f"(it is {one_line(json.dumps(content), 40)})")
    usage = data.get("usage")
    usage = usage if isinstance(usage, dict) else {}
    finish = choice.get("finish_reason")
    return Result(key=key, text=content, prompt_tokens=_count(usage.get("prompt_tokens")),
                  completion_tokens=_count(usage.get("completion_tokens")), seconds=seconds,
                  finish_reason=finish if isinstance(finish, str) else "")


def _transport_problem(exc: BaseException, url: str, timeout: float) -> str:
    """A one-line description of why a request did not get an answer."""
    if isinstance(exc, urllib.error.HTTPError):
        try:
            detail = server_message(exc.read())
        except (OSError, HTTPException):
            detail = ""
        return f"the endpoint answered HTTP {exc.code}" + (f": {detail}" if detail else "")
    if isinstance(exc, TimeoutError) or (
            isinstance(exc, urllib.error.URLError) and isinstance(exc.reason, TimeoutError)):
        return f"no answer from {url} within {timeout:g} s (timed out)"
    if isinstance(exc, urllib.error.URLError):
        return f"could not reach {url} ({one_line(exc.reason)})"
    if isinstance(exc, ValueError):
        return f"the endpoint URL {url!r} is not usable ({one_line(exc)})"
    return f"the connection to {url} failed ({type(exc).__name__}: {one_line(exc)})"


DEFAULT_TIMEOUT = 30.0  # seconds to wait for each request's answer (common practice)


class EndpointEngine:
    """An OpenAI-protocol HTTP endpoint. ``base_url`` is the part before /chat/completions,
    e.g. http://127.0.0.1:8080/v1. ``model`` is sent as the "model" field when given (many
    local servers ignore it). ``api_key`` goes only into the Authorization header.
    ``timeout``: seconds each request may wait for the server; when it passes, that item
    gets an error mark and the run goes on."""

    kind = "endpoint"

    def __init__(self, base_url: str, model: str = "", api_key: str | None = None, *,
                 concurrency: int = 4, timeout: float = DEFAULT_TIMEOUT):
        if not isinstance(concurrency, int) or concurrency < 1:
            raise EngineError(f"concurrency must be a whole number of at least 1, "
                              f"not {concurrency!r}.")
        if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) \
                or not math.isfinite(timeout) or timeout <= 0:
            raise EngineError(f"timeout must be a positive number of seconds, not {timeout!r}.")
        self.base_url = str(base_url).strip().rstrip("/")
        self.model = model
        self.concurrency = concurrency
        self.timeout = float(timeout)
        self._api_key = api_key or None
        self._stop = threading.Event()
        self._pool: ThreadPoolExecutor | None = None
        self._pool_lock = threading.Lock()

    def __repr__(self) -> str:
        key = "set" if self._api_key else "none"
        return (f"EndpointEngine({self.base_url!r}, model={self.model!r}, api_key=<{key}>, "
                f"concurrency={self.concurrency})")

    # -- the protocol --------------------------------------------------------------------
    def render(self, messages: Sequence[dict], prefill: str = "") -> str:
        """A plain readable copy of the conversation, NOT the model's real prompt: the server applies its
        own chat template, which this side cannot see."""
        parts = [f"[{m.get('role', '?')}]\n{m.get('content', '')}" for m in messages]
        parts.append(f"[assistant]\n{prefill}")
        return "\n\n".join(parts)

    def count_tokens(self, text: str) -> int:
        """An estimate only (one token per four characters, rounded up); the server's
        tokenizer is not available here."""
        return math.ceil(len(text) / 4)

    def fingerprint(self) -> str:
        """The URL and model name. The remote model file cannot be hashed from here, so a
        server that swaps its model under the same name keeps the same fingerprint."""
        return f"endpoint:{self.base_url}|model={self.model}"

    def describe(self) -> str:
        name = self.model or "the server's default model"
        return f"{name} at {self.base_url} (endpoint, up to {self.concurrency} at once)"

    def score_choices(self, messages: Sequence[dict], choices: Sequence[str],
                      prefill: str = "") -> list[float]:
        raise EngineError("label scoring needs the local engine")

    def score_labels(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Label scoring from the protocol's logprobs (remote_scoring.py); where the server
        gives none, the answer is generated and the Result carries a note saying so."""
        return self.complete(requests)  # requests with labels ask for logprobs too

    def cancel(self) -> None:
        """Requests not yet sent are not sent; a running ``complete`` stops soon after."""
        self._stop.set()

    def complete(self, requests: Iterable[Request]) -> Iterator[Result]:
        """Send up to ``concurrency`` requests at once; yield each Result as it finishes
        (order of completion). A failed item gives an error Result and the run goes on.
        After ``cancel()`` no more requests go out and the generator stops; answers still
        in flight are dropped.

        A non-empty ``prefill`` is sent as a trailing assistant message. Not every server
        continues a trailing assistant message: some start a fresh reply after it instead.
        """
        stop = self._stop = threading.Event()
        pool = self._get_pool()
        todo = iter(requests)
        running: set[Future] = set()
        try:
            while True:
                while not stop.is_set() and len(running) < self.concurrency:
                    req = next(todo, None)
                    if req is None:
                        break
                    running.add(pool.submit(self._send_safely, req, stop))
                if not running or stop.is_set():
                    return
                done, running = wait(running, timeout=_POLL_SECONDS,
                                     return_when=FIRST_COMPLETED)
                for fut in done:
                    result = fut.result()
                    if result is not None:
                        yield result
                    if stop.is_set():
                        return
        finally:
            stop.set()  # also when the caller abandons the generator
            for fut in running:
                fut.cancel()

    def check(self) -> list[str]:
        """GET {base_url}/models to see that the endpoint answers; returns the model names
        it lists. Raises EngineError saying what to do when it does not answer properly."""
        parts = urlsplit(self.base_url)
        if parts.scheme not in ("http", "https") or not parts.netloc:
            raise EngineError(f"{self.base_url!r} is not an http:// or https:// address. Give "
                              "the endpoint's base URL, for example http://127.0.0.1:8080/v1.")
        url = self.base_url + "/models"
        try:
            with urllib.request.urlopen(self._http_request(url),
                                        timeout=min(self.timeout, 10.0)) as resp:
                raw = resp.read()
        except urllib.error.HTTPError as exc:
            problem = self._redact(_transport_problem(exc, url, self.timeout))
            if exc.code in (401, 403):
                raise EngineError(f"{url} refused access ({problem}). Check the API key."
                                  ) from None
            raise EngineError(f"{url}: {problem}. {_HINT}") from None
        except (OSError, HTTPException, ValueError) as exc:
            problem = self._redact(_transport_problem(exc, url, min(self.timeout, 10.0)))
            raise EngineError(f"Nothing usable answered at {url}: {problem}. {_HINT}") from None
        try:
            data = _json(raw)
        except ValueError:
            raise EngineError(f"{url} answered, but not with JSON, so it is probably not an "
                              f"OpenAI-protocol endpoint. {_HINT}") from None
        listed = data.get("data") if isinstance(data, dict) else None
        if not isinstance(listed, list):
            return []
        return [m["id"] for m in listed if isinstance(m, dict) and isinstance(m.get("id"), str)]

    def close(self) -> None:
        """Stop any run and shut the pool (answers still in flight are dropped)."""
        self._stop.set()
        with self._pool_lock:
            pool, self._pool = self._pool, None
        if pool is not None:
            pool.shutdown(wait=False, cancel_futures=True)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # -- sending ---------------------------------------------------------------------------
    def _get_pool(self) -> ThreadPoolExecutor:
        with self._pool_lock:
            if self._pool is None:
                self._pool = ThreadPoolExecutor(max_workers=self.concurrency,
                                                thread_name_prefix="honebench-endpoint")
            return self._pool

    def _redact(self, text: str) -> str:
        return text.replace(self._api_key, "<api key>") if self._api_key else text

    def _http_request(self, url: str, body: bytes | None = None) -> urllib.request.Request:
        headers = {"Accept": "application/json", "User-Agent": "honebench"}
        if body is not None:
            headers["Content-Type"] = "application/json"
        if self._api_key:
            headers["Authorization"] = f"Bearer {self._api_key}"
        return urllib.request.Request(url, data=body, headers=headers,
                                      method="GET" if body is None else "POST")

    def _body(self, req: Request) -> dict:
        messages = [dict(m) for m in req.messages]
        if req.prefill:
            messages.append({"role": "assistant", "content": req.prefill})
        body = {"messages": messages, "max_tokens": req.max_tokens,
                "temperature": req.temperature, "seed": req.seed, "stream": False}
        if self.model:
            body["model"] = self.model
        if req.stop:
            body["stop"] = list(req.stop)
        if req.labels:
            from .remote_scoring import scoring_fields
            body.update(scoring_fields())
        return body

    def _send_safely(self, req: Request, stop: threading.Event) -> Result | None:
        """``_send`` with any unforeseen failure kept to this item."""
        try:
            return self._send(req, stop)
        except Exception as exc:  # a thread boundary: the run must go on
            return Result(key=req.key, error=self._redact(
                f"unexpected failure sending this item ({type(exc).__name__}: {one_line(exc)})"))

    def _send(self, req: Request, stop: threading.Event) -> Result | None:
        """One request, retried once on 429/503; None when cancelled before an answer."""
        if stop.is_set():
            return None
        url = self.base_url + "/chat/completions"
        start = time.perf_counter()
        try:
            body = json.dumps(self._body(req)).encode("utf-8")
        except (TypeError, ValueError) as exc:
            return Result(key=req.key, error=f"this item's messages cannot be sent as JSON "
                                             f"({one_line(exc)})")
        for attempt in (1, 2):
            try:
                with urllib.request.urlopen(self._http_request(url, body),
                                            timeout=self.timeout) as resp:
                    raw = resp.read()
                break
            except urllib.error.HTTPError as exc:
                if exc.code in RETRY_STATUSES and attempt == 1:
                    delay = retry_delay(exc.headers.get("Retry-After") if exc.headers else None)
                    exc.close()
                    if stop.wait(delay):
                        return None
                    continue
                problem = _transport_problem(exc, url, self.timeout)
            except (OSError, HTTPException, ValueError) as exc:
                problem = _transport_problem(exc, url, self.timeout)
            if stop.is_set():
                return None
            return Result(key=req.key, seconds=time.perf_counter() - start,
                          error=self._redact(problem))
        if stop.is_set():
            return None
        if req.labels:
            from .remote_scoring import read_scored
            result = read_scored(req, raw, time.perf_counter() - start)
        else:
            result = read_reply(req.key, raw, time.perf_counter() - start)
        if result.error:
            return Result(key=req.key, seconds=result.seconds, error=self._redact(result.error))
        return result
