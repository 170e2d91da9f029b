"""Suggestions: cleaning, duplicates, phrase edits, held-out isolation, early stopping, and
each strategy with the real bundled model."""
from __future__ import annotations

import pytest

from honebench.core.suggest.cleaning import clean_reply
from honebench.core.suggest.phrase_edits import phrase_edits, phrases
from honebench.core.suggest.pipeline import suggest
from honebench.core.suggest.strategies import STRATEGIES
from honebench.core.wording import Wording
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine


@pytest.mark.parametrize("reply,expected", [
    ("1. Route the message to one desk.", "Route the message to one desk."),
    ('Here is the new instruction:\n"Name the desk for this message."', "Name the desk for this message."),
    ("Sure! Name the single right department.", "Name the single right department."),
    ("- Say which desk should answer.", "Say which desk should answer."),
])
def test_clean_reply_strips_numbering_quotes_and_preambles(reply, expected):
    assert clean_reply(reply).text == expected


@pytest.mark.parametrize("reply,reason", [
    ("", "empty"), ("Here is the new instruction:", "preamble"), ("Refund.", "words"),
    ("Instruction: x y z\nScore: 50%", "echoed"), ("word " * 200, "characters"),
])
def test_clean_reply_says_why_it_drops(reply, reason):
    cleaned = clean_reply(reply)
    assert cleaned.text is None and reason in cleaned.reason


def test_phrase_edits_are_deterministic_and_real_edits():
    text = "Read the message. Decide which desk handles it. Reply with the desk name only."
    donors = ["Be brief.", text]
    first = phrase_edits(text, donors, 5, seed=3)
    assert first == phrase_edits(text, donors, 5, seed=3)
    assert first != phrase_edits(text, donors, 5, seed=4)
    assert len(first) == 5 and len({v for v, _ in first}) == 5
    base = set(phrases(text))
    for variant, what in first:
        assert variant != text and what
        assert set(phrases(variant)) != base or variant != text


def _wording_of(req) -> str:
    return "\n".join(m["content"] for m in req.messages)


def test_duplicates_of_kept_and_set_aside_entries_are_dropped(tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    project.keep(Wording("Name the department that should answer this message.", "before"))
    project.set_aside(Wording("Pick the one desk that deals with this message.", "before"))
    replies = iter(["Name the department that should answer this message!",
                    "Pick the one desk that deals with this message",
                    "Tell which team must reply to the passenger here."])

    def answer(req):
        text = _wording_of(req)
        if "Say this instruction again" in text:
            return next(replies)
        return "refund"

    out = suggest(project, FakeEngine(answer), "rephrase", count=3, early_slice=11)
    dups = [d for d in out.dropped if d.startswith("duplicate")]
    assert len(dups) == 2 and any("v1" in d for d in dups) and any("v2" in d for d in dups)
    assert [c.text for c in out.cards] == ["Tell which team must reply to the passenger here."]


def test_held_out_items_never_reach_a_strategy_or_scoring(tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    project.keep(project.draft())
    project.keep(Wording("Name the desk. Use one word only. Be exact.", "before"))
    _, qset = project.current_set()
    held = [it.fields["message"] for it in qset.held_out()]
    seen = []

    def answer(req):
        seen.append(_wording_of(req))
        return "A clear new way to name the desk." if len(req.messages) == 1 and \
            "instruction" in seen[-1].lower() else "refund"

    engine = FakeEngine(answer)
    second = project.store.shelf()[1].id
    for strategy in STRATEGIES:
        suggest(project, engine, strategy, count=2, other_id=second, early_slice=5)
    assert seen  # the check looked at real traffic
    leaks = [h for h in held for text in seen if h in text]
    assert leaks == []


def test_early_stop_keeps_a_winner_and_drops_a_hopeless_one(tmp_path, sample_dir):
    """Constructed case: the current wording gets every other item right, candidate A gets
    all right, candidate B none. Full scoring shows A beats the current wording, so the
    early stop must keep A; B's interval on the first slice lies below, so it stops."""
    project = small_project(tmp_path, sample_dir, n=40)
    _, qset = project.current_set()
    expected = {it.fields["message"]: it.expected for it in qset.items}
    order = {it.fields["message"]: i for i, it in enumerate(qset.items)}

    def answer(req):
        text = _wording_of(req)
        if "Say this instruction again" in text:
            return "Always answer right.\n" if req.seed % 2 == 0 else "Always answer wrong."
        message = next(m for m in expected if m in text)
        if "Always answer right" in text:
            return expected[message]
        if "Always answer wrong" in text:
            return "none"
        return expected[message] if order[message] % 2 == 0 else "none"

    out = suggest(project, FakeEngine(answer), "rephrase", count=2, early_slice=10)
    assert [c.text for c in out.cards] == ["Always answer right."]
    assert out.cards[0].score.rate == 1.0 and out.cards[0].paired.broken == 0
    assert any(d.startswith("stopped early") for d in out.dropped)
    assert "first 10 tuning items" in out.rule


def test_junk_only_gives_the_plain_no_usable_wording_message(tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    out = suggest(project, FakeEngine(lambda r: "Refund."), "scoreboard", count=3, early_slice=5)
    assert out.cards == []
    assert out.message.startswith("The model gave no usable wording (3 replies dropped: 3 under 3 words")


@pytest.mark.model
@pytest.mark.parametrize("strategy", STRATEGIES)
def test_each_strategy_with_the_real_model(tmp_path, sample_dir, local_engine, strategy):
    from honebench.core.engines.base import Params

    project = small_project(tmp_path, sample_dir)
    project.keep(project.draft())
    other = project.keep(Wording("Read the message. Name the desk in one word.", "before")).value
    out = suggest(project, local_engine, strategy, count=2, other_id=other.id, early_slice=6,
                  params=Params(max_tokens=10))
    if out.cards:
        for card in out.cards:
            assert card.text.strip() and card.score.total == len(project.current_set()[1].tuning())
            assert card.strategy == strategy
    else:
        assert out.message.startswith("The model gave no usable wording")
    if strategy == "misses":
        assert out.notes.get("diagnosis")
