"""Frozen types that carry data from one stage to the next.

The pipeline only ever moves forward::

    path ──reader──► Document ──extractors──► Candidate* ──resolve──► FieldValue
         ──validate──► FieldValue (cast, checked) ──► DocumentResult ──► outputs

Invariants every stage may rely on:

* Every :class:`Span` is a pair of character offsets (``start`` inclusive, ``end``
  exclusive, counted in Python ``str`` code points) into ``Document.text`` of the document
  it came from.  ``Document.text[span.start:span.end]`` is the evidence, verbatim.
* Readers never return spaCy, lxml or pdfplumber objects; only these types.
* Every :class:`Candidate` names the exact, versioned extractor that produced it.
* Nothing here is mutated after construction; stages derive new values with
  :func:`dataclasses.replace`.
"""

from __future__ import annotations

import bisect
import datetime as _dt
from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any


class DocStatus(StrEnum):
    """How well a document could be read.  Listed for every input file in ``documents.csv``."""

    OK = "ok"  #: read completely
    PARTIAL = "partial"  #: read, but a feature failed or data was lost; see warnings
    NO_TEXT_LAYER = "no_text_layer"  #: a PDF whose pages are images only (a scan)
    SUSPECT_EMPTY = "suspect_empty"  #: declared content decoded to nothing, without an error
    NEEDS_PASSWORD = "needs_password"  #: encrypted; no (or a wrong) password was given
    FAILED = "failed"  #: not read at all; ``reason`` holds the reason code

    @property
    def readable(self) -> bool:
        """True when the document produced text that extraction can use."""
        return self in (DocStatus.OK, DocStatus.PARTIAL)


class ValueStatus(StrEnum):
    """The status of one (document, field) value in ``values.csv``."""

    OK = "ok"  #: extracted, valid, confidence at or above ``review_below``
    REVIEW = "review"  #: a person should check it (low confidence, ambiguity, near miss)
    MISSING = "missing"  #: the document does not state a value
    INVALID = "invalid"  #: a value was found but fails the schema's type or constraints


@dataclass(frozen=True, slots=True)
class Span:
    """Character offsets ``[start, end)`` into ``Document.text``."""

    start: int
    end: int

    def __post_init__(self) -> None:
        if not 0 <= self.start <= self.end:
            raise ValueError(f"bad span {self.start}..{self.end}")

    def __len__(self) -> int:
        return self.end - self.start

    def contains(self, other: Span) -> bool:
        return self.start <= other.start and other.end <= self.end

    def overlaps(self, other: Span) -> bool:
        return self.start < other.end and other.start < self.end


@dataclass(frozen=True, slots=True)
class Table:
    """A table found by the reader: rows of cells, each cell a span of the text."""

    rows: tuple[tuple[Span, ...], ...]
    page: int | None = None


@dataclass(frozen=True, slots=True)
class Address:
    """One mailbox of an address header (From, To, Cc, ...), decoded per RFC 2047."""

    name: str
    email: str
    name_span: Span | None
    email_span: Span | None


@dataclass(frozen=True, slots=True)
class Header:
    """A structured header block (email headers).  ``span`` covers the decoded value."""

    name: str
    span: Span
    addresses: tuple[Address, ...] = ()
    date: _dt.datetime | None = None


@dataclass(frozen=True, slots=True)
class Region:
    """A stretch of text with a role that changes how extractors treat it.

    ``kind`` is ``"quoted"`` (a quoted reply), ``"forwarded"`` (a forwarded message with its
    own headers), ``"attachment"``, or ``"annotation"`` (a PDF comment's text, after its
    page).  Fields describe the document itself, so values inside quoted, forwarded and
    attached text are evidence of something else; annotation text counts like page text.
    """

    kind: str
    span: Span


@dataclass(frozen=True)
class Document:
    """A document as text with offsets, plus the structure its reader saw."""

    source: str  #: path relative to the input folder, forward slashes
    text: str
    lines: tuple[Span, ...] = ()
    tables: tuple[Table, ...] = ()
    headers: tuple[Header, ...] = ()
    regions: tuple[Region, ...] = ()
    page_starts: tuple[int, ...] = ()  #: offset of the first character of each page
    reader: str = ""
    encoding: str | None = None
    encoding_guessed: bool = False
    status: DocStatus = DocStatus.OK
    reason: str = ""  #: reason code when ``status`` is not ok
    note: str = ""  #: short human text for the reason; never document content
    warnings: tuple[str, ...] = ()
    sha256: str = ""  #: of the file's bytes: the document's identity

    @property
    def pages(self) -> int | None:
        return len(self.page_starts) or None

    def page_of(self, offset: int) -> int | None:
        """1-based page number of a character offset, or None when the format has no pages."""
        if not self.page_starts:
            return None
        return max(1, bisect.bisect_right(self.page_starts, offset))

    def region_of(self, span: Span) -> str | None:
        """Kind of the region that contains ``span``, if any."""
        for region in self.regions:
            if region.span.start <= span.start < region.span.end:
                return region.kind
        return None

    def header(self, name: str) -> Header | None:
        lowered = name.lower()
        for header in self.headers:
            if header.name.lower() == lowered:
                return header
        return None

    def snippet(self, span: Span, width: int = 40) -> str:
        """The text around ``span`` on one line, for reviewers."""
        start = max(0, span.start - width)
        end = min(len(self.text), span.end + width)
        return " ".join(self.text[start:end].split())


@dataclass(frozen=True, slots=True)
class Alternative:
    """Another value a reviewer may choose instead of the one picked."""

    value: Any
    score: float
    span: Span | None = None


@dataclass(frozen=True)
class Candidate:
    """One piece of evidence for a field's value, found by one extractor.

    ``value`` is already normalised (``datetime.date``, ``Decimal``, ``bool``, canonical
    ``str``); ``None`` with the flag ``"stated_missing"`` means the document says the value
    is unknown or pending.  ``score`` (0..1) is the strength of this evidence alone.
    """

    field: str
    value: Any
    raw: str
    span: Span
    extractor: str
    score: float
    evidence: tuple[str, ...] = ()
    flags: frozenset[str] = frozenset()
    facets: tuple[tuple[str, str], ...] = ()  #: e.g. (("period", "hour"),) on money
    alternatives: tuple[Alternative, ...] = ()

    def facet(self, name: str) -> str | None:
        for key, value in self.facets:
            if key == name:
                return value
        return None


@dataclass(frozen=True)
class FieldValue:
    """The resolved (and later validated) value of one field in one document."""

    field: str
    value: Any
    confidence: float
    status: ValueStatus
    span: Span | None = None
    page: int | None = None
    snippet: str = ""
    raw: str = ""
    extractor: str = ""
    reason: str = ""
    evidence: tuple[str, ...] = ()
    alternatives: tuple[Alternative, ...] = ()


@dataclass(frozen=True)
class DocumentResult:
    """Everything the outputs need to know about one input file."""

    source: str
    sha256: str
    status: DocStatus
    reason: str = ""
    note: str = ""
    reader: str = ""
    encoding: str | None = None
    pages: int | None = None
    chars: int = 0
    warnings: tuple[str, ...] = ()
    seconds: float = 0.0
    values: tuple[FieldValue, ...] = field(default_factory=tuple)

    def value(self, name: str) -> FieldValue | None:
        for item in self.values:
            if item.field == name:
                return item
        return None
