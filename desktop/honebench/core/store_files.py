"""Opening the project file: read-only files, connections and write transactions."""
from __future__ import annotations

import os
import sqlite3
import stat
import threading
from pathlib import Path

READ_ONLY_HINT = ("Copy it to a folder you can write to and open the copy, or change its "
                  "permissions (for example chmod u+w FILE)")


class StoreError(RuntimeError):
    """The project file cannot be opened or written, or is from a newer honebench."""


def is_read_only(path: Path) -> bool:
    """True for an existing file this process may not write, or whose permission bits
    allow nobody to write it (a file marked read-only stays so even for an administrator)."""
    try:
        mode = path.stat().st_mode
    except OSError:
        return False
    writable = stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH
    return not os.access(path, os.W_OK) or not mode & writable


def connect(path: Path, read_only: bool) -> sqlite3.Connection:
    """A connection in autocommit mode (transactions are explicit, see Transaction).
    Read-only: SQLite's ``mode=ro``; where even that fails (SQLite cannot create the
    write-ahead log's index beside a file in a folder it may not write) the file is read
    as ``immutable``, which is safe because nobody may write it."""
    if not read_only:
        return sqlite3.connect(path, timeout=30, isolation_level=None)
    uri = path.resolve().as_uri()
    try:
        conn = sqlite3.connect(f"{uri}?mode=ro", uri=True, timeout=30, isolation_level=None)
        conn.execute("PRAGMA user_version").fetchone()
        return conn
    except sqlite3.OperationalError:
        return sqlite3.connect(f"{uri}?immutable=1", uri=True, isolation_level=None)


def _is_read_only_error(exc: BaseException) -> bool:
    code = getattr(exc, "sqlite_errorcode", None)
    if isinstance(code, int):
        return code & 0xFF == sqlite3.SQLITE_READONLY
    return "readonly" in str(exc)


class Transaction:
    """BEGIN IMMEDIATE ... COMMIT, rolled back on error; serialised within the process.
    A write refused because the file is (or turned) read-only becomes a StoreError."""

    def __init__(self, conn: sqlite3.Connection, lock: threading.Lock, path: Path):
        self.conn, self.lock, self.path = conn, lock, path

    def __enter__(self) -> sqlite3.Connection:
        self.lock.acquire()
        try:
            self.conn.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError as exc:
            self.lock.release()
            self._refused(exc)
            raise
        return self.conn

    def __exit__(self, kind, value, tb) -> None:
        try:
            try:
                self.conn.execute("ROLLBACK" if kind else "COMMIT")
            except sqlite3.OperationalError as exc:
                if kind is None:
                    self._refused(exc)
                    raise
        finally:
            self.lock.release()
        if isinstance(value, sqlite3.OperationalError):
            self._refused(value)

    def _refused(self, exc: BaseException) -> None:
        if _is_read_only_error(exc):
            raise StoreError(f"{self.path} is read-only, so honebench cannot save to it. "
                             f"{READ_ONLY_HINT}, then try again.") from exc
