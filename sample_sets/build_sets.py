"""Build the demo question sets for Skerry Line, an invented ferry company.

Run ``python build_sets.py`` (or ``--out DIR``) to rewrite the four CSV files. The output
depends only on the seeds below, so running it again gives byte-identical files.
Everything here is made up: the company, islands, ports, vessels and people.
"""
from __future__ import annotations

import argparse
import csv
import difflib
import random
import re
from decimal import Decimal
from fractions import Fraction
from functools import partial
from itertools import cycle
from pathlib import Path

if __package__:
    from . import skerry_phrases as phrases
else:  # run as a script: python build_sets.py
    import skerry_phrases as phrases

SEED = 20240611
ROUTING_PER_LABEL = 24


def expand(text: str, rng: random.Random, slots: dict) -> str:
    """Pick one alternative in each [a|b] (innermost first), then fill the slots."""
    pattern = re.compile(r"\[([^\[\]]*)\]")
    while pattern.search(text):
        text = pattern.sub(lambda m: rng.choice(m.group(1).split("|")), text, count=1)
    return text.format_map(slots)


def slots_for(rng: random.Random) -> dict:
    a, b, c = rng.sample(phrases.PORTS, 3)
    day, day2 = rng.sample(phrases.DAYS, 2)
    return {"a": a, "b": b, "c": c, "day": day, "day2": day2,
            "time": f"{rng.randint(6, 20):02d}:{rng.choice([0, 10, 15, 30, 40, 45, 50]):02d}",
            "vessel": rng.choice(phrases.VESSELS), "item": rng.choice(phrases.ITEMS),
            "event": rng.choice(phrases.EVENTS), "name": rng.choice(phrases.NAMES)}


def add_typo(text: str, rng: random.Random) -> str:
    """Make one plausible slip: swapped letters, a dropped letter, or no capitals."""
    kind = rng.choice(["swap", "drop", "lower"])
    if kind == "lower":
        return text.lower()
    words = text.split(" ")
    long_ones = [i for i, w in enumerate(words) if w.isalpha() and len(w) >= 5]
    if not long_ones:
        return text.lower()
    i = rng.choice(long_ones)
    w = words[i]
    j = rng.randint(1, len(w) - 3)
    words[i] = w[:j] + w[j + 1] + w[j] + w[j + 2:] if kind == "swap" else w[:j] + w[j + 1:]
    return " ".join(words)


def too_close(text: str, accepted: list[str], limit: float = 0.85) -> bool:
    """True when text reads almost the same as one already accepted."""
    for other in accepted:
        matcher = difflib.SequenceMatcher(None, text.lower(), other.lower())
        if matcher.quick_ratio() >= limit and matcher.ratio() >= limit:
            return True
    return False


def distinct_texts(n: int, make) -> list[str]:
    """n texts from make(), skipping any that read almost like one already kept."""
    texts = []
    for _ in range(50 * n):
        text = make()
        if not too_close(text, texts):
            texts.append(text)
            if len(texts) == n:
                return texts
    raise RuntimeError("too few phrase pieces to make distinct texts")


def routing_rows(rng: random.Random) -> list[list[str]]:
    def message(cores) -> str:
        core = next(cores)
        slots = slots_for(rng)
        opener, closer = rng.choice(phrases.OPENERS), rng.choice(phrases.CLOSERS)
        text = " ".join(p for p in (expand(x, rng, slots) for x in (opener, core, closer)) if p)
        return add_typo(text, rng) if rng.random() < 0.1 else text

    items = []
    for label, cores in phrases.ROUTING.items():
        make = partial(message, cycle(rng.sample(cores, len(cores))))
        items += [(text, label) for text in distinct_texts(ROUTING_PER_LABEL, make)]
    rng.shuffle(items)
    return [[f"route-{n:03d}", text, label] for n, (text, label) in enumerate(items, 1)]


REF_CHARS = "ABCDEFGHJKLMNPQRSTUVWXYZ0123456789"  # no I or O: they read like 1 and 0
N_EMAILS = 80


def new_reference(rng: random.Random, used: set[str]) -> str:
    while True:
        body = "".join(rng.choice(REF_CHARS) for _ in range(6))
        ref = f"SK-{body}"
        has_both = any(ch.isdigit() for ch in body) and any(ch.isalpha() for ch in body)
        if has_both and ref not in used:
            used.add(ref)
            return ref


def number_slots(rng: random.Random) -> dict:
    """Fresh look-alike numbers, drawn again for every distractor line."""
    return {"n3": f"{rng.randint(0, 999):03d}", "n4": f"{rng.randint(1000, 9999)}",
            "n5": f"{rng.randint(10000, 99999)}", "dnum": rng.randint(1, 28),
            "month": rng.choice(phrases.MONTHS),
            "reg": f"{rng.choice('ABGKMSW')}{rng.choice('DJLNRT')}{rng.randint(51, 74)} "
                   f"{''.join(rng.choice('BCFHKPRVXZ') for _ in range(3))}",
            "time2": f"{rng.randint(6, 20):02d}:{rng.choice([5, 20, 35, 55]):02d}"}


def reference_rows(rng: random.Random) -> list[list[str]]:
    rows, used = [], set()
    for n in range(1, N_EMAILS + 1):
        slots = slots_for(rng)
        slots.update(ref=new_reference(rng, used),
                     who=rng.choice(["two adults", "one adult and a car", "a family of four"]))
        subject = rng.choice(phrases.SUBJECTS) if rng.random() < 0.15 else ""
        body = [rng.choice(phrases.ASKS)]
        if not subject:
            body.insert(0, rng.choice(phrases.REF_LINES))
        for line in rng.sample(phrases.DISTRACTORS, rng.choice([0, 1, 1, 2, 2, 3])):
            body.insert(rng.randint(0, len(body)), line)
        if not subject and rng.random() < 0.25:  # sometimes the reference comes last
            body.append(body.pop(next(i for i, b in enumerate(body) if "{ref}" in b)))
        text = " ".join(expand(b, rng, {**slots, **number_slots(rng)}) for b in body)
        parts = [expand(subject, rng, slots), rng.choice(phrases.GREETINGS), text,
                 expand(rng.choice(phrases.SIGNOFFS), rng, slots)]
        rows.append([f"ref-{n:03d}", "\n".join(p for p in parts if p), slots["ref"]])
    return rows


# Fare and timetable arithmetic: ten families, answers computed exactly with Fraction.
def money(x: Fraction) -> str:
    return f"£{Decimal(x.numerator) / Decimal(x.denominator):.2f}"


def clock(minutes: int) -> str:
    return f"{minutes // 60 % 24:02d}:{minutes % 60:02d}"


def count(n: int, one: str, many: str) -> str:
    return f"{n} {one if n == 1 else many}"


def price(rng: random.Random, low: int, high: int, step: int = 10) -> Fraction:
    """A price in pounds between low and high, in whole multiples of `step` pence."""
    return Fraction(rng.randrange(low * 100, high * 100 + 1, step), 100)


def q_child_half(rng, a, b, v):
    adult, n, m = price(rng, 6, 30, 50), rng.randint(1, 4), rng.randint(1, 5)
    q = (f"An adult ticket from {a} to {b} costs {money(adult)} and a child ticket costs "
         f"half that. What do {count(n, 'adult', 'adults')} and "
         f"{count(m, 'child', 'children')} pay in total, in pounds?")
    return q, n * adult + m * adult / 2


def q_duration(rng, a, b, v):
    overnight = rng.random() < 0.3
    if overnight:  # leaves late, lands after midnight
        dep = rng.randrange(21 * 60 + 30, 23 * 60 + 50, 5)
        arr = dep + rng.randrange(24 * 60 + 5 - dep, 24 * 60 + 300 - dep, 5)
    else:
        dep = rng.randrange(5 * 60, 20 * 60, 5)
        arr = dep + rng.randrange(25, 200, 5)
    q = (f"The {clock(dep)} {'late ' if overnight else ''}sailing from {a} arrives at "
         f"{b} at {clock(arr)}{' the next morning' if overnight else ''}. How many minutes "
         f"does the crossing take?")
    return q, Fraction(arr - dep)


def q_sailings(rng, a, b, v):
    every = rng.choice([20, 25, 30, 40, 45, 50, 60, 75, 90])
    start = rng.randrange(6 * 60, 9 * 60 + 1, 5)
    end = start + rng.randrange(120, 12 * 60, 5)
    q = (f"Sailings leave {a} every {every} minutes, starting at {clock(start)}. How many "
         f"sailings leave between {clock(start)} and {clock(end)}, counting a sailing that "
         f"leaves at exactly {clock(end)}?")
    return q, Fraction((end - start) // every + 1)


def q_discount(rng, a, b, v):
    while True:
        fare, n = price(rng, 12, 60, 10), rng.randint(1, 6)
        pct = rng.choice([5, 10, 15, 20, 25, 30, 40])
        total = n * fare * (100 - pct) / 100
        if 100 % total.denominator == 0:
            break
    q = (f"A return from {a} to {b} is {money(fare)}. Island residents get {pct}% off. "
         f"What do {count(n, 'resident return', 'resident returns')} cost, in pounds?")
    return q, total


def q_vehicle(rng, a, b, v):
    car, person, k = price(rng, 25, 90, 50), price(rng, 5, 18, 10), rng.randint(1, 5)
    trip = rng.choice(["single", "return"])
    q = (f"Taking a car from {a} to {b} costs {money(car)} one way, plus {money(person)} one "
         f"way for each person on board. What does a {trip} trip cost for a car carrying "
         f"{count(k, 'person', 'people')}, in pounds?")
    return q, (car + k * person) * (2 if trip == "return" else 1)


def q_two_legs(rng, a, b, v):
    c = rng.choice([p for p in phrases.PORTS if p not in (a, b)])
    m1, w, m2 = rng.randrange(20, 95, 5), rng.randrange(5, 45, 5), rng.randrange(20, 95, 5)
    q = (f"The {v} sails from {a} to {b} in {m1} minutes, waits {w} minutes, then sails on to "
         f"{c} in {m2} minutes. How many minutes is it from leaving {a} to arriving at {c}?")
    return q, Fraction(m1 + w + m2)


def q_book_saving(rng, a, b, v):
    single, k = price(rng, 4, 16, 10), rng.choice([5, 6, 8, 10, 12, 20])
    book = k * single * Fraction(rng.randint(70, 92), 100)
    book = Fraction(round(book * 10), 10)  # books are priced to the nearest 10p
    q = (f"A single from {a} to {b} costs {money(single)}. A book of {k} singles costs "
         f"{money(book)}. How much do you save, in pounds, by buying the book instead of {k} "
         f"separate singles?")
    return q, k * single - book


def q_group_split(rng, a, b, v):
    n, each = rng.randint(3, 12), price(rng, 5, 40, 5)
    q = (f"A group of {n} friends pays {money(n * each)} in total for their tickets to {b} and "
         f"splits it equally. How much does each person pay, in pounds?")
    return q, each


def q_speed(rng, a, b, v):
    while True:
        miles, knots = rng.randint(4, 40), rng.choice([8, 10, 12, 14, 15, 16, 18, 20])
        minutes = Fraction(miles * 60, knots)
        if minutes.denominator == 1:
            break
    q = (f"The crossing from {a} to {b} is {miles} nautical miles and the {v} averages "
         f"{knots} knots. How many minutes does the crossing take?")
    return q, minutes


def q_change(rng, a, b, v):
    while True:
        n, each, note = rng.randint(1, 4), price(rng, 3, 30, 5), rng.choice([20, 50, 100])
        if n * each < note:
            break
    q = (f"A passenger buys {count(n, 'ticket', 'tickets')} to {b} at {money(each)} "
         f"each and pays with a £{note} note. How much change should they get, in pounds?")
    return q, note - n * each


FARE_FAMILIES = [q_child_half, q_duration, q_sailings, q_discount, q_vehicle, q_two_legs,
                 q_book_saving, q_group_split, q_speed, q_change]
FARES_PER_FAMILY = 10


def plain_number(x: Fraction) -> str:
    """An integer if whole, else at most two decimals, no unit, no separators."""
    if x.denominator == 1:
        return str(x.numerator)
    if 100 % x.denominator:
        raise ValueError(f"{x} does not have an exact two-decimal form")
    return f"{Decimal(x.numerator) / Decimal(x.denominator):.2f}".rstrip("0")


def fare_rows(rng: random.Random) -> list[list[str]]:
    items, seen = [], set()
    for family in FARE_FAMILIES:
        made = 0
        while made < FARES_PER_FAMILY:
            a, b = rng.sample(phrases.PORTS, 2)
            question, answer = family(rng, a, b, rng.choice(phrases.VESSELS))
            if question not in seen and answer > 0:
                seen.add(question)
                items.append((question, plain_number(answer)))
                made += 1
    rng.shuffle(items)
    return [[f"fare-{n:03d}", q, ans] for n, (q, ans) in enumerate(items, 1)]


REVIEWS_PER_LABEL = {"positive": 27, "negative": 27, "neutral": 26}


def review_rows(rng: random.Random) -> list[list[str]]:
    def review(pieces: list[str]) -> str:
        slots = slots_for(rng)
        chosen = rng.sample(pieces, rng.choice([1, 2, 2]))
        text = " ".join(expand(p, rng, slots) for p in chosen)
        return add_typo(text, rng) if rng.random() < 0.08 else text

    items = []
    for label, pieces in phrases.REVIEWS.items():
        texts = distinct_texts(REVIEWS_PER_LABEL[label], partial(review, pieces))
        items += [(text, label) for text in texts]
    rng.shuffle(items)
    return [[f"review-{n:03d}", text, label] for n, (text, label) in enumerate(items, 1)]


SETS = {
    "passenger_desk_routing.csv": (["id", "message", "department"], routing_rows, 1),
    "booking_reference.csv": (["id", "email", "reference"], reference_rows, 2),
    "fare_arithmetic.csv": (["id", "question", "answer"], fare_rows, 3),
    "review_sentiment.csv": (["id", "review", "sentiment"], review_rows, 4),
}


def write_csv(path: Path, header: list[str], rows: list[list[str]]) -> None:
    with open(path, "w", encoding="utf-8", newline="") as f:
        writer = csv.writer(f, lineterminator="\n")
        writer.writerow(header)
        writer.writerows(rows)


def build(out_dir: Path) -> list[Path]:
    """Write every demo set into out_dir; return the paths written."""
    out_dir.mkdir(parents=True, exist_ok=True)
    written = []
    for name, (header, make_rows, offset) in SETS.items():
        rows = make_rows(random.Random(SEED + offset))
        write_csv(out_dir / name, header, rows)
        written.append(out_dir / name)
    return written


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description="Rebuild the Skerry Line demo question sets.")
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent,
                        help="folder to write the CSV files into (default: beside this script)")
    args = parser.parse_args(argv)
    for path in build(args.out):
        print(f"wrote {path}")


if __name__ == "__main__":
    main()
