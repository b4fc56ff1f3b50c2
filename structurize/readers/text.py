"""Plain text (.txt) and Markdown (.md).  Markdown pipe tables are kept as structure.

A file larger than ``limits.text_bytes`` is ``failed: too_large``, found without reading it
whole (catalogue T5).
"""

from __future__ import annotations

import re
from pathlib import Path

from ..options import ExtractOptions
from ..types import Document, Span, Table
from .builder import TextBuilder
from .decode import decode_bytes, read_limited

_TABLE_RULE = re.compile(r"^\s*\|?\s*:?-{2,}:?\s*(\|\s*:?-{2,}:?\s*)*\|?\s*$")


def read_text(path: Path, source: str, options: ExtractOptions) -> Document:
    return _read(path, source, options, reader="reader.text.v1", markdown=False)


def read_markdown(path: Path, source: str, options: ExtractOptions) -> Document:
    return _read(path, source, options, reader="reader.markdown.v1", markdown=True)


def _read(path: Path, source: str, options: ExtractOptions, *, reader: str, markdown: bool) -> Document:
    decoded = decode_bytes(read_limited(path, options.limits.text_bytes), options.encodings)
    builder = TextBuilder()
    builder.add_text(decoded.text)
    doc = builder.build(
        source,
        reader,
        encoding=decoded.encoding,
        encoding_guessed=decoded.guessed,
        warnings=decoded.warnings,
    )
    if markdown:
        doc = _with_tables(doc)
    return doc


def _with_tables(doc: Document) -> Document:
    """Find pipe tables: runs of lines that contain ``|`` around a ``---`` rule line."""
    from dataclasses import replace

    tables: list[Table] = []
    run: list[Span] = []
    for line in (*doc.lines, None):
        text = doc.text[line.start : line.end] if line is not None else ""
        if line is not None and "|" in text:
            run.append(line)
            continue
        if len(run) >= 2 and any(_TABLE_RULE.match(doc.text[s.start : s.end]) for s in run):
            rows = tuple(
                _cells(doc.text, span) for span in run if not _TABLE_RULE.match(doc.text[span.start : span.end])
            )
            rows = tuple(row for row in rows if any(len(cell) for cell in row))
            if rows:
                tables.append(Table(rows=rows))
        run = []
    return replace(doc, tables=tuple(tables)) if tables else doc


def _cells(text: str, line: Span) -> tuple[Span, ...]:
    body = text[line.start : line.end]
    left = 0
    right = len(body)
    stripped = body.strip()
    if stripped.startswith("|"):
        left = body.index("|") + 1
    if stripped.endswith("|") and len(stripped) > 1:
        right = body.rindex("|")
    cells = []
    cursor = left
    for piece in body[left:right].split("|"):
        start = cursor + (len(piece) - len(piece.lstrip()))
        end = cursor + len(piece.rstrip())
        cells.append(Span(line.start + start, line.start + max(start, end)))
        cursor += len(piece) + 1
    return tuple(cells)
