"""The project file: one SQLite database per task (WAL mode).

Holds question sets (with their items, so a project opens without the original file),
wordings on the shelf and the decisions about them, grade runs with their marks, settings
such as the editor draft, and the completion cache. Every write commits at once, so a crash
loses at most the item in flight. Each thread gets its own connection.
"""
from __future__ import annotations

import json
import sqlite3
import threading
from datetime import datetime, timezone
from pathlib import Path
from typing import Iterable

from .records import Mark, RunInfo, ShelfEntry
from .run_writers import stale_run_ids, this_writer
from .store_files import READ_ONLY_HINT, StoreError, Transaction, connect, is_read_only
from .sets import ColumnMapping, Item, QuestionSet
from .store_cache import CompletionCache
from .store_schema import MIGRATIONS

SCHEMA_VERSION = len(MIGRATIONS)
PROJECT_SUFFIX = ".hone"


def now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


class Store(CompletionCache):
    """One project file. Safe to share between threads: each thread has its own connection.

    A file that may not be written is opened read-only: everything can be read (reports,
    compare of existing runs) and every write raises StoreError saying what to do.
    On open, runs left "running" by a process that has since died are marked "interrupted"
    (``interrupted_on_open`` lists them); resume one with core.resume.resume_run.
    """

    def __init__(self, path: str | Path):
        self.path = Path(path)
        self.read_only = is_read_only(self.path)
        self._local = threading.local()
        self._lock = threading.Lock()
        try:
            self._migrate()
        except BaseException:
            self.close()
            raise
        self.interrupted_on_open: list[int] = (
            [] if self.read_only else self.mark_interrupted_runs())

    # -- connections ---------------------------------------------------------------------
    def _conn(self) -> sqlite3.Connection:
        conn = getattr(self._local, "conn", None)
        if conn is None:
            try:
                conn = connect(self.path, self.read_only)
                conn.execute("PRAGMA user_version").fetchone()  # fails here if not SQLite
            except sqlite3.DatabaseError as exc:
                if not self.path.exists():
                    raise StoreError(
                        f"The project file {self.path} cannot be created ({exc}). Choose a "
                        "folder you can write to.") from exc
                raise StoreError(
                    f"{self.path} is not a honebench project file ({exc}). "
                    "Open a .hone file or create a new project."
                ) from exc
            conn.execute("PRAGMA foreign_keys=ON")
            conn.execute("PRAGMA synchronous=NORMAL")
            conn.row_factory = sqlite3.Row
            self._local.conn = conn
        return conn

    def _migrate(self) -> None:
        conn = self._conn()
        version = conn.execute("PRAGMA user_version").fetchone()[0]
        if version > SCHEMA_VERSION:
            raise StoreError(
                f"{self.path} was written by a newer honebench (schema {version}, this one "
                f"knows {SCHEMA_VERSION}). Upgrade honebench to open it; the file is left "
                "as it is."
            )
        if version < SCHEMA_VERSION and self.read_only:
            raise StoreError(
                f"{self.path} is read-only and was written by an older honebench (schema "
                f"{version}); opening it needs an upgrade to schema {SCHEMA_VERSION}, which "
                f"writes to the file. {READ_ONLY_HINT}, then open it again.")
        if self.read_only:
            return
        try:  # only after the version check, so a file we refuse is never touched
            conn.execute("PRAGMA journal_mode=WAL")
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"{self.path} cannot be opened for writing ({exc}). "
                             f"{READ_ONLY_HINT}.") from exc
        for number in range(version, SCHEMA_VERSION):
            with self._tx() as c:
                for statement in _statements(MIGRATIONS[number]):
                    c.execute(statement)
                c.execute(f"PRAGMA user_version={number + 1}")

    def _tx(self):
        if self.read_only:
            raise StoreError(f"{self.path} is read-only, so honebench cannot save to it. "
                             f"{READ_ONLY_HINT}, then try again. Nothing in it was changed.")
        return Transaction(self._conn(), self._lock, self.path)

    def close(self) -> None:
        conn = getattr(self._local, "conn", None)
        if conn is not None:
            conn.close()
            self._local.conn = None

    # -- settings ------------------------------------------------------------------------
    def setting(self, key: str, default=None):
        row = self._conn().execute("SELECT value FROM settings WHERE key=?", (key,)).fetchone()
        return default if row is None else json.loads(row[0])

    def set_setting(self, key: str, value) -> None:
        """Save a setting; an unchanged value is not written again (so merely opening a
        project and choosing what it already holds leaves the file as it was)."""
        text = json.dumps(value)
        row = self._conn().execute("SELECT value FROM settings WHERE key=?", (key,)).fetchone()
        if row is not None and row[0] == text:
            return
        with self._tx() as c:
            c.execute(
                "INSERT INTO settings(key, value) VALUES(?, ?) "
                "ON CONFLICT(key) DO UPDATE SET value=excluded.value",
                (key, text),
            )

    # -- question sets -------------------------------------------------------------------
    def add_set(self, qset: QuestionSet) -> int:
        """Store a set and its items; the same content and split gives back the same id."""
        mapping = json.dumps(qset.mapping.as_dict(), sort_keys=True)
        key = (qset.content_hash, mapping, qset.split_seed, qset.held_out_fraction)
        conn = self._conn()
        found = conn.execute(
            "SELECT id FROM question_sets WHERE content_hash=? AND mapping=? AND split_seed=? "
            "AND held_out_fraction=?", key).fetchone()
        if found:
            return found[0]
        with self._tx() as c:
            cur = c.execute(
                "INSERT INTO question_sets(name, path, content_hash, mapping, split_seed, "
                "held_out_fraction, n_items, added_at) VALUES(?,?,?,?,?,?,?,?)",
                (qset.name, str(qset.path), *key, len(qset.items), now()),
            )
            set_id = cur.lastrowid
            c.executemany(
                "INSERT INTO items(set_id, item_id, position, fields, expected, split, row) "
                "VALUES(?,?,?,?,?,?,?)",
                [(set_id, it.id, pos, json.dumps(it.fields), it.expected, it.split, it.row)
                 for pos, it in enumerate(qset.items)],
            )
        return set_id

    def set_ids(self) -> list[int]:
        return [r[0] for r in self._conn().execute("SELECT id FROM question_sets ORDER BY id")]

    def get_set(self, set_id: int) -> QuestionSet:
        conn = self._conn()
        head = conn.execute("SELECT * FROM question_sets WHERE id=?", (set_id,)).fetchone()
        if head is None:
            raise KeyError(f"no question set {set_id} in {self.path}")
        items = tuple(
            Item(id=r["item_id"], fields=json.loads(r["fields"]), expected=r["expected"],
                 split=r["split"], row=r["row"])
            for r in conn.execute(
                "SELECT * FROM items WHERE set_id=? ORDER BY position", (set_id,))
        )
        return QuestionSet(
            name=head["name"], path=head["path"],
            mapping=ColumnMapping.from_dict(json.loads(head["mapping"])), items=items,
            content_hash=head["content_hash"], split_seed=head["split_seed"],
            held_out_fraction=head["held_out_fraction"],
        )

    # -- the shelf -----------------------------------------------------------------------
    def add_wording(self, text: str, placement: str, *, parent_id: int | None = None,
                    origin: str = "typed", inputs: dict | None = None, note: str = "",
                    decision: str = "") -> ShelfEntry:
        with self._tx() as c:
            version = c.execute("SELECT COALESCE(MAX(version), 0) + 1 FROM wordings").fetchone()[0]
            cur = c.execute(
                "INSERT INTO wordings(version, text, placement, parent_id, origin, inputs, note,"
                " decision, created_at) VALUES(?,?,?,?,?,?,?,?,?)",
                (version, text, placement, parent_id, origin, json.dumps(inputs or {}), note,
                 decision, now()),
            )
            wid = cur.lastrowid
            if decision:
                c.execute("INSERT INTO decisions(wording_id, verdict, note, at) VALUES(?,?,?,?)",
                          (wid, decision, note, now()))
        return self.wording(wid)

    def find_wording(self, text: str, placement: str) -> ShelfEntry | None:
        row = self._conn().execute(
            "SELECT * FROM wordings WHERE text=? AND placement=? ORDER BY id LIMIT 1",
            (text, placement)).fetchone()
        return None if row is None else _entry(row)

    def wording(self, wording_id: int) -> ShelfEntry:
        row = self._conn().execute("SELECT * FROM wordings WHERE id=?", (wording_id,)).fetchone()
        if row is None:
            raise KeyError(f"no wording {wording_id} on the shelf")
        return _entry(row)

    def shelf(self) -> list[ShelfEntry]:
        return [_entry(r) for r in self._conn().execute("SELECT * FROM wordings ORDER BY version")]

    def decide(self, wording_id: int, verdict: str, note: str = "") -> None:
        if verdict not in ("kept", "set_aside"):
            raise ValueError(f"verdict must be 'kept' or 'set_aside', not {verdict!r}")
        with self._tx() as c:
            c.execute("UPDATE wordings SET decision=? WHERE id=?", (verdict, wording_id))
            c.execute("INSERT INTO decisions(wording_id, verdict, note, at) VALUES(?,?,?,?)",
                      (wording_id, verdict, note, now()))

    def set_note(self, wording_id: int, note: str) -> None:
        with self._tx() as c:
            c.execute("UPDATE wordings SET note=? WHERE id=?", (note, wording_id))

    # -- runs and marks ------------------------------------------------------------------
    def start_run(self, *, set_id: int, wording_text: str, placement: str, split: str,
                  fingerprint: str, params: dict, check: dict, n_items: int,
                  wording_id: int | None = None, purpose: str = "") -> int:
        """A new run; ``purpose`` "" is an ordinary grade run, anything else ("transfer",
        "importance") a side run an analysis made, left out of ``runs()`` by default."""
        with self._tx() as c:
            cur = c.execute(
                "INSERT INTO runs(set_id, wording_id, wording_text, placement, split, fingerprint,"
                " params, check_spec, started_at, status, n_items, purpose)"
                " VALUES(?,?,?,?,?,?,?,?,?,?,?,?)",
                (set_id, wording_id, wording_text, placement, split, fingerprint,
                 json.dumps({**params, "writer": this_writer()}, sort_keys=True),
                 json.dumps(check, sort_keys=True), now(), "running", n_items, purpose),
            )
            return cur.lastrowid

    def add_mark(self, run_id: int, mark: Mark, seq: int) -> None:
        """Commit one mark; ``seq`` is its arrival order within the run."""
        self.add_marks(run_id, [mark], seq)

    def add_marks(self, run_id: int, marks: Iterable[Mark], first_seq: int) -> None:
        """Commit several marks in one transaction, in arrival order from ``first_seq``."""
        rows = [(run_id, m.item_id, seq, m.output, m.extracted, int(m.passed), m.score, m.why,
                 m.prompt_tokens, m.completion_tokens, m.seconds, m.error, int(m.cached),
                 m.prompt, m.confidence, m.runner_up, m.runner_up_share)
                for seq, m in enumerate(marks, start=first_seq)]
        if not rows:
            return
        with self._tx() as c:
            c.executemany(
                "INSERT OR REPLACE INTO marks(run_id, item_id, seq, output, extracted, passed, "
                "score, why, prompt_tokens, completion_tokens, seconds, error, cached, prompt, "
                "confidence, runner_up, runner_up_share) VALUES(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                rows)

    def finish_run(self, run_id: int, status: str, wall_seconds: float | None = None) -> None:
        with self._tx() as c:
            c.execute("UPDATE runs SET status=?, finished_at=?, wall_seconds=? WHERE id=?",
                      (status, now(), wall_seconds, run_id))

    def mark_interrupted_runs(self) -> list[int]:
        """Mark "interrupted" every run saved as "running" whose writer has ended (see
        run_writers); returns their ids. Runs a live process is writing are left alone."""
        stale = stale_run_ids(self._conn().execute(
            "SELECT id, params FROM runs WHERE status='running' ORDER BY id"))
        if stale:
            with self._tx() as c:
                c.executemany("UPDATE runs SET status='interrupted', finished_at=? "
                              "WHERE id=? AND status='running'", [(now(), i) for i in stale])
        return stale

    def run(self, run_id: int) -> RunInfo:
        row = self._conn().execute("SELECT * FROM runs WHERE id=?", (run_id,)).fetchone()
        if row is None:
            raise KeyError(f"no grade run {run_id} in {self.path}")
        return _run(row)

    def runs(self, *, wording_id: int | None = None,
             purpose: str | None = "") -> list[RunInfo]:
        """Runs in order; by default the ordinary grade runs only. ``purpose`` names the
        side runs wanted instead ("transfer", "importance"); None gives every run."""
        where, args = [], []
        if wording_id is not None:
            where, args = ["wording_id=?"], [wording_id]
        if purpose is not None:
            where.append("purpose=?")
            args.append(purpose)
        sql = "SELECT * FROM runs" + (" WHERE " + " AND ".join(where) if where else "")
        return [_run(r) for r in self._conn().execute(sql + " ORDER BY id", args)]

    def marks(self, run_id: int) -> list[Mark]:
        rows = self._conn().execute("SELECT * FROM marks WHERE run_id=? ORDER BY seq", (run_id,))
        return [Mark(item_id=r["item_id"], output=r["output"], extracted=r["extracted"],
                     passed=bool(r["passed"]), why=r["why"], score=r["score"],
                     prompt_tokens=r["prompt_tokens"], completion_tokens=r["completion_tokens"],
                     seconds=r["seconds"], error=r["error"], cached=bool(r["cached"]),
                     prompt=r["prompt"], confidence=r["confidence"], runner_up=r["runner_up"],
                     runner_up_share=r["runner_up_share"]) for r in rows]

    def run_counts(self, run_id: int) -> tuple[int, int]:
        """(passed, graded) for a run."""
        row = self._conn().execute(
            "SELECT COALESCE(SUM(passed), 0), COUNT(*) FROM marks WHERE run_id=?",
            (run_id,)).fetchone()
        return int(row[0]), int(row[1])

    def mark_costs(self, run_id: int) -> list[tuple[int, int, float, bool]]:
        """(prompt tokens, answer tokens, seconds, cached) of each mark of a run."""
        return [(r[0], r[1], r[2], bool(r[3])) for r in self._conn().execute(
            "SELECT prompt_tokens, completion_tokens, seconds, cached FROM marks "
            "WHERE run_id=? ORDER BY seq", (run_id,))]

    def latest_run(self) -> RunInfo | None:
        row = self._conn().execute(
            "SELECT * FROM runs WHERE purpose='' ORDER BY id DESC LIMIT 1").fetchone()
        return None if row is None else _run(row)

    # -- analyses (phrase importance, transfer checks) ---------------------------------
    def add_analysis(self, kind: str, result: dict, *, wording_id: int | None = None,
                     subject: str = "") -> int:
        """Save an analysis' result (JSON-able); ``subject`` says what it was run on (for
        a transfer check, the other engine)."""
        with self._tx() as c:
            return c.execute(
                "INSERT INTO analyses(kind, wording_id, subject, result, created_at) "
                "VALUES(?,?,?,?,?)", (kind, wording_id, subject, json.dumps(result), now())
            ).lastrowid

    def analyses(self, kind: str, *, wording_id: int | None = None) -> list[dict]:
        """Saved analyses of a kind, oldest first: dicts with id, kind, wording_id,
        subject, result (parsed) and created_at."""
        sql, args = "SELECT * FROM analyses WHERE kind=?", [kind]
        if wording_id is not None:
            sql, args = sql + " AND wording_id=?", args + [wording_id]
        return [{**dict(r), "result": json.loads(r["result"])}
                for r in self._conn().execute(sql + " ORDER BY id", args)]

    # -- auto-hone -------------------------------------------------------------------------
    def start_hone(self, *, strategy: str, budget: dict) -> int:
        with self._tx() as c:
            return c.execute("INSERT INTO hone_sessions(strategy, budget, started_at) "
                             "VALUES(?,?,?)", (strategy, json.dumps(budget), now())).lastrowid

    def add_hone_round(self, session: int, rnd) -> None:
        held = rnd.held_out
        with self._tx() as c:
            c.execute(
                "INSERT INTO hone_rounds VALUES(?,?,?,?,?,?,?,?,?,?,?,?,?)",
                (session, rnd.number, rnd.best_text, rnd.best_tuning.passed,
                 rnd.best_tuning.total, rnd.kept_id, held.passed if held else None,
                 held.total if held else None, rnd.suggestions, rnd.dropped, rnd.model_calls,
                 rnd.seconds, now()))

    def finish_hone(self, session: int, reason: str) -> None:
        with self._tx() as c:
            c.execute("UPDATE hone_sessions SET finished_at=?, stop_reason=? WHERE id=?",
                      (now(), reason, session))

    def hone_rounds(self, session: int) -> list[sqlite3.Row]:
        return list(self._conn().execute(
            "SELECT * FROM hone_rounds WHERE session_id=? ORDER BY number", (session,)))


def _statements(script: str) -> Iterable[str]:
    return [s.strip() for s in script.split(";") if s.strip()]


def _entry(r: sqlite3.Row) -> ShelfEntry:
    return ShelfEntry(id=r["id"], version=r["version"], text=r["text"], placement=r["placement"],
                      parent_id=r["parent_id"], origin=r["origin"], created_at=r["created_at"],
                      decision=r["decision"], note=r["note"], inputs=json.loads(r["inputs"]))


def _run(r: sqlite3.Row) -> RunInfo:
    return RunInfo(id=r["id"], set_id=r["set_id"], wording_id=r["wording_id"],
                   wording_text=r["wording_text"], placement=r["placement"], split=r["split"],
                   fingerprint=r["fingerprint"], params=json.loads(r["params"]),
                   check=json.loads(r["check_spec"]), started_at=r["started_at"],
                   finished_at=r["finished_at"], status=r["status"], n_items=r["n_items"],
                   wall_seconds=r["wall_seconds"], purpose=r["purpose"])
