"""Fuzzing set reading: whatever bytes a file holds, reading it either gives a question set
or raises SetError with a message; nothing else escapes (no crash, no other exception)."""
from __future__ import annotations

import json

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from honebench.core.sets import SetError, load_set

SUFFIXES = (".csv", ".tsv", ".txt", ".jsonl", ".json")
FUZZ = settings(max_examples=150, deadline=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture])


def _read(tmp_path, suffix: str, raw: bytes) -> None:
    path = tmp_path / f"fuzz{suffix}"
    path.write_bytes(raw)
    try:
        qset = load_set(path)
    except SetError as err:
        text = str(err)
        assert text.startswith(f"Cannot load question set fuzz{suffix}") and len(text) > 40
        return
    assert len(qset) >= 1 and all(item.expected.strip() for item in qset.items)


@FUZZ
@given(suffix=st.sampled_from(SUFFIXES + (".xlsx", ".parquet")), raw=st.binary(max_size=600))
@example(suffix=".csv", raw=b"\xff\xfe")  # a byte-order mark and nothing else
@example(suffix=".csv", raw=b"\xfe\xff\x00q\x00,\x00a")
@example(suffix=".jsonl", raw=b"\x00" * 40)
@example(suffix=".json", raw=b"[1e999999]")
def test_random_bytes(tmp_path, suffix, raw):
    _read(tmp_path, suffix, raw)


# text built from the characters that matter to the readers, so the fuzzing reaches past
# decoding into quoting, delimiters, headers and records
PIECES = st.sampled_from(['"', ",", "\t", ";", "\n", "\r\n", "\r", " ", "question", "answer",
                          "id", "split", "test", "x", "1", "{", "}", "[", "]", ":", "\ufeff",
                          "\\", "null", "é", "\u2028"])


@FUZZ
@given(suffix=st.sampled_from(SUFFIXES), parts=st.lists(PIECES, max_size=80))
def test_random_structured_text(tmp_path, suffix, parts):
    _read(tmp_path, suffix, "".join(parts).encode("utf-8"))


@FUZZ
@given(records=st.lists(st.dictionaries(
    st.sampled_from(["question", "answer", "id", "split", "", " ", "Answer"]),
    st.recursive(st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=8),
                 lambda inner: st.lists(inner, max_size=3) | st.dictionaries(
                     st.text(max_size=3), inner, max_size=3), max_leaves=6),
    max_size=4), max_size=6))
def test_random_json_records(tmp_path, records):
    lines = "\n".join(json.dumps(r) for r in records).encode("utf-8")
    _read(tmp_path, ".jsonl", lines)
    _read(tmp_path, ".json", json.dumps(records).encode("utf-8"))
