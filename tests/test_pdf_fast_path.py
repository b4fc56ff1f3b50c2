"""The PDF reader's fast path (PDFium) must read exactly what the pdfplumber path reads.

``structurize/readers/pdfium.py`` reads ordinary pages with PDFium and leaves everything
else to pdfplumber.  These tests read every PDF we have twice, once with the fast path and
once with pdfplumber alone (``pdf.FAST_PATH = False``), and require the same document:
text, page boundaries, status, reason and warnings.  The reference here is pdfplumber
(pdfminer.six), the reader the rest of the test suite was written against.
"""

from __future__ import annotations

import time
from pathlib import Path

import pytest

from structurize.options import ExtractOptions
from structurize.readers import pdf as pdf_reader
from structurize.readers import pdfium, read_document

from pdfmaker import make_pdf
from test_hostile_pdf import FONT, build_pdf, one_page, page_obj, pages_pdf, stream, text_ops

ROOT = Path(__file__).resolve().parent.parent
SHARED = ROOT.parent / "shared"


def _both(path: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[tuple, tuple]:
    def key(doc) -> tuple:  # type: ignore[no-untyped-def]
        return (doc.status, doc.reason, doc.text, doc.page_starts, doc.lines, doc.tables, tuple(doc.warnings))

    monkeypatch.setattr(pdf_reader, "FAST_PATH", True)
    fast = key(read_document(path, path.name))
    monkeypatch.setattr(pdf_reader, "FAST_PATH", False)
    slow = key(read_document(path, path.name))
    return fast, slow


def _fast_pages(path: Path) -> list[bool]:
    """Which pages PDFium reads itself (an empty list: the whole file goes to pdfplumber)."""
    data = path.read_bytes()
    limits = ExtractOptions().limits
    try:
        found = pdfium.scan(data, stream_cap=pdf_reader.STREAM_BYTES, content_budget=limits.chars)
        document = pdfium.FastDocument.open(data, found, limits.pdf_pages)
    except pdfium.Refused:
        return []
    try:
        return [document.read_page(index) is not None for index in range(document.pages)]
    finally:
        document.close()


def _form_page() -> bytes:
    """Labels and values set apart by a wide gap, the way a form prints them (no colon)."""
    rows = [("Employee name", "Priya Lindahl"), ("Current site", "Oriel Street Clinic"), ("Effective date", "03/02/2027")]
    ops = [b"BT /F1 11 Tf"]
    y = 760
    for label, value in rows:
        ops.append(b"1 0 0 1 72 %d Tm (%s) Tj 1 0 0 1 250 %d Tm (%s) Tj" % (y, label.encode(), y, value.encode()))
        y -= 18
    ops.append(b"ET")
    return b"\n".join(ops)


GENERATED = {
    # ordinary pages: PDFium reads them
    "lines": (lambda tmp: make_pdf(tmp / "lines.pdf", [["Offer of employment", "Dear Ms. Okafor,", "Start date: May 4, 2027"]]), True),
    "two_pages": (lambda tmp: make_pdf(tmp / "two.pdf", [["Page one text"], ["Page two: Salary $52,000 per year"]]), True),
    "form_gap": (lambda tmp: _write(tmp, "form.pdf", one_page(_form_page())), True),
    "hyphen_break": (lambda tmp: _write(tmp, "hyphen.pdf", one_page(text_ops("The veterinary practice-", "manager signs below."))), True),
    "flate_content": (lambda tmp: _write(tmp, "flate.pdf", one_page(text_ops("Compressed content stream"), flate=True)), True),
    "blank_page": (lambda tmp: _write(tmp, "blank.pdf", pages_pdf([text_ops("First"), b""])), True),
    # pages or files pdfplumber must read
    "ruled_table": (lambda tmp: _write(tmp, "table.pdf", one_page(text_ops("Site  Hours") + b"\n72 700 m 300 700 l S")), False),
    "fake_bold": (
        lambda tmp: _write(tmp, "bold.pdf", one_page(b"BT /F1 12 Tf 72 760 Td (Bold heading) Tj ET BT /F1 12 Tf 72.4 760 Td (Bold heading) Tj ET")),
        False,
    ),
    "invisible_text": (lambda tmp: _write(tmp, "hidden.pdf", one_page(b"BT /F1 12 Tf 3 Tr 72 760 Td (Hidden words) Tj ET")), False),
    "image_only": (lambda tmp: make_pdf(tmp / "scan.pdf", [None]), False),
    "cid_binary_stream": (lambda tmp: _write(tmp, "binary.pdf", _with_binary_stream()), True),
}


def _write(tmp: Path, name: str, data: bytes) -> Path:
    path = tmp / name
    path.write_bytes(data)
    return path


def _with_binary_stream(size: int = 256 * 1024) -> bytes:
    """A page plus an unreferenced binary stream with no white space in it (like a font's
    CIDToGIDMap): the byte scan must stay linear on such data."""
    return one_page(text_ops("Binary neighbours"), more=[stream(b"\x00\x01" * (size // 2), flate=True)])


@pytest.mark.parametrize("name", sorted(GENERATED))
def test_fast_path_reads_what_pdfplumber_reads(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, name: str) -> None:
    make, fast_expected = GENERATED[name]
    path = make(tmp_path)
    fast, slow = _both(path, monkeypatch)
    assert fast == slow
    pages = _fast_pages(path)
    if fast_expected is True:
        assert pages and all(pages), "PDFium should read every page of this file"
    else:
        assert not any(pages), "this file must go to pdfplumber"


def test_wide_gaps_survive_on_the_fast_path(tmp_path: Path) -> None:
    # Common practice, no source: form PDFs set label and value apart by position only; the
    # reader keeps a visible gap so that the label/value layout is still found.
    path = _write(tmp_path, "form.pdf", one_page(_form_page()))
    assert all(_fast_pages(path))
    text = read_document(path, path.name).text
    assert "Employee name   Priya Lindahl" in text
    assert "Current site   Oriel Street Clinic" in text


def test_rotated_page_goes_to_pdfplumber(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    data = build_pdf(
        [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Kids [4 0 R] /Count 1 >>",
            FONT,
            page_obj(5).replace(b"/Type /Page ", b"/Type /Page /Rotate 90 "),
            stream(text_ops("Turned page")),
        ]
    )
    path = _write(tmp_path, "rotated.pdf", data)
    assert _fast_pages(path) == [False]
    fast, slow = _both(path, monkeypatch)
    assert fast == slow


def test_scan_is_linear_on_binary_streams() -> None:
    # A scan that backtracked on long runs of non-space bytes hung on a 130 kB font map
    # (30 s for 64 kB, growing with the square); 128 kB must finish well inside the bound
    # below.  A hang check, not a speed test.
    data = one_page(text_ops("x"), more=[stream(b"\x00" * (128 * 1024) + b" 3 Tr")])
    started = time.monotonic()
    with pytest.raises(pdfium.Refused, match="invisible text"):  # found at the very end
        pdfium.scan(data, stream_cap=pdf_reader.STREAM_BYTES, content_budget=10_000_000)
    assert time.monotonic() - started < 20


def _shared_pdfs() -> list[Path]:
    found = []
    for folder in (ROOT / "demo_docs", ROOT / "tests" / "regressions", SHARED / "corpus" / "docs", SHARED / "realpdfs"):
        if folder.is_dir():
            found += sorted(folder.rglob("*.pdf"))
    return found


@pytest.mark.parametrize("path", _shared_pdfs(), ids=lambda path: path.name[:60])
def test_fast_path_matches_on_every_pdf_we_have(path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    fast, slow = _both(path, monkeypatch)
    assert fast == slow


def test_some_real_files_take_the_fast_path() -> None:
    # Without this the comparison above could pass with the fast path never taken.
    demo = sorted((ROOT / "demo_docs").rglob("*.pdf"))
    assert demo and all(all(_fast_pages(path)) for path in demo)
