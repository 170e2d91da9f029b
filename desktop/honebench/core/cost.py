"""What answering costs, beside the score: tokens and seconds per item, and the trade-off.

A run's cost is the mean and total of its marks' prompt tokens, answer tokens and seconds.
"Cost" for the trade-off is the mean prompt + answer tokens per item by default: tokens do
not depend on the machine or its load, seconds do (they are shown too, and may be chosen).

Cached answers: cost means the cost of *answering*, so a mark whose answer came from the
cache carries the tokens and seconds of the answer it reuses, as measured when the model
gave it. Re-grading from the cache therefore does not make a wording look free. Marks
saved before cached answers kept their seconds have 0 there: those marks are left out of
the seconds mean (``timed`` says how many marks the seconds rest on), never counted as 0.
Answers chosen by scoring the labels generate nothing, so their answer tokens are 0.

The Pareto front of (score, cost) points holds the versions no other version beats on both:
none has a score at least as high at a cost at least as low, with one of the two strictly
better. Ties: versions with the same score and the same cost do not beat each other, so
both stay on the front. Points without a score or a cost are left out.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Hashable, Iterable, Sequence

from .records import Mark
from .stats import Score

MEASURES = {"tokens": "mean prompt + answer tokens per item",
            "seconds": "mean seconds each item waited for its answer"}
SECONDS_CAUTION = ("Seconds depend on the machine, its load and how many items were decoded "
                   "together; tokens do not, so compare wordings by tokens first.")


@dataclass(frozen=True)
class RunCost:
    """The cost of one run's marks. Means are per item; seconds over the ``timed`` marks."""

    items: int
    timed: int
    total_prompt_tokens: int
    total_answer_tokens: int
    total_seconds: float  # per-item model seconds added up (items decoded together overlap)
    wall_seconds: float | None = None  # the run on the clock
    from_cache: int = 0

    @property
    def mean_prompt_tokens(self) -> float | None:
        return self.total_prompt_tokens / self.items if self.items else None

    @property
    def mean_answer_tokens(self) -> float | None:
        return self.total_answer_tokens / self.items if self.items else None

    @property
    def mean_seconds(self) -> float | None:
        return self.total_seconds / self.timed if self.timed else None

    @property
    def mean_tokens(self) -> float | None:
        """Mean prompt + answer tokens per item: the default cost."""
        if not self.items:
            return None
        return (self.total_prompt_tokens + self.total_answer_tokens) / self.items

    def measure(self, name: str = "tokens") -> float | None:
        """The cost by one of MEASURES: "tokens" (default) or "seconds"."""
        if name not in MEASURES:
            raise ValueError(f"unknown cost measure {name!r}; choose one of "
                             f"{', '.join(MEASURES)}")
        return self.mean_tokens if name == "tokens" else self.mean_seconds

    @property
    def clock_seconds(self) -> float | None:
        """Seconds per item on the clock (the run's wall time over its items), when the model
        answered every item; items decoded together overlap, so this is below the wait."""
        if not self.items or self.from_cache or not self.wall_seconds:
            return None
        return self.wall_seconds / self.items

    def text(self) -> str:
        """"412 prompt + 7.0 answer tokens, each item waited 0.38 s (0.09 s per item on the
        clock) (n=40)"."""
        if not self.items:
            return "no items graded"
        seconds = ("seconds not measured" if self.mean_seconds is None
                   else f"each item waited {self.mean_seconds:.2f} s")
        if self.clock_seconds is not None:
            seconds += f" ({self.clock_seconds:.2f} s per item on the clock)"
        return (f"{self.mean_prompt_tokens:.0f} prompt + {self.mean_answer_tokens:.1f} answer "
                f"tokens, {seconds} (n={self.items})")

    def as_dict(self) -> dict:
        def r(x, places):
            return None if x is None else round(x, places)

        return {"items": self.items, "timed_items": self.timed,
                "from_cache": self.from_cache,
                "mean_prompt_tokens": r(self.mean_prompt_tokens, 2),
                "mean_answer_tokens": r(self.mean_answer_tokens, 2),
                "mean_seconds": r(self.mean_seconds, 4),
                "total_prompt_tokens": self.total_prompt_tokens,
                "total_answer_tokens": self.total_answer_tokens,
                "total_seconds": round(self.total_seconds, 3),
                "wall_seconds": r(self.wall_seconds, 3),
                "clock_seconds_per_item": r(self.clock_seconds, 4)}


def cost_of(values: Iterable[tuple[int, int, float, bool]],
            wall_seconds: float | None = None) -> RunCost:
    """The cost of (prompt tokens, answer tokens, seconds, cached) per mark. A cached mark
    with no seconds (saved by an older honebench) counts for tokens, not for seconds."""
    items = timed = prompt = answer = cached = 0
    seconds = 0.0
    for p, a, s, c in values:
        items += 1
        prompt += p
        answer += a
        cached += bool(c)
        if not c or s > 0:
            timed += 1
            seconds += s
    return RunCost(items, timed, prompt, answer, seconds, wall_seconds, cached)


def marks_cost(marks: Iterable[Mark], wall_seconds: float | None = None) -> RunCost:
    return cost_of(((m.prompt_tokens, m.completion_tokens, m.seconds, m.cached)
                    for m in marks), wall_seconds)


def run_cost(store, run_id: int) -> RunCost:
    """The cost of a stored run: what the shelf, the report and ``grade --json`` show."""
    return cost_of(store.mark_costs(run_id), store.run(run_id).wall_seconds)


# -- the trade-off ------------------------------------------------------------------------
def pareto_front(points: Iterable[tuple[Hashable, float | None, float | None]]) -> list:
    """Keys of the (key, score, cost) points no other point beats on both (higher score is
    better, lower cost is better), ordered by cost then by score, highest first. Equal
    points all stay; points whose score or cost is None are left out."""
    known = [(k, s, c) for k, s, c in points if s is not None and c is not None]
    known.sort(key=lambda p: (p[2], -p[1]))
    front, best = [], None  # best: the highest score among points cheaper or as cheap
    for key, s, c in known:
        # beaten by an earlier point (cost <= c) with a higher score, or with the same
        # score at a strictly lower cost
        beaten = best is not None and (best[0] > s or (best[0] == s and best[1] < c))
        if not beaten:
            front.append(key)
        if best is None or s > best[0]:
            best = (s, c)
    return front


def front_steps(front: Sequence[tuple[float, float]]) -> list[tuple[float, float]]:
    """(cost, score) corners of the step line through front points ordered by cost: the
    best score reachable at each cost, flat until the next front point, then up."""
    steps: list[tuple[float, float]] = []
    for i, (c, s) in enumerate(front):
        if i:
            steps.append((c, front[i - 1][1]))
        steps.append((c, s))
    return steps


@dataclass(frozen=True)
class CostPoint:
    """One shelf version on the score-vs-cost view."""

    wording_id: int
    label: str
    decision: str
    score: Score  # on the tuning items
    cost: RunCost  # of the run that score comes from
    cost_value: float  # the chosen measure
    on_front: bool


def cost_points(rows: Sequence, measure: str = "tokens") -> list[CostPoint]:
    """The shelf rows (core.views.ShelfRow) with a tuning score and a measured cost, as
    points with their place on the Pareto front, in shelf order."""
    if measure not in MEASURES:
        raise ValueError(f"unknown cost measure {measure!r}; choose one of "
                         f"{', '.join(MEASURES)}")
    usable = []
    for row in rows:
        cost = getattr(row, "cost", None)
        if row.tuning is None or row.tuning.total == 0 or cost is None:
            continue
        value = cost.measure(measure)
        if value is not None:
            usable.append((row, value))
    front = set(pareto_front((r.entry.id, r.tuning.rate, v) for r, v in usable))
    return [CostPoint(r.entry.id, r.entry.label, r.entry.decision, r.tuning, r.cost, v,
                      r.entry.id in front) for r, v in usable]


def front_of(points: Sequence[CostPoint]) -> list[CostPoint]:
    """The points on the front, ordered by cost (then score, highest first)."""
    return sorted((p for p in points if p.on_front), key=lambda p: (p.cost_value,
                                                                    -p.score.rate))
