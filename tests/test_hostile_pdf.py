"""Broken and hostile PDFs: catalogue P1–P11 (tests/CATALOGUE.md), plus OCR.

Every input is generated here, byte by byte (no PDF library, no network, no third-party
tool): a tiny PDF writer, RC4-40 encryption after ISO 32000-1 §7.6.3 (algorithms 2, 3, 4),
Flate bombs with zlib, and scans drawn with Pillow.  Reason codes:

========  ======================================================================
P1        ``failed: empty_file``, before the parser runs
P2        ``failed: pdf_unreadable`` (cut in half); ``partial: pdf_truncated`` (end marker lost)
P3        ``failed: wrong_type`` ("looks like html"), before the parser runs
P4        ``needs_password: encrypted`` with a message that is never empty
P5        ``needs_password: wrong_password`` ("incorrect password"); the password is never shown
P6        ``failed: stream_too_large`` (capped inflate) or ``failed: memory_limit``
P7        ``failed: too_many_chars`` (``limits.chars``, counted while the page is interpreted)
P8        ``ok`` + ``circular_xobject``; a page-tree loop is ``failed: pdf_structure``
P9        ``failed: pdf_structure`` (RecursionError); one page of two: ``partial: page_unreadable``;
          deep metadata: ``partial: metadata_unreadable``
P10       ``failed: too_many_pages`` from the page tree, before any page is processed
P11       ``no_text_layer``; with --ocr and Tesseract: ``ok`` + ``ocr``, values noted "read by OCR"
F1-F4     a failing feature: ``partial`` with the warning ``annots_unreadable``,
          ``tables_unreadable``, ``metadata_unreadable`` or ``image_only_pages`` as its reason
A1-A9     annotation text (``/Contents`` of markup annotations) after the page's text, in a
          region of kind ``annotation``
========  ======================================================================
"""

from __future__ import annotations

import csv
import hashlib
import logging
import os
import shutil
import struct
import subprocess
import sys
import time
import zlib
from pathlib import Path

import pytest
from typer.testing import CliRunner

from structurize.api import extract_document
from structurize.cli import app
from structurize.errors import ReadFailure
from structurize.options import ExtractOptions, Limits
from structurize.readers import pdf as pdf_reader
from structurize.readers import read_document
from structurize.types import DocStatus, ValueStatus

from conftest import make_schema

RULES = ExtractOptions(ner=None)
SECRET_WORD = "Quillfeather"  # document content that must never reach a message


# --- a tiny PDF writer -------------------------------------------------------------------------


def build_pdf(objects: list[bytes], *, root: int = 1, trailer: bytes = b"", end_marker: bool = True) -> bytes:
    """A PDF with a classic xref table; ``objects[i]`` is the body of object ``i + 1``."""
    out = bytearray(b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n")
    offsets = []
    for number, body in enumerate(objects, start=1):
        offsets.append(len(out))
        out += b"%d 0 obj\n" % number + body + b"\nendobj\n"
    xref = len(out)
    out += b"xref\n0 %d\n0000000000 65535 f \n" % (len(objects) + 1)
    out += b"".join(b"%010d 00000 n \n" % offset for offset in offsets)
    out += b"trailer\n<< /Size %d /Root %d 0 R %s>>\nstartxref\n%d\n" % (len(objects) + 1, root, trailer, xref)
    if end_marker:
        out += b"%%EOF\n"
    return bytes(out)


def stream(data: bytes, *, flate: bool = False, extra: bytes = b"") -> bytes:
    if flate:
        data = zlib.compress(data, 9)
        extra += b" /Filter /FlateDecode"
    return b"<< /Length %d%s >>\nstream\n" % (len(data), extra) + data + b"\nendstream"


FONT = b"<< /Type /Font /Subtype /Type1 /BaseFont /Helvetica >>"


def text_ops(*lines: str) -> bytes:
    parts = [b"BT /F1 12 Tf 72 760 Td 16 TL"]
    for line in lines:
        parts.append(b"(" + line.encode("latin-1") + b") Tj T*")
    parts.append(b"ET")
    return b"\n".join(parts)


def page_obj(contents: int, *, parent: int = 2, extra: bytes = b"", mediabox: bytes = b"[0 0 595 842]") -> bytes:
    return (
        b"<< /Type /Page /Parent %d 0 R /MediaBox %s /Contents %d 0 R /Resources << /Font << /F1 3 0 R >> %s>> >>"
        % (parent, mediabox, contents, extra)
    )


def one_page(content: bytes, *, flate: bool = False, filters: bytes = b"", page_extra: bytes = b"", more: list[bytes] | None = None, **kw) -> bytes:
    """Catalog 1, Pages 2, font 3, page 4, content 5, then ``more`` from object 6.

    ``filters`` (e.g. ``b" /Filter /FlateDecode"``) declares filters for ``content`` as given.
    """
    return build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>",
            FONT,
            page_obj(5, extra=page_extra),
            stream(content, flate=flate, extra=filters),
            *(more or []),
        ],
        **kw,
    )


def pages_pdf(contents: list[bytes], *, mediaboxes: list[bytes] | None = None) -> bytes:
    """Catalog 1, Pages 2, font 3, then a (page, content) pair per page."""
    objects = [b"<< /Type /Catalog /Pages 2 0 R >>", b"", FONT]
    kids = []
    for index, content in enumerate(contents):
        page_number = len(objects) + 1
        box = mediaboxes[index] if mediaboxes else b"[0 0 595 842]"
        objects += [page_obj(page_number + 1, mediabox=box), stream(content)]
        kids.append(b"%d 0 R" % page_number)
    objects[1] = b"<< /Type /Pages /Kids [%s] /Count %d >>" % (b" ".join(kids), len(kids))
    return build_pdf(objects)


def image_only_pdf() -> bytes:
    image = zlib.compress(b"\x80" * 16)
    return build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>",
            FONT,
            b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents 5 0 R /Resources << /XObject << /Im1 6 0 R >> >> >>",
            stream(b"q 400 0 0 400 100 300 cm /Im1 Do Q"),
            b"<< /Type /XObject /Subtype /Image /Width 4 /Height 4 /ColorSpace /DeviceGray /BitsPerComponent 8"
            b" /Filter /FlateDecode /Length %d >>\nstream\n" % len(image) + image + b"\nendstream",
        ]
    )


# --- RC4-40 encryption (ISO 32000-1 §7.6.3.3, algorithms 2, 3 and 4; revision 2) ------------------

PASSWORD_PAD = bytes.fromhex("28BF4E5E4E758A4164004E56FFFA01082E2E00B6D0683E802F0CA9FE6453697A")


def rc4(key: bytes, data: bytes) -> bytes:
    state = list(range(256))
    j = 0
    for i in range(256):
        j = (j + state[i] + key[i % len(key)]) % 256
        state[i], state[j] = state[j], state[i]
    out = bytearray()
    i = j = 0
    for byte in data:
        i = (i + 1) % 256
        j = (j + state[i]) % 256
        state[i], state[j] = state[j], state[i]
        out.append(byte ^ state[(state[i] + state[j]) % 256])
    return bytes(out)


def encrypted_pdf(user_password: str, text: str) -> bytes:
    """One page showing ``text``, encrypted with RC4 40-bit for ``user_password``."""
    file_id = hashlib.md5(b"structurize test").digest()
    permissions = -44
    user = (user_password.encode("latin-1") + PASSWORD_PAD)[:32]
    owner = (b"owner-secret" + PASSWORD_PAD)[:32]
    owner_entry = rc4(hashlib.md5(owner).digest()[:5], user)  # algorithm 3
    key = hashlib.md5(user + owner_entry + struct.pack("<i", permissions) + file_id).digest()[:5]  # algorithm 2
    user_entry = rc4(key, PASSWORD_PAD)  # algorithm 4

    def object_key(number: int) -> bytes:  # algorithm 1
        return hashlib.md5(key + struct.pack("<i", number)[:3] + b"\x00\x00").digest()[:10]

    content = rc4(object_key(5), text_ops(text))
    encrypt = b"<< /Filter /Standard /V 1 /R 2 /O <%s> /U <%s> /P %d >>" % (
        owner_entry.hex().encode(), user_entry.hex().encode(), permissions
    )
    return one_page(content, more=[encrypt], trailer=b"/Encrypt 6 0 R /ID [<%s> <%s>] " % (file_id.hex().encode(), file_id.hex().encode()))


# --- helpers -----------------------------------------------------------------------------------


def write(tmp_path: Path, name: str, data: bytes) -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


def read(path: Path, options: ExtractOptions = RULES):
    return read_document(path, path.name, options)


@pytest.fixture
def parser_must_not_run(monkeypatch):
    """Fail the test if pdfplumber is asked to open the file (pre-checks come first)."""
    import pdfplumber

    def refuse(*args, **kwargs):
        raise AssertionError("the PDF parser ran before the pre-checks")

    monkeypatch.setattr(pdfplumber, "open", refuse)


def assert_quiet(doc) -> None:
    """No document content in the note (OWASP Logging Cheat Sheet, "data to exclude")."""
    assert SECRET_WORD not in doc.note and SECRET_WORD.lower() not in doc.note.lower()


# --- P1, P3: checked before the parser ----------------------------------------------------------


@pytest.mark.parametrize(
    "data, code, note",
    [
        pytest.param(b"", "empty_file", "the file is empty", id="P1-zero-bytes"),
        pytest.param(b"<!DOCTYPE html><html><body>" + SECRET_WORD.encode() + b"</body></html>", "wrong_type", "looks like html", id="P3-html"),
        pytest.param(b"PK\x03\x04" + b"\0" * 60, "wrong_type", "looks like a zip archive", id="P3-zip"),
        pytest.param(b"\x89PNG\r\n\x1a\n" + b"\0" * 60, "wrong_type", "looks like a PNG image", id="P3-png"),
        pytest.param(b"Employee: " + SECRET_WORD.encode() + b"\n", "wrong_type", "looks like text", id="P3-text"),
    ],
)
def test_p1_p3_prechecks_fail_before_parsing(tmp_path, parser_must_not_run, data, code, note):
    path = write(tmp_path, "document.pdf", data)
    with pytest.raises(ReadFailure) as caught:  # the reader itself, not only read_document's own check
        pdf_reader.read_pdf(path, path.name, RULES)
    assert (caught.value.status, caught.value.code) == ("failed", code)
    assert note in caught.value.detail
    doc = read(path)
    assert doc.status is DocStatus.FAILED and doc.reason == code and doc.text == ""
    assert_quiet(doc)


def test_p3_signature_after_junk_is_still_a_pdf(tmp_path):
    # ISO 32000 §7.5.2: readers accept the header within the first 1024 bytes
    path = write(tmp_path, "junk-first.pdf", b"garbage\n" * 10 + one_page(text_ops("Employee: Ana Ruiz")))
    doc = read(path)
    assert doc.status is DocStatus.OK and "Ana Ruiz" in doc.text


# --- P2: truncated ------------------------------------------------------------------------------


def test_p2_cut_in_half_fails_cleanly(tmp_path):
    data = one_page(text_ops(f"Employee: {SECRET_WORD}"))
    doc = read(write(tmp_path, "half.pdf", data[: len(data) // 2]))
    assert doc.status is DocStatus.FAILED and doc.reason == "pdf_unreadable"
    assert "truncated" in doc.note
    assert_quiet(doc)


def test_p2_missing_end_marker_is_partial(tmp_path):
    doc = read(write(tmp_path, "no-eof.pdf", one_page(text_ops("Employee: Ana Ruiz"), end_marker=False)))
    assert doc.status is DocStatus.PARTIAL and doc.reason == "pdf_truncated"
    assert "pdf_truncated" in doc.warnings and "Ana Ruiz" in doc.text


# --- P4, P5: encryption ---------------------------------------------------------------------------


def test_p4_generated_encryption_opens_with_its_password(tmp_path):
    # the generator itself is right: with the user password the text comes out
    path = write(tmp_path, "locked.pdf", encrypted_pdf("s3cret-pw", "Employee: Ana Ruiz"))
    doc = read(path, ExtractOptions(ner=None, pdf_password="s3cret-pw"))
    assert doc.status is DocStatus.OK and "Employee: Ana Ruiz" in doc.text


def test_p4_encrypted_without_password_needs_one(tmp_path):
    doc = read(write(tmp_path, "locked.pdf", encrypted_pdf("s3cret-pw", f"Employee: {SECRET_WORD}")))
    assert doc.status is DocStatus.NEEDS_PASSWORD and doc.reason == "encrypted"
    # pdfminer's exception has an empty str(); the message must not be empty (measured with pdfminer.six 20260107)
    assert doc.note.strip() and "password" in doc.note
    assert_quiet(doc)


def test_p4_empty_user_password_opens_and_is_recorded(tmp_path):
    doc = read(write(tmp_path, "empty-pw.pdf", encrypted_pdf("", "Employee: Ana Ruiz")))
    assert doc.status is DocStatus.OK and "encrypted_empty_password" in doc.warnings


def test_p4_given_password_does_not_break_empty_password_files(tmp_path):
    # a batch password must not lock out files that need none
    doc = read(write(tmp_path, "empty-pw.pdf", encrypted_pdf("", "Employee: Ana Ruiz")), ExtractOptions(ner=None, pdf_password="other"))
    assert doc.status is DocStatus.OK and "Ana Ruiz" in doc.text


@pytest.mark.parametrize(
    "how, password, status, reason",
    [
        pytest.param("file", "wrong-guess-77", "needs_password", "wrong_password", id="P5-wrong-password-file"),
        pytest.param("env", "wrong-guess-77", "needs_password", "wrong_password", id="P5-wrong-password-env"),
        pytest.param("file", "s3cret-pw", "ok", "", id="P5-right-password-file"),
        pytest.param("env", "s3cret-pw", "ok", "", id="P5-right-password-env"),
    ],
)
def test_p5_password_from_file_or_env_never_shown(tmp_path, monkeypatch, how, password, status, reason):
    inbox = tmp_path / "in"
    inbox.mkdir()
    write(inbox, "locked.pdf", encrypted_pdf("s3cret-pw", "Employee: Ana Ruiz"))
    schema = tmp_path / "s.yaml"
    schema.write_text("name: s\nfields:\n  - name: employee\n    type: string\n    extract: {as: person, cues: [employee]}\n")
    out = tmp_path / "out"
    args = ["extract", str(inbox), "--schema", str(schema), "--out", str(out), "--no-ner", "--workers", "0", "--quiet"]
    monkeypatch.delenv("STRUCTURIZE_PDF_PASSWORD", raising=False)
    if how == "file":
        secret = tmp_path / "pw.txt"
        secret.write_text(password + "\n")
        args += ["--pdf-password-file", str(secret)]
    else:
        monkeypatch.setenv("STRUCTURIZE_PDF_PASSWORD", password)
    result = CliRunner().invoke(app, args)
    with (out / "documents.csv").open(encoding="utf-8-sig", newline="") as handle:
        row = next(csv.DictReader(handle))
    assert (row["status"], row["reason"]) == (status, reason)
    if reason:
        assert result.exit_code == 3
        assert "structurize: locked.pdf: wrong_password: incorrect password" in result.output
    # the password appears in no output and no message (OWASP Logging: secrets)
    assert password not in result.output
    for produced in out.iterdir():
        assert password.encode() not in produced.read_bytes(), produced.name


# --- P6: Flate bomb -----------------------------------------------------------------------------------


def flate_bomb(megabytes: int) -> bytes:
    return one_page(b"\n" * (megabytes * 1024 * 1024), flate=True)


def test_p6_capped_inflate_stops_a_bomb(tmp_path, monkeypatch):
    monkeypatch.setattr(pdf_reader, "STREAM_BYTES", 1024 * 1024)
    doc = read(write(tmp_path, "bomb.pdf", flate_bomb(8)))
    assert doc.status is DocStatus.FAILED and doc.reason == "stream_too_large"


def test_p6_capped_inflate_keeps_ordinary_streams(tmp_path, monkeypatch):
    monkeypatch.setattr(pdf_reader, "STREAM_BYTES", 1024 * 1024)
    doc = read(write(tmp_path, "small.pdf", one_page(text_ops("Employee: Ana Ruiz"), flate=True)))
    assert doc.status is DocStatus.OK and "Employee: Ana Ruiz" in doc.text


def test_p6_corrupt_checksum_is_data_loss_not_failure(tmp_path):
    # real #2's class: pdfminer recovers the stream byte by byte and logs the loss
    content = zlib.compress(text_ops("Employee: Ana Ruiz"))
    broken = content[:-4] + bytes(4)  # a wrong Adler-32
    data = one_page(broken, filters=b" /Filter /FlateDecode")
    doc = read(write(tmp_path, "corrupt.pdf", data))
    assert doc.status is DocStatus.PARTIAL and doc.reason == "stream_data_loss"
    assert "stream_data_loss" in doc.warnings and "Ana Ruiz" in doc.text


def run_cli(inbox: Path, out: Path, *extra: str, env: dict | None = None, timeout: float = 120) -> subprocess.CompletedProcess:
    schema = out.parent / "schema.yaml"
    schema.write_text("name: s\nfields:\n  - name: employee\n    type: string\n    extract: {as: person, cues: [employee]}\n")
    return subprocess.run(
        [sys.executable, "-m", "structurize", "extract", str(inbox), "--schema", str(schema), "--out", str(out), "--no-ner", "--quiet", *extra],
        capture_output=True,
        text=True,
        timeout=timeout,
        env={**os.environ, **(env or {})},
        cwd=out.parent,
    )


def documents(out: Path) -> dict[str, dict[str, str]]:
    with (out / "documents.csv").open(encoding="utf-8-sig", newline="") as handle:
        return {row["document"]: row for row in csv.DictReader(handle)}


def test_p6_bomb_in_a_batch_under_the_memory_limit(tmp_path):
    # 256 MiB of newlines in one content stream (catalogue P6 (tests/CATALOGUE.md): about 260 KB of file)
    inbox = tmp_path / "in"
    inbox.mkdir()
    write(inbox, "bomb.pdf", flate_bomb(256))
    write(inbox, "good.pdf", one_page(text_ops("Employee: Ana Ruiz")))
    out = tmp_path / "out"
    done = run_cli(inbox, out, "--workers", "2", "--memory-limit", "700", "--time-limit", "30")
    assert done.returncode == 3, done.stderr
    rows = documents(out)
    assert rows["bomb.pdf"]["status"] == "failed"
    assert rows["bomb.pdf"]["reason"] in ("stream_too_large", "memory_limit")
    assert rows["good.pdf"]["status"] == "ok"  # the batch goes on
    assert "Traceback" not in done.stderr
    assert done.stderr.strip().splitlines() == [f"structurize: bomb.pdf: {rows['bomb.pdf']['reason']}: {rows['bomb.pdf']['note']}"]


# --- P7: operator flood ---------------------------------------------------------------------------------


def test_p7_operator_flood_stops_at_the_char_cap(tmp_path, monkeypatch):
    # 200,000 one-character Tj operators in about 4 KB (catalogue P7 (tests/CATALOGUE.md))
    flood = b"BT /F1 12 Tf " + b"1 0 0 1 10 10 Tm (A) Tj " * 200_000 + b"ET"
    path = write(tmp_path, "flood.pdf", one_page(flood, flate=True))
    assert path.stat().st_size < 20_000
    drawn = []
    original = pdf_reader._aggregator_class()

    class Spy(original):  # count characters pdfminer really built
        def render_char(self, *args, **kwargs):
            drawn.append(1)
            return super().render_char(*args, **kwargs)

    monkeypatch.setattr(pdf_reader, "_AGGREGATOR", Spy)
    doc = read(path, ExtractOptions(ner=None, limits=Limits(chars=5000)))
    assert doc.status is DocStatus.FAILED and doc.reason == "too_many_chars"
    assert "5000" in doc.note
    assert len(drawn) <= 5001  # stopped while interpreting, not after building 200,000 objects


def test_p7_under_the_cap_reads(tmp_path):
    doc = read(write(tmp_path, "ok.pdf", one_page(text_ops("Employee: Ana Ruiz"))), ExtractOptions(ner=None, limits=Limits(chars=50)))
    assert doc.status is DocStatus.OK


# --- P8: circular references ---------------------------------------------------------------------------


def circular_xobjects() -> bytes:
    form = b"<< /Type /XObject /Subtype /Form /BBox [0 0 595 842] /Resources << /XObject << /X %d 0 R >> /Font << /F1 3 0 R >> >> /Length %d >>\nstream\n%s\nendstream"
    body = b"BT /F1 12 Tf 72 700 Td (Employee: Ana Ruiz) Tj ET /X Do"
    return build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>",
            FONT,
            page_obj(5, extra=b"/XObject << /X 6 0 R >> "),
            stream(b"/X Do"),
            form % (7, len(body), body),
            form % (6, len(body), body),
        ]
    )


@pytest.mark.parametrize(
    "data, status, reason, warning",
    [
        pytest.param(circular_xobjects, DocStatus.OK, "", "circular_xobject", id="P8-circular-form-xobjects"),
        pytest.param(
            lambda: build_pdf([b"<< /Type /Catalog /Pages 2 0 R >>", b"<< /Type /Pages /Kids [2 0 R] /Count 1 >>"]),
            DocStatus.FAILED, "pdf_structure", None, id="P8-page-tree-kids-itself",
        ),
        pytest.param(
            lambda: build_pdf(
                [
                    b"<< /Type /Catalog /Pages 2 0 R >>",
                    b"<< /Type /Pages /Kids [6 0 R] /Count 1 >>",
                    FONT,
                    page_obj(5, parent=6),
                    stream(text_ops("Employee: Ana Ruiz")),
                    b"<< /Type /Pages /Parent 2 0 R /Kids [4 0 R 2 0 R] /Count 1 >>",
                ]
            ),
            DocStatus.FAILED, "pdf_structure", None, id="P8-page-tree-loop-through-a-child",
        ),
        pytest.param(
            lambda: build_pdf(
                [
                    b"<< /Type /Catalog /Pages 2 0 R >>",
                    b"<< /Type /Pages /Kids [4 0 R 4 0 R] /Count 2 >>",
                    FONT,
                    page_obj(5),
                    stream(text_ops("Employee: Ana Ruiz")),
                ]
            ),
            DocStatus.OK, "", None, id="P8-same-page-twice-is-not-a-loop",
        ),
    ],
)
def test_p8_circular_references(tmp_path, capfd, data, status, reason, warning):
    doc = read(write(tmp_path, "loop.pdf", data()))
    assert doc.status is status and doc.reason == reason
    if warning:
        assert warning in doc.warnings
    if status is DocStatus.OK:
        assert "Employee: Ana Ruiz" in doc.text
    assert capfd.readouterr().err == ""  # pdfminer's "Refusing to execute ..." stays off stderr


# --- P9: deep nesting --------------------------------------------------------------------------------------

DEEP = b"[" * 100_000 + b"]" * 100_000


def test_p9_deep_nesting_is_pdf_structure(tmp_path):
    doc = read(write(tmp_path, "deep.pdf", build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>",
            FONT,
            page_obj(5, mediabox=DEEP),
            stream(text_ops(f"Employee: {SECRET_WORD}")),
        ]
    )))
    assert doc.status is DocStatus.FAILED and doc.reason == "pdf_structure"
    assert "recursion" in doc.note
    assert_quiet(doc)


def test_p9_one_deep_page_of_two_is_partial(tmp_path):
    # a failing part does not fail the document
    data = pages_pdf([text_ops("Employee: Ana Ruiz"), text_ops("Page two")], mediaboxes=[b"[0 0 595 842]", DEEP])
    doc = read(write(tmp_path, "half-deep.pdf", data))
    assert doc.status is DocStatus.PARTIAL and doc.reason == "page_unreadable"
    assert "page_unreadable" in doc.warnings and "Ana Ruiz" in doc.text


def test_p9_deep_metadata_is_partial_and_silent(tmp_path, capfd):
    data = one_page(text_ops("Employee: Ana Ruiz"), more=[b"<< /Title " + DEEP + b" >>"], trailer=b"/Info 6 0 R ")
    doc = read(write(tmp_path, "deep-info.pdf", data))
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, "metadata_unreadable") and "metadata_unreadable" in doc.warnings
    assert capfd.readouterr().err == ""  # pdfplumber logs the error text; it must not reach stderr


# --- P10: many pages ---------------------------------------------------------------------------------------


def many_pages(count: int, declared: int | None = None) -> bytes:
    objects = [b"<< /Type /Catalog /Pages 2 0 R >>", b"", FONT]
    first = len(objects) + 1
    objects += [b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 10 10] >>"] * count
    kids = b" ".join(b"%d 0 R" % number for number in range(first, first + count))
    objects[1] = b"<< /Type /Pages /Kids [%s] /Count %d >>" % (kids, count if declared is None else declared)
    return build_pdf(objects)


@pytest.fixture
def pages_must_not_be_read(monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("a page was processed before the page count was checked")

    monkeypatch.setattr(pdf_reader, "_read_page", refuse)


@pytest.mark.parametrize(
    "count, declared, limit",
    [
        pytest.param(100_000, None, 2000, id="P10-100k-pages-default-limit"),
        pytest.param(40, 1, 30, id="P10-count-entry-lies"),
        pytest.param(31, None, 30, id="P10-one-over"),
    ],
)
def test_p10_too_many_pages_before_processing(tmp_path, pages_must_not_be_read, count, declared, limit):
    doc = read(write(tmp_path, "pages.pdf", many_pages(count, declared)), ExtractOptions(ner=None, limits=Limits(pdf_pages=limit)))
    assert doc.status is DocStatus.FAILED and doc.reason == "too_many_pages"
    assert str(limit) in doc.note


def test_p10_at_the_limit_reads(tmp_path):
    doc = read(write(tmp_path, "pages.pdf", many_pages(30)), ExtractOptions(ner=None, limits=Limits(pdf_pages=30)))
    assert doc.status is DocStatus.SUSPECT_EMPTY and doc.pages == 30  # empty pages: read, and nothing in them


# --- P11: image only -----------------------------------------------------------------------------------------


def test_p11_image_only_is_no_text_layer_and_fields_missing(tmp_path):
    path = write(tmp_path, "scan.pdf", image_only_pdf())
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    result = extract_document(path, schema, options=RULES)
    assert result.status is DocStatus.NO_TEXT_LAYER and result.reason == "no_text_layer"
    assert all(item.status is ValueStatus.MISSING and item.value is None for item in result.values)


def test_p11_ocr_without_tesseract_keeps_no_text_layer(tmp_path, monkeypatch):
    monkeypatch.setattr(shutil, "which", lambda name, *a, **k: None)
    doc = read(write(tmp_path, "scan.pdf", image_only_pdf()), ExtractOptions(ner=None, ocr=True))
    assert doc.status is DocStatus.NO_TEXT_LAYER and "ocr_unavailable" in doc.warnings


# --- logging: nothing from pdfminer reaches stderr or the application's logs -------------------------------------


def test_pdfminer_logging_is_collected_not_propagated(tmp_path, capfd):
    records: list[logging.LogRecord] = []

    class Keep(logging.Handler):
        def emit(self, record):
            records.append(record)

    root = logging.getLogger()
    handler = Keep(logging.DEBUG)
    saved = root.level
    root.addHandler(handler)
    root.setLevel(logging.DEBUG)
    try:
        doc = read(write(tmp_path, "loop.pdf", circular_xobjects()))
    finally:
        root.removeHandler(handler)
        root.setLevel(saved)
    assert "circular_xobject" in doc.warnings
    assert not [r for r in records if r.name.startswith(("pdfminer", "pdfplumber"))]
    assert capfd.readouterr().err == ""
    assert logging.getLogger("pdfminer").propagate and not logging.getLogger("pdfminer").handlers  # restored


# --- OCR (P11 with --ocr) ------------------------------------------------------------------------------------------

OCR_LINES = ["Employee: Hannah Whitfield", "Start date: March 3, 2025", "Job title: Payroll Clerk"]
needs_tesseract = pytest.mark.skipif(shutil.which("tesseract") is None, reason="tesseract is not installed (apt-get install tesseract-ocr tesseract-ocr-eng)")


def scanned_pdf(path: Path, lines: list[str], pages: int = 1) -> Path:
    from PIL import Image, ImageDraw, ImageFont

    font = ImageFont.load_default(size=56)
    images = []
    for number in range(pages):
        image = Image.new("L", (2480, 3508), 255)
        draw = ImageDraw.Draw(image)
        for index, line in enumerate([*lines, f"Page {number + 1}"]):
            draw.text((220, 300 + index * 140), line, fill=0, font=font)
        images.append(image)
    images[0].save(path, "PDF", resolution=300, save_all=True, append_images=images[1:])
    return path


@needs_tesseract
def test_p11_ocr_reads_a_scan_with_page_boundaries(tmp_path):
    path = scanned_pdf(tmp_path / "scan.pdf", OCR_LINES, pages=2)
    assert read(path).status is DocStatus.NO_TEXT_LAYER  # without --ocr
    doc = read(path, ExtractOptions(ner=None, ocr=True))
    assert doc.status is DocStatus.OK and "ocr" in doc.warnings
    lines = [doc.text[s.start : s.end] for s in doc.lines]
    for line in OCR_LINES:
        assert line in lines
    assert doc.pages == 2
    assert doc.page_of(doc.text.index("Page 2")) == 2 and doc.page_of(doc.text.index("Page 1")) == 1


@needs_tesseract
def test_p11_ocr_values_are_extracted(tmp_path):
    path = scanned_pdf(tmp_path / "scan.pdf", OCR_LINES)
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    result = extract_document(path, schema, options=ExtractOptions(ner=None, ocr=True))
    assert result.status is DocStatus.OK and "ocr" in result.warnings
    assert result.value("employee").value == "Hannah Whitfield"


# --- a failing feature makes the document partial, never ok, never failed ------------------------------------------
#
# A feature-level failure never becomes a document failure: the document becomes partial with a
# named warning (measured with pdfplumber 0.11.10: the annotations of real #14 and #23 of the
# realpdfs folder's manifest raise while their text reads fine).  The reason is the warning's
# name, the note says what was lost and never quotes the document.


def annotated_pdf(annots: list[bytes], text: str = f"Offer letter for {SECRET_WORD}") -> bytes:
    """One page showing ``text`` whose ``/Annots`` are ``annots`` (objects 6, 7, ...), then ``more``."""
    refs = b" ".join(b"%d 0 R" % (6 + index) for index in range(len(annots)))
    page = (
        b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents 5 0 R"
        b" /Resources << /Font << /F1 3 0 R >> >> /Annots [" + refs + b"] >>"
    )
    return build_pdf(
        [b"<< /Type /Catalog /Pages 2 0 R >>", b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>", FONT, page, stream(text_ops(text)), *annots]
    )


def annot(subtype: bytes, contents: bytes, extra: bytes = b"") -> bytes:
    return b"<< /Type /Annot /Subtype /" + subtype + b" /Rect [72 600 90 618] /Contents " + contents + extra + b" >>"


def cyclic_annots() -> bytes:
    # real #14 / #23's class: resolving the annotation follows /A -> /Next -> itself until
    # pdfminer's recursion fails (MalformedPDFException: maximum recursion depth exceeded)
    return annotated_pdf(
        [
            b"<< /Type /Annot /Subtype /Link /Rect [72 600 90 618] /A 7 0 R >>",
            b"<< /Type /Action /S /URI /URI (https://example.org/) /Next 7 0 R >>",
        ]
    )


def self_referencing_annot() -> bytes:
    # "6 0 obj 6 0 R endobj": pdfminer's resolve1 follows it forever
    return annotated_pdf([b"6 0 R"])


def multiplying_annots(levels: int = 40) -> bytes:
    # no cycle, but each action names the next one twice: pdfplumber's resolve_all walks 2**40
    # objects for this 2 KB file (measured: 24 levels already take minutes)
    chain = [b"<< /S /URI /URI (https://example.org/) /Next [%d 0 R %d 0 R] >>" % (8 + i, 8 + i) for i in range(levels)]
    return annotated_pdf([annot(b"Text", b"(note)", b" /A 7 0 R"), *chain, b"<< /S /URI /URI (https://example.org/) >>"])


def text_and_image_pages() -> bytes:
    image = zlib.compress(b"\x80" * 16)
    return build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R 6 0 R] /Count 2 >>",
            FONT,
            page_obj(5),
            stream(text_ops(f"Employee: {SECRET_WORD}")),
            b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents 7 0 R /Resources << /XObject << /Im1 8 0 R >> >> >>",
            stream(b"q 400 0 0 400 100 300 cm /Im1 Do Q"),
            b"<< /Type /XObject /Subtype /Image /Width 4 /Height 4 /ColorSpace /DeviceGray /BitsPerComponent 8"
            b" /Filter /FlateDecode /Length %d >>\nstream\n" % len(image) + image + b"\nendstream",
        ]
    )


def _tables_raise(monkeypatch):
    from pdfplumber.page import Page

    def broken(self, *args, **kwargs):
        raise ValueError("table finder broke")

    monkeypatch.setattr(Page, "find_tables", broken)
    monkeypatch.setattr(pdf_reader, "FAST_PATH", False)  # the fast path never looks for tables


def _no_patch(monkeypatch):
    pass


@pytest.mark.parametrize(
    "data, patch, reason, note",
    [
        pytest.param(cyclic_annots, _no_patch, "annots_unreadable", "annotations", id="F1-cyclic-annotations"),
        pytest.param(self_referencing_annot, _no_patch, "annots_unreadable", "annotations", id="F1-annotation-is-a-reference-to-itself"),
        pytest.param(multiplying_annots, _no_patch, "annots_unreadable", "annotations", id="F1-shared-objects-multiply-the-walk"),
        pytest.param(lambda: one_page(text_ops(f"Employee: {SECRET_WORD}")), _tables_raise, "tables_unreadable", "table detection failed", id="F2-table-detection-raises"),
        pytest.param(
            lambda: one_page(text_ops(f"Employee: {SECRET_WORD}"), more=[b"<< /Title " + DEEP + b" >>"], trailer=b"/Info 6 0 R "),
            _no_patch, "metadata_unreadable", "metadata", id="F3-deep-metadata",
        ),
        pytest.param(text_and_image_pages, _no_patch, "image_only_pages", "1 of 2 pages are images only", id="F4-one-image-only-page-of-two"),
    ],
)
def test_feature_failure_is_partial_with_a_named_warning(tmp_path, monkeypatch, capfd, data, patch, reason, note):
    patch(monkeypatch)
    started = time.monotonic()
    doc = read(write(tmp_path, "feature.pdf", data()))
    assert time.monotonic() - started < 30  # bounded: a hang check, not a speed test
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, reason)
    assert reason in doc.warnings
    assert SECRET_WORD in doc.text  # the text was read
    assert note in doc.note
    assert_quiet(doc)
    assert capfd.readouterr().err == ""


@pytest.mark.parametrize(
    "first, second, reason",
    [
        pytest.param("image_only_pages", "annots_unreadable", "image_only_pages", id="lost-page-text-wins-over-lost-annotations"),
        pytest.param("annots_unreadable", "tables_unreadable", "annots_unreadable", id="lost-annotations-win-over-table-structure"),
    ],
)
def test_feature_failures_together_keep_every_warning(tmp_path, monkeypatch, first, second, reason):
    image = zlib.compress(b"\x80" * 16)
    objects = [
        b"<< /Type /Catalog /Pages 2 0 R >>",
        b"<< /Type /Pages /Kids [4 0 R 9 0 R] /Count 2 >>",
        FONT,
        b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents 5 0 R /Resources << /Font << /F1 3 0 R >> >> /Annots [6 0 R] >>",
        stream(text_ops("Employee: Ana Ruiz")),
        b"<< /Type /Annot /Subtype /Link /Rect [72 600 90 618] /A 7 0 R >>",
        b"<< /Type /Action /S /URI /URI (https://example.org/) /Next 7 0 R >>",
        b"<< /Type /XObject /Subtype /Image /Width 4 /Height 4 /ColorSpace /DeviceGray /BitsPerComponent 8"
        b" /Filter /FlateDecode /Length %d >>\nstream\n" % len(image) + image + b"\nendstream",
    ]
    if "image_only_pages" in (first, second):
        objects += [
            b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents 10 0 R /Resources << /XObject << /Im1 8 0 R >> >> >>",
            stream(b"q 400 0 0 400 100 300 cm /Im1 Do Q"),
        ]
    else:
        objects += [page_obj(10), stream(text_ops("Page two"))]
    if "tables_unreadable" in (first, second):
        _tables_raise(monkeypatch)
    doc = read(write(tmp_path, "two-features.pdf", build_pdf(objects)))
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, reason)
    assert {first, second} <= set(doc.warnings)


def test_ocr_that_reads_nothing_leaves_image_only_pages_partial(tmp_path, monkeypatch):
    # image-only pages that OCR did not read (here: OCR failed) are lost text: partial
    from structurize.readers import ocr as ocr_module

    class Failing:
        def __init__(self, *args, **kwargs):
            pass

        def read_page(self, index):
            raise ocr_module.OcrError("no")

        def close(self):
            pass

    monkeypatch.setattr(ocr_module, "tesseract_path", lambda: "/usr/bin/tesseract")
    monkeypatch.setattr(ocr_module, "PageReader", Failing)
    doc = read(write(tmp_path, "mixed.pdf", text_and_image_pages()), ExtractOptions(ner=None, ocr=True))
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, "image_only_pages")
    assert {"ocr_failed", "image_only_pages"} <= set(doc.warnings)


def test_a_document_without_failing_features_stays_ok(tmp_path):
    doc = read(write(tmp_path, "plain.pdf", pages_pdf([text_ops("Employee: Ana Ruiz"), text_ops("Page two")])))
    assert (doc.status, doc.reason, doc.note) == (DocStatus.OK, "", "")


# --- annotations: their text is read, marked as a region, and decoded as PDF text strings ------------------------------


@pytest.mark.parametrize(
    "annots, expected",
    [
        pytest.param([annot(b"Text", b"(Employee: Ana Ruiz)")], ["Employee: Ana Ruiz"], id="A1-sticky-note"),
        pytest.param([annot(b"FreeText", b"<FEFF65E5672C8A9E>")], ["日本語"], id="A2-utf16be-with-bom-real-27"),
        pytest.param([annot(b"Highlight", b"(Jos\\351 N\\372\\361ez)")], ["José Núñez"], id="A3-pdfdocencoding-odd-length"),
        pytest.param([annot(b"Text", b"<EFBBBF4AC3A973C3A9>")], ["Jésé"], id="A4-utf8-with-bom"),
        pytest.param([annot(b"Text", b"(First line\\rsecond line)")], ["First line", "second line"], id="A5-two-lines"),
        pytest.param([annot(b"Text", b"(one)"), annot(b"Square", b"(two)")], ["one", "two"], id="A6-in-order"),
        pytest.param([annot(b"Link", b"(link text)"), annot(b"Popup", b"(popup copy)"), annot(b"Widget", b"(field)")], [], id="A7-links-popups-widgets-skipped"),
        pytest.param([annot(b"Text", b"(   )")], [], id="A8-blank-contents"),
        pytest.param([b"<< /Type /Annot /Subtype /Text /Rect [72 600 90 618] >>"], [], id="A9-no-contents"),
    ],
)
def test_annotation_text_follows_the_page_text(tmp_path, monkeypatch, annots, expected):
    path = write(tmp_path, "annotated.pdf", annotated_pdf(annots, "Offer letter"))
    doc = read(path)
    assert (doc.status, doc.reason) == (DocStatus.OK, "")
    lines = [doc.text[s.start : s.end] for s in doc.lines]
    assert lines == ["Offer letter", *expected]
    marked = [doc.text[r.span.start : r.span.end] for r in doc.regions if r.kind == pdf_reader.ANNOTATION_REGION]
    assert "".join(marked).splitlines() == expected  # every annotation line is marked, nothing else
    assert doc.region_of(doc.lines[0]) is None
    # both paths agree: the fast path leaves pages with annotations to pdfplumber
    monkeypatch.setattr(pdf_reader, "FAST_PATH", False)
    slow = read(path)
    assert (slow.text, slow.regions, slow.warnings, slow.status) == (doc.text, doc.regions, doc.warnings, doc.status)


@pytest.mark.parametrize("fast", [True, False], ids=["fast-path-on", "pdfplumber-only"])
@pytest.mark.parametrize("data", [cyclic_annots, self_referencing_annot, multiplying_annots], ids=["cycle", "self-reference", "multiplying"])
def test_unreadable_annotations_give_the_same_document_on_both_paths(tmp_path, monkeypatch, fast, data):
    monkeypatch.setattr(pdf_reader, "FAST_PATH", fast)
    doc = read(write(tmp_path, "cyclic.pdf", data()))
    assert (doc.status, doc.reason, doc.warnings) == (DocStatus.PARTIAL, "annots_unreadable", ("annots_unreadable",))
    assert doc.text == f"Offer letter for {SECRET_WORD}\n"


def test_the_fast_path_refuses_a_page_with_annotations(tmp_path):
    from structurize.readers import pdfium

    data = annotated_pdf([annot(b"Text", b"(note)")], "Offer letter")
    found = pdfium.scan(data, stream_cap=pdf_reader.STREAM_BYTES, content_budget=Limits().chars)
    document = pdfium.FastDocument.open(data, found, Limits().pdf_pages)
    try:
        assert document.read_page(0) is None
    finally:
        document.close()
    plain = one_page(text_ops("Offer letter"))
    document = pdfium.FastDocument.open(plain, pdfium.scan(plain, stream_cap=pdf_reader.STREAM_BYTES, content_budget=Limits().chars), Limits().pdf_pages)
    try:
        assert document.read_page(0) is not None  # the same page without annotations stays fast
    finally:
        document.close()


def test_the_annotation_budget_is_spent_once_per_document(tmp_path, monkeypatch):
    # a hostile page spends the document's budget; later pages do not get a fresh one
    monkeypatch.setattr(pdf_reader, "ANNOT_OBJECTS", 2000)
    note = annot(b"Text", b"(ordinary note)")
    chain = b"<< /S /URI /URI (x) /Next [%d 0 R %d 0 R] >>"
    objects = [b"<< /Type /Catalog /Pages 2 0 R >>", b"", FONT]
    kids = []
    for page in range(3):
        first = len(objects) + 1
        annots = [note] if page else [annot(b"Text", b"(n)", b" /A %d 0 R" % (first + 3))] + [chain % (first + 4 + i, first + 4 + i) for i in range(30)] + [b"<< /S /URI /URI (x) >>"]
        refs = b" ".join(b"%d 0 R" % (first + 2 + i) for i in range(len(annots)))
        objects += [
            b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] /Contents %d 0 R /Resources << /Font << /F1 3 0 R >> >> /Annots [%s] >>" % (first + 1, refs),
            stream(text_ops(f"Page {page + 1}")),
            *annots,
        ]
        kids.append(b"%d 0 R" % first)
    objects[1] = b"<< /Type /Pages /Kids [%s] /Count 3 >>" % b" ".join(kids)
    doc = read(write(tmp_path, "three.pdf", build_pdf(objects)))
    assert (doc.status, doc.reason) == (DocStatus.PARTIAL, "annots_unreadable")
    assert "3 of 3 pages" in doc.note and "ordinary note" not in doc.text
    monkeypatch.setattr(pdf_reader, "ANNOT_OBJECTS", 1_000_000)
    assert read(write(tmp_path, "ordinary.pdf", annotated_pdf([note] * 3))).status is DocStatus.OK  # ordinary notes cost little


def test_annotation_text_counts_against_the_character_limit(tmp_path):
    doc = read(write(tmp_path, "long-note.pdf", annotated_pdf([annot(b"Text", b"(" + b"x" * 200 + b")")], "Offer")), ExtractOptions(ner=None, limits=Limits(chars=100)))
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "too_many_chars")


def test_values_inside_annotations_are_extracted_like_page_text(tmp_path):
    # chosen behaviour: a reviewer's comment is part of the document; its values are not
    # excluded (unlike quoted replies), and its span shows where the value came from
    path = write(tmp_path, "commented.pdf", annotated_pdf([annot(b"Text", b"(Employee: Ana Ruiz)")], "Offer letter"))
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    result = extract_document(path, schema, options=RULES)
    value = result.value("employee")
    assert value.value == "Ana Ruiz" and value.status is ValueStatus.OK


# --- OCR: values say where they came from --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "warnings, evidence, factor",
    [
        pytest.param(("ocr",), "read by OCR", 0.8, id="ocr-this-run"),
        pytest.param(("ocr_text_layer",), "read from the scan's OCR text layer", 0.8, id="scan-with-its-own-ocr-layer"),
        pytest.param((), None, 1.0, id="no-ocr"),
    ],
)
def test_values_read_by_ocr_carry_a_note(warnings, evidence, factor):
    from structurize.api import process_text
    from structurize.extract.extractors import OCR_EVIDENCE, OCR_LAYER_EVIDENCE
    from structurize.readers.builder import TextBuilder

    builder = TextBuilder()
    builder.add_line("Employee: Hannah Whitfield")
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    plain = process_text(builder.build("scan.pdf", "reader.pdf.v1"), schema, (), RULES)[0]
    value = process_text(builder.build("scan.pdf", "reader.pdf.v1", warnings=warnings), schema, (), RULES)[0]
    assert value.value == "Hannah Whitfield"
    notes = {OCR_EVIDENCE, OCR_LAYER_EVIDENCE} & set(value.evidence)
    assert notes == ({evidence} if evidence else set())
    assert value.confidence == pytest.approx(plain.confidence * factor, abs=0.002)


@needs_tesseract
def test_p11_ocr_values_say_they_were_read_by_ocr(tmp_path):
    path = scanned_pdf(tmp_path / "scan.pdf", OCR_LINES)
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    result = extract_document(path, schema, options=ExtractOptions(ner=None, ocr=True))
    assert "read by OCR" in result.value("employee").evidence


@pytest.mark.parametrize(
    "warnings, words",
    [
        ([], "run with --ocr"),
        (["ocr_unavailable"], "install tesseract-ocr"),
        (["ocr"], "OCR read no text"),
    ],
)
def test_p11_no_text_layer_note_says_how_to_read_it(warnings: list[str], words: str) -> None:
    assert words in pdf_reader._no_text_note(warnings)


def test_p11_no_text_layer_hint_is_in_documents_csv(tmp_path):
    path = write(tmp_path, "scan.pdf", image_only_pdf())
    doc = read(path)
    assert doc.status is DocStatus.NO_TEXT_LAYER and "--ocr" in doc.note
