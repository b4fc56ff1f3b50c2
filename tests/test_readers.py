"""Readers: one document type for every format; spans index into its text."""

from __future__ import annotations

from pathlib import Path

import docx
import pytest

from structurize.readers import read_document
from structurize.types import DocStatus

from pdfmaker import make_pdf


def read(path: Path):
    return read_document(path, path.name)


def cell_texts(doc) -> list[list[str]]:
    return [[doc.text[c.start : c.end] for c in row] for table in doc.tables for row in table.rows]


@pytest.mark.parametrize(
    "data, encoding, guessed, text",
    [
        ("Café notes\n".encode("utf-8"), "utf-8", False, "Café notes"),
        (b"\xef\xbb\xbf" + "Café\n".encode("utf-8"), "utf-8-sig", False, "Café"),
        ("Café\n".encode("utf-16"), "utf-16", False, "Café"),
        ("Caf\u00e9 \u2013 \u20ac5\n".encode("cp1252"), "cp1252", True, "Café – €5"),
        (b"Caf\xe9 \x81\n", "latin-1", True, "Café \x81"),
    ],
)
def test_readers_text_decoding_is_recorded(tmp_path: Path, data: bytes, encoding: str, guessed: bool, text: str) -> None:
    path = tmp_path / "note.txt"
    path.write_bytes(data)
    doc = read(path)
    assert doc.status is DocStatus.OK
    assert doc.encoding == encoding and doc.encoding_guessed is guessed
    assert doc.text.splitlines()[0] == text
    assert ("encoding_guessed" in doc.warnings) is guessed


@pytest.mark.parametrize("newline", ["\n", "\r\n", "\r"])
def test_readers_text_lines_and_offsets(tmp_path: Path, newline: str) -> None:
    path = tmp_path / "form.txt"
    path.write_bytes(newline.join(["Employee: Ana", "Site: Harbour Point", ""]).encode())
    doc = read(path)
    assert [doc.text[s.start : s.end] for s in doc.lines] == ["Employee: Ana", "Site: Harbour Point"]


@pytest.mark.parametrize(
    "markdown, cells",
    [
        ("| Item | Details |\n|---|---|\n| Position | Clerk |\n| Pay | $20/hr |\n", [["Item", "Details"], ["Position", "Clerk"], ["Pay", "$20/hr"]]),
        ("Item | Details\n--- | ---\nSite | HP\n", [["Item", "Details"], ["Site", "HP"]]),
    ],
)
def test_readers_markdown_tables(tmp_path: Path, markdown: str, cells: list[list[str]]) -> None:
    path = tmp_path / "offer.md"
    path.write_text("# Offer\n\n" + markdown, encoding="utf-8")
    assert cell_texts(read(path)) == cells


def test_readers_html_to_text(tmp_path: Path) -> None:
    path = tmp_path / "letter.html"
    path.write_text(
        "<html><head><title>x</title><style>p{}</style><script>alert(1)</script></head><body>"
        "<p>Dear Ana,</p><p>You&rsquo;ll start on <b>March&nbsp;3</b> &ndash; welcome.</p>"
        "<table><tr><th>Start date</th><td>March 3, 2025</td></tr><tr><td>Pay</td><td>$50,000</td></tr></table>"
        '<p><input type="checkbox" checked> Relocation <input type="checkbox"> Pay</p>'
        "<ul><li>first</li><li>second</li></ul></body></html>",
        encoding="utf-8",
    )
    doc = read(path)
    lines = [doc.text[s.start : s.end] for s in doc.lines if s.end > s.start]
    assert "Dear Ana," in lines
    assert "You’ll start on March 3 – welcome." in lines  # entities decoded, spaces folded
    assert "[x] Relocation [ ] Pay" in lines
    assert "- first" in lines and "- second" in lines
    assert "alert" not in doc.text and "p{}" not in doc.text
    assert cell_texts(doc) == [["Start date", "March 3, 2025"], ["Pay", "$50,000"]]


def test_readers_docx_in_document_order(tmp_path: Path) -> None:
    document = docx.Document()
    document.add_heading("Exit interview", level=1)
    document.add_paragraph("Employee: Ana López")
    table = document.add_table(rows=2, cols=2)
    for row, (label, value) in zip(table.rows, [("Department", "Nursing"), ("Last day", "2025-05-30")]):
        row.cells[0].text, row.cells[1].text = label, value
    document.add_paragraph("Reason: relocation ☒ yes ☐ no")
    document.add_paragraph("first point", style="List Bullet")
    path = tmp_path / "exit.docx"
    document.save(path)
    doc = read(path)
    text = doc.text
    assert text.index("Exit interview") < text.index("Employee: Ana López") < text.index("Department") < text.index("Reason")
    assert "[x] yes [ ] no" in text and "- first point" in text
    assert cell_texts(doc) == [["Department", "Nursing"], ["Last day", "2025-05-30"]]


def test_readers_pdf_pages_and_offsets(tmp_path: Path) -> None:
    path = make_pdf(tmp_path / "form.pdf", [["Employee: Ana Lopez", "Start date: March 3, 2025"], ["Approved by: Sam Reed"]])
    doc = read(path)
    assert doc.status is DocStatus.OK and doc.pages == 2
    start = doc.text.index("Sam Reed")
    assert doc.page_of(start) == 2 and doc.page_of(doc.text.index("Ana")) == 1


@pytest.mark.parametrize(
    "build, status, reason",
    [
        (lambda p: make_pdf(p / "scan.pdf", [None, None]), DocStatus.NO_TEXT_LAYER, "no_text_layer"),
        (lambda p: (p / "empty.pdf").write_bytes(b"") and p / "empty.pdf" or p / "empty.pdf", DocStatus.FAILED, "empty_file"),
        (lambda p: (p / "junk.pdf").write_bytes(b"%PDF-1.4 not really") and p / "junk.pdf", DocStatus.FAILED, "pdf_unreadable"),
        (lambda p: (p / "bad.docx").write_bytes(b"PK\x03\x04 truncated") and p / "bad.docx", DocStatus.FAILED, "not_a_zip"),
        (lambda p: (p / "old.docx").write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 504) and p / "old.docx", DocStatus.FAILED, "legacy_office"),
        (lambda p: (p / "data.xlsx").write_bytes(b"PK") and p / "data.xlsx", DocStatus.FAILED, "unsupported_format"),
        (lambda p: (p / "blob.txt").write_bytes(b"\x00\x01\x02binary") and p / "blob.txt", DocStatus.FAILED, "not_text"),
        (lambda p: (p / "empty.eml").write_bytes(b"") and p / "empty.eml" or p / "empty.eml", DocStatus.FAILED, "empty_file"),
    ],
)
def test_readers_bad_documents_get_a_status(tmp_path: Path, build, status: DocStatus, reason: str) -> None:
    path = build(tmp_path)
    doc = read(path)
    assert doc.status is status and doc.reason == reason
    assert doc.text == "" or status is DocStatus.NO_TEXT_LAYER


@pytest.mark.parametrize(
    "error, reason, words",
    [
        pytest.param(MemoryError, "memory_limit", "memory", id="memory-error"),
        pytest.param(RecursionError, "too_deeply_nested", "nested too deeply", id="recursion-error"),
        pytest.param(KeyError, "reader_error", "KeyError", id="any-other-exception"),
    ],
)
def test_readers_unclassified_errors_get_a_note(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, error: type, reason: str, words: str) -> None:
    # every non-ok document gets a one-line message, never an empty one (measured with pdfminer.six
    # 20260107: some of its exceptions have an empty str())
    from structurize.readers import READERS, reader_for

    path = tmp_path / "note.txt"
    path.write_text("Employee: Ana Ruiz\n", encoding="utf-8")

    def broken(*args: object) -> None:
        raise error("Employee: Ana Ruiz")  # the message may quote content: it must not be used

    name = reader_for(path)
    READERS.ensure_populated()
    monkeypatch.setitem(READERS._items, name, broken)
    doc = read(path)
    assert (doc.status, doc.reason) == (DocStatus.FAILED, reason)
    assert words in doc.note and "Ana" not in doc.note
