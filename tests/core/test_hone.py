"""Auto-hone: rounds, stop rules, cancel mid-round, the stored trajectory."""
from __future__ import annotations

import threading

import pytest

from honebench.core.hone import HoneBudget, hone
from honebench.core.store import SCHEMA_VERSION, Store
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine


LEVELS = ["Name the right desk for this passenger.",
          "Say which team must take this case, exactly.",
          "Pick the one department that should reply, carefully and briefly.",
          "Choose where this note goes: refunds, changes, lost items, access or sailings.",
          "Sort the passenger's words into the matching service queue without extra text."]


def _improving_engine(expected_for):
    """Each rephrase moves one level up LEVELS (two offers per round, one better, one
    worse); a wording at level k answers the first 3k items right."""

    def level(text):
        return max([i + 1 for i, w in enumerate(LEVELS) if w in text] or [0])

    def answer(req):
        text = "\n".join(m["content"] for m in req.messages)
        if "Say this instruction again" in text:
            k = level(text)
            return LEVELS[min(k, len(LEVELS) - 1)] if req.seed % 2 == 0 else "Be quick about it now."
        _, expected, position = expected_for(text)
        return expected if position < 3 * level(text) else "none"

    return answer


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = small_project(tmp_path, sample_dir)
    yield proj
    proj.close()


def _lookup(project):
    _, qset = project.current_set()
    table = [(it.fields["message"], it.expected, i) for i, it in enumerate(qset.items)]

    def expected_for(text):
        return next(row for row in table if row[0] in text)

    return expected_for


def test_two_rounds_keep_improvements_and_store_the_trajectory(project):
    engine = FakeEngine(_improving_engine(_lookup(project)))
    out = hone(project, engine, strategy="rephrase", budget=HoneBudget(rounds=2, per_round=2))
    assert [r.number for r in out.rounds] == [1, 2]
    assert out.rounds[0].best_tuning.rate < out.rounds[1].best_tuning.rate
    assert all(r.kept_id for r in out.rounds)
    assert all(r.held_out is not None for r in out.rounds)  # confirmed after each keep
    assert out.stop_reason == "2 rounds done"
    stored = project.store.hone_rounds(out.session)
    assert [r["number"] for r in stored] == [1, 2]
    assert stored[1]["best_passed"] == out.rounds[1].best_tuning.passed
    origins = {e.origin for e in project.store.shelf()}
    assert "auto-hone: rephrase" in origins


def test_stops_after_rounds_without_improvement(project):
    engine = FakeEngine(lambda r: "Keep the same words please."
                        if "Say this instruction again" in r.messages[-1]["content"] else "none")
    out = hone(project, engine, strategy="rephrase",
               budget=HoneBudget(rounds=6, per_round=1, patience=2))
    assert len(out.rounds) == 2 and out.stop_reason == "2 rounds without improvement"


def test_cancel_mid_round_keeps_what_is_finished(project):
    cancel = threading.Event()
    calls = {"n": 0}
    inner = _improving_engine(_lookup(project))

    def answer(req):
        calls["n"] += 1
        if calls["n"] == 40:  # inside round 2's scoring
            cancel.set()
        return inner(req)

    out = hone(project, FakeEngine(answer), strategy="rephrase",
               budget=HoneBudget(rounds=5, per_round=2), cancel=cancel)
    assert out.stop_reason == "cancelled"
    assert 1 <= len(out.rounds) <= 2
    assert len(project.store.hone_rounds(out.session)) == len(out.rounds)
    kept = [e for e in project.store.shelf() if e.decision == "kept"]
    assert kept  # round 1's improvement is on the shelf


def test_schema_two_migrates_a_version_one_file(tmp_path):
    import sqlite3

    from honebench.core.store import MIGRATIONS

    path = tmp_path / "old.hone"
    conn = sqlite3.connect(path)
    conn.executescript(MIGRATIONS[0])
    conn.execute("PRAGMA user_version=1")
    conn.execute("INSERT INTO settings VALUES('title', '\"old\"')")
    conn.commit()
    conn.close()
    store = Store(path)
    assert store.setting("title") == "old"
    assert sqlite3.connect(path).execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert store.start_hone(strategy="scoreboard", budget={}) == 1
