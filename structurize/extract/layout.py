"""Label/value structure of a document: ``Label: value`` lines, tables, form layouts, headers.

Every pair records where its label and its value are, how sure we are that this *is* a
label/value structure (``strength``), and what kind of layout it came from.  Matching the
labels against field cues happens later, in the extractors.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from ..types import Document, Span
from .text import norm

#: Markers at the start of a line that are not part of a label.
_LEAD = re.compile(r"^(?:\s*(?:[-*•·▪◦]|\d{1,2}[.)]|#{1,6}|>|\|)\s+|\s*\*\*|\s*__|\s+)")
#: Wide gaps and vertical bars between two pairs on one line; a middle dot or a blank to
#: fill in ("Name: ______ Signed: ______") separates pairs too, but only before a label.
_SEGMENT_GAP = re.compile(r"(?P<blank>\s*_{3,}\s*)|(?P<dot>\s+[·•]\s+)|\s{3,}|\s+\|\s+|\t+")
#: A label without a colon that still starts a second pair after a wide gap: an identifier
#: label ("Staff no.", "Emp #", "Payroll ID") and a value holding a digit ("Staff no. 4471").
_KEYED = re.compile(
    r"(?P<label>(?:[^\W\d_][\w'’&/-]*\.?\s+){0,3}?(?:no\.?|nr\.?|num\.?|#|number|id|ref\.?|code))\s+(?P<value>[\w#-]*\d[\w/#.-]*)\s*$",
    re.IGNORECASE,
)
_LABEL_OK = re.compile(r"^[^\W\d_][\w\s&/'’().#,+-]*(?<!\d)$")
_COLON = re.compile(r"\s*(?:\*\*|__)?\s*(?:(?<!\d):(?!\d)|=|\s\.{3,}|\.{4,})\s*(?:\*\*|__)?\s*")  # ":", "=", dot leaders
_DASH = re.compile(r"\s+[-–—]\s+")
_SENTENCE_END = re.compile(r"[.!?]\s*$")
#: A short question and its answer on one line.
_QUESTION = re.compile(r"\s*(?P<label>[^?.!:\n]{3,60}?)\?\s+(?P<value>\S)")
MAX_LABEL_WORDS = 6
#: Column headings that say what kind of value a cell holds, not which field it is.
KIND_HEADINGS = frozenset(
    "name names date dates signature signed status detail details value values response answer comments notes note info information".split()
)


@dataclass(frozen=True, slots=True)
class LabelPair:
    label: str  #: normalised label text (see :func:`structurize.extract.text.norm`)
    label_span: Span
    value_span: Span
    source: str  #: ``line``, ``gap``, ``next_line``, ``dash``, ``question``, ``table``, ``column`` or ``header``
    strength: float
    column: str = ""  #: for tables with a header row: the value's column heading, normalised
    rows: int = 1  #: for ``column`` pairs: how many rows the column heading stands over


def _strip_edges(text: str, start: int, end: int) -> tuple[int, int]:
    while start < end and text[start] in " \t*_`#>|":
        start += 1
    while end > start and text[end - 1] in " \t*_`|":
        end -= 1
    return start, end


def _label_ok(label: str) -> bool:
    label = label.strip(" *_")
    words = label.split()
    return bool(words) and len(words) <= MAX_LABEL_WORDS and len(label) <= 60 and bool(_LABEL_OK.match(label))


def find_pairs(doc: Document) -> list[LabelPair]:
    text = doc.text
    pairs: list[LabelPair] = []
    table_lines = {
        (row[0].start if row else -1) for table in doc.tables for row in table.rows
    }
    for header in doc.headers:
        label_start = max(0, header.span.start - len(header.name) - 2)
        pairs.append(LabelPair(norm(header.name), Span(label_start, label_start + len(header.name)), header.span, "header", 1.0))
    header_ends = {header.span.end for header in doc.headers}
    lines = [line for line in doc.lines if line.end not in header_ends or not doc.headers]
    for index, line in enumerate(lines):
        if line.start in table_lines or _in_table(doc, line):
            continue
        pairs.extend(_line_pairs(text, line, index, lines))
    for table in doc.tables:
        pairs.extend(_table_pairs(text, table.rows))
    return pairs


def _in_table(doc: Document, line: Span) -> bool:
    for table in doc.tables:
        for row in table.rows:
            if row and row[0].start >= line.start and row[-1].end <= line.end:
                return True
    return False


def _line_pairs(text: str, line: Span, index: int, lines: list[Span]) -> list[LabelPair]:
    raw = text[line.start : line.end]
    lead = _LEAD.match(raw)
    offset = line.start + (lead.end() if lead else 0)
    body_end = line.end
    if offset >= body_end:
        return []
    segments: list[tuple[int, int, str]] = []  # (start, end, what separates it from the one before)
    cursor, before, blanks = offset, "", False
    for gap in _SEGMENT_GAP.finditer(text, offset, body_end):
        kind = "blank" if gap.group("blank") else "dot" if gap.group("dot") else "gap"
        blanks = blanks or kind == "blank"
        if gap.start() > cursor:
            segments.append((cursor, gap.start(), before))
            before = kind
        elif kind == "blank" or not before:
            before = kind
        cursor = gap.end()
    if cursor < body_end:
        segments.append((cursor, body_end, before))
    if blanks and not any(_COLON.search(text, start, end) for start, end, _ in segments):
        segments = [(offset, body_end, "")]  # a blank inside a sentence, not a form line
    out: list[LabelPair] = []
    current: list[object] | None = None  # [label, label_span, value_start, value_end, source, strength]
    pending_label: tuple[int, int] | None = None
    for seg_start, seg_end, before in segments:
        segment = text[seg_start:seg_end]
        colon = _COLON.search(segment)
        if colon and colon.start() > 0 and _label_ok(segment[: colon.start()]):
            if current:
                out.append(_pair(text, current))
            label_start, label_end = _strip_edges(text, seg_start, seg_start + colon.start())
            value_start = seg_start + colon.end()
            current = [label_start, label_end, value_start, seg_end, "line", 1.0]
            pending_label = None
            continue
        keyed = _KEYED.match(segment) if before == "gap" and current is not None and current[2] < current[3] else None
        if keyed and _label_ok(keyed.group("label")):
            # "Leaving: Ana Ruiz   Staff no. 4471": a second pair after the gap
            out.append(_pair(text, current))
            label_start, label_end = _strip_edges(text, seg_start, seg_start + keyed.end("label"))
            current = [label_start, label_end, seg_start + keyed.start("value"), seg_end, "gap", 0.8]
            continue
        if current is not None:
            if before == "blank" and current[2] >= current[3]:
                continue  # the blank was the value; this is text after it
            if current[2] >= current[3]:  # the label had no value yet: this segment is it
                current[2] = seg_start
            current[3] = seg_end
            continue
        if before == "dot" or before == "blank":
            continue
        if pending_label is None and len(segments) > 1 and _label_ok(segment) and not _SENTENCE_END.search(segment):
            pending_label = (seg_start, seg_end)
            continue
        if pending_label is not None:
            current = [pending_label[0], pending_label[1], seg_start, seg_end, "gap", 0.8]
            pending_label = None
    if current:
        out.append(_pair(text, current))
    if out:
        last = out[-1]
        if len(last.value_span) == 0 and not blanks:  # "Label:" alone: the value is on the next line
            value = _next_value_line(text, index, lines)
            if value is not None:
                out[-1] = LabelPair(last.label, last.label_span, value, "next_line", _below_strength(text, value, 0.85))
        return out
    body = text[offset:body_end].strip()
    dash = _DASH.search(text, offset, body_end)
    if dash and _label_ok(text[offset : dash.start()]) and len(text[offset : dash.start()].split()) <= 4:
        label_start, label_end = _strip_edges(text, offset, dash.start())
        value_start, value_end = _strip_edges(text, dash.end(), body_end)
        if value_end > value_start:
            return [LabelPair(norm(text[label_start:label_end]), Span(label_start, label_end), Span(value_start, value_end), "dash", 0.85)]
    asked = _QUESTION.match(text, offset, body_end)
    if asked and _label_ok(asked.group("label")) and not body.endswith("?"):
        # "Would we rehire? Yes, without hesitation": a question and its answer on one line
        label_start, label_end = _strip_edges(text, asked.start("label"), asked.end("label"))
        value_start, value_end = _strip_edges(text, asked.start("value"), body_end)
        if value_end > value_start:
            return [LabelPair(norm(text[label_start:label_end]), Span(label_start, label_end), Span(value_start, value_end), "question", 0.9)]
    question = body.endswith("?") and len(body.split()) <= 8 and _label_ok(body[:-1])
    if body and (question or (len(body.split()) <= 4 and _label_ok(body) and not _SENTENCE_END.search(body))):
        value = _next_value_line(text, index, lines)
        if value is not None:
            label_start, label_end = _strip_edges(text, offset, body_end)
            strength = _below_strength(text, value, 0.8)
            return [LabelPair(norm(text[label_start:label_end].rstrip("?")), Span(label_start, label_end), value, "next_line", strength)]
    return []


def _below_strength(text: str, value: Span, short: float) -> float:
    """A label above a short value is a form layout; above a paragraph, a heading."""
    return short if len(text[value.start : value.end].split()) <= 10 else 0.6


def _pair(text: str, current: list[object]) -> LabelPair:
    label_start, label_end, value_start, value_end, source, strength = current
    assert isinstance(label_start, int) and isinstance(label_end, int)
    assert isinstance(value_start, int) and isinstance(value_end, int)
    value_start, value_end = _strip_edges(text, value_start, max(value_start, value_end))
    return LabelPair(
        norm(text[label_start:label_end]),
        Span(label_start, label_end),
        Span(value_start, max(value_start, value_end)),
        str(source),
        float(strength),  # type: ignore[arg-type]
    )


def _next_value_line(text: str, index: int, lines: list[Span]) -> Span | None:
    """The next non-empty line, unless it is itself a ``Label: value`` line."""
    for line in lines[index + 1 : index + 3]:
        start, end = _strip_edges(text, line.start, line.end)
        lead = _LEAD.match(text, start, end)
        if lead:
            start = lead.end()
        if end > start:
            colon = _COLON.search(text, start, end)
            if colon and colon.start() > start and _label_ok(text[start : colon.start()]) and len(text[start : colon.start()].split()) <= 4:
                return None
            return Span(start, end)
    return None


def _table_pairs(text: str, rows: tuple[tuple[Span, ...], ...]) -> list[LabelPair]:
    out: list[LabelPair] = []
    width = max(len(row) for row in rows)
    # A two-column table is a list of label/value rows; a wider one has a heading row.
    header = rows[0] if len(rows) > 1 and width >= 3 else ()
    header_labels = [norm(text[cell.start : cell.end]) for cell in header]
    for row_index, row in enumerate(rows):
        if len(row) < 2:
            continue
        first = text[row[0].start : row[0].end]
        if not _label_ok(first) and not first.strip():
            continue
        label = norm(first)
        for column, cell in enumerate(row[1:], start=1):
            column_label = header_labels[column] if row_index and column < len(header_labels) else ""
            # a wider table's cell is named by its row and column together; under a heading
            # that only says what kind of value it is ("Name", "Date") the row names it alone
            strength = 1.0 if width == 2 or column_label in KIND_HEADINGS else 0.9
            if len(cell) or width == 2:
                out.append(LabelPair(label, row[0], cell, "table", strength, column_label))
    if header and len(rows) >= 2:
        single = len(rows) == 2
        for column, head in enumerate(header):
            if not header_labels[column] or not _label_ok(text[head.start : head.end]):
                continue
            for row in rows[1:]:
                if column < len(row) and len(row[column]):
                    out.append(LabelPair(header_labels[column], head, row[column], "column", 0.85 if single else 0.5, rows=len(rows) - 1))
    return out
