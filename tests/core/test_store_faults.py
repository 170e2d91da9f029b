"""The project file under faults: read-only files, files from a newer honebench, and runs
left "running" by a process that died (and runs another live process is still writing)."""
from __future__ import annotations

import hashlib
import json
import os
import socket
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from honebench.core import run_writers
from honebench.core.records import Mark
from honebench.core.sets import load_set
from honebench.core.store import SCHEMA_VERSION, Store, StoreError


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def routing(sample_dir):
    return load_set(sample_dir / "passenger_desk_routing.csv")


@pytest.fixture
def saved(tmp_path, routing):
    """A closed project file holding a set, a shelf entry and one finished run."""
    path = tmp_path / "p.hone"
    store = Store(path)
    set_id = store.add_set(routing)
    store.add_wording("Route it.", "before", decision="kept")
    run = store.start_run(set_id=set_id, wording_text="Route it.", placement="before",
                          split="tuning", fingerprint="fp", params={}, check={}, n_items=1)
    store.add_mark(run, Mark(item_id="route-001", output="refund", extracted="refund",
                             passed=True, why="ok"), 0)
    store.finish_run(run, "finished")
    store.close()
    return path


def test_read_only_file_reads_but_refuses_writes_with_a_clear_message(saved):
    os.chmod(saved, 0o444)
    before = digest(saved)
    store = Store(saved)
    assert store.read_only
    assert [e.label for e in store.shelf()] == ["v1"] and store.run_counts(1) == (1, 1)
    for write in (lambda: store.set_setting("draft", {"text": "x"}),
                  lambda: store.add_wording("Other.", "before"),
                  lambda: store.decide(1, "set_aside")):
        with pytest.raises(StoreError) as err:
            write()
        text = str(err.value)
        assert str(saved) in text and "read-only" in text
        assert "Copy it" in text and "permissions" in text
    store.close()
    assert digest(saved) == before


def test_write_refused_by_sqlite_becomes_store_error(saved):
    """A file that turns read-only under an open store: SQLite's own refusal is reported
    as a StoreError naming the file, not as sqlite3.OperationalError."""
    store = Store(saved)
    conn = sqlite3.connect(f"{saved.resolve().as_uri()}?mode=ro", uri=True,
                           isolation_level=None)
    store._local.conn = conn  # stand in for a file whose permissions changed
    store.read_only = False
    with pytest.raises(StoreError, match="read-only"):
        store.set_setting("draft", {"text": "x"})
    conn.close()


def test_read_only_file_from_an_older_schema_is_refused_unchanged(saved):
    conn = sqlite3.connect(saved)
    conn.execute("PRAGMA user_version=1")
    conn.close()
    os.chmod(saved, 0o444)
    before = digest(saved)
    with pytest.raises(StoreError, match="older honebench"):
        Store(saved)
    assert digest(saved) == before


def test_newer_schema_is_refused_and_the_file_left_unchanged(tmp_path):
    path = tmp_path / "future.hone"
    conn = sqlite3.connect(path)  # rollback journal: opening in WAL mode would rewrite it
    conn.execute("CREATE TABLE settings (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
    conn.execute(f"PRAGMA user_version={SCHEMA_VERSION + 7}")
    conn.commit()
    conn.close()
    before = digest(path)
    with pytest.raises(StoreError, match="newer honebench"):
        Store(path)
    assert digest(path) == before
    assert sqlite3.connect(path).execute("PRAGMA journal_mode").fetchone()[0] == "delete"


def test_a_file_that_is_not_a_project_is_refused_unchanged(tmp_path):
    path = tmp_path / "notes.hone"
    path.write_text("just some notes\n" * 100)
    before = digest(path)
    with pytest.raises(StoreError, match="not a honebench project file"):
        Store(path)
    assert digest(path) == before


# -- runs left "running" ------------------------------------------------------------------
def _running_runs(path, routing, *writers) -> list[int]:
    """Runs saved as "running" with the given writers (None: no writer recorded), all
    written in one session (opening the file again would already judge them)."""
    store = Store(path)
    set_id = store.add_set(routing)
    runs = []
    for writer in writers:
        run = store.start_run(set_id=set_id, wording_text="w", placement="before",
                              split="tuning", fingerprint="fp", params={"seed": 0}, check={},
                              n_items=3)
        params = {"seed": 0} if writer is None else {"seed": 0, "writer": writer}
        with store._tx() as c:
            c.execute("UPDATE runs SET params=? WHERE id=?", (json.dumps(params), run))
        runs.append(run)
    store.close()
    return runs


def _running_run(path, routing, writer) -> int:
    return _running_runs(path, routing, writer)[0]


def _status(path, run) -> str:
    return sqlite3.connect(path).execute("SELECT status FROM runs WHERE id=?",
                                         (run,)).fetchone()[0]


def test_new_runs_record_their_writer(tmp_path, routing):
    store = Store(tmp_path / "p.hone")
    run = store.start_run(set_id=store.add_set(routing), wording_text="w", placement="before",
                          split="tuning", fingerprint="fp", params={"seed": 3}, check={},
                          n_items=1)
    writer = store.run(run).params["writer"]
    assert writer["pid"] == os.getpid() and writer["host"] == socket.gethostname()
    assert store.run(run).params["seed"] == 3
    store.close()


def test_run_of_a_dead_writer_is_marked_interrupted_on_open(tmp_path, routing):
    # a real process that has ended, so its id is (for now) free
    # (its own start time too, so a later process given the same id is not taken for it)
    done = subprocess.run(
        [sys.executable, "-c", "import json; from honebench.core.run_writers import "
                               "this_writer; print(json.dumps(this_writer()))"],
        capture_output=True, text=True, check=True,
        env=dict(os.environ, PYTHONPATH=str(Path(run_writers.__file__).parents[2])))
    dead = json.loads(done.stdout)
    path = tmp_path / "p.hone"
    # the first from before writers were recorded
    old, gone = _running_runs(path, routing, None, dead)
    store = Store(path)
    assert store.interrupted_on_open == [old, gone]
    assert store.run(old).status == store.run(gone).status == "interrupted"
    assert store.run(gone).finished_at is not None
    store.close()


def test_run_another_live_process_is_writing_is_left_alone(tmp_path, routing):
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(600)"])
    try:
        live = run_writers.this_writer() | {"pid": child.pid}
        stat = run_writers._proc_stat(child.pid)
        if stat is not None:
            live["since"] = stat[1]
        path = tmp_path / "p.hone"
        run = _running_run(path, routing, live)
        Store(path).close()
        assert _status(path, run) == "running"
        # the same process id, but started at another time: a later, unrelated process
        if stat is not None:
            reused = _running_run(path, routing, live | {"since": stat[1] - 1})
            Store(path).close()
            assert _status(path, reused) == "interrupted" and _status(path, run) == "running"
    finally:
        child.kill()
        child.wait()
    Store(path).close()
    assert _status(path, run) == "interrupted"


def test_run_of_this_process_and_of_another_host_are_left_alone(tmp_path, routing):
    path = tmp_path / "p.hone"
    mine, elsewhere = _running_runs(path, routing, run_writers.this_writer(),
                                    {"pid": 1, "host": socket.gethostname() + "-other"})
    store = Store(path)
    assert store.interrupted_on_open == []
    assert store.run(mine).status == store.run(elsewhere).status == "running"
    store.close()


def test_read_only_project_does_not_mark_but_lists_a_dead_run(tmp_path, routing):
    from honebench.core.resume import unfinished_runs

    path = tmp_path / "p.hone"
    run = _running_run(path, routing, None)
    os.chmod(path, 0o444)
    before = digest(path)
    store = Store(path)
    assert store.interrupted_on_open == []
    assert [(u.run.id, u.run.status) for u in unfinished_runs(store)] == [(run, "interrupted")]
    store.close()
    assert digest(path) == before and _status(path, run) == "running"


def test_read_only_project_still_compares_and_reports(tmp_path, sample_dir):
    """Reading needs no writing: compare of existing runs and the report work read-only."""
    from honebench.core.compare import compare_entries
    from honebench.core.grading import Grader
    from honebench.core.project import Project
    from honebench.core.report import report_html
    from honebench.core.wording import Wording
    from tests.fakes import FakeEngine

    path = tmp_path / "desk.hone"
    project = Project(path)
    set_id = project.import_set(sample_dir / "passenger_desk_routing.csv").value
    _, qset = project.current_set()
    entries = []
    for text, answer in (("Route it.", "refund"), ("Route it well.", "timetable")):
        entry = project.keep(Wording(text, "before")).value
        Grader(project.store, FakeEngine(lambda r, a=answer: a)).grade(
            set_id=set_id, qset=qset, wording=Wording(text, "before"), check=project.check(),
            wording_id=entry.id)
        entries.append(entry)
    project.close()
    os.chmod(path, 0o444)
    before = digest(path)
    project = Project(path)
    comparison = compare_entries(project.store, set_id, *entries, split="tuning")
    assert comparison.fixed and comparison.broken  # refund items broken, timetable fixed
    assert "v2" in report_html(project)
    with pytest.raises(StoreError, match="read-only"):
        project.keep(Wording("A third wording.", "before"))
    project.close()
    assert digest(path) == before
