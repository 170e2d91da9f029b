"""A grade run: one wording over a list of items, each answer checked, every mark saved.

Items whose exact prompt was answered before by the same model with the same settings come
from the completion cache and cost no model time. The rest go to the engine in one batch
call; marks stream back as they finish, each committed to the project file on arrival.
Cancel keeps every finished mark; an item the model fails on becomes an error mark.

Answer modes (``Params.answer_mode``): "score" asks the engine, for a label check, how
likely each allowed label is and takes the most likely (label scoring, no generation);
"generate" and every other check generate an answer, stopped as soon as the check can
decide (answer_stops.py). The mode actually used is in the run record and the cache key.
In score mode with ``Params.calibrate`` (the default), the label shares are divided by the
wording's content-free label prior (calibration.py); the prior is in the run's params.
"""
from __future__ import annotations

import hashlib
import json
import threading
import time
from dataclasses import dataclass, replace
from typing import Callable, Sequence

from .answer_stops import stop_rule
from .calibration import (CONTENT_FREE, average_prior, calibrate_result, content_free_fields,
                          params_with_prior)
from .check_fit import check_fits_set
from .checks import CheckSpec, judge
from .engines.base import Engine, Params, Request, Result
from .events import Progress
from .records import Mark, choice_text
from .sets import Item, QuestionSet
from .store import Store
from .wording import Wording, build_prompt

SENTINEL = "\u2063ITEM\u2063"  # stands in for item text when finding the shared prompt prefix


@dataclass(frozen=True)
class RunOutcome:
    run_id: int
    status: str  # finished | cancelled
    marks: tuple[Mark, ...]
    seconds: float
    model_calls: int


def cache_key(fingerprint: str, params: Params, prompt: str, extra: str = "") -> str:
    """``extra``: anything else that changes the answer (the labels scored, the stop rule)."""
    return _key_from_parts(cache_key_parts(fingerprint, params), prompt, extra)


def cache_key_parts(fingerprint: str, params: Params) -> str:
    """The part of a cache key that is the same for every item of a run."""
    return fingerprint + "\x1f" + repr(sorted(params.as_dict().items()))


def _key_from_parts(head: str, prompt: str, extra: str) -> str:
    raw = head + "\x1f" + prompt + ("\x1f" + extra if extra else "")
    return hashlib.sha256(raw.encode("utf-8")).hexdigest()


def answer_mode(params: Params, check: CheckSpec, engine: Engine) -> str:
    """The mode a run really uses: label scoring only for a label check with labels, on an
    engine that can score."""
    if (params.answer_mode == "score" and check.kind == "label" and check.labels
            and hasattr(engine, "score_labels")):
        return "score"
    return "generate"


def item_seed(base: int, item_id: str) -> int:
    """A per-item seed that stays the same whichever items are graded alongside."""
    return (base * 1_000_003 + int(hashlib.sha1(item_id.encode()).hexdigest()[:8], 16)) % 2**31


def shared_prefix_chars(engine: Engine, wording: Wording, field_names: Sequence[str]) -> int:
    """Characters of the rendered prompt that come before any item text."""
    prompt = build_prompt(wording, {name: SENTINEL for name in field_names})
    rendered = engine.render(prompt.messages, prompt.prefill)
    at = rendered.find(SENTINEL)
    return len(rendered) if at < 0 else at


def select_items(qset: QuestionSet, split: str) -> tuple[Item, ...]:
    if split == "tuning":
        return qset.tuning()
    if split == "held_out":
        return qset.held_out()
    if split == "all":
        return qset.items
    raise ValueError(f"split must be tuning, held_out or all, not {split!r}")


@dataclass(frozen=True)
class Plan:
    """One wording to grade over some items, as part of a batch of runs."""

    wording: Wording
    items: tuple[Item, ...]
    split: str = "tuning"
    wording_id: int | None = None
    purpose: str = ""  # "" for a grade run; an analysis' side runs name it ("importance")


class Grader:
    """Runs wordings over items with one engine, saving into one project file."""

    def __init__(self, store: Store, engine: Engine):
        self.store, self.engine = store, engine

    def grade(self, *, set_id: int, qset: QuestionSet, wording: Wording, check: CheckSpec,
              params: Params = Params(), split: str = "tuning",
              items: Sequence[Item] | None = None, wording_id: int | None = None,
              on_mark: Callable[[Mark, Progress], None] | None = None,
              cancel: threading.Event | None = None, purpose: str = "") -> RunOutcome:
        """One grade run of one wording (``purpose``: see Plan)."""
        items = tuple(items if items is not None else select_items(qset, split))
        plan = Plan(wording, items, split, wording_id, purpose)
        relay = (lambda _i, mark, prog: on_mark(mark, prog)) if on_mark else None
        return self.grade_many(set_id=set_id, qset=qset, plans=[plan], check=check,
                               params=params, on_mark=relay, cancel=cancel)[0]

    def grade_many(self, *, set_id: int, qset: QuestionSet, plans: Sequence[Plan],
                   check: CheckSpec, params: Params = Params(),
                   on_mark: Callable[[int, Mark, Progress], None] | None = None,
                   cancel: threading.Event | None = None,
                   purpose: str = "") -> list[RunOutcome]:
        """Several grade runs fed to the engine as one stream, so it never waits between
        them. ``on_mark`` gets the plan's index, the mark and the progress over all plans.
        ``purpose``: "" for ordinary grade runs, else the analysis the side runs are for
        (Store.start_run).
        Raises ValueError, before anything is saved, when the check cannot judge this set's
        expected answers (see check_fit.check_fits_set)."""
        check_fits_set(check, qset)
        if not check.labels and check.kind == "label":
            check = replace(check, labels=tuple(qset.labels()))
        fingerprint = self.engine.fingerprint()
        mode = answer_mode(params, check, self.engine)
        params = replace(params, answer_mode=mode, calibrate=params.calibrate and mode == "score")
        cancel = cancel or threading.Event()
        tally = _Tally(sum(len(p.items) for p in plans))
        priors = [self._label_prior(p, params, check, fingerprint) if params.calibrate else None
                  for p in plans]
        runs = [_Run(self.store.start_run(
            set_id=set_id, wording_text=p.wording.text, placement=p.wording.placement,
            split=p.split, fingerprint=fingerprint,
            params=params_with_prior(params.as_dict(), check.labels, prior),
            check=check.as_dict(), n_items=len(p.items), wording_id=p.wording_id,
            purpose=p.purpose or purpose), p)
            for p, prior in zip(plans, priors)]
        scoring = params.answer_mode == "score"

        verdicts: dict[tuple[str, str], object] = {}  # judge() is pure: one call per pair

        def judged(item: Item, index: int, result: Result, prompt: str) -> Mark:
            if priors[index] is not None:
                result = calibrate_result(result, check.labels, priors[index])
            return _mark(item, result, prompt, check, verdicts)

        def announce(index: int, marks: list[Mark]) -> None:
            run = runs[index]
            for mark in marks:
                run.marks.append(mark)
                tally.add(mark)
                if on_mark:
                    on_mark(index, mark, tally.progress())

        def record(index: int, item: Item, result: Result, prompt: str) -> None:
            mark = judged(item, index, result, prompt)
            self.store.add_mark(runs[index].id, mark, len(runs[index].marks))
            announce(index, [mark])

        try:
            pending = []
            for index, run in enumerate(runs):
                hits, waiting = self._look_up(index, run.plan, params, check, fingerprint)
                # The cached marks of a run go in one transaction: a crash before it commits
                # loses only marks the completion cache gives back on a re-grade or resume,
                # so nothing the model computed is lost. Each still reaches on_mark.
                marks = [judged(item, index, result, prompt) for item, result, prompt in hits]
                self.store.add_marks(run.id, marks, len(run.marks))
                announce(index, marks)
                pending += waiting
            requests = [] if cancel.is_set() else [req for _, _, req, _, _ in pending]
            by_key = {req.key: (index, item, prompt, key)
                      for index, item, req, prompt, key in pending}
            tally.model_start = time.perf_counter()
            ask = self.engine.score_labels if scoring else self.engine.complete
            with _CancelWatcher(cancel, self.engine, start=bool(requests)):
                for result in (ask(requests) if requests else ()):
                    index, item, prompt, key = by_key[result.key]
                    if result.error is None:
                        self._remember(key, fingerprint, params, prompt, result, check.labels)
                    tally.model_calls += 1
                    runs[index].calls += 1
                    record(index, item, result, prompt)
                    if cancel.is_set():
                        break
        finally:
            for run in runs:
                run.status = ("cancelled" if cancel.is_set() and len(run.marks) < len(run.plan.items)
                              else "finished" if len(run.marks) == len(run.plan.items)
                              else "failed")
                self.store.finish_run(run.id, run.status, tally.elapsed())
        return [RunOutcome(r.id, r.status, tuple(r.marks), tally.elapsed(), r.calls)
                for r in runs]

    def _label_prior(self, plan: Plan, params: Params, check: CheckSpec,
                     fingerprint: str) -> tuple[float, ...] | None:
        """The wording's label prior: label shares for its content-free prompts (every input
        field "" or "N/A"), averaged. They go through the completion cache like any item.
        None when there are no items or the engine fails on a content-free prompt (the run
        is then not calibrated, and its params say so)."""
        if not plan.items:
            return None
        names = list(plan.items[0].fields)
        blanks = tuple(Item(id=f"content-free {i}", fields=content_free_fields(names, filler),
                            expected="", split=plan.split, row=0)
                       for i, filler in enumerate(CONTENT_FREE))
        hits, pending = self._look_up(0, Plan(plan.wording, blanks, plan.split), params, check,
                                      fingerprint)
        found: dict[str, Result] = {item.id: result for item, result, _ in hits}
        by_key = {req.key: (item, prompt, key) for _, item, req, prompt, key in pending}
        asked = [req for _, _, req, _, _ in pending]
        for result in (self.engine.score_labels(asked) if asked else ()):
            item, prompt, key = by_key[result.key]
            if result.error is None:
                self._remember(key, fingerprint, params, prompt, result, check.labels)
            found[item.id] = result
        rows = [r.label_shares for r in found.values()]
        if len(rows) < len(blanks) or any(r.error or len(r.label_shares) != len(check.labels)
                                          for r in found.values()):
            return None
        return average_prior(rows)

    def _look_up(self, index: int, plan: Plan, params: Params, check: CheckSpec,
                 fingerprint: str):
        """(hits, pending): (item, cached result, prompt) for items whose answer is in the
        completion cache (looked up together), (index, item, request, prompt, key) for the
        rest, both in item order."""
        items, wording = plan.items, plan.wording
        names = list(items[0].fields) if items else []
        prefix = shared_prefix_chars(self.engine, wording, names)
        rule = stop_rule(check, wording.text)
        scoring = params.answer_mode == "score"
        labels = tuple(check.labels) if scoring else ()
        extra = ("labels:" + "\x1e".join(labels) if scoring
                 else "" if rule is None else repr(rule))
        keyed = []
        fixed = cache_key_parts(fingerprint, params) if params.temperature <= 0 else None
        for item in items:
            built = build_prompt(wording, item.fields)
            prompt = self.engine.render(built.messages, built.prefill)
            seed = item_seed(params.seed, item.id) if params.temperature > 0 else params.seed
            key = (cache_key(fingerprint, replace(params, seed=seed), prompt, extra)
                   if fixed is None else _key_from_parts(fixed, prompt, extra))
            keyed.append((item, built, prompt, seed, key))
        found = self.store.cache_get_many(key for *_, key in keyed)
        hits, pending = [], []
        for item, built, prompt, seed, key in keyed:
            hit = found.get(key)
            if hit is not None:
                hits.append((item, _cached_result(item.id, hit), prompt))
                continue
            pending.append((index, item, Request(
                key=f"{index}\x1f{item.id}", messages=built.messages, prefill=built.prefill,
                max_tokens=params.max_tokens, stop=params.stop,
                temperature=params.temperature, seed=seed, prefix_chars=prefix,
                labels=labels, until=rule), prompt, key))
        return hits, pending

    def _remember(self, key: str, fingerprint: str, params: Params, prompt: str,
                  result: Result, labels: Sequence[str]) -> None:
        scores = ""
        if result.label_shares:
            scores = json.dumps({"labels": list(labels), "logprobs": list(result.label_logprobs),
                                 "shares": list(result.label_shares)})
        elif result.note:
            scores = json.dumps({"note": result.note})
        self.store.cache_put(
            key, fingerprint=fingerprint,
            params=repr(params.as_dict()), prompt=prompt, text=result.text,
            prompt_tokens=result.prompt_tokens, completion_tokens=result.completion_tokens,
            seconds=result.seconds, finish_reason=result.finish_reason, label_scores=scores)


def _cached_result(item_id: str, hit) -> Result:
    saved = json.loads(hit["label_scores"]) if hit["label_scores"] else {}
    return Result(key=item_id, text=hit["text"], cached=True,
                  prompt_tokens=hit["prompt_tokens"], completion_tokens=hit["completion_tokens"],
                  seconds=hit["seconds"],  # the answer's cost when first asked (core/cost.py)
                  finish_reason=hit["finish_reason"],
                  label_logprobs=tuple(saved.get("logprobs", ())),
                  label_shares=tuple(saved.get("shares", ())), note=saved.get("note", ""))


def _mark(item: Item, result: Result, prompt: str, check: CheckSpec,
          verdicts: dict | None = None) -> Mark:
    """``verdicts``: earlier verdicts of this check by (output, expected), reused."""
    if result.error is not None:
        return Mark(item_id=item.id, output="", extracted="", passed=False,
                    why=f"error: {result.error}", error=result.error, prompt=prompt,
                    prompt_tokens=result.prompt_tokens, seconds=result.seconds)
    pair = (result.text, item.expected)
    verdict = verdicts.get(pair) if verdicts is not None else None
    if verdict is None:
        verdict = judge(result.text, item.expected, check)
        if verdicts is not None:
            verdicts[pair] = verdict
    why, scored = verdict.why, {}
    if result.label_shares and len(result.label_shares) == len(check.labels):
        order = sorted(range(len(check.labels)), key=lambda i: -result.label_shares[i])
        best = order[0]
        scored = {"confidence": result.label_shares[best]}
        if len(order) > 1:
            scored.update(runner_up=check.labels[order[1]],
                          runner_up_share=result.label_shares[order[1]])
        shown = choice_text(check.labels[best], scored["confidence"], scored.get("runner_up"),
                            scored.get("runner_up_share"))
        why = f"{why}; label scoring: {shown}"
    if result.note:
        why = f"{why}; {result.note}"
    return Mark(item_id=item.id, output=result.text, extracted=verdict.extracted,
                passed=verdict.passed, why=why, score=verdict.score,
                prompt_tokens=result.prompt_tokens, completion_tokens=result.completion_tokens,
                seconds=result.seconds, cached=result.cached, prompt=prompt, **scored)


class _Run:
    def __init__(self, run_id: int, plan: Plan):
        self.id, self.plan = run_id, plan
        self.marks: list[Mark] = []
        self.calls = 0
        self.status = "running"


class _Tally:
    def __init__(self, total: int):
        self.total, self.done, self.passed, self.cached, self.model_calls = total, 0, 0, 0, 0
        self.model_seconds = 0.0
        self.start = time.perf_counter()
        self.model_start: float | None = None

    def add(self, mark: Mark) -> None:
        self.done += 1
        self.passed += mark.passed
        self.cached += mark.cached
        self.model_seconds += 0.0 if mark.cached else mark.seconds

    def elapsed(self) -> float:
        return time.perf_counter() - self.start

    def progress(self) -> Progress:
        """ETA from the wall-clock rate of model answers so far (several items may be
        decoded at once, so summing per-item seconds would overstate it)."""
        timed = self.done - self.cached
        eta = None
        if timed > 0 and self.model_start is not None:
            rate = (time.perf_counter() - self.model_start) / timed
            eta = (self.total - self.done) * rate
        elif self.done == self.total:
            eta = 0.0
        return Progress(self.done, self.total, self.passed, self.cached, self.elapsed(), eta)


class _CancelWatcher:
    """Passes a cancel request on to the engine while a batch is running."""

    def __init__(self, cancel: threading.Event, engine: Engine, start: bool = True):
        self.cancel, self.engine, self.start = cancel, engine, start
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._watch, name="honebench-cancel", daemon=True)

    def _watch(self) -> None:
        # waits on ``_stop`` (so leaving the block never waits out a poll) and looks at
        # ``cancel`` every 50 ms
        while True:
            if self.cancel.is_set():
                self.engine.cancel()
                return
            if self._stop.wait(0.05):
                return

    def __enter__(self):
        if self.start:  # nothing for the engine to do: nothing to watch
            self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        if self.start:
            self._thread.join()
