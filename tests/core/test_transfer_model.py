"""The transfer check on two real engines: the bundled model as graded (context 2048) and
the same model file loaded with another context size as the second engine. The test via a
real llama-cpp-python server on loopback is in tests/test_llama_server.py."""
from __future__ import annotations

import pytest

from honebench.core.engines.local import LocalEngine
from honebench.core.transfer import ranks
from honebench.core.wording import Wording

pytestmark = pytest.mark.model

V1 = Wording("Which department should handle this message? Reply with one of: refund, "
             "booking_change, lost_property, accessibility, timetable.", "before")
V2 = Wording("Route the passenger's message to one department.", "system")


@pytest.fixture(scope="module")
def small_context():
    engine = LocalEngine(n_ctx=1024)
    yield engine
    engine.close()


def test_same_wordings_graded_on_two_engines(project, local_engine, small_context):
    assert local_engine.fingerprint() != small_context.fingerprint()  # its own cache entries
    e1, e2 = (project.keep(w).value for w in (V1, V2))
    done = project.transfer(local_engine, small_context, [e1.id, e2.id],
                            other_label="bundled model, context 1024", limit=12)
    result = done.value
    assert result.n == 12 and [v.label for v in result.versions] == ["v1", "v2"]
    for v in result.versions:
        here = project.store.marks(v.here_run)
        there = project.store.marks(v.there_run)
        assert len(here) == len(there) == 12
        assert not any(m.cached for m in there)  # the graded engine's cache did not answer
        assert v.here.passed == sum(m.passed for m in here)
        assert v.there.passed == sum(m.passed for m in there)
        assert v.paired.fixed + v.paired.broken + v.paired.both_pass + v.paired.both_fail == 12
    # the ranks and flags follow from the two engines' pass counts
    here_pass = [v.here.passed for v in result.versions]
    there_pass = [v.there.passed for v in result.versions]
    assert [v.rank_here for v in result.versions] == ranks(here_pass)
    assert [v.rank_there for v in result.versions] == ranks(there_pass)
    flipped = (here_pass[0] - here_pass[1]) * (there_pass[0] - there_pass[1]) < 0
    assert all(("order changes" in v.flags) == flipped for v in result.versions)
    runs = {r.id: r for r in project.store.runs(purpose=None)}
    assert {runs[v.there_run].purpose for v in result.versions} == {"transfer"}
    assert {runs[v.there_run].fingerprint for v in result.versions} == {
        small_context.fingerprint()}
    assert project.latest_transfer() == result
    # a second check reuses the graded engine's runs and the other engine's cache
    again = project.transfer(local_engine, small_context, [e1.id, e2.id],
                             other_label="bundled model, context 1024", limit=12).value
    assert [v.here_run for v in again.versions] == [v.here_run for v in result.versions]
    assert all(m.cached for v in again.versions for m in project.store.marks(v.there_run))
    assert [(v.here, v.there) for v in again.versions] == [(v.here, v.there)
                                                           for v in result.versions]
