"""Assemble a :class:`Document`: append text line by line and record its structure."""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Sequence

from ..types import Document, Header, Region, Span, Table

#: Joins the cells of a table row on its one line of text.
CELL_SEPARATOR = " | "


#: Lone surrogates (from ``surrogateescape`` decoding upstream): no encoder accepts them.
SURROGATES = re.compile("[\ud800-\udfff]")
#: Characters that change how text *looks* without being visible: bidirectional embeddings,
#: overrides and isolates, and zero-width characters ("Trojan Source", CVE-2021-42574;
#: Unicode TR #36).  They are kept, so that spans stay verbatim, and flagged.
UNICODE_CONTROLS = re.compile("[\u061c\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069]")


def clean(text: str) -> str:
    """NFC-normalise, drop characters that only hide text (NUL, zero-width no-break), and
    replace lone surrogates with U+FFFD."""
    if SURROGATES.search(text):
        text = SURROGATES.sub("\ufffd", text)
    text = unicodedata.normalize("NFC", text)
    return text.replace("\x00", "").replace("\ufeff", "")


class TextBuilder:
    """Collects text with offsets.  Every ``add_*`` returns spans into the final text."""

    def __init__(self) -> None:
        self._parts: list[str] = []
        self._length = 0
        self.lines: list[Span] = []
        self.tables: list[Table] = []
        self.headers: list[Header] = []
        self.regions: list[Region] = []
        self.page_starts: list[int] = []
        self.warnings: list[str] = []

    def _warn(self, name: str) -> None:
        if name not in self.warnings:
            self.warnings.append(name)

    @property
    def offset(self) -> int:
        return self._length

    def text(self) -> str:
        """The text appended so far."""
        return "".join(self._parts)

    def _append(self, text: str) -> None:
        self._parts.append(text)
        self._length += len(text)

    def add_line(self, text: str) -> Span:
        """Append one line (newlines inside ``text`` are turned into spaces)."""
        if SURROGATES.search(text):
            self._warn("invalid_characters")
        text = clean(text).replace("\r", " ").replace("\n", " ")
        if UNICODE_CONTROLS.search(text):
            self._warn("unicode_controls")
        start = self._length
        self._append(text + "\n")
        span = Span(start, start + len(text))
        self.lines.append(span)
        return span

    def add_text(self, text: str) -> Span:
        """Append a block of text, one line per ``\\n``."""
        start = self._length
        lines = clean(text).split("\n")
        if len(lines) > 1 and lines[-1] == "":
            lines.pop()  # a final newline ends the last line; it does not start a new one
        for line in lines:
            self.add_line(line)
        return Span(start, self._length)

    def blank(self) -> None:
        """End a paragraph with an empty line (never two in a row)."""
        if self._parts and not self._parts[-1].endswith("\n\n") and self._length:
            self.add_line("")

    def add_table(self, rows: Sequence[Sequence[str]], page: int | None = None) -> Table:
        """Append a table, one line per row, cells joined by :data:`CELL_SEPARATOR`."""
        spans: list[tuple[Span, ...]] = []
        for row in rows:
            cells = [" ".join(clean(cell or "").split()) for cell in row]
            if not any(cells):
                continue
            line_start = self._length
            cursor = line_start
            cell_spans = []
            for index, cell in enumerate(cells):
                if index:
                    cursor += len(CELL_SEPARATOR)
                cell_spans.append(Span(cursor, cursor + len(cell)))
                cursor += len(cell)
            self.add_line(CELL_SEPARATOR.join(cells))
            spans.append(tuple(cell_spans))
        table = Table(rows=tuple(spans), page=page)
        if spans:
            self.tables.append(table)
        return table

    def start_page(self) -> None:
        self.page_starts.append(self._length)

    def mark(self, kind: str, start: int, end: int | None = None) -> None:
        end = self._length if end is None else end
        if end > start:
            self.regions.append(Region(kind, Span(start, end)))

    def build(self, source: str, reader: str, **extra: object) -> Document:
        text = self.text()
        warnings = tuple(dict.fromkeys([*self.warnings, *extra.pop("warnings", ())]))  # type: ignore[misc]
        return Document(
            source=source,
            text=text,
            lines=tuple(self.lines),
            tables=tuple(self.tables),
            headers=tuple(self.headers),
            regions=tuple(self.regions),
            page_starts=tuple(self.page_starts),
            reader=reader,
            warnings=warnings,
            **extra,  # type: ignore[arg-type]
        )
