"""The project file's schema, as the list of migrations that build it (one per version).

Never edit a released migration; add the next one.
"""

MIGRATIONS: tuple[str, ...] = (
    # 1: first schema
    """
    CREATE TABLE settings (key TEXT PRIMARY KEY, value TEXT NOT NULL);
    CREATE TABLE question_sets (
        id INTEGER PRIMARY KEY, name TEXT NOT NULL, path TEXT NOT NULL,
        content_hash TEXT NOT NULL, mapping TEXT NOT NULL, split_seed INTEGER NOT NULL,
        held_out_fraction REAL NOT NULL, n_items INTEGER NOT NULL, added_at TEXT NOT NULL,
        UNIQUE (content_hash, mapping, split_seed, held_out_fraction));
    CREATE TABLE items (
        set_id INTEGER NOT NULL REFERENCES question_sets(id), item_id TEXT NOT NULL,
        position INTEGER NOT NULL, fields TEXT NOT NULL, expected TEXT NOT NULL,
        split TEXT NOT NULL, row INTEGER NOT NULL, PRIMARY KEY (set_id, item_id));
    CREATE TABLE wordings (
        id INTEGER PRIMARY KEY, version INTEGER NOT NULL UNIQUE, text TEXT NOT NULL,
        placement TEXT NOT NULL, parent_id INTEGER REFERENCES wordings(id),
        origin TEXT NOT NULL, inputs TEXT NOT NULL DEFAULT '{}', note TEXT NOT NULL DEFAULT '',
        decision TEXT NOT NULL DEFAULT '', created_at TEXT NOT NULL);
    CREATE TABLE decisions (
        id INTEGER PRIMARY KEY, wording_id INTEGER NOT NULL REFERENCES wordings(id),
        verdict TEXT NOT NULL, note TEXT NOT NULL DEFAULT '', at TEXT NOT NULL);
    CREATE TABLE runs (
        id INTEGER PRIMARY KEY, set_id INTEGER NOT NULL REFERENCES question_sets(id),
        wording_id INTEGER REFERENCES wordings(id), wording_text TEXT NOT NULL,
        placement TEXT NOT NULL, split TEXT NOT NULL, fingerprint TEXT NOT NULL,
        params TEXT NOT NULL, check_spec TEXT NOT NULL, started_at TEXT NOT NULL,
        finished_at TEXT, status TEXT NOT NULL, n_items INTEGER NOT NULL);
    CREATE TABLE marks (
        run_id INTEGER NOT NULL REFERENCES runs(id), item_id TEXT NOT NULL,
        seq INTEGER NOT NULL, output TEXT NOT NULL, extracted TEXT NOT NULL,
        passed INTEGER NOT NULL, score REAL NOT NULL, why TEXT NOT NULL,
        prompt_tokens INTEGER NOT NULL, completion_tokens INTEGER NOT NULL,
        seconds REAL NOT NULL, error TEXT, cached INTEGER NOT NULL, prompt TEXT NOT NULL,
        PRIMARY KEY (run_id, item_id));
    CREATE TABLE completion_cache (
        key TEXT PRIMARY KEY, fingerprint TEXT NOT NULL, params TEXT NOT NULL,
        prompt TEXT NOT NULL, text TEXT NOT NULL, prompt_tokens INTEGER NOT NULL,
        completion_tokens INTEGER NOT NULL, seconds REAL NOT NULL,
        finish_reason TEXT NOT NULL, created_at TEXT NOT NULL);
    """,
    # 2: auto-hone sessions and their rounds
    """
    CREATE TABLE hone_sessions (
        id INTEGER PRIMARY KEY, strategy TEXT NOT NULL, budget TEXT NOT NULL,
        started_at TEXT NOT NULL, finished_at TEXT, stop_reason TEXT NOT NULL DEFAULT '');
    CREATE TABLE hone_rounds (
        session_id INTEGER NOT NULL REFERENCES hone_sessions(id), number INTEGER NOT NULL,
        best_text TEXT NOT NULL, best_passed INTEGER NOT NULL, best_total INTEGER NOT NULL,
        kept_id INTEGER REFERENCES wordings(id), held_passed INTEGER, held_total INTEGER,
        suggestions INTEGER NOT NULL, dropped INTEGER NOT NULL, model_calls INTEGER NOT NULL,
        seconds REAL NOT NULL, at TEXT NOT NULL, PRIMARY KEY (session_id, number));
    """,
    # 3: label scoring (a mark's confidence and runner-up; a cached answer's label scores)
    # and a run's wall-clock time
    """
    ALTER TABLE marks ADD COLUMN confidence REAL;
    ALTER TABLE marks ADD COLUMN runner_up TEXT;
    ALTER TABLE marks ADD COLUMN runner_up_share REAL;
    ALTER TABLE runs ADD COLUMN wall_seconds REAL;
    ALTER TABLE completion_cache ADD COLUMN label_scores TEXT NOT NULL DEFAULT '';
    """,
    # 4: side runs (a run's purpose: "" for an ordinary grade run; "transfer" or
    # "importance" for runs made by an analysis, which never stand for a shelf version's
    # score) and the analyses' results (phrase importance, transfer checks)
    """
    ALTER TABLE runs ADD COLUMN purpose TEXT NOT NULL DEFAULT '';
    CREATE TABLE analyses (
        id INTEGER PRIMARY KEY, kind TEXT NOT NULL, wording_id INTEGER REFERENCES wordings(id),
        subject TEXT NOT NULL DEFAULT '', result TEXT NOT NULL, created_at TEXT NOT NULL);
    """,
)
