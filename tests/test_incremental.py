"""Incremental runs over a workspace store: reuse, changed documents (FI-6), changed schemas (FI-7).

Every run is the ``structurize`` command as a subprocess on invented letters (see
tests/test_store.py); each test ends with ``INV``.  FI-6's case E (a file that changes while it
is read) is the readers' ``changed_during_read`` and is tested with them, not here.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
import yaml

from test_store import (
    INV,
    OFFER_SCHEMA,
    run,
    connect,
    doc_name,
    extract,
    letter,
    lines,
    make_docs,
    read_rows,
    snapshot,
)


def actions(store: Path, run_id: int) -> dict[str, list[str]]:
    db = connect(store)
    try:
        out: dict[str, list[str]] = {}
        for path, action in db.execute("SELECT path, action FROM run_documents WHERE run_id = ? ORDER BY path", (run_id,)):
            out.setdefault(action, []).append(path)
        return out
    finally:
        db.close()


def extracted_fields(store: Path, run_id: int) -> dict[str, list[str]]:
    import json

    db = connect(store)
    try:
        return {path: json.loads(fields) for path, fields in db.execute(
            "SELECT path, fields FROM run_documents WHERE run_id = ? AND action = 'extracted'", (run_id,))}
    finally:
        db.close()


def table(out: Path) -> dict[str, dict[str, str]]:
    header, rows = read_rows(out / "table.csv")
    return {row[0]: dict(zip(header[1:], row[1:])) for row in rows}


def sha_of(store: Path, path: str, run_id: int) -> str:
    db = connect(store)
    try:
        return db.execute("SELECT sha256 FROM run_documents WHERE run_id = ? AND path = ?", (run_id, path)).fetchone()[0]
    finally:
        db.close()


# --- reuse --------------------------------------------------------------------------------------


def test_unchanged_rerun_reuses_everything_and_only_changed_or_new_documents_are_extracted(tmp_path: Path) -> None:
    """A second run over unchanged inputs extracts nothing and writes byte-identical outputs;
    a changed document and a new one are the only ones extracted next; --reextract redoes all."""
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    names = make_docs(docs, 7)
    assert extract(docs, out, store).returncode == 0
    first = snapshot(out, exclude_timing=False)
    INV(store, out, names, after_success=True)

    again = extract(docs, out, store)
    assert again.returncode == 0 and again.stderr == ""
    assert actions(store, 2) == {"reused": names}
    assert snapshot(out, exclude_timing=False) == first  # all of it: the timings come from the store too
    shown = run("run", "2", "--store", store)
    assert shown.returncode == 0 and sum(line.split()[:1] == ["reused"] for line in shown.stdout.splitlines()) == len(names)
    assert not any(line.split()[:1] == ["extracted"] for line in shown.stdout.splitlines())

    changed, new = doc_name(3), doc_name(40)
    (docs / changed).write_text(letter(3, variant=1), encoding="utf-8")
    (docs / new).write_text(letter(40), encoding="utf-8")
    before = table(out)
    third = extract(docs, out, store)
    assert third.returncode == 0, third.stderr
    assert actions(store, 3) == {"extracted": [changed, new], "reused": [name for name in names if name != changed]}
    after = table(out)
    assert after[changed] != before[changed] and after[new]["candidate_name"]
    assert {name: row for name, row in after.items() if name not in (changed, new)} == {
        name: row for name, row in before.items() if name != changed}
    INV(store, out, sorted([*names, new]), after_success=True)

    redone = extract(docs, out, store, "--reextract")
    assert redone.returncode == 0
    assert actions(store, 4) == {"extracted": sorted([*names, new])}
    assert table(out) == after
    INV(store, out, sorted([*names, new]), after_success=True)


# --- FI-6: documents changing between runs ----------------------------------------------------------


def test_fi6_modified_renamed_deleted_and_added_documents(tmp_path: Path) -> None:
    """FI-6: run 1 on A, B, C; then A modified, B renamed (into a subfolder), C deleted, D added.
    Run 2 extracts only A and D, reuses B under its new name, says in one line that C is no longer
    there (and records it as 'missing'), and keeps A's old values in the store as history."""
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    docs.mkdir()
    a, b, c, d = doc_name(0), "b_letter.txt", doc_name(2), doc_name(3)
    (docs / a).write_text(letter(0), encoding="utf-8")
    (docs / b).write_text(letter(1), encoding="utf-8")
    (docs / c).write_text(letter(2), encoding="utf-8")
    assert extract(docs, out, store).returncode == 0
    before = table(out)
    old_a = sha_of(store, a, 1)

    (docs / a).write_text(letter(0, variant=5), encoding="utf-8")
    (docs / "moved").mkdir()
    (docs / b).rename(docs / "moved" / "b_renamed.txt")
    (docs / c).unlink()
    (docs / d).write_text(letter(3), encoding="utf-8")
    second = extract(docs, out, store)
    assert second.returncode == 0, second.stderr
    assert lines(second.stderr) == [f"structurize: 1 document seen before in this folder is no longer there: {c}"]
    assert actions(store, 2) == {"extracted": [a, d], "missing": [c], "reused": ["moved/b_renamed.txt"]}
    assert sha_of(store, "moved/b_renamed.txt", 2) == sha_of(store, b, 1)
    after = table(out)
    assert sorted(after) == sorted([a, d, "moved/b_renamed.txt"])
    assert after["moved/b_renamed.txt"] == before[b]
    assert after[a] != before[a]
    db = connect(store)
    assert db.execute("SELECT count(*) FROM field_values WHERE sha256 = ?", (old_a,)).fetchone()[0] == 8  # history
    assert db.execute("SELECT count(*) FROM documents").fetchone()[0] == 5  # A (old and new), B, C, D
    db.close()
    INV(store, out, [a, d, "moved/b_renamed.txt"], after_success=True)
    shown = run("run", "2", "--store", store)
    assert any(line.split()[:2] == ["missing", c] for line in shown.stdout.splitlines())


# --- FI-7: the schema changes between runs ----------------------------------------------------------


@pytest.fixture(scope="module")
def schema_v1(tmp_path_factory):
    """Run 1 with schema v1 (schemas/offer_letter.yaml) on 7 documents; tests copy the store."""
    base = tmp_path_factory.mktemp("schema_v1")
    names = make_docs(base / "docs", 6)
    done = extract(base / "docs", base / "out", base / "store.sqlite")
    assert done.returncode == 0, done.stderr
    return base, names, table(base / "out")


def variant(path: Path, change) -> Path:
    data = yaml.safe_load(OFFER_SCHEMA.read_text(encoding="utf-8"))
    change(data)
    path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return path


def field(data: dict, name: str) -> dict:
    return next(item for item in data["fields"] if item["name"] == name)


def add_reference(data: dict) -> None:
    data["fields"].append({
        "name": "reference", "title": "Reference", "description": "The letter's reference number.", "type": "string",
        "constraints": {"pattern": "TVP-[0-9]{6}"},
        "extract": {"as": "identifier", "cues": ["reference"], "pattern": "TVP-[0-9]{6}"},
    })


def remove_manager(data: dict) -> None:
    data["fields"] = [item for item in data["fields"] if item["name"] != "hiring_manager"]


def recue_manager(data: dict) -> None:
    field(data, "hiring_manager")["extract"]["cues"].append("line manager")


def retype_salary(data: dict) -> None:
    field(data, "base_salary")["type"] = "integer"


def rename_candidate(data: dict) -> None:
    field(data, "candidate_name")["name"] = "applicant_name"


def reorder(data: dict) -> None:
    data["fields"].reverse()


# (change, the one line announced, {field: extracted in run 2 for every document}, columns)
SCHEMA_CHANGES = {
    "add_field": (add_reference, "schema changed: +1 field; 7 documents need 1 field re-extracted", ["reference"]),
    "remove_field": (remove_manager, "schema changed: -1 field; 0 documents need 0 fields re-extracted", []),
    "change_cues": (recue_manager, "schema changed: ~1 field; 7 documents need 1 field re-extracted", ["hiring_manager"]),
    "change_type": (retype_salary, "schema changed: ~1 field; 7 documents need 1 field re-extracted", ["base_salary"]),
    "rename_field": (rename_candidate, "schema changed: +1 field, -1 field; 7 documents need 1 field re-extracted",
                     ["applicant_name"]),
    "reorder_only": (reorder, None, []),
}


@pytest.mark.parametrize("case", list(SCHEMA_CHANGES))
def test_fi7_schema_change_reextracts_only_what_changed(schema_v1, tmp_path: Path, case: str) -> None:
    """FI-7: (a) add a field: extracted for every document, nothing else; (b) remove one: gone from
    the outputs, its values kept in the store; (c) change cues or type: only that field again;
    (d) rename: remove + add; (e) reorder only: nothing extracted.  Each change is announced in
    ONE line before the run, e.g. 'schema changed: +1 field; 7 documents need 1 field re-extracted'."""
    base, names, before = schema_v1
    change, announced, refreshed = SCHEMA_CHANGES[case]
    store, out = tmp_path / "store.sqlite", tmp_path / "out"
    shutil.copy(base / "store.sqlite", store)
    schema = variant(tmp_path / "offer_letter.yaml", change)
    db = connect(store)
    kept = db.execute("SELECT field, field_hash, run_id, sha256 FROM field_values ORDER BY 1, 2, 4").fetchall()
    db.close()

    done = extract(base / "docs", out, store, schema=schema)
    assert done.returncode == 0, done.stderr
    assert lines(done.stderr) == ([f"structurize: {announced}"] if announced else [])
    if refreshed:
        assert extracted_fields(store, 2) == {name: refreshed for name in names}
        assert "reused" not in actions(store, 2)
    else:
        assert actions(store, 2) == {"reused": names}
    db = connect(store)
    now = db.execute("SELECT field, field_hash, run_id, sha256 FROM field_values ORDER BY 1, 2, 4").fetchall()
    db.close()
    assert set(kept) <= set(now), "values of run 1 were overwritten or dropped"  # every old value stays (history)
    assert {row[0] for row in set(now) - set(kept)} == set(refreshed)
    assert all(row[2] == 2 for row in set(now) - set(kept)) and len(set(now) - set(kept)) == len(refreshed) * len(names)
    INV(store, out, names, schema_path=schema, after_success=True)

    after = table(out)
    header, _ = read_rows(out / "table.csv")
    fields = [item["name"] for item in yaml.safe_load(schema.read_text(encoding="utf-8"))["fields"]]
    assert header == ["document", *fields]
    untouched = [name for name in fields if name in before[names[0]] and name not in refreshed]
    for name in names:
        assert {key: after[name][key] for key in untouched} == {key: before[name][key] for key in untouched}
    if case == "add_field":
        assert after[doc_name(0)]["reference"] == "TVP-000000" and after["demo_dvorakova.txt"]["reference"] == ""
    if case == "remove_field":
        assert "hiring_manager" not in header
    if case == "rename_field":
        assert {name: after[name]["applicant_name"] for name in names} == {name: before[name]["candidate_name"] for name in names}
    if case == "change_type":
        assert {name: after[name]["base_salary"] for name in names} == {name: before[name]["base_salary"] for name in names}
