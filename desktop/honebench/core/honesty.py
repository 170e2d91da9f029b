"""An honest "best" for the shelf: chosen on tuning items, confirmed on held-out items.

Rules:
- The leader is the kept entry with the highest tuning score (ties: the earlier version).
  Held-out scores never take part in choosing it.
- The leader is labelled best only once its held-out score has been measured.
- An entry whose held-out interval lies wholly below its tuning interval gets a warning.
- When many variants were tried, a note says the top tuning score is likely optimistic.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

from .project import ShelfRow

OPTIMISM_FROM = 5  # variants tried from which the optimism note appears (common practice)


@dataclass(frozen=True)
class ShelfAssessment:
    leader_id: int | None  # kept entry with the top tuning score; None if none is graded
    best_id: int | None  # the leader once its held-out score is measured, else None
    best_reason: str  # one plain sentence: why best_id, or what is missing
    warnings: dict[int, list[str]] = field(default_factory=dict)  # entry id -> sentences
    optimism_note: str | None = None
    variants_tried: int = 0


def count_variants_tried(rows: Sequence[ShelfRow]) -> int:
    """Shelf entries that were kept or set aside: every wording judged so far."""
    return sum(r.entry.decision in ("kept", "set_aside") for r in rows)


def tuning_leader(rows: Sequence[ShelfRow]) -> ShelfRow | None:
    """The kept entry with the highest tuning pass rate; ties go to the earlier version.
    Reads tuning scores only."""
    graded = [r for r in rows
              if r.entry.decision == "kept" and r.tuning is not None and r.tuning.total > 0]
    if not graded:
        return None
    return min(graded, key=lambda r: (-r.tuning.rate, r.entry.version))


def assess_shelf(rows: Sequence[ShelfRow], variants_tried: int | None = None
                 ) -> ShelfAssessment:
    """Leader, best, warnings and the optimism note for the shelf.

    ``variants_tried`` defaults to ``count_variants_tried(rows)``: the number of shelf
    entries kept or set aside."""
    tried = count_variants_tried(rows) if variants_tried is None else int(variants_tried)
    leader = tuning_leader(rows)
    warnings = {r.entry.id: [w] for r in rows if (w := overfit_warning(r))}
    best_id, reason = _best(rows, leader, warnings)
    return ShelfAssessment(leader_id=leader.entry.id if leader else None, best_id=best_id,
                           best_reason=reason, warnings=warnings,
                           optimism_note=optimism_note(tried), variants_tried=tried)


def _best(rows, leader, warnings) -> tuple[int | None, str]:
    if not any(r.entry.decision == "kept" for r in rows):
        return None, "Nothing is kept on the shelf yet; keep a version to name a best one."
    if leader is None:
        return None, ("No kept version has a tuning score yet; grade the kept versions on "
                      "the tuning items.")
    name = leader.entry.label
    if leader.held_out is None or leader.held_out.total == 0:
        return None, (f"{name} leads on tuning items with {leader.tuning.text()}; grade it on "
                      "held-out items to confirm.")
    reason = (f"{name} leads the kept versions on tuning items with {leader.tuning.text()} "
              f"and scores {leader.held_out.text()} on held-out items.")
    if leader.entry.id in warnings:
        reason += " Its held-out score is clearly lower: see the warning."
    return leader.entry.id, reason


def overfit_warning(row: ShelfRow) -> str | None:
    """A sentence when the held-out interval's upper end is below the tuning interval's
    lower end, i.e. the two intervals do not overlap and held-out is the lower one."""
    t, h = row.tuning, row.held_out
    if t is None or h is None or t.total == 0 or h.total == 0 or not h.high < t.low:
        return None
    return (f"{row.entry.label} scores {h.text()} on held-out items, clearly below its "
            f"{t.text()} on tuning items (the intervals do not overlap). It fits the tuning "
            "items better than new ones; expect something nearer the held-out score.")


def optimism_note(tried: int) -> str | None:
    if tried < OPTIMISM_FROM:
        return None
    return (f"The top tuning score is the best of {tried} wordings tried on the same items, "
            "so it is likely optimistic; the held-out score is the fairer estimate.")
