"""Transfer check: do shelf versions score the same on a second engine, on the same items?

Each version has one run on the graded engine ("here") and one on the other engine
("there") over the same items. Per version this gives both scores with 95% Wilson intervals
(as the shelf shows them), the exact McNemar test between the two engines on the same items
(stats.paired_exact: "fixed there" = missed here, passed there; "broken there" = the
reverse) and each version's rank on each engine.

Ranks and what counts as a rank change:
- rank: 1 + the number of chosen versions that pass strictly more items on that engine
  (all versions are graded on the same items, so counts compare); tied versions share a rank.
- an order flip between two versions: one passes strictly more items than the other here
  and strictly fewer there. A tie on either engine is not a flip ("beyond ties").
- flag "wins here, not there": the version ranks first here (alone or tied) and another
  version passes strictly more items there. "wins there, not here" is the mirror.
- flag "order changes": the version's order against another flips (``flips`` names them).
Flags describe the observed order only; on a small set a flip is often within the noise of
both engines, which the caution says.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Sequence

from .stats import Paired, Score, paired_exact, score

WINS_HERE = "wins here, not there"
WINS_THERE = "wins there, not here"
ORDER_CHANGES = "order changes"

CAUTION = ("Another engine's score on a small set is noisy too: a change of rank or a "
           "difference between engines can be chance. Read the intervals and p-values, and "
           "grade more items before relying on a flag.")


@dataclass(frozen=True)
class VersionMarks:
    """One version's pass/miss on the same items, in the same order, on both engines."""

    label: str
    wording_id: int | None
    here: Sequence[bool]
    there: Sequence[bool]
    here_run: int | None = None
    there_run: int | None = None
    errors_here: int = 0
    errors_there: int = 0


@dataclass(frozen=True)
class VersionTransfer:
    label: str
    wording_id: int | None
    here_run: int | None
    there_run: int | None
    here: Score
    there: Score
    paired: Paired  # A = here, B = there
    rank_here: int
    rank_there: int
    flips: tuple[str, ...]  # versions whose order against this one flips
    flags: tuple[str, ...]
    errors_here: int = 0
    errors_there: int = 0

    @property
    def n(self) -> int:
        return self.here.total

    def as_dict(self) -> dict:
        out = asdict(self)
        out["flips"], out["flags"] = list(self.flips), list(self.flags)
        return out

    @classmethod
    def from_dict(cls, d: dict) -> "VersionTransfer":
        return cls(**{**d, "here": Score(**d["here"]), "there": Score(**d["there"]),
                      "paired": Paired(**d["paired"]), "flips": tuple(d["flips"]),
                      "flags": tuple(d["flags"])})


@dataclass(frozen=True)
class TransferResult:
    here_engine: str  # labels of the two engines, for people
    there_engine: str
    here_fingerprint: str
    there_fingerprint: str
    split: str
    item_ids: tuple[str, ...]
    versions: tuple[VersionTransfer, ...]
    settings: dict  # the generation settings both engines answered with

    @property
    def n(self) -> int:
        return len(self.item_ids)

    @property
    def flagged(self) -> tuple[VersionTransfer, ...]:
        return tuple(v for v in self.versions if v.flags)

    def version(self, label: str) -> VersionTransfer:
        for v in self.versions:
            if v.label == label:
                return v
        raise KeyError(f"{label} is not in this transfer check")

    def as_dict(self) -> dict:
        return {"here_engine": self.here_engine, "there_engine": self.there_engine,
                "here_fingerprint": self.here_fingerprint,
                "there_fingerprint": self.there_fingerprint, "split": self.split,
                "item_ids": list(self.item_ids), "settings": dict(self.settings),
                "versions": [v.as_dict() for v in self.versions]}

    @classmethod
    def from_dict(cls, d: dict) -> "TransferResult":
        return cls(d["here_engine"], d["there_engine"], d["here_fingerprint"],
                   d["there_fingerprint"], d["split"], tuple(d["item_ids"]),
                   tuple(VersionTransfer.from_dict(v) for v in d["versions"]),
                   dict(d.get("settings") or {}))

    def lines(self) -> list[str]:
        """Plain words, one line per version, then the caution."""
        out = [f"Transfer check on the same {self.n} items: here = {self.here_engine}, "
               f"there = {self.there_engine}."]
        of = f" of {len(self.versions)}" if len(self.versions) > 1 else ""
        for v in self.versions:
            flags = f"  [{'; '.join(v.flags)}]" if v.flags else ""
            out.append(f"{v.label}: here {v.here.text()}, rank {v.rank_here}{of}; there "
                       f"{v.there.text()}, rank {v.rank_there}{of}. {engine_test_text(v.paired)}."
                       + flags)
            if v.errors_there or v.errors_here:
                out.append(f"  {v.errors_here} error marks here, {v.errors_there} there "
                           "(each counts as a miss)")
        out.append(CAUTION)
        return out


def engine_test_text(p: Paired) -> str:
    """The paired test between the engines in plain words."""
    if p.fixed == 0 and p.broken == 0:
        return "Both engines pass and miss the same items"
    return (f"There it passes {p.fixed} items missed here and misses {p.broken} passed "
            f"here (exact paired test p = {p.p_value:.3g})")


def ranks(passes: Sequence[int]) -> list[int]:
    """Competition ranks: 1 + how many pass strictly more; ties share a rank."""
    return [1 + sum(other > mine for other in passes) for mine in passes]


def transfer_result(versions: Sequence[VersionMarks], *, here_engine: str, there_engine: str,
                    here_fingerprint: str, there_fingerprint: str, item_ids: Sequence[str],
                    split: str = "tuning", settings: dict | None = None) -> TransferResult:
    """Scores, paired tests, ranks and flags from each version's marks on both engines.
    Every version must cover the same items (``item_ids``), in the same order."""
    n = len(item_ids)
    if not versions:
        raise ValueError("choose at least one shelf version for the transfer check")
    for v in versions:
        if len(v.here) != n or len(v.there) != n:
            raise ValueError(f"{v.label} has {len(v.here)} marks here and {len(v.there)} "
                             f"there; the transfer check needs one per item ({n}) on both")
    here_pass = [sum(map(bool, v.here)) for v in versions]
    there_pass = [sum(map(bool, v.there)) for v in versions]
    rank_here, rank_there = ranks(here_pass), ranks(there_pass)
    out = []
    for i, v in enumerate(versions):
        flips = tuple(w.label for j, w in enumerate(versions) if j != i and (
            (here_pass[i] - here_pass[j]) * (there_pass[i] - there_pass[j]) < 0))
        flags = []
        if rank_here[i] == 1 and rank_there[i] > 1:
            flags.append(WINS_HERE)
        if rank_there[i] == 1 and rank_here[i] > 1:
            flags.append(WINS_THERE)
        if flips:
            flags.append(ORDER_CHANGES)
        out.append(VersionTransfer(
            label=v.label, wording_id=v.wording_id, here_run=v.here_run,
            there_run=v.there_run, here=score(here_pass[i], n), there=score(there_pass[i], n),
            paired=paired_exact(v.here, v.there), rank_here=rank_here[i],
            rank_there=rank_there[i], flips=flips, flags=tuple(flags),
            errors_here=v.errors_here, errors_there=v.errors_there))
    return TransferResult(here_engine, there_engine, here_fingerprint, there_fingerprint,
                          split, tuple(item_ids), tuple(out), dict(settings or {}))
