"""The project file: schema version, migrations, reopening, refusing foreign files."""
from __future__ import annotations

import sqlite3

import pytest

from honebench.core.records import Mark
from honebench.core.sets import load_set
from honebench.core.store import SCHEMA_VERSION, Store, StoreError


@pytest.fixture
def routing(sample_dir):
    return load_set(sample_dir / "passenger_desk_routing.csv")


def test_new_file_has_schema_version_and_wal(tmp_path):
    store = Store(tmp_path / "p.hone")
    conn = sqlite3.connect(tmp_path / "p.hone")
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    store.close()


def test_set_round_trips_with_items_and_split(tmp_path, routing):
    store = Store(tmp_path / "p.hone")
    set_id = store.add_set(routing)
    assert store.add_set(routing) == set_id  # same content, same split: same row
    store.close()
    again = Store(tmp_path / "p.hone").get_set(set_id)
    assert again.content_hash == routing.content_hash
    assert again.items == routing.items
    assert [i.id for i in again.held_out()] == [i.id for i in routing.held_out()]


def test_shelf_numbers_versions_and_records_decisions(tmp_path):
    store = Store(tmp_path / "p.hone")
    v1 = store.add_wording("Route it.", "before")
    v2 = store.add_wording("Route it well.", "before", parent_id=v1.id, origin="rephrase")
    assert (v1.label, v2.label, v2.parent_id) == ("v1", "v2", v1.id)
    store.decide(v2.id, "set_aside", "too long")
    store.set_note(v1.id, "first try")
    store.close()
    reopened = Store(tmp_path / "p.hone")
    shelf = {e.label: e for e in reopened.shelf()}
    assert shelf["v2"].decision == "set_aside" and shelf["v1"].note == "first try"
    rows = sqlite3.connect(tmp_path / "p.hone").execute(
        "SELECT verdict, note FROM decisions").fetchall()
    assert rows == [("set_aside", "too long")]
    with pytest.raises(ValueError, match="verdict"):
        reopened.decide(v1.id, "maybe")


def test_marks_survive_a_run_that_never_finished(tmp_path, routing):
    store = Store(tmp_path / "p.hone")
    set_id = store.add_set(routing)
    run = store.start_run(set_id=set_id, wording_text="w", placement="before", split="tuning",
                          fingerprint="fp", params={}, check={}, n_items=3)
    store.add_mark(run, Mark(item_id="a", output="x", extracted="x", passed=True, why="ok"), 0)
    # no finish_run: as after a crash; a fresh connection still finds the mark
    fresh = Store(tmp_path / "p.hone")
    assert [m.item_id for m in fresh.marks(run)] == ["a"]
    assert fresh.run(run).status == "running"


def test_newer_schema_is_refused(tmp_path):
    path = tmp_path / "future.hone"
    conn = sqlite3.connect(path)
    conn.execute(f"PRAGMA user_version={SCHEMA_VERSION + 1}")
    conn.close()
    with pytest.raises(StoreError, match="newer honebench"):
        Store(path)


def test_a_file_that_is_not_sqlite_is_refused_clearly(tmp_path):
    path = tmp_path / "notes.hone"
    path.write_text("shopping list\n" * 100)
    with pytest.raises(StoreError, match="not a honebench project file"):
        Store(path)
    assert path.read_text().startswith("shopping list")  # untouched


def test_schema_2_file_opens_and_gains_label_scoring_columns(tmp_path):
    """A project written by schema 2 (before label scoring) migrates to 3 in place: its
    marks and cached answers are kept, new marks carry confidence and runner-up."""
    from honebench.core.store import MIGRATIONS

    path = tmp_path / "old.hone"
    conn = sqlite3.connect(path)
    for script in MIGRATIONS[:2]:
        conn.executescript(script)
    conn.execute("PRAGMA user_version=2")
    conn.execute("INSERT INTO question_sets VALUES(1,'s','s.csv','h','{}',0,0.3,1,'now')")
    conn.execute("INSERT INTO runs(id, set_id, wording_text, placement, split, fingerprint, "
                 "params, check_spec, started_at, status, n_items) "
                 "VALUES(1,1,'w','before','tuning','fp','{}','{}','now','finished',1)")
    conn.execute("INSERT INTO marks VALUES(1,'a',0,'refund','refund',1,1.0,'ok',3,1,0.1,NULL,0,'p')")
    conn.execute("INSERT INTO completion_cache VALUES('k','fp','{}','p','refund',3,1,0.1,'stop','now')")
    conn.commit()
    conn.close()
    store = Store(path)
    assert sqlite3.connect(path).execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == 4
    old = store.marks(1)[0]
    assert (old.output, old.confidence, old.runner_up) == ("refund", None, None)
    assert store.cache_get("k")["label_scores"] == ""
    assert store.run(1).wall_seconds is None
    store.add_mark(1, Mark(item_id="b", output="timetable", extracted="timetable", passed=True,
                           why="ok", confidence=0.61, runner_up="refund",
                           runner_up_share=0.22), 1)
    store.finish_run(1, "finished", 12.5)
    new = {m.item_id: m for m in Store(path).marks(1)}["b"]
    assert new.choice_text == "timetable 0.61, next refund 0.22"
    assert new.as_dict()["runner_up_share"] == 0.22
    assert store.run(1).wall_seconds == 12.5


def test_schema_3_file_gains_side_runs_and_analyses(tmp_path):
    """A schema-3 project migrates to 4 in place: its runs stay ordinary runs; a side run
    (made by an analysis) is left out of the runs that stand for shelf scores; analyses
    are saved and read back."""
    from honebench.core.store import MIGRATIONS

    path = tmp_path / "three.hone"
    conn = sqlite3.connect(path)
    for script in MIGRATIONS[:3]:
        conn.executescript(script)
    conn.execute("PRAGMA user_version=3")
    conn.execute("INSERT INTO question_sets VALUES(1,'s','s.csv','h','{}',0,0.3,1,'now')")
    conn.execute("INSERT INTO runs(id, set_id, wording_text, placement, split, fingerprint, "
                 "params, check_spec, started_at, status, n_items) "
                 "VALUES(1,1,'w','before','tuning','fp','{}','{}','now','finished',1)")
    conn.commit()
    conn.close()
    store = Store(path)
    assert [r.purpose for r in store.runs()] == [""]
    side = store.start_run(set_id=1, wording_text="w", placement="before", split="tuning",
                           fingerprint="other", params={}, check={}, n_items=1,
                           purpose="transfer")
    assert [r.id for r in store.runs()] == [1]
    assert [r.id for r in store.runs(purpose="transfer")] == [side]
    assert [r.id for r in store.runs(purpose=None)] == [1, side]
    assert store.latest_run().id == 1
    found = store.add_analysis("transfer", {"runs": [side]}, subject="other.gguf")
    saved = store.analyses("transfer")
    assert [(a["id"], a["subject"], a["result"]) for a in saved] == [
        (found, "other.gguf", {"runs": [side]})]
    assert store.analyses("importance") == []


def test_cache_lookup_of_many_keys_and_marks_in_one_transaction(tmp_path, routing):
    """cache_get_many gives the same rows as cache_get, key by key, across chunks; add_marks
    saves marks in order from the given seq, like add_mark one at a time."""
    store = Store(tmp_path / "p.hone")
    for i in range(7):
        store.cache_put(f"k{i}", fingerprint="fp", params="{}", prompt=f"p{i}", text=f"t{i}",
                        prompt_tokens=i, completion_tokens=1, seconds=0.1, finish_reason="stop")
    found = store.cache_get_many(["k1", "nope", "k5", "k1", "k6", "k0"], chunk=2)
    assert sorted(found) == ["k0", "k1", "k5", "k6"]
    assert all(dict(found[k]) == dict(store.cache_get(k)) for k in found)
    assert store.cache_get_many([]) == {}
    set_id = store.add_set(routing)
    run = store.start_run(set_id=set_id, wording_text="w", placement="system", split="tuning",
                          fingerprint="fp", params={}, check={}, n_items=4)
    store.add_mark(run, Mark(item_id="a", output="x", extracted="x", passed=True, why="ok"), 0)
    store.add_marks(run, [Mark(item_id=i, output="y", extracted="y", passed=False, why="no",
                               cached=True) for i in ("b", "c", "d")], 1)
    store.add_marks(run, [], 4)
    marks = store.marks(run)
    assert [m.item_id for m in marks] == ["a", "b", "c", "d"]
    assert [m.cached for m in marks] == [False, True, True, True]
    store.close()
