"""PDF through pdfplumber, page by page.

Overprinted (fake-bold) characters are de-duplicated first.  Ruled tables found by
pdfplumber become table structure (one line per row, cells joined by ``" | "``); the rest
of the page is rebuilt into lines from its words, with a wide gap between two words kept
as three spaces so that form layouts ("Label      value") stay recognisable.  A PDF whose
pages carry no characters gets the status ``no_text_layer`` (images only) or
``suspect_empty``; it never looks like a successful read with every field empty.
"""

from __future__ import annotations

import logging
from pathlib import Path
from typing import Any

from ..errors import ReadFailure
from ..options import ExtractOptions
from ..types import Document, DocStatus
from .builder import TextBuilder

#: A gap wider than this many average character widths separates two "columns" of a line.
WIDE_GAP = 2.5
LINE_TOLERANCE = 3.0


class _LossCollector(logging.Handler):
    """Turns pdfminer's data-loss log records into document warnings."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.warnings: set[str] = set()

    def emit(self, record: logging.LogRecord) -> None:
        message = record.getMessage().lower()
        if "data-loss" in message or "corrupt" in message:
            self.warnings.add("stream_data_loss")
        elif "circular" in message:
            self.warnings.add("circular_xobject")


def read_pdf(path: Path, source: str, options: ExtractOptions) -> Document:
    password = options.pdf_password
    import pdfplumber  # lazy: pdfminer is slow to import

    if path.stat().st_size == 0:
        raise ReadFailure("failed", "empty_file", "the file is empty")
    collector = _LossCollector()
    pdfminer_log = logging.getLogger("pdfminer")
    pdfminer_log.addHandler(collector)
    try:
        try:
            pdf = pdfplumber.open(str(path), password=password or "")
        except Exception as exc:  # pdfminer raises many types on malformed files
            raise _classify(exc) from None
        with pdf:
            builder = TextBuilder()
            images = 0
            chars = 0
            if not pdf.pages:
                raise ReadFailure("failed", "no_pages", "the PDF has no pages")
            for number, page in enumerate(pdf.pages, start=1):
                builder.start_page()
                page = page.dedupe_chars()
                chars += len(page.chars)
                images += len(page.images)
                _add_page(builder, page, number)
    finally:
        pdfminer_log.removeHandler(collector)
    builder.warnings.extend(sorted(collector.warnings))
    status = DocStatus.OK
    reason = ""
    if chars == 0:
        status = DocStatus.NO_TEXT_LAYER if images else DocStatus.SUSPECT_EMPTY
        reason = "no_text_layer" if images else "suspect_empty"
    elif collector.warnings & {"stream_data_loss"}:
        status = DocStatus.PARTIAL
        reason = "stream_data_loss"
    return builder.build(source, "reader.pdf.v1", status=status, reason=reason)


def _classify(exc: BaseException) -> ReadFailure:
    names = {type(exc).__name__} | {type(arg).__name__ for arg in getattr(exc, "args", ()) if isinstance(arg, BaseException)}
    cause = exc.__cause__ or exc.__context__
    while cause is not None:
        names.add(type(cause).__name__)
        cause = cause.__cause__ or cause.__context__
    if names & {"PDFPasswordIncorrect", "PDFEncryptionError"}:
        return ReadFailure("needs_password", "encrypted", "the PDF is encrypted; a password is needed")
    return ReadFailure("failed", "pdf_unreadable", f"the PDF cannot be parsed ({type(exc).__name__})")


def _add_page(builder: TextBuilder, page: Any, number: int) -> None:
    try:
        tables = [t for t in page.find_tables() if t.bbox]
    except Exception:
        builder.warnings.append("tables_unreadable")
        tables = []
    boxes = [t.bbox for t in tables]
    items: list[tuple[float, int, Any]] = []
    for index, table in enumerate(tables):
        items.append((table.bbox[1], 1, ("table", table, index)))
    words = page.extract_words(x_tolerance=3, y_tolerance=3, keep_blank_chars=False)
    free = [w for w in words if not _inside(w, boxes)]
    for top, text in _lines(free):
        items.append((top, 0, ("line", text)))
    items.sort(key=lambda item: (item[0], item[1]))
    for _, _, payload in items:
        if payload[0] == "line":
            builder.add_line(payload[1])
        else:
            rows = payload[1].extract()
            builder.add_table([[cell or "" for cell in row] for row in rows], page=number)


def _inside(word: dict[str, Any], boxes: list[tuple[float, float, float, float]]) -> bool:
    x = (word["x0"] + word["x1"]) / 2
    y = (word["top"] + word["bottom"]) / 2
    return any(x0 <= x <= x1 and top <= y <= bottom for x0, top, x1, bottom in boxes)


def _lines(words: list[dict[str, Any]]) -> list[tuple[float, str]]:
    """Group words into lines by their top coordinate; keep wide gaps visible."""
    words = sorted(words, key=lambda w: (round(w["top"]), w["x0"]))
    rows: list[list[dict[str, Any]]] = []
    for word in words:
        if rows and abs(word["top"] - rows[-1][0]["top"]) <= LINE_TOLERANCE:
            rows[-1].append(word)
        else:
            rows.append([word])
    out = []
    for row in rows:
        row.sort(key=lambda w: w["x0"])
        pieces = [row[0]["text"]]
        for prev, word in zip(row, row[1:]):
            width = (prev["x1"] - prev["x0"]) / max(1, len(prev["text"]))
            gap = word["x0"] - prev["x1"]
            pieces.append("   " if gap > WIDE_GAP * width else " ")
            pieces.append(word["text"])
        out.append((row[0]["top"], "".join(pieces)))
    return out
