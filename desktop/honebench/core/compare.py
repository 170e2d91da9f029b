"""Compare two grade runs on the items both graded: fixed items, broken items, paired test.

"Fixed" items were missed by the first run (A) and passed by the second (B); "broken" items
are the reverse. The paired test is the exact McNemar test (stats.paired_exact). For the
fuzzy check, whose marks carry a 0..1 similarity, a paired bootstrap interval of the mean
difference (B minus A) is added, from scipy.stats.bootstrap with a fixed seed.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from scipy.stats import bootstrap

from .records import Mark, ShelfEntry
from .sets import Item
from .stats import Paired, Score, paired_difference_interval, paired_exact, score
from .store import Store

BOOTSTRAP_SEED = 20240605  # fixed so the same runs always give the same interval
BOOTSTRAP_RESAMPLES = 9999


@dataclass(frozen=True)
class ItemPair:
    """One item with both runs' marks, for the fixed / broken lists and the item view."""

    item: Item
    a: Mark
    b: Mark


@dataclass(frozen=True)
class MeanDifference:
    """Mean of (B's score minus A's score) per item, with a paired bootstrap interval."""

    mean_a: float
    mean_b: float
    difference: float
    low: float
    high: float
    n: int

    def text(self, name_a: str = "A", name_b: str = "B") -> str:
        return (f"Mean similarity on the same {self.n} items: {name_a} {self.mean_a:.3f}, "
                f"{name_b} {self.mean_b:.3f}; {name_b} minus {name_a} is "
                f"{self.difference:+.3f} (95% paired bootstrap interval {self.low:+.3f} to "
                f"{self.high:+.3f}).")


@dataclass(frozen=True)
class Comparison:
    run_a: int
    run_b: int
    name_a: str
    name_b: str
    item_ids: tuple[str, ...]  # the items both runs graded, in the set's order
    score_a: Score
    score_b: Score
    paired: Paired
    fixed: tuple[ItemPair, ...]  # missed by A, passed by B
    broken: tuple[ItemPair, ...]  # passed by A, missed by B
    mean_difference: MeanDifference | None = None  # fuzzy check only

    @property
    def n(self) -> int:
        return len(self.item_ids)

    @property
    def difference_interval(self) -> tuple[float, float]:
        """95% interval of B's pass rate minus A's on these items (the paired interval
        phrase importance shows; stats.paired_difference_interval)."""
        return paired_difference_interval(self.paired)

    @property
    def fixed_ids(self) -> list[str]:
        return [p.item.id for p in self.fixed]

    @property
    def broken_ids(self) -> list[str]:
        return [p.item.id for p in self.broken]

    def text(self) -> str:
        """Plain words: both scores with n and intervals, then fixed / broken and the test."""
        a, b = self.name_a, self.name_b
        head = (f"On the same {_items(self.n)}: {a} scores {self.score_a.text()}, "
                f"{b} scores {self.score_b.text()}.")
        if not self.fixed and not self.broken:
            test = (f"{a} and {b} agree on every item: each passes and misses the same ones, "
                    "so there is no difference to test.")
        else:
            test = self.paired.text(b) + "."
        parts = [head, test]
        if self.mean_difference is not None:
            parts.append(self.mean_difference.text(a, b))
        return " ".join(parts)


def _items(n: int) -> str:
    return "1 item" if n == 1 else f"{n} items"


def run_name(store: Store, run_id: int) -> str:
    """The shelf label of the run's wording ("v3"), or "run 7" when it is not on the shelf."""
    run = store.run(run_id)
    entry = None
    if run.wording_id is not None:
        try:
            entry = store.wording(run.wording_id)
        except KeyError:
            entry = None
    if entry is None:
        entry = store.find_wording(run.wording_text, run.placement)
    return entry.label if entry is not None else f"run {run_id}"


def compare_runs(store: Store, run_a: int, run_b: int, *, name_a: str | None = None,
                 name_b: str | None = None) -> Comparison:
    """Compare run B against run A on the items both graded (matched by item id).

    Names default to the shelf labels ("v1", "v3"). Raises ValueError when the runs share
    no graded items or belong to question sets with different contents."""
    info_a, info_b = store.run(run_a), store.run(run_b)
    qset = store.get_set(info_a.set_id)
    if info_b.set_id != info_a.set_id:
        other = store.get_set(info_b.set_id)
        if other.content_hash != qset.content_hash:
            raise ValueError(
                f"run {run_a} graded question set {qset.name!r} and run {run_b} graded "
                f"{other.name!r}, whose items differ; compare runs over the same question set")
    name_a = name_a or run_name(store, run_a)
    name_b = name_b or run_name(store, run_b)
    if name_a == name_b:
        name_a, name_b = f"{name_a} (run {run_a})", f"{name_b} (run {run_b})"
    marks_a = {m.item_id: m for m in store.marks(run_a)}
    marks_b = {m.item_id: m for m in store.marks(run_b)}
    pairs = [ItemPair(item, marks_a[item.id], marks_b[item.id]) for item in qset.items
             if item.id in marks_a and item.id in marks_b]
    if not pairs:
        raise ValueError(
            f"run {run_a} ({name_a}) and run {run_b} ({name_b}) have no graded items in "
            f"common ({len(marks_a)} and {len(marks_b)} items graded); grade both on the same "
            "items, for example the tuning items, then compare again")
    a_passed = [p.a.passed for p in pairs]
    b_passed = [p.b.passed for p in pairs]
    fuzzy = "fuzzy" in (info_a.check.get("kind"), info_b.check.get("kind"))
    return Comparison(
        run_a=run_a, run_b=run_b, name_a=name_a, name_b=name_b,
        item_ids=tuple(p.item.id for p in pairs),
        score_a=score(sum(a_passed), len(pairs)), score_b=score(sum(b_passed), len(pairs)),
        paired=paired_exact(a_passed, b_passed),
        fixed=tuple(p for p in pairs if not p.a.passed and p.b.passed),
        broken=tuple(p for p in pairs if p.a.passed and not p.b.passed),
        mean_difference=mean_difference([p.a.score for p in pairs],
                                        [p.b.score for p in pairs]) if fuzzy else None,
    )


def _mean_gap(a, b, axis=-1):
    return np.mean(np.asarray(b) - np.asarray(a), axis=axis)


def mean_difference(a_scores, b_scores, *, seed: int = BOOTSTRAP_SEED,
                    n_resamples: int = BOOTSTRAP_RESAMPLES) -> MeanDifference:
    """Mean of B minus A over paired per-item scores with a 95% paired bootstrap interval
    (scipy.stats.bootstrap, BCa; percentile when BCa cannot be computed). When every item
    has the same difference, or there is one item, the interval is that difference alone."""
    a = np.asarray(a_scores, dtype=float)
    b = np.asarray(b_scores, dtype=float)
    if a.shape != b.shape or a.ndim != 1 or a.size == 0:
        raise ValueError(f"give one score per item for both runs; got {a.size} and {b.size}")
    gaps = b - a
    diff = float(gaps.mean())
    if a.size < 2 or np.ptp(gaps) == 0:
        low = high = diff
    else:
        low, high = _bootstrap(a, b, seed, n_resamples, "BCa")
        if not (np.isfinite(low) and np.isfinite(high)):
            low, high = _bootstrap(a, b, seed, n_resamples, "percentile")
    return MeanDifference(float(a.mean()), float(b.mean()), diff, float(low), float(high),
                          int(a.size))


def _bootstrap(a, b, seed, n_resamples, method):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # degenerate resamples: we fall back or report
        res = bootstrap((a, b), _mean_gap, paired=True, vectorized=True,
                        n_resamples=n_resamples, method=method, confidence_level=0.95,
                        rng=np.random.default_rng(seed))
    return float(res.confidence_interval.low), float(res.confidence_interval.high)


def latest_run(store: Store, wording_text: str, placement: str, split: str,
               set_id: int) -> int | None:
    """The newest finished run of this wording and placement on this split of the set."""
    found = None
    for run in store.runs():
        if (run.status == "finished" and run.set_id == set_id and run.split == split
                and run.wording_text == wording_text and run.placement == placement):
            found = run.id
    return found


def compare_entries(store: Store, set_id: int, entry_a: ShelfEntry, entry_b: ShelfEntry,
                    split: str = "tuning") -> Comparison:
    """Compare two shelf versions by their latest finished runs on one split of the set.
    Raises ValueError naming the version that has not been graded there yet."""
    runs = [latest_run(store, e.text, e.placement, split, set_id) for e in (entry_a, entry_b)]
    missing = [e.label for e, r in zip((entry_a, entry_b), runs) if r is None]
    if missing:
        where = split.replace("_", "-")
        raise ValueError(f"{' and '.join(missing)} not yet graded on the {where} items of this "
                         f"set; grade {'it' if len(missing) == 1 else 'both'} there, then compare")
    return compare_runs(store, runs[0], runs[1], name_a=entry_a.label, name_b=entry_b.label)
