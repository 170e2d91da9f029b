"""The transfer check as a project operation: chosen shelf versions graded on a second
engine over the same items, compared with the graded engine (core/transfer.py computes).

On the graded engine each version's newest ordinary run on the items is reused when it was
made by that engine with these settings and covers every item; otherwise the version is
graded there first (an ordinary run: it also updates the shelf's score). On the other
engine the versions are graded as side runs (purpose "transfer"), which stay out of shelf
scores; its answers are cached under its own fingerprint, so the graded engine's cache
never answers for it. The result is saved as a "transfer" analysis.
"""
from __future__ import annotations

import threading
import time
from dataclasses import replace
from typing import Sequence

from ..changes import Changes, Done
from ..events import Finished, Listener, Stage
from ..grading import Plan, answer_mode, select_items
from ..records import RunInfo, ShelfEntry
from ..settings import ProjectSettings
from ..transfer import TransferResult, VersionMarks, transfer_result
from ..views import SPLIT_WORDS
from ..wording import Wording
from .grading import grade_plans

KIND = "transfer"
PURPOSE = "transfer"


def engine_name(engine) -> str:
    """A short name for an engine when its caller gives none."""
    describe = getattr(engine, "describe", None)
    return describe().split(" (")[0] if describe else engine.fingerprint()


class TransferOps:
    """Mixed into Project: the transfer check and its saved results."""

    def transfer(self, engine, other_engine, wording_ids: Sequence[int], *,
                 other_label: str, label: str = "", split: str = "tuning",
                 limit: int | None = None, settings: ProjectSettings | None = None,
                 on_event: Listener | None = None,
                 cancel: threading.Event | None = None) -> Done[TransferResult]:
        """Grade the shelf versions ``wording_ids`` on ``other_engine`` over the same items
        as on ``engine`` (the graded engine) and compare: scores with intervals, the paired
        test between engines, ranks and the "wins here, not there" flags. ``limit``: only
        the first N items of the split. Both engines answer with ``settings`` (default:
        the project's). Raises ValueError when a run is cancelled or fails (its marks are
        kept; no result is saved)."""
        began = time.perf_counter()
        entries = _entries(self, wording_ids)
        _, qset = self.current_set()
        items = select_items(qset, split)[:limit] if limit else select_items(qset, split)
        if not items:
            raise ValueError(f"the question set {qset.name} has no {SPLIT_WORDS[split]} to "
                             "check on another engine")
        settings = settings or self.settings()
        params = settings.params()
        fingerprint, there_fp = engine.fingerprint(), other_engine.fingerprint()
        if fingerprint == there_fp:
            raise ValueError("the other engine is the graded engine itself (same model file "
                             "and settings); choose another model file, quantisation, context "
                             "size or endpoint")
        ids = [it.id for it in items]
        where = SPLIT_WORDS[split]
        here_label, there_label = label or engine_name(engine), other_label
        here_runs: dict[int, int] = {}
        for entry in entries:
            run = self._reusable_run(entry, engine, params, ids, split)
            if run is not None:
                here_runs[entry.id] = run
        missing = [e for e in entries if e.id not in here_runs]
        changes = Changes(runs=True, marks=True)
        if missing:
            if on_event:
                on_event(Stage(f"{_labels(missing)} not yet graded here with these settings"))
            outcomes = grade_plans(
                self, engine, [_plan(e, items, split) for e in missing], params=params,
                on_event=on_event, cancel=cancel,
                what=f"grading {_labels(missing)} on the {where} with {here_label}")
            _require_finished(outcomes, missing, here_label)
            here_runs.update({e.id: o.run_id for e, o in zip(missing, outcomes)})
            changes = changes | Changes(shelf=True)
        outcomes = grade_plans(
            self, other_engine, [_plan(e, items, split) for e in entries], params=params,
            on_event=on_event, cancel=cancel, purpose=PURPOSE,
            what=f"grading {_labels(entries)} on the {where} with {there_label}")
        _require_finished(outcomes, entries, there_label)
        marks = []
        for entry, outcome in zip(entries, outcomes):
            here = _by_item(self.store.marks(here_runs[entry.id]), ids)
            there = _by_item(outcome.marks, ids)
            marks.append(VersionMarks(
                entry.label, entry.id, [m.passed for m in here], [m.passed for m in there],
                here_run=here_runs[entry.id], there_run=outcome.run_id,
                errors_here=sum(m.error is not None for m in here),
                errors_there=sum(m.error is not None for m in there)))
        result = transfer_result(marks, here_engine=here_label, there_engine=there_label,
                                 here_fingerprint=fingerprint, there_fingerprint=there_fp,
                                 item_ids=ids, split=split, settings=settings.as_dict())
        self.store.add_analysis(KIND, result.as_dict(), subject=there_label)
        if on_event:
            on_event(Finished("finished", time.perf_counter() - began))
        return Done(result, changes)

    def transfer_results(self) -> list[TransferResult]:
        """Every saved transfer check, oldest first."""
        return [TransferResult.from_dict(a["result"]) for a in self.store.analyses(KIND)]

    def latest_transfer(self) -> TransferResult | None:
        """The newest saved transfer check, or None."""
        found = self.store.analyses(KIND)
        return TransferResult.from_dict(found[-1]["result"]) if found else None

    def _reusable_run(self, entry: ShelfEntry, engine, params, ids: list[str],
                      split: str) -> int | None:
        """The newest finished ordinary run of this version on the current set made by this
        engine with these settings and covering every item, else None."""
        set_id, qset = self.current_set()
        check = self.check()
        if check.kind == "label" and not check.labels:  # as the grader fills them in
            check = replace(check, labels=tuple(qset.labels()))
        fingerprint, mode = engine.fingerprint(), answer_mode(params, check, engine)
        wanted = {"max_tokens": params.max_tokens, "temperature": params.temperature,
                  "seed": params.seed, "answer_mode": mode}
        calibrate = params.calibrate and mode == "score"  # a run's params omit it when off
        for run in reversed(self.store.runs()):
            if (_same_wording(run, entry) and run.status == "finished"
                    and run.set_id == set_id and run.split == split
                    and run.fingerprint == fingerprint
                    and all(run.params.get(k) == v for k, v in wanted.items())
                    and bool(run.params.get("calibrate")) == calibrate
                    and set(ids) <= {m.item_id for m in self.store.marks(run.id)}):
                return run.id
        return None


def _entries(project, wording_ids: Sequence[int]) -> list[ShelfEntry]:
    if not wording_ids:
        raise ValueError("choose at least one shelf version for the transfer check")
    entries, seen = [], set()
    for wid in wording_ids:
        if wid not in seen:
            seen.add(wid)
            entries.append(project.store.wording(wid))
    return entries


def _same_wording(run: RunInfo, entry: ShelfEntry) -> bool:
    return run.wording_text == entry.text and run.placement == entry.placement


def _plan(entry: ShelfEntry, items, split: str) -> Plan:
    return Plan(Wording(entry.text, entry.placement), tuple(items), split, entry.id)


def _labels(entries: Sequence[ShelfEntry]) -> str:
    names = [e.label for e in entries]
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def _by_item(marks, ids: list[str]):
    found = {m.item_id: m for m in marks}
    return [found[i] for i in ids]


def _require_finished(outcomes, entries, engine_label: str) -> None:
    for entry, outcome in zip(entries, outcomes):
        if outcome.status != "finished":
            raise ValueError(
                f"grading {entry.label} with {engine_label} was {outcome.status} after "
                f"{len(outcome.marks)} items (those marks are saved); no transfer result "
                "was saved")
