"""Word documents (.docx) through python-docx: paragraphs and tables in document order."""

from __future__ import annotations

import zipfile
from pathlib import Path

from ..errors import ReadFailure
from ..options import ExtractOptions
from ..types import Document
from .builder import TextBuilder

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
#: Check-box glyphs Word users type or that content controls render.
_TICKS = {"☒": "[x]", "☑": "[x]", "✓": "[x]", "✔": "[x]", "☐": "[ ]"}


def _ticks(text: str) -> str:
    for glyph, shown in _TICKS.items():
        if glyph in text:
            text = text.replace(glyph, shown)
    return text


def read_docx(path: Path, source: str, options: ExtractOptions) -> Document:
    head = path.read_bytes()[:8]
    if head == OLE_MAGIC:
        raise ReadFailure("needs_password", "encrypted_office", "password-protected or legacy Office file")
    if not zipfile.is_zipfile(path):
        raise ReadFailure("failed", "not_a_zip", "not a .docx (zip) container")
    import docx  # lazy: python-docx pulls in lxml

    try:
        document = docx.Document(str(path))
    except (KeyError, ValueError, zipfile.BadZipFile) as exc:
        raise ReadFailure("failed", "bad_docx", type(exc).__name__) from None
    builder = TextBuilder()
    for block in document.iter_inner_content():
        if hasattr(block, "rows"):
            builder.add_table([_row_cells(row) for row in block.rows])
            continue
        text = _ticks(block.text)
        style = (block.style.name if block.style is not None else "") or ""
        if not text.strip():
            builder.blank()
            continue
        if style.lower().startswith("list"):
            text = "- " + text
        builder.add_text(text)
        if style.lower().startswith(("heading", "title")):
            builder.blank()
    return builder.build(source, "reader.docx.v1")


def _row_cells(row: object) -> list[str]:
    cells: list[str] = []
    seen: set[int] = set()
    for cell in row.cells:  # type: ignore[attr-defined]
        key = id(cell._tc)  # merged cells repeat the same element
        if key in seen:
            continue
        seen.add(key)
        parts = [_ticks(p.text).strip() for p in cell.paragraphs if p.text.strip()]
        cells.append(" / ".join(parts))
    return cells
