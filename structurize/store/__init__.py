"""The workspace store: an embedded SQLite file that remembers documents, runs and values.

What it promises (tests in tests/test_store*.py):

* **One transaction per document.** A document's status row and all of its values are
  written in one ``BEGIN IMMEDIATE`` transaction, so a crash leaves each document either
  complete or absent; a re-run picks up where the crash left off.
* **Identity is content.** A document is its SHA-256; a cached value is reused only when
  the content hash, the field's definition hash and the extractor version all match.
* **One writer.** A run holds an exclusive lock on ``<store>.lock`` (``fcntl.flock``); a
  second run is refused at once with a message naming the holder.  The lock dies with its
  process, so a lock file left by a dead process is taken over (with a message).
* **Nothing is thrown away.** A corrupt store, or one written by a newer structurize, is
  refused with guidance, never deleted or recreated.

Settings: WAL journal (readers do not block the writer), ``synchronous=FULL``, a busy
timeout, ``foreign_keys=ON``, ``application_id`` and ``user_version``, and the named
migrations in :mod:`structurize.store.migrations`.  Keep the store on a local disk: WAL
does not work over network file systems.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import sqlite3
import time
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from decimal import Decimal
from pathlib import Path
from typing import Any

from ..errors import StructurizeError
from ..faults import fault_point
from ..schema.model import FieldSpec, TargetSchema
from ..types import Alternative, DocStatus, DocumentResult, FieldValue, Span, ValueStatus
from .lock import StoreLock
from .migrations import MIGRATIONS

APPLICATION_ID = 0x5354525A  # "STRZ"
BUSY_TIMEOUT_MS = 10_000


class StoreError(StructurizeError):
    """The store cannot be used: corrupt, newer, full or unwritable."""

    exit_code = 1


class StoreBusy(StoreError):
    """Another run holds the store."""

    exit_code = 2


def now() -> str:
    return dt.datetime.now(dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _explain(exc: sqlite3.Error, path: Path) -> StoreError:
    text = str(exc).lower()
    if "not a database" in text or "malformed" in text or "corrupt" in text:
        return StoreError(f"store corrupt: {path}; restore it from a backup (it was not changed)")
    if "full" in text or "disk i/o" in text or "no space" in text:
        return StoreError(f"store {path}: no space left on the device, or the disk cannot be written")
    if "readonly" in text or "read-only" in text or ("unable to open" in text and not _writable(path)):
        return StoreError(f"store {path}: the store or its folder is read-only")
    if "locked" in text or "busy" in text:
        return StoreBusy(f"store {path}: busy (another process is writing it)")
    return StoreError(f"store {path}: {exc}")


def _writable(path: Path) -> bool:
    folder = path.parent if path.parent != Path("") else Path(".")
    return os.access(folder, os.W_OK) and (not path.exists() or os.access(path, os.W_OK))


#: File systems on which SQLite's locking cannot be trusted (SQLite documentation, "How To
#: Corrupt An SQLite Database File", §2.1: network file systems).
NETWORK_FILESYSTEMS = ("nfs", "nfs4", "cifs", "smb3", "smbfs", "9p", "fuse.sshfs", "afs")
MOUNTS = Path("/proc/mounts")


def network_filesystem(path: Path) -> str | None:
    """The type of the network file system ``path`` lives on (Linux /proc/mounts), or None."""
    try:
        mounts = MOUNTS.read_text(encoding="utf-8", errors="replace").splitlines()
    except OSError:
        return None
    target = os.path.realpath(path.parent if not path.exists() else path)
    best, kind = "", None
    for line in mounts:
        fields = line.split()
        if len(fields) < 3:
            continue
        point = fields[1].replace("\\040", " ")
        if (target == point or target.startswith(point.rstrip("/") + "/")) and len(point) >= len(best):
            best, kind = point, fields[2]
    return kind if kind in NETWORK_FILESYSTEMS else None


class Store:
    """An open workspace store.  Use :meth:`open`; close it (or use ``with``) when done."""

    def __init__(self, path: Path, db: sqlite3.Connection) -> None:
        self.path = path
        self.db = db
        self.lock: StoreLock | None = None

    # --- opening -------------------------------------------------------------------------

    @classmethod
    def open(cls, path: str | Path, *, create: bool = True) -> Store:
        path = Path(path)
        if path.is_dir():
            raise StoreError(f"store {path}: is a folder; give the path of a store file")
        exists = path.exists() and path.stat().st_size > 0
        if not exists and not create:
            raise StoreError(f"store {path}: not found")
        if exists:
            with path.open("rb") as handle:
                if handle.read(16) != b"SQLite format 3\x00":
                    raise StoreError(f"store {path}: not a structurize store (not an SQLite file); it was not changed")
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            db = sqlite3.connect(str(path), timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
        except sqlite3.Error as exc:
            explained = _explain(exc, path)
            raise (explained if "read-only" in str(explained) else StoreError(f"store {path}: cannot be opened ({exc})")) from None
        except OSError as exc:
            raise StoreError(f"store {path}: cannot be opened ({exc.strerror or exc})") from None
        store = cls(path, db)
        try:
            store._check_and_migrate(exists)
        except sqlite3.Error as exc:
            db.close()
            raise _explain(exc, path) from None
        except StoreError:
            db.close()
            raise
        return store

    def _check_and_migrate(self, existed: bool) -> None:
        db = self.db
        db.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        if existed:
            application = db.execute("PRAGMA application_id").fetchone()[0]
            # An empty SQLite file (no tables yet) is a store another process is creating
            # right now: it is set up below, inside the migration's write lock.
            if application != APPLICATION_ID and (application != 0 or _has_tables(db)):
                raise StoreError(f"store {self.path}: not a structurize store; it was not changed")
            result = db.execute("PRAGMA quick_check").fetchone()[0]
            if result != "ok":
                raise StoreError(f"store corrupt: {self.path}; restore it from a backup (it was not changed)")
            version = db.execute("PRAGMA user_version").fetchone()[0]
            if version > len(MIGRATIONS):
                raise StoreError(
                    f"store {self.path}: written by a newer structurize (store version {version}, "
                    f"this one knows {len(MIGRATIONS)}); upgrade structurize"
                )
        _set_wal(db)
        db.execute("PRAGMA synchronous = FULL")
        db.execute("PRAGMA foreign_keys = ON")
        version = db.execute("PRAGMA user_version").fetchone()[0]
        for index, (name, migrate) in enumerate(MIGRATIONS, start=1):
            if index <= version:
                continue
            db.execute("BEGIN IMMEDIATE")
            try:
                if db.execute("PRAGMA user_version").fetchone()[0] >= index:
                    db.execute("COMMIT")  # another process applied it while this one waited for the lock
                    continue
                if index == 1:
                    db.execute("CREATE TABLE IF NOT EXISTS migrations (name TEXT PRIMARY KEY, applied_at TEXT NOT NULL)")
                    db.execute(f"PRAGMA application_id = {APPLICATION_ID}")
                migrate(db)
                db.execute("INSERT INTO migrations (name, applied_at) VALUES (?, ?)", (name, now()))
                db.execute(f"PRAGMA user_version = {index}")
                db.execute("COMMIT")
            except BaseException:
                db.execute("ROLLBACK")
                raise

    def close(self) -> None:
        if self.lock is not None:
            self.lock.release()
            self.lock = None
        self.db.close()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def location_warning(self) -> str | None:
        """A warning when the store lives where SQLite's locking cannot be trusted (a
        network file system), else None."""
        remote = network_filesystem(self.path)
        if remote is None:
            return None
        return f"warning: the store is on a network file system ({remote}); SQLite's locking is not reliable there: keep it on a local disk"

    def acquire(self) -> str | None:
        """Take the writer's lock; returns a message when a stale lock was taken over."""
        self.lock = StoreLock(self.path)
        return self.lock.acquire()

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        try:
            self.db.execute("BEGIN IMMEDIATE")
        except sqlite3.Error as exc:
            raise _explain(exc, self.path) from None
        try:
            yield self.db
            fault_point("before_commit")
            self.db.execute("COMMIT")
        except sqlite3.Error as exc:
            if self.db.in_transaction:
                self.db.execute("ROLLBACK")
            raise _explain(exc, self.path) from None
        except BaseException:
            if self.db.in_transaction:
                self.db.execute("ROLLBACK")
            raise

    @contextmanager
    def snapshot(self) -> Iterator[None]:
        """A read transaction: every read inside sees the store as it was when it began,
        whatever a run writes meanwhile (WAL readers do not block the writer)."""
        try:
            self.db.execute("BEGIN")
        except sqlite3.Error as exc:
            raise _explain(exc, self.path) from None
        try:
            yield
        finally:
            if self.db.in_transaction:
                self.db.execute("COMMIT")

    # --- runs ----------------------------------------------------------------------------

    def begin_run(self, schema: TargetSchema, field_hashes: dict[str, str], schema_hash: str, input_root: str,
                  tool_version: str, extractor_version: str) -> int:
        with self.transaction() as db:
            db.execute("UPDATE runs SET state = 'interrupted' WHERE state = 'running'")
            cursor = db.execute(
                "INSERT INTO runs (schema_name, schema_hash, field_hashes, schema_descriptor, tool_version, extractor_version,"
                " input_root, started_at, state, pid) VALUES (?, ?, ?, ?, ?, ?, ?, ?, 'running', ?)",
                (schema.name, schema_hash, json.dumps(field_hashes, sort_keys=True), json.dumps(schema.descriptor, default=str),
                 tool_version, extractor_version, input_root, now(), os.getpid()),
            )
            return int(cursor.lastrowid)

    def finish_run(self, run_id: int, counts: dict[str, Any], note: str = "") -> None:
        with self.transaction() as db:
            db.execute(
                "UPDATE runs SET state = 'finished', finished_at = ?, counts = ?, note = ? WHERE id = ?",
                (now(), json.dumps(counts, sort_keys=True), note, run_id),
            )

    def previous_run(self, schema_name: str) -> sqlite3.Row | None:
        self.db.row_factory = sqlite3.Row
        try:
            return self.db.execute(
                "SELECT * FROM runs WHERE schema_name = ? AND state = 'finished' ORDER BY id DESC LIMIT 1", (schema_name,)
            ).fetchone()
        finally:
            self.db.row_factory = None

    def runs(self) -> list[dict[str, Any]]:
        return [dict(row) for row in self._rows("SELECT * FROM runs ORDER BY id")]

    def run(self, run_id: int) -> dict[str, Any] | None:
        rows = self._rows("SELECT * FROM runs WHERE id = ?", (run_id,))
        if not rows:
            return None
        run = dict(rows[0])
        run["documents"] = [dict(row) for row in self._rows(
            "SELECT path, sha256, action, fields FROM run_documents WHERE run_id = ? ORDER BY path", (run_id,))]
        return run

    def _rows(self, sql: str, parameters: tuple[Any, ...] = ()) -> list[sqlite3.Row]:
        self.db.row_factory = sqlite3.Row
        try:
            return self.db.execute(sql, parameters).fetchall()
        except sqlite3.Error as exc:
            raise _explain(exc, self.path) from None
        finally:
            self.db.row_factory = None

    # --- documents -----------------------------------------------------------------------

    def known_paths(self, schema_name: str, input_root: str) -> dict[str, str]:
        """{path: sha256} as last seen under ``input_root`` for this schema."""
        rows = self._rows(
            "SELECT path, sha256, last_run FROM paths WHERE schema_name = ? AND input_root = ? ORDER BY last_run",
            (schema_name, input_root),
        )
        return {row["path"]: row["sha256"] for row in rows}

    def cached_fields(self, schema_name: str, shas: Iterable[str], extractor_version: str) -> dict[str, dict[str, str]]:
        """{sha256: {field: field_hash}} of the values stored for these documents."""
        out: dict[str, dict[str, str]] = {}
        wanted = list(dict.fromkeys(shas))
        for start in range(0, len(wanted), 500):
            chunk = wanted[start : start + 500]
            marks = ",".join("?" * len(chunk))
            for row in self._rows(
                f"SELECT sha256, field, field_hash FROM field_values WHERE schema_name = ? AND extractor_version = ? AND sha256 IN ({marks})",
                (schema_name, extractor_version, *chunk),
            ):
                out.setdefault(row["sha256"], {}).setdefault(row["field"], set()).add(row["field_hash"])  # type: ignore[attr-defined]
        return out  # type: ignore[return-value]

    def document_states(self, shas: Iterable[str]) -> dict[str, tuple[str, str, list[str]]]:
        """{sha256: (status, reason code, warnings)} of the documents already recorded."""
        wanted = list(dict.fromkeys(shas))
        out: dict[str, tuple[str, str, list[str]]] = {}
        for start in range(0, len(wanted), 500):
            chunk = wanted[start : start + 500]
            marks = ",".join("?" * len(chunk))
            for row in self._rows(f"SELECT sha256, status, reason, warnings FROM documents WHERE sha256 IN ({marks})", tuple(chunk)):
                out[row["sha256"]] = (row["status"], row["reason"], _json_list(row["warnings"]))
        return out

    def save_document(self, run_id: int, schema_name: str, input_root: str, path: str, result: DocumentResult,
                      field_hashes: dict[str, str], fields: list[str], extractor_version: str) -> None:
        """Record one extracted document: status, the values of ``fields``, its path — one transaction."""
        with self.transaction() as db:
            db.execute(
                "INSERT INTO documents (sha256, reader, encoding, pages, chars, status, reason, note, warnings, seconds, first_run)"
                " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT(sha256) DO UPDATE SET reader = excluded.reader,"
                " encoding = excluded.encoding, pages = excluded.pages, chars = excluded.chars, status = excluded.status,"
                " reason = excluded.reason, note = excluded.note, warnings = excluded.warnings, seconds = excluded.seconds",
                (result.sha256, result.reader, result.encoding, result.pages, result.chars, str(result.status), result.reason,
                 result.note, json.dumps(list(result.warnings)), round(result.seconds, 3), run_id),
            )
            fault_point("after_document_before_values")
            for item in result.values:
                if item.field not in fields:
                    continue
                db.execute(
                    "INSERT OR REPLACE INTO field_values (sha256, schema_name, field, field_hash, extractor_version, value,"
                    " confidence, status, span_start, span_end, page, snippet, raw, extractor, reason, evidence, alternatives,"
                    " run_id) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                    (result.sha256, schema_name, item.field, field_hashes[item.field], extractor_version, _dump_value(item.value),
                     item.confidence, str(item.status), item.span.start if item.span else None, item.span.end if item.span else None,
                     item.page, item.snippet, item.raw, item.extractor, item.reason, json.dumps(list(item.evidence)),
                     json.dumps([_dump_alternative(alt) for alt in item.alternatives]), run_id),
                )
            fault_point("after_values_before_status")
            self._record_path(db, run_id, schema_name, input_root, path, result.sha256, "extracted", fields)

    def reuse_document(self, run_id: int, schema_name: str, input_root: str, path: str, sha256: str) -> None:
        self.reuse_documents(run_id, schema_name, input_root, [(path, sha256)])

    def reuse_documents(self, run_id: int, schema_name: str, input_root: str, documents: list[tuple[str, str]]) -> None:
        """Record documents whose stored values are reused: ``(path, sha256)`` pairs.

        Only bookkeeping rows (no values), so one transaction holds them all: a commit per
        document would make a no-op run over a large folder cost one disk sync per file.
        """
        if not documents:
            return
        with self.transaction() as db:
            for path, sha256 in documents:
                self._record_path(db, run_id, schema_name, input_root, path, sha256, "reused", [])

    def record_missing(self, run_id: int, path: str, sha256: str) -> None:
        with self.transaction() as db:
            db.execute(
                "INSERT OR REPLACE INTO run_documents (run_id, path, sha256, action, fields) VALUES (?, ?, ?, 'missing', '[]')",
                (run_id, path, sha256),
            )

    def _record_path(self, db: sqlite3.Connection, run_id: int, schema_name: str, input_root: str, path: str, sha256: str,
                     action: str, fields: list[str]) -> None:
        db.execute(
            "INSERT INTO paths (schema_name, input_root, path, sha256, first_run, last_run) VALUES (?, ?, ?, ?, ?, ?)"
            " ON CONFLICT(schema_name, input_root, path, sha256) DO UPDATE SET last_run = excluded.last_run",
            (schema_name, input_root, path, sha256, run_id, run_id),
        )
        db.execute(
            "INSERT OR REPLACE INTO run_documents (run_id, path, sha256, action, fields) VALUES (?, ?, ?, ?, ?)",
            (run_id, path, sha256, action, json.dumps(sorted(fields))),
        )

    # --- reading results back ----------------------------------------------------------

    def results(self, schema: TargetSchema, field_hashes: dict[str, str], extractor_version: str | None,
                documents: Iterable[tuple[str, str]]) -> Iterator[DocumentResult]:
        """Rebuild :class:`DocumentResult` objects for ``(path, sha256)`` pairs from stored rows.

        A field's value is the stored one whose field hash is current and, with an
        ``extractor_version``, made under that key; with None, the latest one under any
        (what an export shows: the newest values, whichever version and settings made them).  Reads in
        chunks of documents (two queries per chunk, not per document) and yields them; a
        document whose row is absent is skipped.
        """
        wanted = list(documents)
        for start in range(0, len(wanted), 500):
            chunk = wanted[start : start + 500]
            shas = list(dict.fromkeys(sha for _, sha in chunk))
            marks = ",".join("?" * len(shas))
            docs = {row["sha256"]: row for row in self._rows(f"SELECT * FROM documents WHERE sha256 IN ({marks})", tuple(shas))}
            stored: dict[str, dict[str, sqlite3.Row]] = {}
            version, key = ("AND extractor_version = ?", (extractor_version,)) if extractor_version is not None else ("", ())
            for row in self._rows(
                f"SELECT * FROM field_values WHERE schema_name = ? {version} AND sha256 IN ({marks}) ORDER BY run_id",
                (schema.name, *key, *shas),
            ):
                if row["field_hash"] == field_hashes.get(row["field"]):
                    stored.setdefault(row["sha256"], {})[row["field"]] = row  # the latest run wins
            for path, sha256 in chunk:
                doc = docs.get(sha256)
                if doc is None:
                    continue
                mine = stored.get(sha256, {})
                values = tuple(_load_value(spec, mine.get(spec.name)) for spec in schema.fields)
                yield DocumentResult(
                    source=path, sha256=sha256, status=DocStatus(doc["status"]), reason=doc["reason"], note=doc["note"],
                    reader=doc["reader"], encoding=doc["encoding"], pages=doc["pages"], chars=doc["chars"],
                    warnings=tuple(_json_list(doc["warnings"])), seconds=doc["seconds"], values=values,
                )

    def last_extraction(self, schema_name: str) -> int | None:
        """The latest run that extracted a document for this schema."""
        rows = self._rows(
            "SELECT MAX(d.run_id) AS last FROM run_documents AS d JOIN runs AS r ON r.id = d.run_id"
            " WHERE r.schema_name = ? AND d.action = 'extracted'",
            (schema_name,),
        )
        return rows[0]["last"] if rows else None

    def run_documents(self, run_id: int) -> list[tuple[str, str]]:
        return [(row["path"], row["sha256"]) for row in self._rows(
            "SELECT path, sha256 FROM run_documents WHERE run_id = ? AND action != 'missing' ORDER BY path", (run_id,))]

    def workspace_documents(self, schema_name: str) -> list[tuple[str, str]]:
        """Everything so far: the documents of the latest finished run over each input folder
        this schema was run on (a folder's latest run of any state when none finished), as
        ``(path, sha256)``.  Documents gone from a folder, and earlier versions of changed
        ones, are left out (they stay in the store as history).  With more than one input
        folder, each path starts with its folder's name (``2026-Q1/interview_01.txt``), the
        shortest tail of the folder's path that tells the folders apart."""
        finished: dict[str, int] = {}
        newest: dict[str, int] = {}
        for row in self._rows("SELECT id, input_root, state FROM runs WHERE schema_name = ? ORDER BY id", (schema_name,)):
            newest[row["input_root"]] = row["id"]
            if row["state"] == "finished":
                finished[row["input_root"]] = row["id"]
        latest = {root: finished.get(root, run_id) for root, run_id in newest.items()}
        labels = _folder_labels(list(latest))
        out = []
        for root, run_id in latest.items():
            for path, sha256 in self.run_documents(run_id):
                out.append((f"{labels[root]}/{path}" if labels[root] else path, sha256))
        return sorted(out)


def _folder_labels(roots: list[str]) -> dict[str, str]:
    """A short label per input folder: "" for a single folder, else the shortest tail of
    each path (``Q1``, ``2026/Q1``) that no other folder shares."""
    if len(roots) < 2:
        return dict.fromkeys(roots, "")
    parts = {root: Path(root).parts for root in roots}
    labels = {}
    for root in roots:
        for size in range(1, len(parts[root]) + 1):
            tail = parts[root][-size:]
            if all(parts[other][-size:] != tail for other in roots if other != root):
                break
        labels[root] = "/".join(tail)
    return labels


def _has_tables(db: sqlite3.Connection) -> bool:
    return db.execute("SELECT count(*) FROM sqlite_master").fetchone()[0] > 0


def _set_wal(db: sqlite3.Connection) -> None:
    """Switch to WAL.  The switch needs the file to itself and does not wait on the busy
    handler, so a store another process is creating at the same moment is retried here."""
    deadline = time.monotonic() + BUSY_TIMEOUT_MS / 1000
    while True:
        try:
            db.execute("PRAGMA journal_mode = WAL")
            return
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc).lower() or time.monotonic() > deadline:
                raise
            time.sleep(0.02)


def _json_list(text: str) -> list[Any]:
    return [] if text == "[]" else json.loads(text)


def _dump_value(value: Any) -> str | None:
    if value is None:
        return None
    if isinstance(value, bool):
        return json.dumps({"t": "bool", "v": value})
    if isinstance(value, dt.datetime):
        return json.dumps({"t": "datetime", "v": value.isoformat()})
    if isinstance(value, dt.date):
        return json.dumps({"t": "date", "v": value.isoformat()})
    if isinstance(value, Decimal):
        return json.dumps({"t": "decimal", "v": str(value)})
    if isinstance(value, int):
        return json.dumps({"t": "int", "v": value})
    return json.dumps({"t": "str", "v": str(value)})


def _parse_value(text: str | None) -> Any:
    if text is None:
        return None
    data = json.loads(text)
    kind, value = data["t"], data["v"]
    if kind == "date":
        return dt.date.fromisoformat(value)
    if kind == "datetime":
        return dt.datetime.fromisoformat(value)
    if kind == "decimal":
        return Decimal(value)
    return value


def _dump_alternative(alternative: Alternative) -> dict[str, Any]:
    return {
        "value": _dump_value(alternative.value),
        "score": alternative.score,
        "start": alternative.span.start if alternative.span else None,
        "end": alternative.span.end if alternative.span else None,
    }


def _load_value(spec: FieldSpec, row: sqlite3.Row | None) -> FieldValue:
    if row is None:
        return FieldValue(spec.name, None, 0.0, ValueStatus.MISSING, reason="not extracted yet")
    span = Span(row["span_start"], row["span_end"]) if row["span_start"] is not None else None
    alternatives = tuple(
        Alternative(_parse_value(alt["value"]), alt["score"], Span(alt["start"], alt["end"]) if alt["start"] is not None else None)
        for alt in _json_list(row["alternatives"])
    )
    return FieldValue(
        field=spec.name, value=_parse_value(row["value"]), confidence=row["confidence"], status=ValueStatus(row["status"]),
        span=span, page=row["page"], snippet=row["snippet"], raw=row["raw"], extractor=row["extractor"], reason=row["reason"],
        evidence=tuple(_json_list(row["evidence"])), alternatives=alternatives,
    )
