"""Answer checks: judge one model output against the item's expected answer.

Each check gives a Verdict: passed, the extracted answer, a one-line why and a score.

Checks (all compare after an extraction, see extraction.py):
  exact      - equal after ``normalize_answer``.
  label      - the nearest allowed label (``match_label``) equals the expected label.
  number     - math.isclose(found, expected, rel_tol, abs_tol), the PEP 485 rule.
  fuzzy      - rapidfuzz fuzz.ratio of the normalized texts reaches ``fuzzy_threshold``.
               fuzz.ratio is the Indel similarity: 100 * (1 - insertions+deletions / total
               length), so "kitten" / "sitting" scores 100 * (1 - 5/13) = 61.5.
  pattern    - re.search of the user's regex in the extracted text. ``{expected}`` in the
               regex stands for the expected answer, taken literally. An empty pattern means
               the expected answer, taken literally, as a whole word, ignoring case.
  contains   - the normalized expected answer appears as whole words in the normalized text.
  json_field - the first JSON object in the text, followed along a dotted path ("a.b.0");
               the value equals the expected answer after normalizing (numbers: as ``number``).

Extraction "auto" picks: label -> label, number -> last_number, json_field / contains /
pattern -> whole, exact / fuzzy -> first_line.
"""
from __future__ import annotations

import json
import math
import re
from dataclasses import asdict, dataclass, fields

from rapidfuzz import fuzz

from .extraction import (
    EXTRACTIONS,
    Extraction,
    extract,
    fmt_score,
    label_key,
    match_label,
    normalize_answer,
    number_tokens,
    parse_number,
    quote,
)

__all__ = [
    "CHECKS", "EXTRACTIONS", "CheckSpec", "Extraction", "Verdict",
    "extract", "judge", "normalize_answer", "parse_number",
]

CHECKS = ("exact", "label", "number", "fuzzy", "pattern", "contains", "json_field")
_AUTO = {"label": "label", "number": "last_number", "json_field": "whole",
         "contains": "whole", "pattern": "whole", "exact": "first_line", "fuzzy": "first_line"}
_EXTRACTION_WORDS = {"whole": "whole text", "first_line": "first line",
                     "last_number": "last number", "label": "label match"}
_EXPECTED = "{expected}"


@dataclass(frozen=True)
class CheckSpec:
    """How to judge an answer. ``labels`` empty: the caller supplies them (for example the
    distinct expected answers of the question set); ``judge`` alone then uses only the
    item's own expected answer."""

    kind: str = "exact"
    extraction: str = "auto"
    marker: str = "Answer:"
    labels: tuple[str, ...] = ()
    label_threshold: float = 80.0
    rel_tol: float = 1e-9
    abs_tol: float = 1e-9
    fuzzy_threshold: float = 85.0
    pattern: str = ""
    json_field: str = ""

    def __post_init__(self):
        if isinstance(self.labels, (list, tuple)):
            object.__setattr__(self, "labels", tuple(self.labels))

    @property
    def extraction_used(self) -> str:
        """The extraction actually applied ("auto" resolved by the check kind)."""
        if self.extraction == "auto":
            return _AUTO.get(self.kind, "first_line")
        return self.extraction

    def as_dict(self) -> dict:
        d = asdict(self)
        d["labels"] = list(self.labels)
        return d

    @classmethod
    def from_dict(cls, d: dict) -> "CheckSpec":
        """Build and validate from ``as_dict`` output; missing fields take their defaults."""
        if not isinstance(d, dict):
            raise ValueError("answer check settings must be a mapping of field names to values")
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(d) - known)
        if unknown:
            raise ValueError(
                f"answer check settings: unknown field {unknown[0]!r}; known fields are "
                f"{', '.join(sorted(known))}"
            )
        values = dict(d)
        if "labels" in values:
            labels = values["labels"]
            if isinstance(labels, str) or not isinstance(labels, (list, tuple)):
                raise ValueError("labels: give a list of label texts")
            values["labels"] = tuple(labels)
        spec = cls(**values)
        spec.validate()
        return spec

    def validate(self) -> None:
        """Raise ValueError naming the first bad field and what to do."""
        for name in ("kind", "extraction", "marker", "pattern", "json_field"):
            if not isinstance(getattr(self, name), str):
                raise ValueError(f"{name}: must be text, got {getattr(self, name)!r}")
        if self.kind not in CHECKS:
            raise ValueError(f"kind: {self.kind!r} is not one of {', '.join(CHECKS)}")
        if self.extraction != "auto" and self.extraction not in EXTRACTIONS:
            raise ValueError(
                f"extraction: {self.extraction!r} is not one of auto, {', '.join(EXTRACTIONS)}"
            )
        if self.extraction_used == "after_marker" and not self.marker.strip():
            raise ValueError("marker: give the text that comes before the answer, e.g. 'Answer:'")
        for name in ("label_threshold", "fuzzy_threshold"):
            value = getattr(self, name)
            if not _is_real(value) or not 0 <= value <= 100:
                raise ValueError(f"{name}: must be a number from 0 to 100, got {value!r}")
        for name in ("rel_tol", "abs_tol"):
            value = getattr(self, name)
            if not _is_real(value) or not math.isfinite(value) or value < 0:
                raise ValueError(f"{name}: must be a number of 0 or more, got {value!r}")
        seen: dict[str, str] = {}
        for lab in self.labels:
            if not isinstance(lab, str) or not label_key(lab):
                raise ValueError(f"labels: {lab!r} is empty once punctuation is removed")
            if label_key(lab) in seen:
                raise ValueError(
                    f"labels: {seen[label_key(lab)]!r} and {lab!r} are the same label "
                    "(case and punctuation are ignored); keep one"
                )
            seen[label_key(lab)] = lab
        if self.pattern:
            try:
                re.compile(self.pattern.replace(_EXPECTED, "x"))
            except re.error as exc:
                raise ValueError(f"pattern: not a valid regular expression ({exc})") from None
        if self.kind == "json_field":
            if not self.json_field.strip():
                raise ValueError("json_field: give the path of the field, e.g. 'answer' or 'a.b.0'")
            if any(not part for part in self.json_field.split(".")):
                raise ValueError(f"json_field: {self.json_field!r} has an empty step between dots")

    def describe(self) -> str:
        """One line for the UI, e.g. "label (fuzzy ≥ 80, from labels: a, b, c)"."""
        how = self.extraction_used
        where = (f"after {quote(self.marker, 20)}" if how == "after_marker"
                 else _EXTRACTION_WORDS.get(how, how))
        if self.kind == "label":
            if self.labels:
                shown = ", ".join(self.labels[:6]) + (", …" if len(self.labels) > 6 else "")
                source = f"from labels: {' '.join(shown.split())}"
            else:
                source = "labels from the expected answers"
            extra = "" if how == "label" else f", {where}"
            return f"label (fuzzy ≥ {fmt_score(self.label_threshold)}, {source}{extra})"
        if self.kind == "number":
            return (f"number (within {self.rel_tol:g} relative or {self.abs_tol:g} absolute, "
                    f"{where})")
        if self.kind == "fuzzy":
            return f"fuzzy (similarity ≥ {fmt_score(self.fuzzy_threshold)}, {where})"
        if self.kind == "pattern":
            if not self.pattern:
                return f"pattern (expected answer as a whole word, {where})"
            return f"pattern {quote(self.pattern, 40)} ({where})"
        if self.kind == "contains":
            return f"contains the expected answer ({where})"
        if self.kind == "json_field":
            return f"JSON field {quote(self.json_field, 40)} ({where})"
        return f"exact ({where}, ignoring case, punctuation and articles)"


@dataclass(frozen=True)
class Verdict:
    passed: bool
    extracted: str
    why: str  # one line
    score: float  # 1.0 / 0.0, or the 0..1 similarity for the fuzzy check


def _is_real(value: object) -> bool:
    """A finite-or-infinite int or float, not a bool, not NaN, small enough for a float."""
    if not isinstance(value, (int, float)) or isinstance(value, bool):
        return False
    try:
        return not math.isnan(float(value))
    except OverflowError:
        return False


def _fmt_number(x: float) -> str:
    return format(x, ".10g")


def _verdict(passed: bool, extracted: str, why: str, score: float | None = None) -> Verdict:
    why = " ".join(why.split())  # guarantee a single line
    return Verdict(passed, extracted, why, (1.0 if passed else 0.0) if score is None else score)


def judge(output: str, expected: str, spec: CheckSpec) -> Verdict:
    """Judge one output. Never raises on any output or expected text; raises ValueError
    when ``spec`` itself is invalid (see CheckSpec.validate)."""
    spec.validate()
    output = "" if output is None else str(output)
    expected = "" if expected is None else str(expected)
    if spec.kind == "label":
        return _judge_label(output, expected, spec)
    found = extract(output, spec.extraction_used, marker=spec.marker, labels=spec.labels,
                    label_threshold=spec.label_threshold)
    if spec.kind == "number":
        return _judge_number(found, expected, spec)
    if spec.kind == "fuzzy":
        return _judge_fuzzy(found, expected, spec)
    if spec.kind == "pattern":
        return _judge_pattern(found, expected, spec)
    if spec.kind == "contains":
        return _judge_contains(found, expected)
    if spec.kind == "json_field":
        return _judge_json(found, expected, spec)
    return _judge_exact(found, expected)


def _found_phrase(found: Extraction) -> str:
    return quote(found.text) if found.text else "nothing"


def _judge_exact(found: Extraction, expected: str) -> Verdict:
    if normalize_answer(found.text) == normalize_answer(expected):
        return _verdict(True, found.text, f"matches {quote(expected)} ({found.how})")
    return _verdict(False, found.text,
                    f"expected {quote(expected)}, found {_found_phrase(found)} ({found.how})")


def _judge_label(output: str, expected: str, spec: CheckSpec) -> Verdict:
    labels = spec.labels or (expected,)
    if spec.extraction_used == "label":
        source, from_where = output, ""
    else:
        found = extract(output, spec.extraction_used, marker=spec.marker)
        source, from_where = found.text, f", {found.how}"
    m = match_label(source, labels, spec.label_threshold)
    if m.label is None:
        return _verdict(False, source.strip(), f"{m.how}{from_where}")
    if label_key(m.label) == label_key(expected):
        return _verdict(True, m.label, f"matches {quote(m.label)} ({m.how}{from_where})")
    note = "" if any(label_key(lab) == label_key(expected) for lab in labels) else (
        "; the expected answer is not one of the labels")
    return _verdict(False, m.label, f"expected {quote(expected)}, found {quote(m.label)} "
                                    f"({m.how}{from_where}){note}")


def _judge_number(found: Extraction, expected: str, spec: CheckSpec) -> Verdict:
    want = parse_number(expected)
    if want is None:
        return _verdict(False, found.text,
                        f"expected answer {quote(expected)} is not a single number")
    value, how = parse_number(found.text), found.how
    if value is None:
        values = [v for _, v in number_tokens(found.text) if v is not None]
        if not values:
            why = found.how if not found.text and found.how.startswith("no number") else (
                f"no number found ({found.how})")
            return _verdict(False, found.text, why)
        value, how = values[-1], f"{found.how}, last number"
    if math.isclose(value, want, rel_tol=spec.rel_tol, abs_tol=spec.abs_tol):
        return _verdict(True, found.text, f"matches {_fmt_number(want)} ({how})")
    return _verdict(False, found.text,
                    f"expected {_fmt_number(want)}, found {_fmt_number(value)} ({how})")


def _judge_fuzzy(found: Extraction, expected: str, spec: CheckSpec) -> Verdict:
    ratio = fuzz.ratio(normalize_answer(found.text), normalize_answer(expected))
    shown = fmt_score(ratio)
    need = fmt_score(spec.fuzzy_threshold)
    if ratio >= spec.fuzzy_threshold:
        return _verdict(True, found.text, f"close to {quote(expected)}: similarity {shown} ≥ "
                                          f"{need} ({found.how})", ratio / 100)
    return _verdict(False, found.text, f"expected {quote(expected)}, found {_found_phrase(found)}:"
                                       f" similarity {shown} < {need} ({found.how})", ratio / 100)


def _judge_pattern(found: Extraction, expected: str, spec: CheckSpec) -> Verdict:
    if spec.pattern:
        regex = spec.pattern.replace(_EXPECTED, re.escape(expected))
        shown = quote(spec.pattern, 40)
        flags = 0
    else:
        regex = r"(?<!\w)" + re.escape(expected.strip()) + r"(?!\w)"
        shown = f"{quote(expected)} as a whole word"
        flags = re.IGNORECASE
    try:
        m = re.search(regex, found.text, flags)
    except re.error as exc:  # only reachable for odd {expected} splicing
        return _verdict(False, found.text, f"pattern {shown} is not a valid regex ({exc})")
    if m:
        return _verdict(True, found.text, f"pattern {shown} matches {quote(m.group(0))} "
                                          f"({found.how})")
    return _verdict(False, found.text, f"pattern {shown} finds nothing ({found.how})")


def _judge_contains(found: Extraction, expected: str) -> Verdict:
    want = normalize_answer(expected)
    if not want:
        return _verdict(False, found.text, "expected answer is empty once normalized")
    text = normalize_answer(found.text)
    if re.search(r"(?<!\w)" + re.escape(want) + r"(?!\w)", text):
        return _verdict(True, found.text, f"contains {quote(expected)} ({found.how})")
    return _verdict(False, found.text, f"{quote(expected)} not found ({found.how})")


def first_json_object(text: str) -> dict | None:
    """The first JSON object in the text: decoding is tried from each "{" in turn."""
    decoder = json.JSONDecoder()
    start = text.find("{")
    while start != -1:
        try:
            value, _ = decoder.raw_decode(text, start)
        except (ValueError, RecursionError):
            value = None
        if isinstance(value, dict):
            return value
        start = text.find("{", start + 1)
    return None


def _follow(value: object, path: str) -> tuple[bool, object, str]:
    """Follow a dotted path; (found, value, the step that failed)."""
    for step in path.split("."):
        if isinstance(value, dict) and step in value:
            value = value[step]
        elif isinstance(value, list) and re.fullmatch(r"-?[0-9]{1,18}", step) and (
                -len(value) <= int(step) < len(value)):
            value = value[int(step)]
        else:
            return False, None, step
    return True, value, ""


def _json_text(value: object) -> str:
    if isinstance(value, str):
        return value
    return json.dumps(value, ensure_ascii=False)


def _judge_json(found: Extraction, expected: str, spec: CheckSpec) -> Verdict:
    obj = first_json_object(found.text)
    path = spec.json_field
    if obj is None:
        return _verdict(False, found.text, f"no JSON object found ({found.how})")
    ok, value, step = _follow(obj, path)
    if not ok:
        where = "" if step == path else f" (no {quote(step)} at that step)"
        return _verdict(False, found.text, f"JSON has no field {quote(path)}{where}")
    shown = _json_text(value)
    want = parse_number(expected)
    if _is_real(value) and want is not None:
        same = math.isclose(float(value), want, rel_tol=spec.rel_tol, abs_tol=spec.abs_tol)
    else:
        same = normalize_answer(shown) == normalize_answer(expected)
    if same:
        return _verdict(True, shown, f"field {quote(path)} matches {quote(expected)}")
    return _verdict(False, shown,
                    f"field {quote(path)} is {quote(shown)}, expected {quote(expected)}")
