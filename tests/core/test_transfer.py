"""The transfer check's logic: scores, the paired test between engines, ranks and flags
(core/transfer.py), and the project operation with fake engines (core/operations/transfer.py).
The real model on two engines is in tests/core/test_transfer_model.py."""
from __future__ import annotations

import pytest
from scipy.stats import binomtest

from honebench.core.settings import ProjectSettings
from honebench.core.transfer import (ORDER_CHANGES, WINS_HERE, WINS_THERE, TransferResult,
                                     VersionMarks, ranks, transfer_result)
from honebench.core.wording import Wording
from tests.fakes import FakeEngine

from .shelf_builder import pattern

IDS = [f"i{k}" for k in range(10)]


def _result(*versions):
    return transfer_result(versions, here_engine="A", there_engine="B", here_fingerprint="a",
                           there_fingerprint="b", item_ids=IDS)


def test_ranks_share_ties():
    # worked example: passes 7, 9, 7, 3 -> ranks 2, 1, 2, 4 (competition ranking)
    assert ranks([7, 9, 7, 3]) == [2, 1, 2, 4]


def test_flags_on_a_worked_example():
    # worked example: v1 passes 8 here, 5 there; v2 passes 6 here, 7 there; v3 passes 6
    # here, 5 there. v1 wins here, not there; v2 wins there, not here; v1 and v2 flip;
    # v3 ties v1 there and v2 here, so its order against them does not flip.
    v1 = VersionMarks("v1", 1, pattern(8, 10), pattern(5, 10))
    v2 = VersionMarks("v2", 2, pattern(6, 10), pattern(7, 10))
    v3 = VersionMarks("v3", 3, pattern(6, 10), pattern(5, 10))
    result = _result(v1, v2, v3)
    one, two, three = result.versions
    assert (one.rank_here, one.rank_there) == (1, 2)
    assert (two.rank_here, two.rank_there) == (2, 1)
    assert (three.rank_here, three.rank_there) == (2, 2)
    assert one.flags == (WINS_HERE, ORDER_CHANGES) and one.flips == ("v2",)
    assert two.flags == (WINS_THERE, ORDER_CHANGES) and two.flips == ("v1",)
    assert three.flags == () and three.flips == ()
    assert [v.label for v in result.flagged] == ["v1", "v2"]


def test_a_tie_on_one_engine_is_no_rank_change():
    # worked example: equal here, v2 ahead there -> v1 was (tied) best here and is beaten
    # there: "wins here, not there"; no strict pairwise flip
    v1 = VersionMarks("v1", 1, pattern(6, 10), pattern(4, 10))
    v2 = VersionMarks("v2", 2, pattern(6, 10), pattern(6, 10))
    one, two = _result(v1, v2).versions
    assert one.flags == (WINS_HERE,) and one.flips == ()
    assert two.flags == ()


def test_same_order_on_both_engines_has_no_flags():
    v1 = VersionMarks("v1", 1, pattern(9, 10), pattern(6, 10))
    v2 = VersionMarks("v2", 2, pattern(5, 10), pattern(2, 10))
    assert all(not v.flags for v in _result(v1, v2).versions)


def test_paired_test_between_engines_matches_scipy():
    here = [True, True, True, True, True, True, False, False, True, False]
    there = [False, False, False, False, True, True, True, False, False, False]
    v = _result(VersionMarks("v1", 1, here, there)).versions[0]
    # discordant pairs: passed here, missed there = 5; missed here, passed there = 1
    assert (v.paired.broken, v.paired.fixed) == (5, 1)
    # reference: scipy.stats.binomtest, two-sided exact binomial test on the discordant
    # pairs (the exact McNemar test)
    assert v.paired.p_value == pytest.approx(binomtest(1, 6, 0.5).pvalue)
    # reference: scipy.stats.binomtest(...).proportion_ci(method="wilson")
    ci = binomtest(7, 10).proportion_ci(confidence_level=0.95, method="wilson")
    assert (v.here.low, v.here.high) == pytest.approx((ci.low, ci.high))
    assert v.here.passed == 7 and v.there.passed == 3 and v.n == 10


def test_result_survives_saving_as_json():
    import json

    v1 = VersionMarks("v1", 1, pattern(8, 10), pattern(5, 10), here_run=3, there_run=9,
                      errors_there=2)
    v2 = VersionMarks("v2", 2, pattern(6, 10), pattern(7, 10))
    result = _result(v1, v2)
    again = TransferResult.from_dict(json.loads(json.dumps(result.as_dict())))
    assert again == result


def test_uneven_marks_are_refused():
    with pytest.raises(ValueError, match="v1 has 3 marks here"):
        _result(VersionMarks("v1", 1, [True] * 3, [True] * 10))
    with pytest.raises(ValueError, match="at least one shelf version"):
        _result()


# -- the project operation, with fake engines ------------------------------------------
class Engine(FakeEngine):
    """A fake engine with its own fingerprint that answers right for the wordings in
    ``right`` on the first ``share`` of the items it is asked (by item text)."""

    def __init__(self, name, qset, rules):
        expected = {it.fields["message"]: it.expected for it in qset.items}
        order = [it.fields["message"] for it in qset.tuning()]

        def answer(req):
            text = " ".join(m["content"] for m in req.messages)
            message = next(m for m in expected if m in text)
            for wording, share in rules.items():
                if wording in text:
                    good = order.index(message) < share
                    return expected[message] if good else "no idea"
            return "no idea"

        super().__init__(answer)
        self.name = name

    def fingerprint(self):
        return f"fake:{self.name}"


V1 = Wording("Route this message (one).", "system")
V2 = Wording("Route this message (two).", "system")
GENERATE = ProjectSettings(answer_mode="generate", max_tokens=8)


def _shelve(project, wording):
    return project.keep(wording).value


def test_transfer_grades_the_other_engine_as_side_runs(project):
    _, qset = project.current_set()
    e1, e2 = _shelve(project, V1), _shelve(project, V2)
    here = Engine("here", qset, {"(one)": 8, "(two)": 5})
    there = Engine("there", qset, {"(one)": 4, "(two)": 6})
    done = project.transfer(here, there, [e1.id, e2.id], other_label="there model",
                            label="here model", limit=10, settings=GENERATE)
    result = done.value
    one, two = result.versions
    assert (one.here.passed, one.there.passed, two.here.passed, two.there.passed) == (8, 4, 5, 6)
    assert one.flags == (WINS_HERE, ORDER_CHANGES) and two.flags == (WINS_THERE, ORDER_CHANGES)
    assert result.here_engine == "here model" and result.there_engine == "there model"
    assert result.n == 10 and result.item_ids == tuple(it.id for it in qset.tuning()[:10])
    # the graded engine's runs are ordinary (they give the shelf its scores); the other
    # engine's are side runs, left out of runs() and the shelf
    ordinary = project.store.runs()
    assert {r.id for r in ordinary} == {one.here_run, two.here_run}
    side = project.store.runs(purpose="transfer")
    assert {r.id for r in side} == {one.there_run, two.there_run}
    assert all(r.fingerprint == "fake:there" for r in side)
    rows = {row.entry.label: row for row in project.shelf_rows()}
    assert rows["v1"].tuning.passed == 8 and rows["v2"].tuning.passed == 5
    assert done.changes.shelf
    # saved as an analysis and read back
    assert project.latest_transfer() == result
    saved = project.store.analyses("transfer")
    assert len(saved) == 1 and saved[0]["subject"] == "there model"


def test_transfer_reuses_the_graded_engines_runs(project):
    _, qset = project.current_set()
    e1 = _shelve(project, V1)
    here = Engine("here", qset, {"(one)": 8})
    project.grade(here, V1, limit=12, settings=GENERATE)
    calls = here.calls
    first = project.transfer(here, Engine("b", qset, {"(one)": 3}), [e1.id],
                             other_label="b", limit=10, settings=GENERATE)
    assert here.calls == calls  # nothing graded again on the graded engine
    assert len(project.store.runs()) == 1 and not first.changes.shelf
    # other settings on the graded engine: graded again (an ordinary run)
    project.transfer(here, Engine("c", qset, {"(one)": 3}), [e1.id], other_label="c",
                     limit=10, settings=ProjectSettings(answer_mode="generate", max_tokens=9))
    assert len(project.store.runs()) == 2
    assert len(project.transfer_results()) == 2


def test_the_same_engine_twice_is_refused(project):
    _, qset = project.current_set()
    e1 = _shelve(project, V1)
    with pytest.raises(ValueError, match="the other engine is the graded engine itself"):
        project.transfer(Engine("x", qset, {}), Engine("x", qset, {}), [e1.id],
                         other_label="x", limit=5, settings=GENERATE)
    assert project.store.runs(purpose=None) == []


def test_a_failing_other_engine_leaves_no_result(project):
    import threading

    _, qset = project.current_set()
    e1 = _shelve(project, V1)
    stop = threading.Event()
    there = Engine("there", qset, {"(one)": 5})
    there.on_call = lambda n: stop.set() if n == 3 else None
    with pytest.raises(ValueError, match="was cancelled after 3 items"):
        project.transfer(Engine("here", qset, {}), there, [e1.id], other_label="there",
                         limit=10, settings=GENERATE, cancel=stop)
    assert project.latest_transfer() is None
    assert len(project.store.marks(project.store.runs(purpose="transfer")[0].id)) == 3


def test_choosing_no_version_is_refused(project):
    _, qset = project.current_set()
    with pytest.raises(ValueError, match="at least one shelf version"):
        project.transfer(Engine("a", qset, {}), Engine("b", qset, {}), [], other_label="b")
    assert project.store.runs(purpose=None) == []
