"""The 29 real malformed PDFs of ``../shared/realpdfs`` ("real #N" of the folder's manifest).

All of them go through ONE batch of ``structurize extract`` (a subprocess, worker processes
with the default time and memory limits), and every file must get the status the
MANIFEST's last column asks for, mapped to structurize's names.  No traceback may appear on
stderr, each non-ok file gets exactly one stderr line, and the batch must end in bounded
time.  The files are read where they are: they are test data with no per-file licence and
are never copied into this repository.  Skipped when the folder is absent.

MANIFEST name → structurize name: ``failed: empty`` → ``failed: empty_file``;
``warning: circular_xobject`` and ``stream_data_loss`` as they are; "must say whether it
reads form fields" → ``partial: form_fields_not_read``; "OCR layer, lower confidence" →
warning ``ocr_text_layer``; "spans outside the page box flagged" → ``text_outside_page``;
"record encrypted_empty_password as metadata" → warning ``encrypted_empty_password``;
"dedupe doubled chars" → warning ``dedupe_applied``; "keep the text and add warning:
annots_unreadable" → ``partial: annots_unreadable`` (the text is read, the annotations are not).
"""

from __future__ import annotations

import csv
import os
import subprocess
import sys
import time

import pytest

from structurize.options import ExtractOptions
from structurize.readers import read_document
from structurize.types import DocStatus

from conftest import REALPDFS

pytestmark = pytest.mark.skipif(not (REALPDFS / "MANIFEST.md").exists(), reason=f"{REALPDFS} is absent (real PDFs are test data kept outside the repository)")

#: real # → (file, status, reason, warnings that must be present)
EXPECTED = {
    1: ("pdfminer.six__samples__contrib__issue-1113-evil-xobjects.pdf", "ok", "", {"circular_xobject"}),
    2: ("pdfminer.six__samples__zen_of_python_corrupted.pdf", "partial", "stream_data_loss", {"stream_data_loss"}),
    3: ("pdfminer.six__samples__encryption__rc4-40.pdf", "needs_password", "encrypted", set()),
    4: ("pdfminer.six__samples__encryption__aes-256-r6.pdf", "needs_password", "encrypted", set()),
    5: ("pdfminer.six__samples__encryption__encrypted_doc_no_id.pdf", "no_text_layer", "no_text_layer", {"encrypted_empty_password"}),
    6: ("pdfminer.six__samples__contrib__issue-886-xref-stream-widths.pdf", "ok", "", set()),
    7: ("pdfminer.six__samples__contrib__pdf-with-jbig2.pdf", "no_text_layer", "no_text_layer", set()),
    8: ("pdfminer.six__samples__contrib__issue-1008-inline-ascii85.pdf", "ok", "", {"dedupe_applied"}),
    9: ("pdfminer.six__samples__jo.pdf", "ok", "", set()),
    10: ("pdfminer.six__samples__contrib__issue_566_test_2.pdf", "ok", "", set()),
    11: ("pdfminer.six__samples__contrib__issue-791-non-unicode-cmap.pdf", "ok", "", set()),
    12: ("pdfminer.six__samples__contrib__issue-625-identity-cmap.pdf", "ok", "", {"encrypted_empty_password"}),
    13: ("pdfminer.six__samples__acroform__AcroForm_TEST.pdf", "partial", "form_fields_not_read", set()),
    14: ("pdfminer.six__samples__contrib__pr-00530-ml-lines.pdf", "partial", "annots_unreadable", {"annots_unreadable"}),
    15: ("pdfminer.six__samples__scancode__patchelf.pdf", "suspect_empty", "suspect_empty", set()),
    16: ("pdfplumber__tests__pdfs__empty.pdf", "failed", "empty_file", set()),
    17: ("pdfplumber__tests__pdfs__issue-297-example.pdf", "failed", "no_pages", set()),
    18: ("pdfplumber__tests__pdfs__malformed-from-issue-932.pdf", "ok", "", {"text_outside_page"}),
    19: ("pdfplumber__tests__pdfs__password-example.pdf", "needs_password", "encrypted", set()),
    20: ("pdfplumber__tests__pdfs__nics-background-checks-2015-11-rotated.pdf", "ok", "", set()),
    21: ("pdfplumber__tests__pdfs__issue-203-decimalize.pdf", "no_text_layer", "no_text_layer", set()),
    22: ("pdfplumber__tests__pdfs__pr-136-example.pdf", "ok", "", {"ocr_text_layer"}),
    23: ("pdfplumber__tests__pdfs__federal-register-2020-17221.pdf", "partial", "annots_unreadable", {"annots_unreadable"}),
    24: ("pdfplumber__tests__pdfs__issue-842-example.pdf", "ok", "", {"dedupe_applied"}),
    25: ("pdfplumber__tests__pdfs__issue-1054-example.pdf", "ok", "", set()),
    26: ("pdfplumber__tests__pdfs__pr-138-example.pdf", "ok", "", {"encrypted_empty_password"}),
    27: ("pdfplumber__tests__pdfs__issue-463-example.pdf", "ok", "", set()),
    28: ("pdfplumber__tests__pdfs__issue-912.pdf", "ok", "", set()),
    29: ("pdfplumber__examples__pdfs__ca-warn-report.pdf", "ok", "", set()),
}
BATCH_SECONDS = 240  #: generous: the whole set takes about 35 s on 2 cores
SCHEMA = "name: real\nfields:\n  - name: employee\n    type: string\n    extract: {as: person, cues: [employee, name]}\n"


@pytest.fixture(scope="module")
def batch(tmp_path_factory):
    """One `structurize extract` over the real folder (read in place, never copied)."""
    work = tmp_path_factory.mktemp("realpdfs")
    schema = work / "schema.yaml"
    schema.write_text(SCHEMA)
    out = work / "out"
    env = {key: value for key, value in os.environ.items() if key != "STRUCTURIZE_PDF_PASSWORD"}
    started = time.monotonic()
    done = subprocess.run(
        [sys.executable, "-m", "structurize", "extract", str(REALPDFS), "--schema", str(schema), "--out", str(out),
         "--no-ner", "--quiet", "--workers", "2"],
        capture_output=True, text=True, timeout=BATCH_SECONDS + 60, env=env, cwd=work,
    )
    elapsed = time.monotonic() - started
    with (out / "documents.csv").open(encoding="utf-8-sig", newline="") as handle:
        rows = {row["document"]: row for row in csv.DictReader(handle)}
    table = "\n".join(
        f"| {number} | {name} | {rows[name]['status']} | {rows[name]['reason']} | {rows[name]['warnings']} | {rows[name]['seconds']} |"
        for number, (name, *_rest) in sorted(EXPECTED.items())
        if name in rows
    )
    print(f"\nreal PDFs, one batch, {elapsed:.1f} s\n| # | file | status | reason | warnings | seconds |\n|---|---|---|---|---|---|\n{table}")
    return done, rows, elapsed


def test_realpdfs_folder_is_the_manifest_set():
    assert {p.name for p in REALPDFS.glob("*.pdf")} == {name for name, *_ in EXPECTED.values()}


@pytest.mark.parametrize("number", sorted(EXPECTED), ids=lambda n: f"real-{n}")
def test_realpdfs_status_matches_manifest(batch, number):
    _, rows, _ = batch
    name, status, reason, warnings = EXPECTED[number]
    row = rows[name]
    assert (row["status"], row["reason"]) == (status, reason), row
    assert warnings <= set(row["warnings"].split()), row["warnings"]


def test_realpdfs_batch_is_bounded_and_quiet(batch):
    done, rows, elapsed = batch
    assert elapsed < BATCH_SECONDS
    assert done.returncode == 3  # some documents could not be read (exit code of the CLI)
    assert "Traceback" not in done.stderr
    lines = done.stderr.strip().splitlines()
    not_ok = sorted(name for name, row in rows.items() if row["status"] != "ok")
    assert sorted(line.split(": ")[1] for line in lines) == not_ok  # one line per non-ok file
    for line in lines:
        assert line.startswith("structurize: ") and len(line.split(": ")) >= 4 and line.split(": ", 3)[3].strip()


# --- passwords on the real encrypted files (P4, P5), read in place -------------------------------------


@pytest.mark.parametrize(
    "number, password, status, reason, text",
    [
        pytest.param(3, "foo", DocStatus.OK, "", "Secret!", id="real-3-rc4-right"),
        pytest.param(3, "wrong", DocStatus.NEEDS_PASSWORD, "wrong_password", "", id="real-3-rc4-wrong"),
        pytest.param(4, "usersecret", DocStatus.OK, "", "", id="real-4-aes256-user"),
        pytest.param(4, "ownersecret", DocStatus.OK, "", "", id="real-4-aes256-owner"),
        pytest.param(19, "test", DocStatus.OK, "", "", id="real-19-right"),
        pytest.param(19, "wrong", DocStatus.NEEDS_PASSWORD, "wrong_password", "", id="real-19-wrong"),
    ],
)
def test_realpdfs_passwords(number, password, status, reason, text):
    name = EXPECTED[number][0]
    doc = read_document(REALPDFS / name, name, ExtractOptions(ner=None, pdf_password=password))
    assert (doc.status, doc.reason) == (status, reason)
    assert password not in doc.note
    if status is DocStatus.OK:
        assert doc.text.strip() and text in doc.text


@pytest.mark.parametrize(
    "number, expected",
    [
        pytest.param(10, "甲方", id="real-10-cjk-cmap"),
        pytest.param(11, "Peněžní prostředky", id="real-11-czech-diacritics"),
        pytest.param(24, "安徽", id="real-24-fake-bold-deduped"),
    ],
)
def test_realpdfs_text_is_right(number, expected):
    name = EXPECTED[number][0]
    doc = read_document(REALPDFS / name, name, ExtractOptions(ner=None))
    assert expected in doc.text
    assert "(cid:" not in doc.text


def test_realpdfs_27_annotation_text_decodes():
    # real #27: a highlight's /Contents is UTF-16BE with a byte-order mark ('日本語'); two more
    # highlights on page 2 are plain ASCII; their pop-ups repeat nothing
    name = EXPECTED[27][0]
    doc = read_document(REALPDFS / name, name, ExtractOptions(ner=None))
    notes = [(doc.text[r.span.start : r.span.end].strip(), doc.page_of(r.span.start)) for r in doc.regions if r.kind == "annotation"]
    assert notes == [("日本語", 1), ('"well"', 2), ("table", 2)]
    assert (doc.status, doc.reason) == (DocStatus.OK, "")


@pytest.mark.parametrize("number", [14, 23], ids=lambda n: f"real-{n}")
def test_realpdfs_unreadable_annotations_keep_the_text(number):
    name = EXPECTED[number][0]
    doc = read_document(REALPDFS / name, name, ExtractOptions(ner=None))
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, "annots_unreadable")
    assert len(doc.text) > 5000 and "annotations" in doc.note
