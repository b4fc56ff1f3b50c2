"""Broken and hostile .docx files: catalogue D1–D10 (tests/CATALOGUE.md).

Inputs are built here from a python-docx-generated seed (as measured with python-docx 1.2.0
and lxml 6.1.3), rewritten
with the stdlib ``zipfile``.  The container checks run before python-docx opens the file;
the tests prove it by making python-docx refuse to run.  Reason codes:

=====  =====================================================================
D1     ``failed: zip_limits`` (declared size, ratio, or bytes counted while inflating)
D2     ``ok``, ``timeout`` or ``memory_limit`` in a worker; the batch never hangs
D3     ``failed: dtd_in_ooxml`` (billion laughs)
D4     ``failed: dtd_in_ooxml`` (XXE); the canary file's content appears in no output
D5     ``failed: not_a_zip`` (not a zip, truncated, corrupt)
D6     ``needs_password: encrypted_office`` for an encrypted OOXML package (an OLE2 file with
       the streams EncryptionInfo and EncryptedPackage); ``failed: legacy_office`` for any
       other OLE2 file (a .doc renamed .docx)
D8     ``failed: bad_docx`` (no main document part)
D9     ``failed: xml_limits`` (nesting deeper than libxml2 allows)
D10    ``failed: zip_limits`` (too many members)
=====  =====================================================================
"""

from __future__ import annotations

import csv
import io
import secrets
import struct
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import docx
import pytest

from structurize.api import extract_folder
from structurize.options import ExtractOptions, Limits
from structurize.readers import read_document
from structurize.readers.docx import CHUNK
from structurize.types import DocStatus
from structurize.write import write_outputs

from conftest import make_schema

RULES = ExtractOptions(ner=None)
W = b'xmlns:w="http://schemas.openxmlformats.org/wordprocessingml/2006/main"'


@pytest.fixture(scope="module")
def seed(tmp_path_factory) -> bytes:
    document = docx.Document()
    document.add_paragraph("Employee: Ana Ruiz")
    path = tmp_path_factory.mktemp("seed") / "seed.docx"
    document.save(path)
    return path.read_bytes()


def rebuild(seed: bytes, replace: dict[str, bytes] | None = None, add: dict[str, bytes] | None = None, drop: tuple[str, ...] = ()) -> bytes:
    """The seed with some members replaced, added or dropped."""
    replace = replace or {}
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(seed)) as source, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            if info.filename in drop:
                continue
            target.writestr(info.filename, replace.get(info.filename, source.read(info)))
        for name, data in (add or {}).items():
            target.writestr(name, data)
    return out.getvalue()


def body(paragraphs: bytes, prolog: bytes = b"") -> bytes:
    return b"<?xml version='1.0' encoding='UTF-8' standalone='yes'?>\n" + prolog + b"<w:document " + W + b"><w:body>" + paragraphs + b"</w:body></w:document>"


def para(text: bytes) -> bytes:
    return b"<w:p><w:r><w:t>" + text + b"</w:t></w:r></w:p>"


def zeros_member(name: str, size: int) -> bytes:
    """A zip whose one member is ``size`` zero bytes, streamed (never ``size`` bytes in memory)."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as archive:
        with archive.open(zipfile.ZipInfo(name), "w", force_zip64=True) as member:
            block = b"0" * (1 << 20)
            for _ in range(size >> 20):
                member.write(block)
    return out.getvalue()


def lying_sizes(data: bytes, name: str, declared: int) -> bytes:
    """Rewrite the sizes a zip declares for ``name`` (local header and central directory)."""
    buffer = bytearray(data)
    encoded = name.encode()
    at = 0
    while (at := buffer.find(b"PK\x03\x04", at)) != -1:  # local file headers: size at +22
        if buffer[at + 30 : at + 30 + len(encoded)] == encoded:
            struct.pack_into("<I", buffer, at + 22, declared)
        at += 4
    at = 0
    while (at := buffer.find(b"PK\x01\x02", at)) != -1:  # central directory: size at +24
        if buffer[at + 46 : at + 46 + len(encoded)] == encoded:
            struct.pack_into("<I", buffer, at + 24, declared)
        at += 4
    return bytes(buffer)


@pytest.fixture
def python_docx_must_not_run(monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("python-docx opened the file before the container checks")

    monkeypatch.setattr(docx, "Document", refuse)


def read(tmp_path: Path, data: bytes, options: ExtractOptions = RULES, name: str = "doc.docx"):
    path = tmp_path / name
    path.write_bytes(data)
    return read_document(path, name, options)


def test_seed_reads(tmp_path, seed):
    doc = read(tmp_path, seed)
    assert doc.status is DocStatus.OK and "Employee: Ana Ruiz" in doc.text


# --- D1, D10: zip limits, before python-docx -------------------------------------------------------------------


BILLION_LAUGHS = (
    b'<!DOCTYPE w:document [<!ENTITY a "aaaaaaaaaa">'
    + b"".join(b'<!ENTITY %s "%s">' % (bytes([98 + i]), b"&%s;" % bytes([97 + i]) * 10) for i in range(8))
    + b"]>"
)


def straddling_doctype() -> bytes:
    """A document.xml whose ``<!DOCTYPE`` starts a few bytes before the 64 KiB read boundary."""
    return b"<?xml version='1.0'?>" + b" " * (CHUNK - 25) + b"<!DOCTYPE w:document><w:document " + W + b"><w:body/></w:document>"


@pytest.mark.parametrize(
    "build, options, reason, note",
    [
        pytest.param(lambda seed: zeros_member("word/document.xml", 200 << 20), RULES, "zip_limits", "uncompressed", id="D1-declared-200MB"),
        pytest.param(lambda seed: rebuild(seed, {"word/document.xml": b"0" * (8 << 20)}), RULES, "zip_limits", "inflates", id="D1-ratio-over-100"),
        pytest.param(
            lambda seed: lying_sizes(rebuild(seed, {"word/document.xml": body(para(b"x" * (6 << 20)))}), "word/document.xml", 2000),
            ExtractOptions(ner=None, limits=Limits(zip_total_bytes=4 << 20, zip_ratio=1_000_000)),
            ("zip_limits", "not_a_zip"), "", id="D1-headers-lie-about-size",
        ),
        pytest.param(
            lambda seed: rebuild(seed, add={f"word/media/pad{i}.bin": b"" for i in range(3000)}), RULES, "zip_limits", "members", id="D10-3000-members",
        ),
        pytest.param(lambda seed: b"not a zip at all", RULES, "not_a_zip", "", id="D5-not-a-zip"),
        pytest.param(lambda seed: seed[:1000], RULES, "not_a_zip", "", id="D5-truncated-1000-bytes"),
        pytest.param(lambda seed: seed[: len(seed) // 2], RULES, "not_a_zip", "", id="D5-truncated-half"),
        pytest.param(lambda seed: b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504), RULES, "legacy_office", "save it as .docx", id="D6-ole2-magic-only"),
        pytest.param(lambda seed: compound_file(["EncryptionInfo", "EncryptedPackage"]), RULES, "encrypted_office", "password", id="D6-ole2-encrypted-ooxml"),
        pytest.param(lambda seed: rebuild(seed, {"word/document.xml": body(para(b"&b;"), BILLION_LAUGHS)}), RULES, "dtd_in_ooxml", "DTD", id="D3-billion-laughs"),
        pytest.param(
            lambda seed: rebuild(seed, {"word/styles.xml": b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY e "e">]><w:styles ' + W + b"/>"}),
            RULES, "dtd_in_ooxml", "DTD", id="D3-dtd-in-another-part",
        ),
        pytest.param(
            lambda seed: rebuild(seed, {"word/document.xml": body(para(b"&b;"), BILLION_LAUGHS).decode().replace("UTF-8", "UTF-16").encode("utf-16")}),
            RULES, "dtd_in_ooxml", "DTD", id="D3-dtd-in-utf16-part",
        ),
        pytest.param(lambda seed: rebuild(seed, {"word/document.xml": straddling_doctype()}), RULES, "dtd_in_ooxml", "DTD", id="D3-dtd-across-a-chunk-boundary"),
    ],
)
def test_d_container_checks_before_python_docx(tmp_path, seed, python_docx_must_not_run, build, options, reason, note):
    doc = read(tmp_path, build(seed), options)
    expected = reason if isinstance(reason, tuple) else (reason,)
    assert doc.reason in expected, (doc.status, doc.reason, doc.note)
    assert doc.status is (DocStatus.NEEDS_PASSWORD if reason == "encrypted_office" else DocStatus.FAILED)
    assert note in doc.note
    assert doc.text == ""


@pytest.mark.parametrize(
    "build, reason",
    [
        pytest.param(lambda seed: rebuild(seed, drop=("word/document.xml",)), "bad_docx", id="D8-no-main-document"),
        pytest.param(lambda seed: rebuild(seed, {"word/document.xml": body(b"<w:tbl>" * 10_000 + b"</w:tbl>" * 10_000)}), "xml_limits", id="D9-10000-deep"),
    ],
)
def test_d_python_docx_failures_get_a_reason(tmp_path, seed, build, reason):
    doc = read(tmp_path, build(seed))
    assert (doc.status, doc.reason) == (DocStatus.FAILED, reason)
    assert doc.note and doc.text == ""


def test_d3_dtd_across_a_chunk_boundary_really_straddles():
    # the row above must put "<!DOCTYPE" across the 64 KiB read boundary, or it tests nothing
    at = straddling_doctype().index(b"<!DOCTYPE")
    assert at < CHUNK < at + len(b"<!DOCTYPE")


def test_d3_ordinary_doctype_free_document_is_fine(tmp_path, seed):
    # the pre-scan must not flag the word "DOCTYPE" in text, only the declaration
    doc = read(tmp_path, rebuild(seed, {"word/document.xml": body(para(b"The &lt;!DOCTYPE html&gt; line"))}))
    assert doc.status is DocStatus.OK and "<!DOCTYPE html>" in doc.text


# --- D4: XXE, end to end: nothing of the canary file in any output ----------------------------------------------


@pytest.mark.parametrize(
    "entity",
    [
        pytest.param(b'<!DOCTYPE w:document [<!ENTITY x SYSTEM "file://%s">]>', id="D4-system-entity"),
        pytest.param(b'<!DOCTYPE w:document [<!ENTITY %% p SYSTEM "file://%s"> %%p;]>', id="D4-parameter-entity"),
    ],
)
def test_d4_xxe_never_reaches_an_output(tmp_path, seed, entity):
    token = "CANARY-" + secrets.token_hex(8)
    canary = tmp_path / "canary.txt"
    canary.write_text(token)
    inbox = tmp_path / "in"
    inbox.mkdir()
    xml = body(para(b"Employee: &x;"), entity % str(canary).encode())
    (inbox / "xxe.docx").write_bytes(rebuild(seed, {"word/document.xml": xml}))
    (inbox / "good.docx").write_bytes(seed)
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}})
    result = extract_folder(inbox, schema, options=ExtractOptions(ner=None, workers=0))
    status = {doc.source: (doc.status, doc.reason) for doc in result.documents}
    assert status["xxe.docx"] == (DocStatus.FAILED, "dtd_in_ooxml")
    assert status["good.docx"][0] is DocStatus.OK
    out = tmp_path / "out"
    write_outputs(result, out)
    for produced in out.iterdir():
        assert token.encode() not in produced.read_bytes(), produced.name


# --- D2: many paragraphs, in a worker with time and memory limits ------------------------------------------------


def test_d2_million_paragraphs_never_hang_the_batch(tmp_path, seed):
    paragraphs = b"".join(para(b"Paragraph %d" % n) for n in range(1_000_000))
    inbox = tmp_path / "in"
    inbox.mkdir()
    (inbox / "huge.docx").write_bytes(rebuild(seed, {"word/document.xml": body(paragraphs)}))
    (inbox / "small.docx").write_bytes(seed)
    out = tmp_path / "out"
    schema = tmp_path / "schema.yaml"
    schema.write_text("name: s\nfields:\n  - name: employee\n    type: string\n    extract: {as: person, cues: [employee]}\n")
    started = time.monotonic()
    done = subprocess.run(
        [sys.executable, "-m", "structurize", "extract", str(inbox), "--schema", str(schema), "--out", str(out),
         "--no-ner", "--quiet", "--workers", "2", "--time-limit", "4", "--memory-limit", "700"],
        capture_output=True, text=True, timeout=120, cwd=tmp_path,
    )
    elapsed = time.monotonic() - started
    with (out / "documents.csv").open(encoding="utf-8-sig", newline="") as handle:
        rows = {row["document"]: row for row in csv.DictReader(handle)}
    huge = rows["huge.docx"]
    assert huge["status"] == "ok" or (huge["status"], huge["reason"]) in (("failed", "timeout"), ("failed", "memory_limit")), huge
    assert rows["small.docx"]["status"] == "ok"
    assert "Traceback" not in done.stderr
    assert elapsed < 90  # a generous bound: the 4 s limit per document plus worker start-up


# --- D6: which OLE2 (compound) file is an encrypted .docx, and which is a legacy .doc ---------------------------------

FREE, END, FAT_SECTOR, NO_STREAM = 0xFFFFFFFF, 0xFFFFFFFE, 0xFFFFFFFD, 0xFFFFFFFF


def compound_file(streams: list[str], *, sector: int = 512, extra: bytes = b"") -> bytes:
    """A minimal compound file (MS-CFB): header, one FAT sector, one directory sector with a
    root entry and one empty stream entry per name, then ``extra`` as one more sector."""
    entries = [("Root Entry", 5, 1 if streams else NO_STREAM, NO_STREAM)]
    for index, name in enumerate(streams):
        following = index + 2 if index + 1 < len(streams) else NO_STREAM
        entries.append((name, 2, NO_STREAM, following))
    per_sector = sector // 128
    assert len(entries) <= per_sector
    directory = b""
    for name, kind, child, right in entries:
        encoded = name.encode("utf-16-le") + b"\x00\x00"
        directory += (
            encoded.ljust(64, b"\x00") + struct.pack("<HBB", len(encoded), kind, 1)
            + struct.pack("<III", NO_STREAM, right, child) + bytes(16) + bytes(4) + bytes(16)
            + struct.pack("<IQ", END, 0)
        )
    directory = directory.ljust(sector, b"\x00")
    fat = struct.pack("<II", FAT_SECTOR, END) + (struct.pack("<I", FREE) * (sector // 4 - 2))
    shift = sector.bit_length() - 1
    header = (
        b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(16) + struct.pack("<HHHHH", 0x3E, 3 if sector == 512 else 4, 0xFFFE, shift, 6)
        + bytes(6) + struct.pack("<IIIIIIIII", 0, 1, 1, 0, 4096, END, 0, END, 0)
        + struct.pack("<I", 0) + struct.pack("<I", FREE) * 108
    )
    assert len(header) == 512
    return header.ljust(sector, b"\x00") + fat + directory + (extra.ljust(sector, b"\x00") if extra else b"")


def _entry(name: str) -> bytes:
    encoded = name.encode("utf-16-le") + b"\x00\x00"
    return encoded.ljust(64, b"\x00") + struct.pack("<HB", len(encoded), 2)


@pytest.mark.parametrize(
    "data, status, reason, note",
    [
        pytest.param(compound_file(["EncryptionInfo", "EncryptedPackage"]), DocStatus.NEEDS_PASSWORD, "encrypted_office", "password", id="encrypted-ooxml-512-byte-sectors"),
        pytest.param(compound_file(["\x06DataSpaces", "EncryptionInfo", "EncryptedPackage"], sector=4096), DocStatus.NEEDS_PASSWORD, "encrypted_office", "password", id="encrypted-ooxml-4096-byte-sectors"),
        pytest.param(compound_file(["WordDocument", "1Table", "\x05SummaryInformation"]), DocStatus.FAILED, "legacy_office", "save it as .docx", id="legacy-doc"),
        pytest.param(compound_file(["Workbook"]), DocStatus.FAILED, "legacy_office", "save it as .docx", id="legacy-xls"),
        pytest.param(compound_file(["EncryptionInfo"]), DocStatus.FAILED, "legacy_office", "save it as .docx", id="only-one-of-the-two-streams"),
        pytest.param(
            compound_file(["WordDocument"], extra=b"\x00" * 6 + _entry("EncryptionInfo") + b"\x00" * 7 + _entry("EncryptedPackage")),
            DocStatus.FAILED, "legacy_office", "save it as .docx", id="stream-names-in-content-are-not-entries",
        ),
        pytest.param(compound_file([]), DocStatus.FAILED, "legacy_office", "save it as .docx", id="empty-compound-file"),
    ],
)
def test_d6_ole2_files_are_told_apart(tmp_path, python_docx_must_not_run, data, status, reason, note):
    doc = read(tmp_path, data, name="renamed.docx")
    assert (doc.status, doc.reason) == (status, reason)
    assert note in doc.note and doc.text == ""


def test_d6_compound_file_builder_is_sound():
    # the directory entries sit where MS-CFB puts them: sector 1 (after the header and the FAT)
    for sector in (512, 4096):
        data = compound_file(["EncryptionInfo", "EncryptedPackage"], sector=sector)
        directory = 2 * sector  # after the header (padded to a sector) and the FAT sector
        assert data[directory : directory + 20] == "Root Entry".encode("utf-16-le")
        assert data[directory + 128 : directory + 128 + 28] == "EncryptionInfo".encode("utf-16-le")
