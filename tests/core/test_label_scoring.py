"""Label scoring and packed decoding, against llama-cpp-python's own API as the reference."""
from __future__ import annotations

import math

import numpy as np
import pytest

from honebench.core.engines.base import Request
from honebench.core.engines.label_scoring import label_logprobs, plan_labels, shares
from honebench.core.engines.local import LocalEngine

LABELS = ("refund", "booking_change", "lost_property", "accessibility", "timetable")
MESSAGES = [
    "My ferry was cancelled and I want my money back.",
    "I left my blue rucksack on the 9:15 sailing to Harrow Isle.",
    "Can I move my booking from Friday to Sunday?",
    "Is there step-free access to the lounge for a wheelchair?",
]


def _request(key, message, labels=LABELS, prefix_chars=0):
    return Request(key=key, messages=(
        {"role": "system", "content": "Route the passenger message to one department: "
                                      + ", ".join(labels) + "."},
        {"role": "user", "content": message}), labels=tuple(labels), prefix_chars=prefix_chars)


# -- the token tree (no model) ------------------------------------------------------------

def test_labels_that_differ_in_their_first_token_need_only_the_prompt():
    prompt = [5, 6, 7]
    plan = plan_labels(prompt, [[5, 6, 7, 10, 11, 2], [5, 6, 7, 20, 2]])
    assert plan.common == 3 and plan.nodes == [()] and plan.chains == []


def test_a_shared_first_token_is_told_apart_by_the_tokens_after_it():
    # "no" + end, "no change" + end, "yes" + end
    plan = plan_labels([1, 2], [[1, 2, 30, 2], [1, 2, 30, 31, 2], [1, 2, 40, 2]])
    assert sorted(plan.nodes) == [(), (30,)]
    assert plan.chains == [([30], [0])]
    got = label_logprobs(plan, {(): _dist({30: .6, 40: .3}), (30,): _dist({2: .25, 31: .75})})
    # worked by hand: no = log(.6 * .25), no change = log(.6 * .75), yes = log .3
    assert got == pytest.approx([math.log(.6 * .25), math.log(.6 * .75), math.log(.3)])


def test_boundary_merges_move_the_common_point_back():
    # the prompt's last token 9 merges with the first label's start into token 19
    plan = plan_labels([1, 9], [[1, 19, 2], [1, 9, 7, 2]])
    assert plan.common == 1 and plan.paths == [[19, 2], [9, 7, 2]]


def test_all_tokens_mode_evaluates_every_step():
    plan = plan_labels([1], [[1, 3, 4, 2], [1, 5, 2]], full=True)
    assert sorted(plan.nodes) == [(), (3,), (3, 4), (5,)]


def test_shares_sum_to_one():
    got = shares([-1.0, -2.0, -30.0])
    assert sum(got) == pytest.approx(1.0, abs=1e-12)
    # worked example: e^-1 / (e^-1 + e^-2 + e^-30)
    assert got[0] == pytest.approx(math.exp(-1) / (math.exp(-1) + math.exp(-2) + math.exp(-30)))


def _dist(probs: dict[int, float], size: int = 64) -> np.ndarray:
    out = np.full(size, -50.0)
    for tok, p in probs.items():
        out[tok] = math.log(p)
    return out


# -- with the real model -------------------------------------------------------------------

def _reference(engine: LocalEngine, req: Request, full: bool) -> list[float]:
    """Slow path, llama-cpp-python's own API: a fresh Llama, ``Llama.eval`` of each label's
    tokens one at a time and log-softmax over the full-vocabulary row of ``Llama.scores``."""
    import llama_cpp

    llm = llama_cpp.Llama(model_path=str(engine.model_path), n_ctx=512, verbose=False,
                          n_threads=engine.n_threads, logits_all=True,
                          flash_attn=True)  # as the engine's decoder
    prompt = engine.render(req.messages)
    tok = lambda text: llm.tokenize(text.encode(), add_bos=True, special=True)  # noqa: E731
    base = tok(prompt)
    paths = [tok(prompt + label) + [engine._end_of_turn] for label in req.labels]
    plan = plan_labels(base, paths, full=full)
    dists = {}
    for path in [plan.paths[i] for i in range(len(paths))]:
        llm.reset()
        llm.eval(paths[0][:plan.common])
        for depth in range(len(path)):
            row = np.array(llm.scores[llm.n_tokens - 1], dtype=np.float64)
            top = row.max()
            dists[tuple(path[:depth])] = row - top - math.log(np.exp(row - top).sum())
            if depth + 1 < len(path):
                llm.eval([path[depth]])
    del llm
    return label_logprobs(plan, {n: d for n, d in dists.items() if n in plan.nodes})


@pytest.mark.model
def test_label_scores_match_llama_cpp_reference(local_engine):
    """Labels that differ in their first token (the routing labels): each label's
    log-probability and the choice equal the reference's within 1e-3."""
    for i, message in enumerate(MESSAGES[:3]):
        req = _request(str(i), message)
        result = next(iter(local_engine.score_labels([req])))
        want = _reference(local_engine, req, full=False)
        assert result.error is None
        assert list(result.label_logprobs) == pytest.approx(want, abs=1e-3)
        assert result.text == req.labels[max(range(len(want)), key=want.__getitem__)]
        assert sum(result.label_shares) == pytest.approx(1.0, abs=1e-9)


@pytest.mark.model
def test_tie_break_on_a_shared_first_token_agrees_with_the_reference(local_engine):
    """"refund" and "refund_other" share their first token, so the tokens after it decide.
    Tokens evaluated in a later decode call than the prompt move by up to a few tenths in
    llama.cpp (split-dependent numerics, measured 0.03-0.37 here), hence the wider margin."""
    labels = LABELS + ("refund_other",)
    for i, message in enumerate(MESSAGES[:3]):
        req = _request(str(i), message, labels)
        result = next(iter(local_engine.score_labels([req])))
        want = _reference(local_engine, req, full=False)
        assert list(result.label_logprobs) == pytest.approx(want, abs=0.5)
        assert sum(result.label_shares) == pytest.approx(1.0, abs=1e-9)


@pytest.mark.model
def test_scoring_several_items_together_chooses_as_one_at_a_time(local_engine):
    prefix = local_engine.render(_request("x", "\u2063").messages).index("\u2063")
    reqs = [_request(str(i), m, prefix_chars=prefix) for i, m in enumerate(MESSAGES)]
    together = {r.key: r for r in local_engine.score_labels(reqs)}
    for req in reqs:
        alone = next(iter(local_engine.score_labels([req])))
        assert alone.text == together[req.key].text
        assert alone.label_logprobs == pytest.approx(together[req.key].label_logprobs, abs=0.5)


@pytest.mark.model
def test_items_generated_together_give_the_same_greedy_tokens_as_one_at_a_time(local_engine):
    """Generation does not pack suffixes into one decode (BatchDecoder.pack is off): packed,
    llama.cpp's numerics changed a greedy token of some items (measured), this does not."""
    prefix = local_engine.render(_request("x", "\u2063").messages).index("\u2063")
    reqs = [Request(key=str(i), messages=_request("", m).messages, max_tokens=12,
                    prefix_chars=prefix) for i, m in enumerate(MESSAGES * 2)]
    assert local_engine.n_seq >= 4  # several items are decoded together
    together = {r.key: r.text for r in local_engine.complete(reqs)}
    alone = {req.key: next(iter(local_engine.complete([req]))).text for req in reqs}
    assert together == alone
    assert len(set(together.values())) > 1


@pytest.mark.model
def test_label_scoring_prefers_a_likely_answer(local_engine):
    msgs = ({"role": "user", "content": "Is the sea wet? Answer yes or no."},)
    yes, banana = local_engine.score_choices(msgs, ["Yes", "Banana sandwich"])
    assert yes > banana
