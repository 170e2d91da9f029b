"""Contextual calibration of label scores (core/calibration.py and score mode in grading)."""
from __future__ import annotations

import json
import math
import sqlite3

import pytest

from honebench.core.calibration import CONTENT_FREE, calibrated_shares
from honebench.core.engines.base import Params, Request, Result
from honebench.core.grading import Grader, shared_prefix_chars
from honebench.core.wording import Wording, build_prompt
from tests.fakes import FakeEngine

LABELS = ("refund", "booking_change", "lost_property", "accessibility", "timetable")
# The fake's label prior: what it gives any prompt before looking at the message.
PRIOR = {"refund": 0.5, "booking_change": 0.3, "lost_property": 0.1, "accessibility": 0.05,
         "timetable": 0.05}


class BiasedScorer(FakeEngine):
    """Scores labels as prior x evidence: the item's true department gets evidence 3, the
    others 1, and a content-free prompt (no item message in it) gets the prior alone. So the
    raw top label is refund for every item whose department has a prior share below 0.5/3,
    and booking_change for booking_change items (0.3 x 3 > 0.5)."""

    def __init__(self, truth: dict[str, str]):
        super().__init__()
        self.truth, self.scored = truth, 0

    def score_labels(self, requests):
        for req in requests:
            self.scored += 1
            text = self.render(req.messages, req.prefill)
            found = [dept for msg, dept in self.truth.items() if msg in text]
            weights = [PRIOR[lab] * (3 if found and lab == found[0] else 1) for lab in req.labels]
            total = sum(weights)
            shares = tuple(w / total for w in weights)
            best = max(range(len(shares)), key=lambda i: shares[i])
            yield Result(key=req.key, text=req.labels[best], label_shares=shares,
                         label_logprobs=tuple(math.log(s) for s in shares), seconds=0.001)


def _grade(project, engine, **kw):
    set_id, qset = project.current_set()
    kw.setdefault("wording", Wording("Department: ", "answer"))
    kw.setdefault("check", project.check())
    return Grader(project.store, engine).grade(set_id=set_id, qset=qset, split="all", **kw)


def test_worked_example_dividing_by_the_prior():
    # Worked example, by hand: prior (0.5, 0.3, 0.1, 0.05, 0.05); the item's raw shares are
    # prior x evidence (1, 1, 1, 1, 3) renormalised = (0.5, 0.3, 0.1, 0.05, 0.15) / 1.1.
    # Raw top: refund (0.4545). Divided by the prior: (1, 1, 1, 1, 3) / 7, so timetable 3/7.
    raw = [0.5 / 1.1, 0.3 / 1.1, 0.1 / 1.1, 0.05 / 1.1, 0.15 / 1.1]
    got = calibrated_shares([math.log(s) for s in raw], [PRIOR[lab] for lab in LABELS])
    assert got == pytest.approx([1 / 7, 1 / 7, 1 / 7, 1 / 7, 3 / 7])
    assert sum(got) == pytest.approx(1.0)
    with pytest.raises(ValueError):
        calibrated_shares([0.0, 0.0], [1.0])


def test_calibration_undoes_a_known_label_bias(project):
    _, qset = project.current_set()
    engine = BiasedScorer({it.fields["message"]: it.expected for it in qset.items})
    plain = _grade(project, engine, params=Params(calibrate=False))
    # uncalibrated, the bias wins: only refund and booking_change, right only on those items
    assert {m.extracted for m in plain.marks} == {"refund", "booking_change"}
    assert sum(m.passed for m in plain.marks) == sum(
        it.expected in ("refund", "booking_change") for it in qset.items)
    before = engine.scored
    fixed = _grade(project, engine)  # calibrated by default
    # one content-free prompt per filler ("" and "N/A") plus every item: all new cache keys
    assert engine.scored - before == len(CONTENT_FREE) + len(qset.items)
    assert all(m.passed for m in fixed.marks)
    for mark in fixed.marks:  # the worked example above, for every item: 3/7 and 1/7
        assert mark.confidence == pytest.approx(3 / 7)
        assert mark.runner_up_share == pytest.approx(1 / 7)
    params = project.store.run(fixed.run_id).params
    assert params["calibrate"] is True and params["content_free"] == list(CONTENT_FREE)
    assert params["label_prior"] == pytest.approx(PRIOR)
    assert project.store.run(plain.run_id).params["calibrate"] is False
    assert "label_prior" not in project.store.run(plain.run_id).params
    # a regrade comes from the cache, content-free prompts included, and chooses the same
    again = _grade(project, engine, params=Params(calibrate=True))
    assert engine.scored - before == len(CONTENT_FREE) + len(qset.items)
    assert [m.extracted for m in again.marks] == [m.extracted for m in fixed.marks]
    assert all(m.cached for m in again.marks)


def test_calibration_is_off_outside_score_mode(project):
    _, qset = project.current_set()
    engine = BiasedScorer({})
    outcome = _grade(project, engine, items=qset.items[:3],
                     params=Params(answer_mode="generate", calibrate=True))
    assert engine.scored == 0
    assert "calibrate" not in project.store.run(outcome.run_id).params


@pytest.mark.model
def test_real_model_calibrated_shares_and_recorded_prior(project, local_engine):
    _, qset = project.current_set()
    items = qset.items[:4]
    wording = Wording("Department (refund, booking_change, lost_property, accessibility or "
                      "timetable): ", "answer")
    outcome = _grade(project, local_engine, wording=wording, items=items,
                     params=Params(calibrate=True))
    prior = project.store.run(outcome.run_id).params["label_prior"]
    assert set(prior) == set(LABELS) and sum(prior.values()) == pytest.approx(1.0)
    # the prior is the average of the model's own shares for the content-free prompts
    prefix = shared_prefix_chars(local_engine, wording, ["message"])  # as the grader sends
    direct = []
    for i, filler in enumerate(CONTENT_FREE):
        built = build_prompt(wording, {"message": filler})
        req = Request(key=str(i), messages=built.messages, prefill=built.prefill, labels=LABELS,
                      prefix_chars=prefix)
        direct.append(next(iter(local_engine.score_labels([req]))).label_shares)
    want = [sum(row[k] for row in direct) / len(direct) for k in range(len(LABELS))]
    assert [prior[lab] for lab in LABELS] == pytest.approx(want, rel=1e-4)
    # each mark's choice and shares are its raw scores (as cached) divided by that prior
    with sqlite3.connect(project.path) as db:
        for mark in outcome.marks:
            saved = json.loads(db.execute("SELECT label_scores FROM completion_cache WHERE "
                                          "prompt = ?", (mark.prompt,)).fetchone()[0])
            share = calibrated_shares(saved["logprobs"], want)
            assert sum(share) == pytest.approx(1.0) and all(0 <= s <= 1 for s in share)
            assert mark.extracted == LABELS[share.index(max(share))]
            assert mark.confidence == pytest.approx(max(share), rel=1e-3)
            assert mark.confidence + mark.runner_up_share <= 1 + 1e-9
