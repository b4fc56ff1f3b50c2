"""Exports from the workspace store, run settings in the cache key, and what a run announces.

"Everything so far" (``export`` without ``--run``) is the latest run over each input folder:
a quarter's folder per run, documents that share a name in two folders kept apart, a file
gone from its folder left out, a changed file shown as its latest version.  A stored value
is reused only under the settings that made it (the NER pipeline or none); a document that
needed a password, or OCR, is read again when the run now has one.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from structurize.incremental import _retry, extraction_key
from structurize.options import ExtractOptions

from conftest import needs_model
from pdfmaker import make_pdf
from test_hostile_pdf import encrypted_pdf
from test_incremental import actions, table
from test_store import INV, OFFER_SCHEMA, doc_name, extract, letter, lines, make_docs, run, snapshot


def _quarter(base: Path, name: str, indexes: list[int], *, same_name: str | None = None) -> Path:
    folder = base / name
    folder.mkdir(parents=True)
    for index in indexes:
        (folder / doc_name(index)).write_text(letter(index), encoding="utf-8")
    if same_name:
        (folder / same_name).write_text(letter(indexes[0] + 100), encoding="utf-8")
    return folder


def test_whole_workspace_export_is_every_folders_latest_run(tmp_path: Path) -> None:
    store, out = tmp_path / "store.sqlite", tmp_path / "out"
    q1 = _quarter(tmp_path / "intake", "2026-Q1", [0, 1, 2], same_name="interview_01.txt")
    q2 = _quarter(tmp_path / "intake", "2026-Q2", [3, 4], same_name="interview_01.txt")
    assert extract(q1, out / "q1", store).returncode == 0
    assert extract(q2, out / "q2", store).returncode == 0
    (q1 / doc_name(2)).unlink()  # gone from Q1 ...
    (q1 / doc_name(1)).write_text(letter(1, variant=1), encoding="utf-8")  # ... and one letter revised
    again = extract(q1, out / "q1", store)
    assert again.returncode == 0 and "no longer there" in again.stderr

    exported = run("export", "--schema", OFFER_SCHEMA, "--store", store, "--out", out / "all")
    assert exported.returncode == 0, exported.stderr
    rows = table(out / "all")
    assert sorted(rows) == sorted(
        [f"2026-Q1/{doc_name(0)}", f"2026-Q1/{doc_name(1)}", "2026-Q1/interview_01.txt",
         f"2026-Q2/{doc_name(3)}", f"2026-Q2/{doc_name(4)}", "2026-Q2/interview_01.txt"]
    )
    assert rows[f"2026-Q1/{doc_name(1)}"] == table(out / "q1")[doc_name(1)]  # the revised version, not the old one
    assert rows["2026-Q2/interview_01.txt"] == table(out / "q2")["interview_01.txt"]
    assert rows["2026-Q1/interview_01.txt"] == table(out / "q1")["interview_01.txt"]


def test_one_folder_workspace_export_keeps_plain_paths_and_equals_the_run(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    names = make_docs(docs, 4)
    assert extract(docs, out / "run", store).returncode == 0
    assert run("export", "--schema", OFFER_SCHEMA, "--store", store, "--out", out / "all").returncode == 0
    assert run("export", "--schema", OFFER_SCHEMA, "--store", store, "--out", out / "one", "--run", "1").returncode == 0
    assert snapshot(out / "all") == snapshot(out / "run") == snapshot(out / "one")
    INV(store, out / "all", names, after_success=True)


def test_runs_lists_every_run(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    count = len(make_docs(docs, 3))
    assert extract(docs, out, store).returncode == 0
    assert extract(docs, out, store).returncode == 0
    listed = run("runs", "--store", store)
    assert listed.returncode == 0, listed.stderr
    rows = [line for line in listed.stdout.splitlines() if "offer_letter" in line]
    assert len(rows) == 2 and all("finished" in row for row in rows)
    assert f"{count} extracted, 0 reused, 0 gone" in rows[0] and f"0 extracted, {count} reused, 0 gone" in rows[1]


def test_export_of_a_run_made_with_another_schema_is_refused(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    make_docs(docs, 2)
    assert extract(docs, out, store).returncode == 0
    other = OFFER_SCHEMA.parent / "exit_interview.yaml"
    refused = run("export", "--schema", other, "--store", store, "--out", tmp_path / "x", "--run", "1")
    assert refused.returncode == 2
    assert lines(refused.stderr) == [f"structurize: {store}: run 1 was made with schema 'offer_letter', not 'exit_interview'"]
    assert not (tmp_path / "x" / "table.csv").exists()


def test_export_says_when_fields_changed_since_the_run(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    make_docs(docs, 2)
    assert extract(docs, out, store).returncode == 0
    changed = tmp_path / "offer_letter.yaml"
    changed.write_text(OFFER_SCHEMA.read_text(encoding="utf-8").replace("base salary", "basic salary", 1), encoding="utf-8")
    exported = run("export", "--schema", changed, "--store", store, "--out", tmp_path / "x")
    assert exported.returncode == 0
    assert lines(exported.stderr) == [
        "structurize: schema changed since run 1: 1 field defined differently is empty; run `structurize extract` to fill it"
    ]
    assert {row["base_salary"] for row in table(tmp_path / "x").values()} == {""}


def test_schema_change_line_counts_only_documents_seen_before(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    make_docs(docs, 5)
    assert extract(docs, out, store).returncode == 0
    (docs / doc_name(60)).write_text(letter(60), encoding="utf-8")  # a new document needs every field anyway
    changed = tmp_path / "offer_letter.yaml"
    changed.write_text(OFFER_SCHEMA.read_text(encoding="utf-8").replace("base salary", "basic salary", 1), encoding="utf-8")
    done = extract(docs, out, store, schema=changed)
    assert done.returncode == 0
    assert lines(done.stderr) == ["structurize: schema changed: ~1 field; 6 documents need 1 field re-extracted"]


# --- run settings -------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "state, options, again",
    [
        (("ok", "", []), ExtractOptions(), False),
        (("failed", "timeout", []), ExtractOptions(), True),  # the machine's fault, not the document's
        (("failed", "not_a_zip", []), ExtractOptions(), False),
        (("needs_password", "encrypted", []), ExtractOptions(), False),
        (("needs_password", "encrypted", []), ExtractOptions(pdf_password="x"), True),
        (("no_text_layer", "no_text_layer", []), ExtractOptions(), False),
        (("no_text_layer", "no_text_layer", []), ExtractOptions(ocr=True), True),
        (("partial", "", ["image_only_pages"]), ExtractOptions(ocr=True), True),
        (("ok", "", ["ocr"]), ExtractOptions(ocr=True), False),
        (("ok", "", ["ocr"]), ExtractOptions(), True),  # read by OCR before, not now
    ],
)
def test_a_stored_document_is_read_again_when_the_settings_can_change_it(state, options: ExtractOptions, again: bool) -> None:
    assert _retry(state, options) is again


def test_the_ner_setting_is_part_of_the_cache_key() -> None:
    assert extraction_key(ExtractOptions(ner=None)) != extraction_key(ExtractOptions())


def test_a_password_given_later_reads_the_stored_encrypted_pdf(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    names = make_docs(docs, 2)
    (docs / "locked.pdf").write_bytes(encrypted_pdf("amber-kite", "Start date: May 4, 2027"))
    first = extract(docs, out, store)
    assert first.returncode == 3 and "locked.pdf: encrypted" in first.stderr
    secret = tmp_path / "password.txt"
    secret.write_text("amber-kite\n", encoding="utf-8")
    second = extract(docs, out, store, "--pdf-password-file", secret)
    assert second.returncode == 0, second.stderr
    assert actions(store, 2) == {"extracted": ["locked.pdf"], "reused": names}
    assert "amber-kite" not in second.stderr + second.stdout


@needs_model
@pytest.mark.model
def test_values_made_without_ner_are_not_reused_by_a_run_with_ner(tmp_path: Path) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    names = make_docs(docs, 2)
    assert extract(docs, out, store).returncode == 0  # --no-ner (the store tests' default)
    with_ner = run("extract", docs, "--schema", OFFER_SCHEMA, "--out", out, "--store", store)
    assert with_ner.returncode == 0, with_ner.stderr
    assert actions(store, 2) == {"extracted": names}
    assert extract(docs, out, store).returncode == 0
    assert actions(store, 3) == {"reused": names}  # the values made without NER are still there


def test_an_image_only_pdf_is_read_again_with_ocr(tmp_path: Path) -> None:
    if shutil.which("tesseract") is None:
        pytest.skip("tesseract is not installed (apt-get install tesseract-ocr tesseract-ocr-eng)")
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "store.sqlite"
    names = make_docs(docs, 1)
    make_pdf(docs / "scan.pdf", [None])
    assert extract(docs, out, store).returncode == 3
    extract(docs, out, store, "--ocr")
    assert actions(store, 2) == {"extracted": ["scan.pdf"], "reused": names}
