"""kill -9 in the middle of `honebench grade`: the project file stays sound (SQLite's own
PRAGMA integrity_check says "ok"), every committed mark is intact, the run is found
interrupted on the next open, and finishing it asks the model only for the items that had
no answer yet: the rest come from the cache."""
from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from honebench.core.calibration import CONTENT_FREE

from tests.test_cli import ROOT, honebench

pytestmark = pytest.mark.model

ITEMS = 40  # more than one label-scoring group (16 items), so the kill lands mid-run


def _marks(path) -> dict[str, tuple]:
    """Committed marks, read through a separate read-only connection."""
    conn = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=30)
    try:
        return {r[0]: r[1:] for r in conn.execute(
            "SELECT item_id, output, extracted, passed, why FROM marks")}
    finally:
        conn.close()


def test_kill_9_mid_grade_loses_nothing_and_resumes_from_the_cache(tmp_path, sample_dir):
    project = tmp_path / "desk.hone"
    args = ["grade", sample_dir / "passenger_desk_routing.csv", "--project", project,
            "--wording", "Which department should handle this message? Explain briefly.",
            "--split", "all", "--limit", str(ITEMS), "--max-tokens", "16", "--json"]
    proc = subprocess.Popen(
        [sys.executable, "-m", "honebench.cli", *map(str, args)], cwd=ROOT,
        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
        env={"HONEBENCH_HOME": str(tmp_path / "home"), "PYTHONPATH": str(ROOT / "desktop"),
             "PATH": "/usr/bin:/bin"})
    seen: dict = {}
    deadline = time.monotonic() + 600  # a guard against a run that never starts
    try:
        while len(seen) < 4:
            assert proc.poll() is None, f"grade ended before the kill: {proc.stderr.read()}"
            assert time.monotonic() < deadline, "no marks appeared"
            try:
                seen = _marks(project)
            except sqlite3.Error:  # not created yet
                pass
            time.sleep(0.05)
    finally:
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
        proc.stderr.close()
    assert proc.returncode == -signal.SIGKILL

    conn = sqlite3.connect(project)
    assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    status, = conn.execute("SELECT status FROM runs").fetchone()
    # the calibrated label scoring first caches one content-free prompt per filler
    cached = (conn.execute("SELECT COUNT(*) FROM completion_cache").fetchone()[0]
              - len(CONTENT_FREE))
    conn.close()
    after = _marks(project)
    assert status == "running"  # as the killed process left it
    assert len(after) < ITEMS, "the run finished before it was killed"
    for item_id, mark in seen.items():  # every mark committed before the kill is intact
        assert after[item_id] == mark
    # each answer is cached before its mark is saved, so at most one answer more
    assert len(after) <= cached <= len(after) + 1

    done = honebench("resume", project, "--json", home=tmp_path)
    resumed = json.loads(done.stdout)
    assert resumed["resumed"] == 1 and resumed["status"] == "finished"
    assert resumed["total"] == ITEMS and resumed["model_calls"] == ITEMS - cached
    by_id = {m["id"]: m for m in resumed["marks"]}
    for item_id, (output, _, passed, why) in after.items():
        assert by_id[item_id]["cached"] and by_id[item_id]["output"] == output
        assert (by_id[item_id]["passed"], by_id[item_id]["why"]) == (bool(passed), why)
    # the killed run is kept, marked as resumed; grading again costs no model call
    again = json.loads(honebench(*args, home=tmp_path).stdout)
    assert again["model_calls"] == 0 and again["passed"] == resumed["passed"]
    conn = sqlite3.connect(project)
    assert conn.execute("SELECT status FROM runs WHERE id=1").fetchone() == ("resumed",)
    assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    conn.close()
