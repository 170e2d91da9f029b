"""Extraction: pulling the answer out of a model's output, before the answer check judges it.

Extractions:
  whole        - the whole output, stripped.
  first_line   - the first non-empty line.
  after_marker - the first non-empty line after the last occurrence of a marker such as
                 "Answer:" (ignoring case); the whole text when the marker is missing.
  last_number  - the last number written in the output (see ``parse_number``).
  label        - the allowed label closest to the output (see ``match_label``).

Lines taken by first_line and after_marker lose surrounding spaces and markdown asterisks
("**refund**" gives "refund").
"""
from __future__ import annotations

import functools
import re
import string
import unicodedata
from dataclasses import dataclass

from rapidfuzz import fuzz, process

EXTRACTIONS = ("whole", "first_line", "after_marker", "last_number", "label")
ARTICLES = ("a", "an", "the")
_QUOTE_LIMIT = 60
_LINE_STRIP = " \t\r\n\f\v*"

# A number as people write it: optional sign (ASCII or unicode minus), then a mixed fraction
# "1 1/2", a fraction "3/4", or a decimal with optional thousands commas and exponent.
# Digits glued to other digits by "." or "," in an unreadable way ("1.2.3", "1,2") are no number.
_NUMBER = re.compile(
    r"""
    (?:(?P<sign>(?<![\w.,])[-+\u2212])[$€£¥₹]?)?
    (?<![0-9.,])
    (?:
        (?P<whole>[0-9]+)[ ](?P<num>[0-9]+)/(?P<den>[0-9]+)
      | (?P<fnum>[0-9]+)/(?P<fden>[0-9]+)
      | (?P<dec>(?:[0-9]{1,3}(?:,[0-9]{3})+|[0-9]+)(?:\.[0-9]+)?(?:[eE][-+]?[0-9]+)?
               |\.[0-9]+(?:[eE][-+]?[0-9]+)?)
    )
    (?![.,]?[0-9])
    """,
    re.VERBOSE,
)


@dataclass(frozen=True)
class Extraction:
    text: str
    how: str  # short phrase for the why: "first line", "last number in output", ...


@dataclass(frozen=True)
class LabelMatch:
    label: str | None  # the allowed label, as spelled in the list; None when none is close
    score: float  # 0-100; 100 for exact and named matches
    how: str  # "exact label", "label named in text", "closest label, score 92", ...


def quote(text: object, limit: int = _QUOTE_LIMIT) -> str:
    """User text for a one-line why: whitespace collapsed, cut at ``limit``, in quotes."""
    flat = " ".join(str(text).split())
    if len(flat) > limit:
        flat = flat[: limit - 1] + "…"
    return f"'{flat}'"


def fmt_score(score: float) -> str:
    """A 0-100 similarity for display, cut (not rounded) to one decimal: 84.96 -> '84.9'."""
    cut = int(score * 10) / 10
    return f"{cut:.1f}".rstrip("0").rstrip(".")


def _is_punct(ch: str) -> bool:
    return ch in string.punctuation or unicodedata.category(ch).startswith("P")


def _strip_punct(text: str) -> str:
    """Delete punctuation, except between two digits ("3.5" and "1,000" stay as they are)."""
    out = []
    for i, ch in enumerate(text):
        if _is_punct(ch):
            between_digits = (
                0 < i < len(text) - 1 and text[i - 1].isdigit() and text[i + 1].isdigit()
            )
            if not between_digits:
                continue
        out.append(ch)
    return "".join(out)


def _as_text(value: object) -> str:
    return "" if value is None else str(value)


def label_key(value: object) -> str:
    """Label comparison form: lower case, punctuation removed, whitespace collapsed.

    Unlike ``normalize_answer`` it keeps articles, so labels "A" and "B" stay distinct.
    """
    if type(value) is str:
        return _label_key_of_text(value)
    return " ".join(_strip_punct(_as_text(value).casefold()).split())


@functools.lru_cache(maxsize=8192)
def _label_key_of_text(text: str) -> str:
    # the same labels are keyed again for every answer judged: remembered
    return " ".join(_strip_punct(text.casefold()).split())


def normalize_answer(value: object) -> str:
    """Exact-check form: lower case, punctuation removed, articles a/an/the dropped,
    whitespace collapsed. Text made only of articles keeps them ("A" gives "a", not "").
    None counts as empty text; other values are read through str()."""
    words = label_key(value).split()
    kept = [w for w in words if w not in ARTICLES]
    return " ".join(kept if kept else words)


def _token_value(m: re.Match) -> float | None:
    try:
        if m.group("whole") is not None:
            den = float(m.group("den"))
            if den == 0:
                return None
            value = float(m.group("whole")) + float(m.group("num")) / den
        elif m.group("fnum") is not None:
            den = float(m.group("fden"))
            if den == 0:
                return None
            value = float(m.group("fnum")) / den
        else:
            value = float(m.group("dec").replace(",", ""))
    except (ValueError, OverflowError, ZeroDivisionError):
        return None
    return -value if m.group("sign") in ("-", "\u2212") else value


def number_tokens(text: str) -> list[tuple[str, float | None]]:
    """Every number written in the text, in order: (the text as written, its value).
    The value is None for a fraction over zero."""
    return [(m.group(0), _token_value(m)) for m in _NUMBER.finditer(text)]


def parse_number(value: object) -> float | None:
    """The single number in a short answer, or None.

    Accepted: "1,234.5", "-3", "−3" (unicode minus), "3/4", "1 1/2", "2.5e3", and any
    surrounding words or signs without digits, so "€12.50" is 12.5, "12 km" is 12 and
    "45%" is 45 (a percent sign is treated like a unit, not divided by 100).
    None when there is no number, more than one ("12 or 13", "10:30"), or a fraction over
    zero. Ints and floats are taken as they are; bools are not numbers.
    """
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        try:
            return float(value)
        except OverflowError:
            return None
    text = _as_text(value)
    matches = list(_NUMBER.finditer(text))
    if len(matches) != 1:
        return None
    m = matches[0]
    rest = text[: m.start()] + text[m.end():]
    if any(ch.isdigit() for ch in rest):
        return None
    return _token_value(m)


def match_label(text: str, labels: tuple[str, ...] | list[str], threshold: float = 80.0) -> LabelMatch:
    """The allowed label the text means, tried in this order:
    1. the text equals a label (compared by ``label_key``);
    2. a label is named in the text as a whole word (the earliest one; the longer on a tie);
    3. the rapidfuzz WRatio score is best for a label and reaches ``threshold`` (0-100).
    """
    keys = [label_key(lab) for lab in labels]
    usable = [(lab, key) for lab, key in zip(labels, keys) if key]
    if not usable:
        return LabelMatch(None, 0.0, "no labels to match")
    text_key = label_key(text)
    for lab, key in usable:
        if key == text_key:
            return LabelMatch(lab, 100.0, "exact label")
    named = []
    for lab, key in usable:
        m = re.search(r"(?<!\w)" + re.escape(key) + r"(?!\w)", text_key)
        if m:
            named.append((m.start(), -len(key), lab))
    if named:
        named.sort(key=lambda t: (t[0], t[1]))
        return LabelMatch(named[0][2], 100.0, "label named in text")
    _, best_score, index = process.extractOne(
        text_key, [key for _, key in usable], scorer=fuzz.WRatio
    )
    best = usable[index][0]
    if best_score >= threshold:
        return LabelMatch(best, float(best_score), f"closest label, score {fmt_score(best_score)}")
    return LabelMatch(
        None,
        float(best_score),
        f"no label close enough: best {quote(best)} scored {fmt_score(best_score)}, "
        f"needs {fmt_score(threshold)}",
    )


def _first_line(text: str) -> str:
    for line in text.splitlines():
        line = line.strip(_LINE_STRIP)
        if line:
            return line
    return ""


def extract(
    output: str,
    how: str,
    *,
    marker: str = "Answer:",
    labels: tuple[str, ...] | list[str] = (),
    label_threshold: float = 80.0,
) -> Extraction:
    """Pull the answer out of ``output`` by one of EXTRACTIONS. Never raises on any text;
    raises ValueError for an unknown ``how``."""
    output = _as_text(output)
    if how == "whole":
        text = output.strip()
        return Extraction(text, "whole text" if text else "output is empty")
    if how == "first_line":
        text = _first_line(output)
        return Extraction(text, "first line" if text else "output is empty")
    if how == "after_marker":
        found = None
        if marker:
            for found in re.finditer(re.escape(marker), output, re.IGNORECASE):
                pass
        if found is None:
            return Extraction(output.strip(), f"whole text ({quote(marker)} not found)")
        return Extraction(_first_line(output[found.end():]), f"after {quote(marker)}")
    if how == "last_number":
        tokens = number_tokens(output)
        if not tokens:
            return Extraction("", "no number in output")
        return Extraction(tokens[-1][0].strip(), "last number in output")
    if how == "label":
        m = match_label(output, labels, label_threshold)
        if m.label is None:
            return Extraction(output.strip(), m.how)
        if m.how == "exact label":
            return Extraction(m.label, f"exact label {quote(m.label)}")
        if m.how == "label named in text":
            return Extraction(m.label, f"label {quote(m.label)} named in output")
        return Extraction(m.label, f"closest label {quote(m.label)} (score {fmt_score(m.score)})")
    raise ValueError(
        f"extraction {how!r} is not one of {', '.join(EXTRACTIONS)}"
    )
