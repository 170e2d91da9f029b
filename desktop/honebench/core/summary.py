"""What a grade run adds up to: score with its interval, per-check detail, errors."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from .cost import RunCost, marks_cost
from .records import Mark
from .sets import Item
from .stats import LabelReport, Score, label_report, score


STATUS_WORDS = {
    "finished": "finished",
    "running": "running",
    "interrupted": "interrupted (honebench stopped before it ended; resume it to finish)",
    "cancelled": "cancelled, finished marks kept",
    "failed": "stopped by an error",
    "resumed": "interrupted, then resumed as a later run",
}


@dataclass(frozen=True)
class RunSummary:
    score: Score
    check: str
    errors: int
    cached: int
    model_seconds: float
    labels: LabelReport | None = None
    mean_similarity: float | None = None  # for the fuzzy check
    wall_seconds: float | None = None  # the run on the clock (items overlap in model time)
    status: str = "finished"  # the run's status (see core.resume.STATUS_WORDS)
    planned: int = 0  # items the run set out to grade (0: as many as were graded)
    first_error: str | None = None
    cost: RunCost | None = None  # tokens and seconds per item (core/cost.py)

    def time_text(self) -> str:
        """"model time 824.9 s, wall time 230.1 s": model time adds up every item's own
        seconds, and items decoded together overlap, so it can exceed the wall time."""
        text = f"model time: {self.model_seconds:.1f} s"
        if self.wall_seconds is not None:
            text += f", wall time: {self.wall_seconds:.1f} s"
        return text

    def lines(self) -> list[str]:
        """Plain text lines for the CLI and the report."""
        out = [f"score: {self.score.text()}"]
        if self.status not in ("finished", "running"):
            out.append(self.status_text())
        out.append(f"check: {self.check}; errors: {self.errors}; from cache: {self.cached}; "
                   f"{self.time_text()}")
        if self.cost is not None:
            out.append(f"cost: {self.cost.text()}")
        if self.errors:
            out.append(f"{self.errors} item{'s' if self.errors > 1 else ''} got no answer "
                       f"(first: {self.first_error}) and count as misses; grading again asks "
                       "only for those, the answers already received come from the cache.")
        if self.mean_similarity is not None:
            out.append(f"mean similarity: {self.mean_similarity:.3f}")
        if self.labels is not None:
            out.extend(label_lines(self.labels))
        if self.score.total and self.score.total < 100:
            out.append(f"note: with {self.score.total} items the score can move by several "
                       "points by chance; compare versions on the same items before choosing.")
        return out

    def status_text(self) -> str:
        """One line on a run that did not finish, e.g. an interrupted run."""
        planned = max(self.planned, self.score.total)
        return (f"status: {STATUS_WORDS.get(self.status, self.status)}; {self.score.total} of "
                f"{planned} items graded, and the score covers only those.")

    def as_dict(self) -> dict:
        d = {
            "status": self.status, "planned": max(self.planned, self.score.total),
            "passed": self.score.passed, "total": self.score.total, "score": self.score.rate,
            "interval": [self.score.low, self.score.high], "check": self.check,
            "errors": self.errors, "cached": self.cached,
            "model_seconds": round(self.model_seconds, 3),
            "wall_seconds": None if self.wall_seconds is None else round(self.wall_seconds, 3),
        }
        if self.cost is not None:
            d["cost"] = self.cost.as_dict()
        if self.mean_similarity is not None:
            d["mean_similarity"] = self.mean_similarity
        if self.labels is not None:
            rep = self.labels
            d["labels"] = {
                "order": list(rep.labels),
                "accuracy": rep.accuracy,
                "per_label": {s.label: {"precision": s.precision, "recall": s.recall,
                                        "support": s.support} for s in rep.per_label},
                "confusion": rep.confusion,
            }
        return d


OTHER = "(no label)"


def summarize(marks: Sequence[Mark], items: Sequence[Item], check_kind: str,
              labels: Sequence[str] = (), wall_seconds: float | None = None, *,
              status: str = "finished", planned: int = 0) -> RunSummary:
    expected = {it.id: it.expected for it in items}
    passed = sum(m.passed for m in marks)
    report = None
    if check_kind == "label" and marks:
        order = list(labels) or sorted({expected[m.item_id] for m in marks})
        predicted = [m.extracted if m.extracted in order else OTHER for m in marks]
        if OTHER in predicted:
            order.append(OTHER)
        report = label_report([expected[m.item_id] for m in marks], predicted, order)
    similarity = None
    if check_kind == "fuzzy" and marks:
        similarity = sum(m.score for m in marks) / len(marks)
    return RunSummary(
        score=score(passed, len(marks)), check=check_kind,
        errors=sum(m.error is not None for m in marks), cached=sum(m.cached for m in marks),
        model_seconds=sum(m.seconds for m in marks if not m.cached), labels=report,
        mean_similarity=similarity, wall_seconds=wall_seconds, status=status,
        planned=planned,
        first_error=next((m.error for m in marks if m.error is not None), None),
        cost=marks_cost(marks, wall_seconds) if marks else None)


def label_lines(rep: LabelReport) -> list[str]:
    """Per-label precision/recall and the confusion table as aligned text."""
    width = max([len(n) for n in rep.labels] + [8])
    out = [f"{'label':<{width}}  precision  recall  items"]
    for s in rep.per_label:
        if s.support or s.predicted:
            out.append(f"{s.label:<{width}}  {s.precision:9.2f}  {s.recall:6.2f}  {s.support:5d}")
    cell = max(6, *(min(len(n), 10) for n in rep.labels))
    out.append("confusion (rows: expected answer, columns: answer given)")
    out.append(" " * width + "  " + " ".join(f"{n[:cell]:>{cell}}" for n in rep.labels))
    for name, row in zip(rep.labels, rep.confusion):
        if sum(row) or name != OTHER:
            out.append(f"{name:<{width}}  " + " ".join(f"{v:>{cell}}" for v in row))
    return out
