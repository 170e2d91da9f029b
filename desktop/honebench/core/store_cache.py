"""The completion cache of a project file: answers by key (see grading.cache_key), so a
re-grade of the same prompt with the same model and settings costs no model time."""
from __future__ import annotations

import sqlite3
from datetime import datetime, timezone
from typing import Iterable


class CompletionCache:
    """Cache methods of ``Store`` (needs its ``_conn`` and ``_tx``)."""

    def cache_get(self, key: str) -> sqlite3.Row | None:
        return self._conn().execute(
            "SELECT * FROM completion_cache WHERE key=?", (key,)).fetchone()

    def cache_get_many(self, keys: Iterable[str], chunk: int = 500) -> dict[str, sqlite3.Row]:
        """The cached answers among ``keys``, by key (keys not in the cache are left out);
        one query per ``chunk`` keys."""
        wanted = list(dict.fromkeys(keys))
        found: dict[str, sqlite3.Row] = {}
        conn = self._conn()
        for start in range(0, len(wanted), chunk):
            part = wanted[start:start + chunk]
            marks = ",".join("?" * len(part))
            for row in conn.execute(
                    f"SELECT * FROM completion_cache WHERE key IN ({marks})", part):
                found[row["key"]] = row
        return found

    def cache_put(self, key: str, *, fingerprint: str, params: str, prompt: str, text: str,
                  prompt_tokens: int, completion_tokens: int, seconds: float,
                  finish_reason: str, label_scores: str = "") -> None:
        """``label_scores``: JSON of a scored answer's labels, log-probabilities and shares."""
        with self._tx() as c:
            c.execute(
                "INSERT OR REPLACE INTO completion_cache(key, fingerprint, params, prompt, text, "
                "prompt_tokens, completion_tokens, seconds, finish_reason, created_at, "
                "label_scores) VALUES(?,?,?,?,?,?,?,?,?,?,?)",
                (key, fingerprint, params, prompt, text, prompt_tokens, completion_tokens,
                 seconds, finish_reason, _now(), label_scores),
            )


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")
