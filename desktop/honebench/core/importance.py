"""Phrase importance: which phrases of a shelf version carry its score.

The wording is split into phrases by the phrase-edit strategy's splitter (after . ! ? and ;).
For each phrase, the wording without it (everything else kept byte for byte) is graded on
the tuning items, and compared item by item with the whole wording graded with the same
settings: ``delta`` is the score without the phrase minus the score with it (negative: the
phrase helps), ``fixed`` the items leaving it out fixes, ``broken`` the items it breaks,
``p_value`` the exact McNemar test (stats.paired_exact, as compare uses) and ``low``/``high``
the 95% paired interval of the delta (stats.paired_difference_interval). A phrase whose
interval holds 0 has "no measurable effect".

Early stopping (on by default): the items are graded in chunks (``CHUNK`` items, in the
set's order). After each chunk but the last, a phrase whose exact test is already below
``EARLY_STOP_P`` (0.001, a Haybittle-Peto boundary: so strict that the extra looks hardly
add false findings) is not graded further: it clearly matters. Its delta then comes from
fewer items and, as for any early stop, tends to overstate the size of the effect; the
result says which phrases stopped early and on how many items. Without early stopping every
phrase is graded on every tuning item. Answers come from the cache where they can.

A phrase holding a {field} placeholder is left out like any other; for the placements
before / after the question the item's input is then added where the placement puts it.
"""
from __future__ import annotations

import threading
import time
from dataclasses import asdict, dataclass, field, replace

from .events import Listener, Marked, Progress, Stage, Started
from .grading import Plan, select_items
from .stats import paired_difference_interval, paired_exact
from .suggest.phrase_edits import phrase_spans
from .wording import Wording

KIND = "importance"  # the analyses' kind and the side runs' purpose
CHUNK = 20
EARLY_STOP_P = 0.001
CAUTION = ("Small sets are noisy: a phrase's delta on a few dozen items can move by several "
           "points on other items. Each phrase was left out alone; its effect can depend on "
           "the other phrases, so leaving out two that each show no effect may still change "
           "the score.")


@dataclass(frozen=True)
class Phrase:
    index: int  # 0-based, in reading order
    text: str
    start: int  # character offsets into the wording
    end: int


def split_phrases(text: str) -> list[Phrase]:
    """The wording's phrases with where they sit in it."""
    return [Phrase(i, text[s:e], s, e) for i, (s, e) in enumerate(phrase_spans(text))]


def leave_out(text: str, phrase: Phrase) -> str:
    """The wording without one phrase: the phrase and the whitespace after it go (for the
    last phrase, the whitespace before it); everything else stays as it was."""
    after = phrase.end
    while after < len(text) and text[after].isspace():
        after += 1
    if after < len(text):
        return text[:phrase.start] + text[after:]
    before = phrase.start
    while before > 0 and text[before - 1].isspace():
        before -= 1
    return text[:before] + text[phrase.end:]


@dataclass(frozen=True)
class PhraseEffect:
    index: int
    phrase: str
    start: int
    end: int
    n: int  # items graded both with and without the phrase
    with_passed: int  # of those n, passed by the whole wording
    without_passed: int  # and by the wording without this phrase
    fixed: int  # missed with the phrase, passed without it
    broken: int  # passed with the phrase, missed without it
    p_value: float  # exact McNemar test, two-sided
    low: float  # 95% paired interval of delta
    high: float
    stopped_early: bool = False

    @property
    def delta(self) -> float:
        """Score without the phrase minus the score with it, as a fraction."""
        return (self.without_passed - self.with_passed) / self.n if self.n else 0.0

    @property
    def measurable(self) -> bool:
        """False when the interval holds 0: no measurable effect."""
        return self.n > 0 and not (self.low <= 0.0 <= self.high)

    def verdict(self) -> str:
        if not self.measurable:
            return "no measurable effect"
        return "helps (leaving it out lowers the score)" if self.delta < 0 else \
            "hurts (leaving it out raises the score)"

    def as_json(self) -> dict:
        """The CLI's object for this phrase."""
        return {"phrase": self.phrase, "delta": round(self.delta, 6),
                "interval": [round(self.low, 6), round(self.high, 6)],
                "fixed": self.fixed, "broken": self.broken, "p_value": self.p_value,
                "n": self.n, "measurable": self.measurable, "verdict": self.verdict(),
                "stopped_early": self.stopped_early, "index": self.index,
                "start": self.start, "end": self.end}

    def tip(self) -> str:
        """One paragraph for a tooltip."""
        early = (f" Stopped early after {self.n} items: it clearly matters (the size may be "
                 "overstated).") if self.stopped_early else ""
        return (f"Leaving this phrase out: {points(self.delta)} on {self.n} items "
                f"(95% interval {points(self.low)} to {points(self.high)}); fixes "
                f"{self.fixed}, breaks {self.broken}; exact paired test p = "
                f"{self.p_value:.3g}. {self.verdict().capitalize()}.{early}")


def points(x: float) -> str:
    """A difference of pass rates in percentage points: '-12.5 pts', '+4 pts', '0 pts'."""
    value = round(x * 100, 1)
    if value == 0:
        return "0 pts"
    text = f"{value:+.1f}"
    return f"{text[:-2] if text.endswith('.0') else text} pts"


def effect_of(phrase: Phrase, item_ids, with_marks: dict[str, bool],
              without_marks: dict[str, bool], stopped_early: bool = False) -> PhraseEffect:
    """The phrase's effect over the items both gradings marked, in ``item_ids`` order."""
    ids = [i for i in item_ids if i in with_marks and i in without_marks]
    a = [with_marks[i] for i in ids]
    b = [without_marks[i] for i in ids]
    paired = paired_exact(a, b)
    low, high = paired_difference_interval(paired)
    return PhraseEffect(phrase.index, phrase.text, phrase.start, phrase.end, len(ids), sum(a),
                        sum(b), paired.fixed, paired.broken, paired.p_value, low, high,
                        stopped_early)


@dataclass(frozen=True)
class ImportanceResult:
    wording_id: int
    label: str
    text: str
    placement: str
    split: str
    n_items: int  # the tuning items
    base_passed: int  # the whole wording's score on them
    effects: tuple[PhraseEffect, ...]
    early_stop: bool
    status: str = "finished"  # or cancelled (then not saved)
    seconds: float = 0.0
    model_calls: int = 0
    engine: str = ""  # the engine's fingerprint
    params: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        data = asdict(self)
        data["effects"] = [asdict(e) for e in self.effects]
        return data

    @classmethod
    def from_dict(cls, data: dict) -> "ImportanceResult":
        effects = tuple(PhraseEffect(**e) for e in data["effects"])
        return cls(**{**data, "effects": effects})

    def json_rows(self) -> list[dict]:
        return [e.as_json() for e in self.effects]

    def lines(self) -> list[str]:
        """The human table and the cautions."""
        rate = self.base_passed / self.n_items if self.n_items else 0.0
        head = (f"{self.label} scores {self.base_passed}/{self.n_items} = {rate:.1%} on the "
                "tuning items. Each phrase left out alone; delta = the score without it minus "
                "the score with it (negative: the phrase helps), 95% paired interval, items "
                "leaving it out fixes and breaks, exact paired p:")
        rows = [head, f"{'#':>2}  {'delta':>10}  {'95% interval':>21}  {'fixed':>5}  "
                      f"{'broken':>6}  {'p':>7}  {'n':>3}  phrase"]
        for e in self.effects:
            mark = "" if e.measurable else "  (no measurable effect)"
            early = " *" if e.stopped_early else ""
            rows.append(f"{e.index + 1:>2}  {points(e.delta):>10}  "
                        f"{points(e.low) + ' to ' + points(e.high):>21}  {e.fixed:>5}  "
                        f"{e.broken:>6}  {e.p_value:>7.3g}  {e.n:>3}{early}  "
                        f"{_short(e.phrase)}{mark}")
        if any(e.stopped_early for e in self.effects):
            rows.append("* stopped early: it clearly matters; graded on fewer items, so its "
                        "size may be overstated.")
        if self.status != "finished":
            rows.append(f"The analysis was {self.status}: these figures cover only the items "
                        "graded so far and were not saved.")
        rows.append(CAUTION)
        return rows


def _short(text: str, width: int = 60) -> str:
    text = " ".join(text.split())
    return text if len(text) <= width else text[:width - 1] + "…"


def analyse(project, engine, entry, *, params, early_stop: bool = True, chunk: int = CHUNK,
            on_event: Listener | None = None,
            cancel: threading.Event | None = None) -> ImportanceResult:
    """Grade every leave-one-phrase-out variant of a shelf entry on the tuning items (side
    runs, purpose "importance") and measure each phrase's effect. Raises ValueError when the
    wording has fewer than two phrases or the set no tuning items."""
    from .operations.grading import grade_plans, grade_wording

    began = time.perf_counter()
    cancel = cancel or threading.Event()
    phrases = split_phrases(entry.text)
    if len(phrases) < 2:
        raise ValueError(f"{entry.label} is one phrase ({entry.text.strip()[:60]!r}); phrase "
                         "importance needs at least two phrases, split after . ! ? or ;")
    _, qset = project.current_set()
    items = select_items(qset, "tuning")
    if not items:
        raise ValueError(f"the question set {qset.name} has no tuning items; import it again "
                         "with a split")
    ids = [i.id for i in items]
    progress = _ProgressCount(len(items) * (len(phrases) + 1), on_event)
    if on_event:
        on_event(Started(progress.total, f"phrase importance of {entry.label}: "
                                         f"{len(phrases)} phrases, {len(items)} tuning items"))
    base = grade_wording(project, engine, Wording(entry.text, entry.placement), items=items,
                         params=params, wording_id=entry.id, on_event=progress.relay,
                         cancel=cancel, purpose=KIND)
    with_marks = {m.item_id: m.passed for m in base.marks}
    without: dict[int, dict[str, bool]] = {p.index: {} for p in phrases}
    stopped: set[int] = set()
    calls = base.model_calls
    step = max(1, chunk) if early_stop else len(items)
    for at in range(0, len(items), step):
        if cancel.is_set() or base.status != "finished":
            break
        open_ = [p for p in phrases if p.index not in stopped]
        chunk_items = items[at:at + step]
        plans = [Plan(Wording(leave_out(entry.text, p), entry.placement), chunk_items,
                      purpose=KIND) for p in open_]
        outcomes = grade_plans(project, engine, plans, params=params,
                               on_event=progress.relay, cancel=cancel)
        for p, outcome in zip(open_, outcomes):
            without[p.index].update((m.item_id, m.passed) for m in outcome.marks)
            calls += outcome.model_calls
        last = at + step >= len(items)
        for p in open_:
            if not last and not cancel.is_set() and _clearly_matters(
                    effect_of(p, ids, with_marks, without[p.index])):
                stopped.add(p.index)
                progress.drop(len(items) - (at + step))
        if on_event and stopped and not last:
            on_event(Stage(f"{len(stopped)} of {len(phrases)} phrases clearly matter and are "
                           "not graded further", progress.now()))
    status = "cancelled" if cancel.is_set() or base.status != "finished" else "finished"
    effects = tuple(effect_of(p, ids, with_marks, without[p.index], p.index in stopped)
                    for p in phrases)
    return ImportanceResult(
        wording_id=entry.id, label=entry.label, text=entry.text, placement=entry.placement,
        split="tuning", n_items=len(items), base_passed=sum(with_marks.values()),
        effects=effects, early_stop=early_stop, status=status,
        seconds=time.perf_counter() - began, model_calls=calls, engine=engine.fingerprint(),
        params=params.as_dict())


def _clearly_matters(effect: PhraseEffect) -> bool:
    return effect.p_value < EARLY_STOP_P


class _ProgressCount:
    """One progress over the whole analysis: the grader's events are counted together and
    sent on as Marked events with the analysis' own totals and ETA (the rate of the items
    the model answered so far, applied to the items left)."""

    def __init__(self, total: int, on_event: Listener | None):
        self.total, self.on_event = total, on_event
        self.done = self.passed = self.cached = 0
        self.began = time.perf_counter()

    def drop(self, items: int) -> None:
        """A phrase stopped early: its remaining items will not be graded."""
        self.total -= items

    def now(self) -> Progress:
        elapsed = time.perf_counter() - self.began
        timed = self.done - self.cached
        eta = (elapsed / timed * (self.total - self.done) if timed
               else 0.0 if self.done >= self.total else None)
        return Progress(self.done, self.total, self.passed, self.cached, elapsed, eta)

    def relay(self, event) -> None:
        if not isinstance(event, Marked):
            return  # each chunk's Started: the analysis announced its own total
        self.done += 1
        self.passed += event.mark.passed
        self.cached += event.mark.cached
        if self.on_event:
            self.on_event(replace(event, progress=self.now(), run=0))
