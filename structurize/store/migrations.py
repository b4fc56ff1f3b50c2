"""Named, ordered migrations of the workspace store.

Each migration runs once, in its own transaction, and is recorded in the ``migrations``
table; ``PRAGMA user_version`` is the number of migrations applied.  A store written by a
newer structurize (a higher ``user_version``) is refused, never "upgraded" backwards.
Never edit a migration that has shipped: add a new one.
"""

from __future__ import annotations

from collections.abc import Callable
from sqlite3 import Connection

Migration = tuple[str, Callable[[Connection], None]]


def run_script(db: Connection, script: str) -> None:
    """Execute ``;``-separated statements inside the caller's transaction (unlike
    ``executescript``, which commits first)."""
    for statement in script.split(";"):
        if statement.strip():
            db.execute(statement)


def _initial(db: Connection) -> None:
    run_script(
        db,
        """
        CREATE TABLE runs (
            id INTEGER PRIMARY KEY,
            schema_name TEXT NOT NULL,
            schema_hash TEXT NOT NULL,
            field_hashes TEXT NOT NULL,          -- JSON {field: hash}
            schema_descriptor TEXT NOT NULL,     -- JSON, the schema as given
            tool_version TEXT NOT NULL,
            extractor_version TEXT NOT NULL,
            input_root TEXT NOT NULL,
            started_at TEXT NOT NULL,
            finished_at TEXT,
            state TEXT NOT NULL CHECK (state IN ('running', 'finished', 'interrupted')),
            pid INTEGER,
            counts TEXT,                         -- JSON, filled when the run finishes
            note TEXT
        );
        CREATE TABLE documents (
            sha256 TEXT PRIMARY KEY,
            reader TEXT NOT NULL,
            encoding TEXT,
            pages INTEGER,
            chars INTEGER NOT NULL,
            status TEXT NOT NULL,
            reason TEXT NOT NULL,
            note TEXT NOT NULL,
            warnings TEXT NOT NULL,             -- JSON list
            seconds REAL NOT NULL,
            first_run INTEGER NOT NULL REFERENCES runs(id)
        );
        CREATE TABLE field_values (
            sha256 TEXT NOT NULL REFERENCES documents(sha256),
            schema_name TEXT NOT NULL,
            field TEXT NOT NULL,
            field_hash TEXT NOT NULL,
            extractor_version TEXT NOT NULL,
            value TEXT,                          -- JSON {"t": type, "v": text}, NULL when missing
            confidence REAL NOT NULL,
            status TEXT NOT NULL,
            span_start INTEGER,
            span_end INTEGER,
            page INTEGER,
            snippet TEXT NOT NULL,
            raw TEXT NOT NULL,
            extractor TEXT NOT NULL,
            reason TEXT NOT NULL,
            evidence TEXT NOT NULL,              -- JSON list
            alternatives TEXT NOT NULL,          -- JSON list of {"value", "score", "start", "end"}
            run_id INTEGER NOT NULL REFERENCES runs(id),
            PRIMARY KEY (sha256, schema_name, field, field_hash, extractor_version)
        );
        CREATE TABLE paths (
            schema_name TEXT NOT NULL,
            input_root TEXT NOT NULL,
            path TEXT NOT NULL,
            sha256 TEXT NOT NULL REFERENCES documents(sha256),
            first_run INTEGER NOT NULL REFERENCES runs(id),
            last_run INTEGER NOT NULL REFERENCES runs(id),
            PRIMARY KEY (schema_name, input_root, path, sha256)
        );
        CREATE TABLE run_documents (
            run_id INTEGER NOT NULL REFERENCES runs(id),
            path TEXT NOT NULL,
            sha256 TEXT NOT NULL,
            action TEXT NOT NULL CHECK (action IN ('extracted', 'reused', 'missing')),
            fields TEXT NOT NULL,                -- JSON list of the fields extracted in this run
            PRIMARY KEY (run_id, path)
        );
        -- Reviewer decisions, kept per (document content, field), with who and when.
        CREATE TABLE decisions (
            id INTEGER PRIMARY KEY,
            sha256 TEXT NOT NULL,
            schema_name TEXT NOT NULL,
            field TEXT NOT NULL,
            value TEXT,
            reviewer TEXT NOT NULL,
            decided_at TEXT NOT NULL,
            note TEXT NOT NULL DEFAULT '',
            field_hash TEXT NOT NULL
        );
        CREATE INDEX decisions_by_value ON decisions (sha256, schema_name, field);
        CREATE INDEX paths_by_sha ON paths (sha256);
        CREATE INDEX run_documents_by_sha ON run_documents (sha256)
        """,
    )


MIGRATIONS: list[Migration] = [
    ("0001_initial", _initial),
]
