"""Word-level diffs between wordings."""
from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from honebench.core.diffing import diff_counts, tokens, word_diff


def join(pieces, *ops):
    return "".join(text for op, text in pieces if op in ops)


def test_identical_texts_are_one_same_piece():
    assert word_diff("Reply with one word.", "Reply with one word.") == [
        ("same", "Reply with one word.")]
    assert diff_counts("Reply with one word.", "Reply with one word.") == (0, 0)


def test_empty_texts():
    assert word_diff("", "") == []
    assert word_diff("", "two words") == [("added", "two words")]
    assert word_diff("two words", "") == [("removed", "two words")]
    assert diff_counts("", "two words") == (0, 2)
    assert diff_counts("two words", "") == (2, 0)


def test_one_word_swapped():
    # Worked by hand: only the last word differs.
    assert word_diff("Reply with one word.", "Reply with one label.") == [
        ("same", "Reply with one "), ("removed", "word."), ("added", "label.")]
    assert diff_counts("Reply with one word.", "Reply with one label.") == (1, 1)


def test_neighbouring_changes_read_as_one_phrase():
    # Worked by hand: "one word" -> "a single label" is one replaced phrase, not a zigzag
    # of word, space, word.
    pieces = word_diff("Reply in one word please", "Reply in a single label please")
    assert pieces == [("same", "Reply in "), ("removed", "one word"),
                      ("added", "a single label"), ("same", " please")]
    assert diff_counts("Reply in one word please", "Reply in a single label please") == (2, 3)
    assert diff_counts("Reply in a single label please", "Reply in one word please") == (3, 2)


def test_insertion_in_the_middle():
    old = "Which department should handle this message?"
    new = "Which one department should handle this customer message?"
    assert diff_counts(old, new) == (0, 2)
    assert [t.strip() for op, t in word_diff(old, new) if op == "added"] == ["one", "customer"]


def test_spacing_only_change_counts_no_words():
    pieces = word_diff("Reply  now", "Reply now")
    assert diff_counts("Reply  now", "Reply now") == (0, 0)
    assert ("removed", "  ") in pieces and ("added", " ") in pieces


def test_line_breaks_are_kept():
    old = "Line one.\nLine two."
    new = "Line one.\n\nLine two, changed."
    pieces = word_diff(old, new)
    assert join(pieces, "same", "removed") == old
    assert join(pieces, "same", "added") == new
    assert diff_counts(old, new) == (1, 2)


def test_tokens_keep_whitespace():
    assert tokens("  a b\n") == ["  ", "a", " ", "b", "\n"]
    assert tokens("") == []


texts = st.text(alphabet=st.sampled_from(list("ab c\n\t.") + ["\u00a0", "\u2003", "é"]),
                max_size=40) | st.text(max_size=40)


@settings(max_examples=400)
@given(texts, texts)
def test_pieces_rebuild_both_texts(old, new):
    pieces = word_diff(old, new)
    assert join(pieces, "same", "removed") == old
    assert join(pieces, "same", "added") == new
    assert all(op in ("same", "removed", "added") and text for op, text in pieces)
    # No two neighbouring pieces share an op (runs are merged).
    assert all(a[0] != b[0] for a, b in zip(pieces, pieces[1:]))


@settings(max_examples=400)
@given(texts, texts)
def test_counts_agree_with_str_split(old, new):
    # Reference: str.split() word counts from the standard library. Every word of the old
    # text is either kept or removed, every word of the new text either kept or added.
    removed, added = diff_counts(old, new)
    kept = sum(len(t.split()) for op, t in word_diff(old, new) if op == "same")
    assert kept + removed == len(old.split())
    assert kept + added == len(new.split())
