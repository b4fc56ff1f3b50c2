"""The workspace store: settings, one transaction per document, the writer's lock, corrupt stores.

This module also holds the shared helpers of the store tests (``tests/test_store_faults.py``
and ``tests/test_incremental.py`` import them): invented input documents, a runner for the
``structurize`` command as a subprocess, output snapshots, and ``INV``, the invariant check
that every fault-injection test ends with (tests/CATALOGUE.md, "INV").
"""

from __future__ import annotations

import csv
import io
import json
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import threading
import time
import traceback
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

import pytest

from structurize.incremental import extraction_key, field_hashes
from structurize.options import ExtractOptions
from structurize.schema import load_schema
from structurize.store import APPLICATION_ID, Store, StoreBusy, StoreError
from structurize.store.lock import StoreLock
from structurize.store.migrations import MIGRATIONS
from structurize.version import EXTRACTOR_VERSION

from conftest import DEMO_DOCS, SCHEMAS

OFFER_SCHEMA = SCHEMAS / "offer_letter.yaml"
OUTPUT_FILES = ("table.csv", "values.csv", "documents.csv", "datapackage.json", "data_dictionary.md", "data_dictionary.csv")
CSV_FILES = ("table.csv", "values.csv", "documents.csv", "data_dictionary.csv")

# --- invented documents ------------------------------------------------------------------

FIRST = ["Ana", "Bram", "Chiara", "Dmitri", "Efua", "Farid", "Greta", "Hiro", "Ines", "Jonas", "Keiko", "Lars", "Mei",
         "Nadia", "Oskar", "Priya", "Quinn", "Rosa", "Sven", "Tariq"]
LAST = ["Albers", "Brennan", "Castillo", "Dahl", "Eze", "Fontaine", "Gallo", "Huang", "Ibsen", "Jovanovic", "Kowalski",
        "Lindqvist", "Moreau", "Novak", "Okafor", "Petrov", "Quist", "Rahman", "Sato", "Tanaka"]
TITLES = ["Veterinary Technician", "Practice Manager", "Client Care Coordinator", "Laboratory Technologist",
          "Kennel Attendant", "Associate Veterinarian"]
SITES = ["Tallowbrook Main Hospital", "Oriel Street Clinic", "Hadley Pines Equine Center", "Juniper Wharf Emergency Hospital"]
MONTHS = ["January", "February", "March", "April", "May", "June", "July", "August", "September", "October", "November",
          "December"]
CLOSINGS = ["We look forward to working with you.", "Welcome to the team.", "Everyone at the clinic is delighted.",
            "Please call us with any questions."]


def letter(index: int, variant: int = 0) -> str:
    """An invented offer letter with "Label: value" lines; ``variant`` changes the pay and the prose."""
    rng = random.Random(index * 7919 + variant)
    name = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    manager = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    month, day = rng.randrange(12), rng.randrange(1, 27)
    salary = rng.randrange(40, 120) * 1000 + rng.randrange(0, 20) * 50
    return (
        "TALLOWBROOK VETERINARY PARTNERS\nPeople & Culture\n\n"
        f"Date: {MONTHS[month]} {day}, 2025\nReference: TVP-{index:06d}\n\n"
        f"Candidate: {name}\nPosition: {rng.choice(TITLES)}\nLocation: {rng.choice(SITES)}\n"
        f"Start date: {MONTHS[(month + 1) % 12]} {day + 1}, 2026\nBase salary: ${salary:,} per year\n"
        f"Reports to: {manager}\n\n"
        f"Dear {name.split()[0]},\n\nWe are pleased to offer you the position described above. "
        f"Please reply within two weeks to accept this offer. {rng.choice(CLOSINGS)}\n\nSincerely,\nPeople & Culture\n"
    )


def doc_name(index: int) -> str:
    return f"offer_{index:03d}.txt"


def make_docs(folder: Path, count: int, start: int = 0, *, demo: bool = True) -> list[str]:
    """``count`` invented letters (plus, with ``demo``, a copy of the demo offer letter); their names."""
    folder.mkdir(parents=True, exist_ok=True)
    names = []
    for index in range(start, start + count):
        (folder / doc_name(index)).write_text(letter(index), encoding="utf-8")
        names.append(doc_name(index))
    if demo:
        shutil.copy(DEMO_DOCS / "offer_letter" / "offer_dvorakova.txt", folder / "demo_dvorakova.txt")
        names.append("demo_dvorakova.txt")
    return sorted(names)


# --- running the command -----------------------------------------------------------------


def cli_env(**extra: str) -> dict[str, str]:
    env = {key: value for key, value in os.environ.items() if not key.startswith("STRUCTURIZE_")}
    env.update({"PYTHONUNBUFFERED": "1", "COLUMNS": "200"})
    env.update(extra)
    return env


def fault_env(**extra: str) -> dict[str, str]:
    return cli_env(STRUCTURIZE_FAULT_INJECTION="1", **extra)


def command(*args: object) -> list[str]:
    return [sys.executable, "-m", "structurize", *map(str, args)]


def cli(*args: object, env: dict[str, str] | None = None, timeout: float = 120, **kwargs) -> subprocess.CompletedProcess:
    return subprocess.run(command(*args), capture_output=True, text=True, env=env or cli_env(), timeout=timeout, **kwargs)


@dataclass
class Ran:
    returncode: int
    stdout: str
    stderr: str


def run(*args: object) -> Ran:
    """The command in this process (typer's CliRunner): the same code as a subprocess without
    its start-up cost.  An exception the command did not handle ends up in ``stderr`` as the
    traceback a user would see.  Faults that kill a process use :func:`cli` instead."""
    from typer.testing import CliRunner

    from structurize.cli import app

    result = CliRunner().invoke(app, [str(arg) for arg in args])
    stderr = result.stderr
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        stderr += "".join(traceback.format_exception(result.exception))
    return Ran(result.exit_code, result.stdout, stderr)


def extract_args(docs: Path, out: Path, store: Path, *extra: object, schema: Path = OFFER_SCHEMA) -> list[object]:
    return ["extract", docs, "--schema", schema, "--out", out, "--store", store, "--no-ner", *extra]


def extract(docs: Path, out: Path, store: Path, *extra: object, schema: Path = OFFER_SCHEMA) -> Ran:
    """``structurize extract`` in this process."""
    return run(*extract_args(docs, out, store, *extra, schema=schema))


def extract_process(docs: Path, out: Path, store: Path, *extra: object, schema: Path = OFFER_SCHEMA,
                    env: dict[str, str] | None = None) -> subprocess.CompletedProcess:
    """``structurize extract`` as a subprocess (for faults that kill it, or environment changes)."""
    return cli(*extract_args(docs, out, store, *extra, schema=schema), env=env)


def wait_for_lock_holder(store: Path, process: subprocess.Popen, within: float = 60) -> bool:
    """Wait until ``process`` holds the store's lock (True) or has exited (False)."""
    lock_file = Path(f"{store}.lock")
    deadline = time.monotonic() + within
    while time.monotonic() < deadline:
        try:
            if json.loads(lock_file.read_text() or "{}").get("pid") == process.pid:
                return True
        except (OSError, ValueError):
            pass
        if process.poll() is not None:
            return False
        time.sleep(0.005)
    raise AssertionError("the run never took the store's lock")


def lines(text: str) -> list[str]:
    return [line for line in text.splitlines() if line.strip()]


def kill_group(process: subprocess.Popen) -> None:
    """SIGKILL what is left of a process started with ``start_new_session=True`` (its workers)."""
    try:
        os.killpg(process.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        pass
    process.wait(timeout=30)


def group_gone(pgid: int, within: float = 10.0) -> bool:
    deadline = time.monotonic() + within
    while time.monotonic() < deadline:
        try:
            os.killpg(pgid, 0)
        except ProcessLookupError:
            return True
        time.sleep(0.05)
    return False


# --- outputs -----------------------------------------------------------------------------


def read_rows(path: Path) -> tuple[list[str], list[list[str]]]:
    """A CSV output parsed strictly: header and rows (raises on anything malformed)."""
    data = path.read_bytes()
    text = data.decode("utf-8-sig")
    rows = list(csv.reader(io.StringIO(text, newline=""), strict=True))
    assert rows, f"{path.name}: empty"
    header, body = rows[0], rows[1:]
    for number, row in enumerate(body, start=2):
        assert len(row) == len(header), f"{path.name}: row {number} has {len(row)} cells, the header {len(header)}"
    return header, body


def _without_columns(data: bytes, drop: set[str]) -> bytes:
    bom = data.startswith(b"\xef\xbb\xbf")
    header, body = None, []
    rows = list(csv.reader(io.StringIO(data.decode("utf-8-sig"), newline=""), strict=True))
    header, body = rows[0], rows[1:]
    keep = [i for i, name in enumerate(header) if name not in drop]
    buffer = io.StringIO(newline="")
    writer = csv.writer(buffer, quoting=csv.QUOTE_ALL, lineterminator="\r\n")
    for row in [header, *body]:
        writer.writerow([row[i] for i in keep])
    return (b"\xef\xbb\xbf" if bom else b"") + buffer.getvalue().encode("utf-8")


def snapshot(out_dir: Path, *, exclude_timing: bool = True) -> dict[str, bytes]:
    """Every output file's bytes.  With ``exclude_timing``, documents.csv loses its ``seconds``
    column (how long the extraction took: a timing, not a result).  The outputs are written with
    QUOTE_ALL and CRLF, so re-writing the other cells the same way reproduces their bytes.
    Hidden files (the writer's ``.NAME.XXXX.tmp``) are left to INV's temp-file check."""
    files = {path.name: path.read_bytes() for path in sorted(out_dir.iterdir())
             if path.is_file() and not path.name.startswith(".")}  # hidden: temp files, checked by INV
    if exclude_timing and "documents.csv" in files:
        files["documents.csv"] = _without_columns(files["documents.csv"], {"seconds"})
    return files


def assert_same_outputs(out_dir: Path, reference: dict[str, bytes], *, exclude_timing: bool = True) -> None:
    got = snapshot(out_dir, exclude_timing=exclude_timing)
    assert sorted(got) == sorted(reference), f"output files differ: {sorted(got)} != {sorted(reference)}"
    for name in reference:
        assert got[name] == reference[name], f"{name} differs from the reference run's"


def table_documents(out_dir: Path) -> list[str]:
    header, body = read_rows(out_dir / "table.csv")
    return [row[header.index("document")] for row in body]


def tmp_files(out_dir: Path) -> list[str]:
    return sorted(path.name for path in out_dir.glob("*.tmp")) if out_dir.is_dir() else []


# --- the invariant check (INV in tests/CATALOGUE.md) ----------------------------------------

PRIMARY_KEYS = {
    "documents": ["sha256"],
    "field_values": ["sha256", "schema_name", "field", "field_hash", "extractor_version"],
    "paths": ["schema_name", "input_root", "path", "sha256"],
    "run_documents": ["run_id", "path"],
    "runs": ["id"],
    "migrations": ["name"],
}


def connect(store_path: Path) -> sqlite3.Connection:
    return sqlite3.connect(str(store_path), isolation_level=None)


def INV(store_path: Path, out_dir: Path | None, expected_documents: Iterable[str] | None = None, *,
        schema_path: Path = OFFER_SCHEMA, after_success: bool = False, tmp_ok: bool = False) -> dict[str, int]:
    """The invariant every fault-injection test ends with (INV in tests/CATALOGUE.md).

    * ``integrity_check`` = ok, ``foreign_key_check`` empty;
    * every document is complete (its ``documents`` row, one ``field_values`` row per schema
      field for the current field hashes and extractor version, its ``paths`` row and the
      ``run_documents`` row of the run that extracted it) or absent; no orphan rows;
    * the primary keys are the expected ones, and no key occurs twice;
    * every output file present parses fully and its row count is the document count of a
      run in the store (with ``expected_documents``: exactly those documents, the last run's);
    * ``after_success``: no run left 'running' and no ``*.tmp`` output (unless ``tmp_ok``).

    Returns counts (documents, values, runs) for the caller's own assertions.
    """
    schema = load_schema(schema_path)
    hashes = field_hashes(schema)
    db = connect(store_path)
    try:
        assert db.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert db.execute("PRAGMA foreign_key_check").fetchall() == []
        assert db.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
        for table, key in PRIMARY_KEYS.items():
            info = db.execute(f"PRAGMA table_info({table})").fetchall()
            assert [row[1] for row in sorted((r for r in info if r[5]), key=lambda r: r[5])] == key, f"{table}: primary key"
            columns = ", ".join(key)
            duplicates = db.execute(f"SELECT {columns}, count(*) FROM {table} GROUP BY {columns} HAVING count(*) > 1").fetchall()
            assert duplicates == [], f"duplicate {table} rows: {duplicates[:3]}"
        documents = [row[0] for row in db.execute("SELECT sha256 FROM documents")]
        for sha in documents:
            rows = db.execute(  # the extractors' version, then the settings (extraction_key)
                "SELECT field, field_hash, extractor_version FROM field_values WHERE sha256 = ? AND schema_name = ?"
                " AND extractor_version LIKE ?",
                (sha, schema.name, f"{EXTRACTOR_VERSION}/%"),
            ).fetchall()
            complete = {
                version: sorted(field for field, hash_, key in rows if key == version and hashes.get(field) == hash_)
                for version in {key for _, _, key in rows}
            }
            assert sorted(schema.field_names) in complete.values(), f"document {sha[:12]} is incomplete: {complete}"
            assert db.execute("SELECT count(*) FROM paths WHERE sha256 = ?", (sha,)).fetchone()[0] >= 1, f"{sha[:12]}: no path"
            assert db.execute(
                "SELECT count(*) FROM run_documents WHERE sha256 = ? AND action = 'extracted'", (sha,)
            ).fetchone()[0] >= 1, f"{sha[:12]}: no run_documents row"
        for table in ("field_values", "paths"):
            orphans = db.execute(f"SELECT count(*) FROM {table} WHERE sha256 NOT IN (SELECT sha256 FROM documents)").fetchone()[0]
            assert orphans == 0, f"{orphans} orphan {table} rows"
        orphans = db.execute(
            "SELECT count(*) FROM run_documents WHERE action != 'missing' AND sha256 NOT IN (SELECT sha256 FROM documents)"
        ).fetchone()[0]
        assert orphans == 0, f"{orphans} run_documents rows without a document"
        runs = db.execute("SELECT id, state FROM runs ORDER BY id").fetchall()
        assert sum(state == "running" for _, state in runs) <= 1, runs
        if after_success:
            assert runs and runs[-1][1] == "finished" and all(state != "running" for _, state in runs), runs
        run_counts = {
            run_id: count for run_id, count in db.execute(
                "SELECT run_id, count(*) FROM run_documents WHERE action != 'missing' GROUP BY run_id")
        }
        last_run_documents = sorted(row[0] for row in db.execute(
            "SELECT path FROM run_documents WHERE action != 'missing' AND run_id = (SELECT max(id) FROM runs)"))
        values = db.execute("SELECT count(*) FROM field_values").fetchone()[0]
    finally:
        db.close()

    if out_dir is not None and out_dir.is_dir():
        allowed = set(run_counts.values())
        present = [name for name in OUTPUT_FILES if (out_dir / name).exists()]
        if expected_documents is not None:
            expected = sorted(expected_documents)
            assert last_run_documents == expected, "the last run's documents are not the input set"
            assert present == list(OUTPUT_FILES), f"outputs missing: {set(OUTPUT_FILES) - set(present)}"
            assert table_documents(out_dir) == expected
            allowed = {len(expected)}
        fields = len(schema.fields)
        for name in present:
            path = out_dir / name
            if name == "datapackage.json":
                package = json.loads(path.read_text(encoding="utf-8"))
                assert package["resources"][0]["path"] == "table.csv"
                continue
            if name == "data_dictionary.md":
                assert path.read_text(encoding="utf-8").startswith("# Data dictionary")
                continue
            header, body = read_rows(path)
            if name == "values.csv":
                assert len(body) % fields == 0 and len(body) // fields in allowed, f"{name}: {len(body)} rows"
            elif name == "data_dictionary.csv":
                assert len(body) == fields
            else:
                assert len(body) in allowed, f"{name}: {len(body)} rows; the store's runs hold {sorted(allowed)}"
        if after_success and not tmp_ok:
            assert tmp_files(out_dir) == [], f"temporary outputs left behind: {tmp_files(out_dir)}"
    return {"documents": len(documents), "values": values, "runs": len(runs)}


# --- store settings and transactions (in-process) ----------------------------------------------


@pytest.fixture
def offer_schema():
    return load_schema(OFFER_SCHEMA)


def test_store_settings_and_version(tmp_path: Path) -> None:
    """FI-12 groundwork: the store says what it is (application_id, user_version) and uses WAL/FULL/FKs."""
    with Store.open(tmp_path / "s.sqlite") as store:
        db = store.db
        assert db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert db.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
        assert db.execute("PRAGMA foreign_keys").fetchone()[0] == 1
        assert db.execute("PRAGMA busy_timeout").fetchone()[0] >= 5000
        assert db.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
        assert db.execute("PRAGMA user_version").fetchone()[0] == len(MIGRATIONS)
        assert [row[0] for row in db.execute("SELECT name FROM migrations ORDER BY name")] == [name for name, _ in MIGRATIONS]
    with Store.open(tmp_path / "s.sqlite") as again:  # reopening applies nothing twice
        assert again.db.execute("SELECT count(*) FROM migrations").fetchone()[0] == len(MIGRATIONS)


def _result(schema, source: str, sha: str):
    from structurize.types import DocStatus, DocumentResult, FieldValue, ValueStatus

    values = tuple(FieldValue(spec.name, f"v-{spec.name}", 0.9, ValueStatus.OK) for spec in schema.fields)
    return DocumentResult(source=source, sha256=sha, status=DocStatus.OK, reader="test", chars=10, values=values)


@pytest.mark.parametrize("point", ["after_document_before_values", "after_values_before_status", "before_commit"])
def test_fi1_document_transaction_is_all_or_nothing(tmp_path: Path, offer_schema, monkeypatch, point: str) -> None:
    """FI-1 (in-process shape): a failure anywhere inside a document's transaction leaves no trace of it."""
    import structurize.store as store_module

    hashes = field_hashes(offer_schema)
    key = extraction_key(ExtractOptions(ner=None))
    store = Store.open(tmp_path / "s.sqlite")
    try:
        run = store.begin_run(offer_schema, hashes, "h", str(tmp_path), "t", key)
        store.save_document(run, offer_schema.name, str(tmp_path), "a.txt", _result(offer_schema, "a.txt", "a" * 64), hashes,
                            offer_schema.field_names, key)

        def boom(name: str) -> None:
            if name == point:
                raise RuntimeError("injected")

        monkeypatch.setattr(store_module, "fault_point", boom)
        with pytest.raises(RuntimeError):
            store.save_document(run, offer_schema.name, str(tmp_path), "b.txt", _result(offer_schema, "b.txt", "b" * 64),
                                hashes, offer_schema.field_names, key)
        assert not store.db.in_transaction
        monkeypatch.undo()
        store.finish_run(run, {})
    finally:
        store.close()
    counts = INV(tmp_path / "s.sqlite", None)
    assert counts["documents"] == 1 and counts["values"] == len(offer_schema.fields)
    db = connect(tmp_path / "s.sqlite")
    assert db.execute("SELECT count(*) FROM field_values WHERE sha256 = ?", ("b" * 64,)).fetchone()[0] == 0
    assert db.execute("SELECT count(*) FROM run_documents WHERE path = 'b.txt'").fetchone()[0] == 0
    db.close()


def test_fi1_store_left_empty_by_a_kill_during_creation_is_set_up(tmp_path: Path) -> None:
    """FI-1: a kill while the very first migration runs leaves an SQLite file with no tables; the
    next run must set it up (it holds nothing to protect), not refuse it as a foreign file."""
    path = tmp_path / "s.sqlite"
    db = sqlite3.connect(str(path))
    assert db.execute("PRAGMA journal_mode = WAL").fetchone()[0] == "wal"  # what Store.open does before migrating
    db.close()
    assert path.stat().st_size > 0
    with Store.open(path) as store:
        assert store.db.execute("PRAGMA user_version").fetchone()[0] == len(MIGRATIONS)
    INV(path, None)


def test_fi12_foreign_sqlite_database_is_refused_and_untouched(tmp_path: Path) -> None:
    """FI-12: an SQLite file of another program (tables, no structurize id) is refused, not migrated."""
    path = tmp_path / "other.sqlite"
    db = sqlite3.connect(str(path))
    db.execute("CREATE TABLE mine (x)")
    db.execute("INSERT INTO mine VALUES (1)")
    db.commit()
    db.close()
    before = path.read_bytes()
    with pytest.raises(StoreError, match="not a structurize store"):
        Store.open(path)
    assert path.read_bytes() == before


def test_fi2_concurrent_creation_of_a_new_store(tmp_path: Path) -> None:
    """FI-2: two processes (here: threads, released together by a barrier) opening a new store at
    the same moment both end with one migrated store; neither fails with 'table already exists'
    or an instant 'database is locked' from the switch to WAL."""
    failures = []
    for attempt in range(20):
        path = tmp_path / f"s{attempt}.sqlite"
        barrier = threading.Barrier(2)

        def open_it() -> None:
            barrier.wait()
            try:
                Store.open(path).close()
            except StoreError as exc:
                failures.append(str(exc))

        threads = [threading.Thread(target=open_it) for _ in range(2)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
        INV(path, None)
        db = connect(path)
        assert db.execute("SELECT count(*) FROM migrations").fetchone()[0] == len(MIGRATIONS)
        db.close()
    assert failures == []


def test_fi2_lock_refuses_a_second_holder_and_names_the_first(tmp_path: Path) -> None:
    """FI-2: the writer's lock is exclusive, the refusal names the holder, release frees it."""
    path = tmp_path / "s.sqlite"
    first = StoreLock(path)
    assert first.acquire() is None
    second = StoreLock(path)
    with pytest.raises(StoreBusy) as refused:
        second.acquire()
    assert f"pid {os.getpid()}" in str(refused.value) and "store busy" in str(refused.value)
    first.release()
    assert second.acquire() is None  # released cleanly: no stale-lock message
    second.release()


def test_fi2_stale_lock_file_is_taken_over_with_a_message(tmp_path: Path) -> None:
    """FI-2: a lock file written by a process that is gone is taken over, and says so."""
    path = tmp_path / "s.sqlite"
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    lock_file = path.with_name(path.name + ".lock")
    lock_file.write_text(json.dumps({"pid": dead.pid, "started": "2026-01-01T00:00:00Z", "host": "h"}))
    lock = StoreLock(path)
    message = lock.acquire()
    assert message is not None and f"stale lock left by pid {dead.pid}" in message
    assert json.loads(lock_file.read_text())["pid"] == os.getpid()
    lock.release()


# --- FI-12: corrupt, truncated, foreign or newer store files (the command) ----------------------


@pytest.fixture(scope="module")
def healthy_store(tmp_path_factory) -> Path:
    base = tmp_path_factory.mktemp("healthy")
    make_docs(base / "docs", 6)
    done = extract(base / "docs", base / "out", base / "store.sqlite")
    assert done.returncode == 0, done.stderr
    assert not Path(str(base / "store.sqlite") + "-wal").exists()  # checkpointed on close: one file holds it all
    return base / "store.sqlite"


def _flip_page_headers(data: bytearray, page_size: int, pages: list[int]) -> None:
    for page in pages:
        start = (page - 1) * page_size
        for offset in range(8):  # the b-tree page header: type, first freeblock, cell count, content start
            data[start + offset] ^= 0xFF


def corrupt(kind: str, path: Path) -> None:
    data = bytearray(path.read_bytes())
    page_size = int.from_bytes(data[16:18], "big")
    pages = len(data) // page_size
    if kind == "flip_page_2":
        _flip_page_headers(data, page_size, [2])
    elif kind == "flip_last_page":
        _flip_page_headers(data, page_size, [pages])
    elif kind == "truncate":
        data = data[: len(data) // 2 + 123]
    elif kind == "junk":
        data = bytearray(random.Random(12).randbytes(len(data)))
    elif kind == "junk_after_header":
        data = data[:100] + bytearray(random.Random(13).randbytes(len(data) - 100))
    elif kind == "newer_version":
        db = sqlite3.connect(str(path))
        db.execute(f"PRAGMA user_version = {len(MIGRATIONS) + 1}")
        db.commit()
        db.close()
        return
    path.write_bytes(bytes(data))


CORRUPTIONS = {
    "flip_page_2": "store corrupt",
    "flip_last_page": "store corrupt",
    "truncate": "store corrupt",
    "junk": "not a structurize store",
    "junk_after_header": "store corrupt",
    "newer_version": "written by a newer structurize",
}


@pytest.mark.parametrize("kind", list(CORRUPTIONS))
def test_fi12_damaged_store_is_refused_with_guidance_and_never_changed(tmp_path: Path, healthy_store: Path, kind: str) -> None:
    """FI-12: flipped page headers, truncation, junk or a newer user_version: exit 1, one guidance
    line naming the store, and the file's bytes unchanged (never deleted, repaired or recreated)."""
    path = tmp_path / "store.sqlite"
    shutil.copy(healthy_store, path)
    corrupt(kind, path)
    before = path.read_bytes()
    docs = tmp_path / "docs"
    make_docs(docs, 2, start=50)
    done = extract(docs, tmp_path / "out", path)
    assert done.returncode == 1, (done.returncode, done.stderr)
    message = lines(done.stderr)
    assert len(message) == 1, done.stderr
    assert message[0].startswith("structurize: ") and str(path.name) in message[0] and CORRUPTIONS[kind] in message[0]
    assert any(word in message[0] for word in ("restore", "upgrade", "not changed")), message[0]
    assert path.exists() and path.read_bytes() == before
    for listing in (run("runs", "--store", path), run("run", "1", "--store", path)):  # the read-only commands too
        assert listing.returncode == 1 and len(lines(listing.stderr)) == 1 and CORRUPTIONS[kind] in listing.stderr
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith("store.sqlite")) in (
        ["store.sqlite"], ["store.sqlite", "store.sqlite-shm", "store.sqlite-wal"])  # nothing renamed or replaced
