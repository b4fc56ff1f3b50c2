"""PDF through pdfplumber, page by page, with the checks a hostile or broken file needs.

Overprinted (fake-bold) characters are de-duplicated first.  Ruled tables found by
pdfplumber become table structure (one line per row, cells joined by ``" | "``); the rest
of the page is rebuilt into lines from its words, with a wide gap between two words kept
as three spaces so that form layouts ("Label      value") stay recognisable.  A PDF whose
pages carry no characters gets the status ``no_text_layer`` (images only) or
``suspect_empty``; it never looks like a successful read with every field empty.  With
``options.ocr`` and Tesseract installed, pages without characters are read by OCR instead
(:mod:`structurize.readers.ocr`; warning ``ocr``).

Before and while a file is parsed (pdfminer.six issues #532, #879, #1113 and pdfplumber #193 on
hangs, memory and recursion; measured with pdfplumber 0.11.10 / pdfminer.six 20260107;
catalogue P1–P11 in tests/CATALOGUE.md):

* a zero-byte file is ``failed: empty_file`` and a file without the ``%PDF-`` signature in
  its first KiB is ``failed: wrong_type`` ("looks like html"), before pdfminer sees it;
* a missing end-of-file marker is remembered: a file that opens anyway is ``partial:
  pdf_truncated``;
* encryption: ``needs_password: encrypted`` without a password, ``needs_password:
  wrong_password`` when the given one fails (an empty user password is still tried; the
  password never appears in a message);
* the page tree is walked without recursion before any page is processed: a loop is
  ``failed: pdf_structure`` and more than ``limits.pdf_pages`` pages ``failed:
  too_many_pages``;
* Flate streams are inflated with a cap (:data:`STREAM_BYTES`): a decompression bomb is
  ``failed: stream_too_large`` instead of filling the worker's memory;
* characters are counted while pdfminer interprets a page, so an operator flood stops at
  ``limits.chars`` (``failed: too_many_chars``) instead of building millions of objects;
* ``RecursionError`` (deeply nested objects) is ``failed: pdf_structure``; an error on one
  page of several makes the document ``partial: page_unreadable``.

A feature that fails while the text is read fails only that feature (measured with pdfplumber
0.11.10: the annotations of real #14 and #23 of the realpdfs folder's manifest raise while
their text reads fine):
the document is ``partial`` with a warning of the same name as its reason —
``image_only_pages`` (some pages are images only and were not read by OCR: their text is
missing), ``annots_unreadable`` (the page's annotations could not be read, e.g. they refer
back to each other), ``tables_unreadable`` (table detection failed; the table's text is
kept as plain lines) and ``metadata_unreadable`` (the document information dictionary).

Annotations: the text (``/Contents``) of the markup annotations of a page read by
pdfplumber — comments, notes, highlights, free text, stamps — follows the page's own text,
one line per line of the comment, and is marked as a region of kind ``"annotation"``
(:data:`ANNOTATION_REGION`).  Links, pop-ups (they repeat their parent's text) and form
widgets (``form_fields_not_read``) are not read.  The fast path leaves every page with
annotations to pdfplumber.

pdfminer and pdfplumber report data loss through ``logging``.  A handler is attached for
each document and their loggers stop propagating meanwhile, so that nothing they log
(which may quote the file) reaches stderr or the application's logs; what matters becomes
a warning on the document (``stream_data_loss``, ``circular_xobject``,
``metadata_unreadable``).
"""

from __future__ import annotations

import contextlib
import logging
import zlib
from collections.abc import Iterator
from dataclasses import dataclass, field
from operator import itemgetter
from pathlib import Path
from typing import Any

from ..errors import ReadFailure
from ..options import PASSWORD_ENV, ExtractOptions
from ..types import Document, DocStatus
from .builder import TextBuilder

#: A gap wider than this many average character widths separates two "columns" of a line.
WIDE_GAP = 2.5
LINE_TOLERANCE = 3.0
#: Largest inflated size of one Flate stream (100 MB; common practice, no source).
STREAM_BYTES = 100 * 1024 * 1024
#: The ``%PDF-`` signature may follow some junk, within the first KiB (ISO 32000 §7.5.2 note).
SIGNATURE_WINDOW = 1024
#: ``%%EOF`` is looked for in this many bytes at the end of the file.
TAIL_WINDOW = 2048
#: Share of the page an image must cover for the page to count as a scan.
SCAN_COVERAGE = 0.85
#: Region kind of annotation text (comments, notes) appended after a page's own text.
ANNOTATION_REGION = "annotation"
#: Annotation subtypes whose ``/Contents`` is not read: links and pop-ups (a pop-up shows
#: its parent's text), form widgets (their values are AcroForm data), and page furniture.
_ANNOTS_SKIPPED = frozenset({"Link", "Popup", "Widget", "PrinterMark", "TrapNet", "Watermark", "Screen", "Movie", "3D", "RichMedia"})
#: Deepest chain of objects an annotation may refer to (ordinary ones stay under 20; a cycle
#: never ends) and the objects resolved for the annotations of one document.
ANNOT_DEPTH = 200
ANNOT_OBJECTS = 1_000_000
#: Reason codes of a partial document, most important first; only the first one found is
#: the document's reason, every one is a warning.
_PARTIAL_FEATURES = ("image_only_pages", "annots_unreadable", "tables_unreadable", "metadata_unreadable")
_LOGGERS = ("pdfminer", "pdfplumber")


# --- capped inflate ------------------------------------------------------------------------


class _StreamTooLarge(Exception):
    """A Flate stream inflates past the cap."""


class _Inflate:
    """Stands in for the ``zlib`` module inside ``pdfminer.pdftypes``: the same calls, capped.

    pdfminer inflates every Flate stream with ``zlib.decompress(data)`` in one go (and
    retries corrupt ones byte by byte through ``zlib.decompressobj``), so a 260 KB file can
    ask for gigabytes.  Output past the cap raises :class:`_StreamTooLarge`, which is not a
    ``zlib.error``, so pdfminer does not swallow it.  Errors otherwise match ``zlib``'s.
    """

    error = zlib.error

    def __init__(self) -> None:
        self.cap = STREAM_BYTES

    def __getattr__(self, name: str) -> Any:
        return getattr(zlib, name)

    def decompress(self, data: bytes, *args: Any, **kwargs: Any) -> bytes:
        if args or kwargs:
            return zlib.decompress(data, *args, **kwargs)
        inflater = zlib.decompressobj()
        out = inflater.decompress(data, self.cap + 1)
        if len(out) > self.cap:
            raise _StreamTooLarge()
        if not inflater.eof:
            raise zlib.error("Error -5 while decompressing data: incomplete or truncated stream")
        return out

    def decompressobj(self, *args: Any, **kwargs: Any) -> _CountingInflater:
        return _CountingInflater(zlib.decompressobj(*args, **kwargs), self.cap)


class _CountingInflater:
    def __init__(self, inner: Any, cap: int) -> None:
        self.inner = inner
        self.left = cap

    def __getattr__(self, name: str) -> Any:
        return getattr(self.inner, name)

    def decompress(self, data: bytes, max_length: int = 0) -> bytes:
        out = self.inner.decompress(data, max_length or self.left + 1)
        self.left -= len(out)
        if self.left < 0 or self.inner.unconsumed_tail:
            raise _StreamTooLarge()
        return out


_INFLATE = _Inflate()


def _install_inflate_cap() -> None:
    import pdfminer.pdftypes

    if pdfminer.pdftypes.zlib is not _INFLATE:
        pdfminer.pdftypes.zlib = _INFLATE  # type: ignore[assignment]


# --- logging ---------------------------------------------------------------------------------


class _LossCollector(logging.Handler):
    """Turns pdfminer's and pdfplumber's log records into document warnings (and keeps them quiet)."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.warnings: set[str] = set()

    def emit(self, record: logging.LogRecord) -> None:
        try:
            message = record.getMessage().lower()
        except Exception:  # a malformed record must not break the read
            return
        if "data-loss" in message or "corrupt" in message:
            self.warnings.add("stream_data_loss")
        elif "circular" in message:
            self.warnings.add("circular_xobject")
        elif "metadata" in message:
            self.warnings.add("metadata_unreadable")


@contextlib.contextmanager
def _quiet_logs() -> Iterator[_LossCollector]:
    collector = _LossCollector()
    saved = []
    for name in _LOGGERS:
        logger = logging.getLogger(name)
        saved.append((logger, logger.propagate, logger.level))
        logger.addHandler(collector)
        logger.propagate = False
        logger.setLevel(logging.WARNING)  # no debug records: they quote the file's objects
    try:
        yield collector
    finally:
        for logger, propagate, level in saved:
            logger.removeHandler(collector)
            logger.propagate = propagate
            logger.setLevel(level)


# --- pre-checks ------------------------------------------------------------------------------


_MAGIC = (
    (b"PK\x03\x04", "a zip archive"),
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF8", "a GIF image"),
    (b"II*\x00", "a TIFF image"),
    (b"MM\x00*", "a TIFF image"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "a legacy Office file"),
    (b"%!PS", "PostScript"),
    (b"{\\rtf", "RTF"),
)


def _looks_like(head: bytes) -> str:
    for magic, kind in _MAGIC:
        if head.startswith(magic):
            return kind
    lowered = head.lstrip(b"\xef\xbb\xbf \t\r\n").lower()
    if lowered.startswith((b"<!doctype html", b"<html")) or b"<html" in lowered[:512]:
        return "html"
    if lowered.startswith(b"<?xml") or lowered.startswith(b"<"):
        return "xml or html"
    if lowered.startswith((b"from:", b"received:", b"return-path:", b"mime-version:")):
        return "an email"
    if head and all(32 <= byte < 127 or byte in b"\t\r\n" for byte in head[:512]):
        return "text"
    return "an unknown format"


def _precheck(path: Path) -> bool:
    """Check the bytes before pdfminer: empty, wrong type.  True when the end marker is there."""
    size = path.stat().st_size
    if size == 0:
        raise ReadFailure("failed", "empty_file", "the file is empty")
    with path.open("rb") as handle:
        head = handle.read(SIGNATURE_WINDOW)
        handle.seek(max(0, size - TAIL_WINDOW))
        tail = handle.read(TAIL_WINDOW)
    if b"%PDF-" not in head:
        raise ReadFailure("failed", "wrong_type", f"not a PDF (looks like {_looks_like(head)})")
    return b"%%EOF" in tail


# --- reading ---------------------------------------------------------------------------------


def read_pdf(path: Path, source: str, options: ExtractOptions) -> Document:
    has_end = _precheck(path)
    with _quiet_logs() as collector:
        fast = _open_fast(path, options, has_end)
        result = None
        if fast is not None:
            try:
                result = _read_mixed(fast, path, options, has_end)
            except _Restart:
                pass  # pdfplumber reads the whole document
            finally:
                fast.close()
        if result is None:
            result = _read_plumber(path, options, has_end)
    builder, stats, warnings = result
    builder.warnings.extend(warnings)
    builder.warnings.extend(sorted(collector.warnings))
    return _finish(builder, source, stats, collector.warnings, has_end)


def _plumber_open(path: Path, options: ExtractOptions, has_end: bool) -> tuple[Any, list[str]]:
    import pdfplumber  # lazy: pdfminer is slow to import

    _install_inflate_cap()
    _INFLATE.cap = STREAM_BYTES
    return _open(pdfplumber, path, options, has_end)


def _read_plumber(path: Path, options: ExtractOptions, has_end: bool) -> tuple[TextBuilder, _Stats, list[str]]:
    """The whole document through pdfplumber."""
    pdf, warnings = _plumber_open(path, options, has_end)
    try:
        builder, stats = _read_pages(pdf, path, options)
    finally:
        _close(pdf)
    return builder, stats, warnings


def _close(pdf: Any) -> None:
    try:
        pdf.stream.close()  # not pdf.close(): it would enumerate every page first
    except Exception:
        pass


# --- the fast path: PDFium for ordinary pages (structurize/readers/pdfium.py) ------------------------

#: False sends every PDF through pdfplumber (the tests compare both paths).
FAST_PATH = True
#: Files larger than this are not read into memory for PDFium; pdfplumber reads them.
FAST_PATH_BYTES = 64 * 1024 * 1024


class _Restart(Exception):
    """pdfminer and PDFium disagree about the pages: read the whole document with pdfplumber."""


def _open_fast(path: Path, options: ExtractOptions, has_end: bool) -> Any:
    """A :class:`~structurize.readers.pdfium.FastDocument`, or None when pdfplumber reads it all."""
    if not FAST_PATH or not has_end:
        return None  # a missing end marker: pdfminer's recovery decides what is read
    from . import pdfium

    try:
        if path.stat().st_size > FAST_PATH_BYTES:
            return None
        data = path.read_bytes()
        found = pdfium.scan(data, stream_cap=STREAM_BYTES, content_budget=options.limits.chars)
        return pdfium.FastDocument.open(data, found, options.limits.pdf_pages)
    except Exception:  # noqa: BLE001 - refused, or anything unexpected: pdfplumber reads the file
        return None


class _Plumber:
    """pdfplumber for the pages of a fast-path document that PDFium leaves to it; opened lazily."""

    def __init__(self, path: Path, options: ExtractOptions, has_end: bool, stats: _Stats, pages: int) -> None:
        self.pdf, self.warnings = _plumber_open(path, options, has_end)
        try:
            count = _prepare(self.pdf, options.limits.pdf_pages, stats)
            if count is not None and count != pages:
                raise _Restart()  # pdfminer sees other pages than PDFium: pdfplumber reads them all
            self.pages = _page_objects(self.pdf)
        except BaseException:
            _close(self.pdf)
            raise
        self.next = 0

    def page_obj(self, index: int) -> Any:
        page_obj = None
        while self.next <= index:
            page_obj = next(self.pages, None)
            if page_obj is None:
                raise _Restart()
            self.next += 1
        return page_obj


def _read_mixed(fast: Any, path: Path, options: ExtractOptions, has_end: bool) -> tuple[TextBuilder, _Stats, list[str]]:
    """PDFium for the pages it reads as pdfplumber would, pdfplumber for the others."""
    stats = _Stats()
    builder = TextBuilder()
    ocr = _ocr_reader(path, options, builder)
    plumber: _Plumber | None = None
    doctop = 0.0
    try:
        for index in range(fast.pages):
            stats.pages += 1
            builder.start_page()
            try:
                page = fast.read_page(index)
            except Exception:  # noqa: BLE001 - pdfplumber reads the page instead
                page = None
            if page is not None:
                stats.chars += page.chars
                if stats.chars > options.limits.chars:
                    raise _too_many_chars(options.limits.chars)
                for _, text in sorted(_lines(page.words), key=itemgetter(0)):
                    builder.add_line(text)
                continue
            if plumber is None:
                plumber = _Plumber(path, options, has_end, stats, fast.pages)
            doctop = _read_one(builder, plumber.pdf, plumber.page_obj(index), doctop, stats, options, ocr)
    finally:
        if ocr is not None:
            ocr.close()
        if plumber is not None:
            _close(plumber.pdf)
    return builder, stats, plumber.warnings if plumber is not None else []


def _open(pdfplumber: Any, path: Path, options: ExtractOptions, has_end: bool) -> tuple[Any, list[str]]:
    """Open with the given password, then with the empty one; classify what goes wrong."""
    given = options.pdf_password or ""
    attempts = [given, ""] if given else [""]
    failure: BaseException | None = None
    for password in attempts:
        try:
            pdf = pdfplumber.open(str(path), password=password)
        except Exception as exc:  # noqa: BLE001 - pdfminer raises many types on malformed files
            failure = exc
            if not _is_password_error(exc):
                break
            continue
        warnings = []
        if getattr(pdf.doc, "encryption", None) is not None and not password:
            warnings.append("encrypted_empty_password")
        return pdf, warnings
    assert failure is not None
    raise _classify(failure, password_given=bool(given), has_end=has_end) from None


def _chain(exc: BaseException) -> Iterator[BaseException]:
    """The exception, the exceptions in its ``args`` (PdfminerException wraps them), its causes."""
    seen: set[int] = set()
    todo = [exc]
    while todo:
        item = todo.pop()
        if id(item) in seen:
            continue
        seen.add(id(item))
        yield item
        todo.extend(arg for arg in getattr(item, "args", ()) if isinstance(arg, BaseException))
        for linked in (item.__cause__, item.__context__):
            if linked is not None:
                todo.append(linked)


def _is_password_error(exc: BaseException) -> bool:
    return any(type(item).__name__ == "PDFPasswordIncorrect" for item in _chain(exc))


def _classify(exc: BaseException, *, password_given: bool = False, has_end: bool = True) -> ReadFailure:
    """A reason code for an exception out of pdfminer/pdfplumber.  Never quotes ``str(exc)``."""
    items = list(_chain(exc))
    for item in items:
        if isinstance(item, ReadFailure):
            return item
    names = {type(item).__name__ for item in items}
    text = " ".join(str(item) for item in items).lower()
    if any(isinstance(item, _StreamTooLarge) for item in items):
        return ReadFailure("failed", "stream_too_large", f"a compressed stream inflates past {_INFLATE.cap // (1024 * 1024)} MB")
    if any(isinstance(item, MemoryError) for item in items) or "unable to allocate" in text:
        return ReadFailure("failed", "memory_limit", "the PDF needs more memory than the limit")
    if "PDFPasswordIncorrect" in names:
        if password_given:
            return ReadFailure("needs_password", "wrong_password", "incorrect password")
        return ReadFailure(
            "needs_password", "encrypted", f"the PDF is encrypted; give its password with --pdf-password-file or {PASSWORD_ENV}"
        )
    if any(isinstance(item, RecursionError) for item in items) or "recursion" in text:
        return ReadFailure("failed", "pdf_structure", "the PDF's objects nest too deeply (recursion)")
    if "PDFEncryptionError" in names or ("PDFNotImplementedError" in names and "crypt" in text):
        return ReadFailure("failed", "pdf_unreadable", "the PDF uses an unsupported kind of encryption")
    inner = [item for item in items if type(item).__name__ != "PdfminerException"]
    cause = type(inner[0] if inner else exc).__name__
    truncated = "" if has_end else "; truncated: no end-of-file marker"
    return ReadFailure("failed", "pdf_unreadable", f"the PDF cannot be parsed ({cause}{truncated})")


@dataclass
class _Stats:
    """What the page loop saw, for the document's status."""

    pages: int = 0
    chars: int = 0
    images: int = 0
    failed_pages: int = 0
    failure: ReadFailure | None = None
    ocr_pages: int = 0
    image_only_pages: int = 0  #: pages with images or drawings and no characters (not OCR'd)
    form_values: int = 0  #: filled AcroForm fields
    annot_chars: int = 0  #: characters of annotation text (not page text: no status counts them)
    annots_failed: int = 0  #: pages whose annotations could not be read
    annot_objects: int = field(default_factory=lambda: ANNOT_OBJECTS)  #: objects left to resolve for annotations
    tables_failed: int = 0  #: pages where table detection failed


def _read_pages(pdf: Any, path: Path, options: ExtractOptions) -> tuple[TextBuilder, _Stats]:
    limit = options.limits.pdf_pages
    stats = _Stats()
    _prepare(pdf, limit, stats)
    builder = TextBuilder()
    ocr = _ocr_reader(path, options, builder)
    doctop = 0.0
    try:
        for page_obj in _page_objects(pdf):
            if stats.pages >= limit:
                raise _too_many_pages(limit)
            stats.pages += 1
            builder.start_page()
            doctop = _read_one(builder, pdf, page_obj, doctop, stats, options, ocr)
    finally:
        if ocr is not None:
            ocr.close()
    return builder, stats


def _prepare(pdf: Any, limit: int, stats: _Stats) -> int | None:
    """Before any page is read: check the page tree (its page count, or None) and count the
    filled form fields."""
    try:
        count = _check_page_tree(pdf.doc, limit)
        stats.form_values = _form_values(pdf.doc)
    except ReadFailure:
        raise
    except Exception as exc:  # noqa: BLE001
        raise _classify(exc) from None
    return count


def _page_objects(pdf: Any) -> Iterator[Any]:
    """pdfminer's pages in order; a broken page tree is classified, never raised raw."""
    from pdfminer.pdfpage import PDFPage

    pages = PDFPage.create_pages(pdf.doc)
    while True:
        try:
            page_obj = next(pages)
        except StopIteration:
            return
        except Exception as exc:  # noqa: BLE001 - a broken page tree
            raise _classify(exc) from None
        yield page_obj


def _read_one(builder: TextBuilder, pdf: Any, page_obj: Any, doctop: float, stats: _Stats, options: ExtractOptions, ocr: Any) -> float:
    """Page ``stats.pages`` through pdfplumber; returns the next page's top in the document."""
    from pdfplumber.page import Page

    page = None
    try:
        page = Page(pdf, page_obj, page_number=stats.pages, initial_doctop=doctop)
        doctop += page.height
        _read_page(builder, pdf, page, stats, options, ocr)
    except (ReadFailure, MemoryError):
        raise
    except Exception as exc:  # noqa: BLE001 - one broken page must not fail the others
        failure = _classify(exc)
        if failure.code in ("stream_too_large", "memory_limit", "too_many_chars"):
            raise failure from None
        stats.failed_pages += 1
        stats.failure = failure
    finally:
        if page is not None:
            page.close()  # drop the page's layout and caches before the next one
    return doctop


def _too_many_pages(limit: int) -> ReadFailure:
    return ReadFailure("failed", "too_many_pages", f"the PDF has more than {limit} pages (the limit)")


def _check_page_tree(doc: Any, limit: int) -> int | None:
    """Count the pages by walking the page tree without recursion, before reading any.

    A node that refers back to one of its ancestors is a loop (``failed: pdf_structure``);
    more than ``limit`` pages is ``failed: too_many_pages``.  A node reached twice by other
    paths is skipped, as pdfminer does.  None when the catalog has no page tree (pdfminer
    then scans every object for pages, and the page loop counts them).
    """
    from pdfminer.pdftypes import PDFObjRef, resolve1
    from pdfminer.psparser import LIT

    pages_type, page_type = LIT("Pages"), LIT("Page")
    root = doc.catalog.get("Pages")
    if root is None:
        return None
    ancestors: set[Any] = set()
    seen: set[Any] = set()
    stack: list[tuple[bool, Any]] = [(True, root)]
    leaves = 0
    nodes = 0
    while stack:
        entering, ref = stack.pop()
        if not entering:
            ancestors.discard(ref)
            continue
        key = ref.objid if isinstance(ref, PDFObjRef) else ref if isinstance(ref, int) else id(ref)
        if key in ancestors:
            raise ReadFailure("failed", "pdf_structure", "the page tree refers back to itself (a loop)")
        if key in seen:
            continue
        seen.add(key)
        node = doc.getobj(ref) if isinstance(ref, int) else resolve1(ref)
        if not isinstance(node, dict):
            continue
        nodes += 1
        if nodes > 4 * limit + 64:
            raise _too_many_pages(limit)
        kind = node.get("Type", node.get("type"))
        if kind is pages_type and "Kids" in node:
            kids = resolve1(node["Kids"])
            if isinstance(kids, list):
                ancestors.add(key)
                stack.append((False, key))
                stack.extend((True, kid) for kid in reversed(kids))
        elif kind is page_type:
            leaves += 1
            if leaves > limit:
                raise _too_many_pages(limit)
    return leaves


def _form_values(doc: Any) -> int:
    """How many AcroForm fields hold a value (values of fillable forms are not page text)."""
    from pdfminer.pdftypes import resolve1

    form = resolve1(doc.catalog.get("AcroForm"))
    if not isinstance(form, dict):
        return 0
    todo = list(resolve1(form.get("Fields")) or [])
    seen: set[int] = set()
    count = 0
    while todo and len(seen) < 10_000:
        ref = todo.pop()
        key = getattr(ref, "objid", id(ref))
        if key in seen:
            continue
        seen.add(key)
        field = resolve1(ref)
        if not isinstance(field, dict):
            continue
        value = resolve1(field.get("V"))
        kind = getattr(resolve1(field.get("FT")), "name", None)
        if kind != "Sig" and value not in (None, b"", "", []) and getattr(value, "name", None) != "Off":
            count += 1  # a digital signature (/FT /Sig) is not a form value
        kids = resolve1(field.get("Kids"))
        if isinstance(kids, list):
            todo.extend(kids)
    return count


def _ocr_reader(path: Path, options: ExtractOptions, builder: TextBuilder) -> Any:
    if not options.ocr:
        return None
    from .ocr import PageReader, tesseract_path

    executable = tesseract_path()
    if executable is None:
        builder.warnings.append("ocr_unavailable")
        return None
    return PageReader(path, options.pdf_password, timeout=options.limits.seconds, executable=executable)


_AGGREGATOR: Any = None


def _aggregator_class() -> Any:
    """pdfplumber's page device, counting characters and drawing objects as they are made."""
    global _AGGREGATOR
    if _AGGREGATOR is not None:
        return _AGGREGATOR
    from pdfplumber.page import PDFPageAggregatorWithMarkedContent

    class CountingAggregator(PDFPageAggregatorWithMarkedContent):  # type: ignore[misc, valid-type]
        def __init__(self, pdf: Any, page_number: int, budget: int, limit: int) -> None:
            super().__init__(pdf.rsrcmgr, pageno=page_number, laparams=pdf.laparams)
            self.chars_left = budget
            self.objects_left = limit
            self.limit = limit
            self.invisible = 0

        def render_string(self, textstate: Any, seq: Any, ncs: Any, graphicstate: Any) -> None:
            before = self.chars_left
            super().render_string(textstate, seq, ncs, graphicstate)
            if getattr(textstate, "render", 0) in (3, 7):  # Tr 3 / 7: text drawn invisibly
                self.invisible += before - self.chars_left

        def render_char(self, *args: Any, **kwargs: Any) -> float:
            self.chars_left -= 1
            if self.chars_left < 0:
                raise _too_many_chars(self.limit)
            return super().render_char(*args, **kwargs)

        def paint_path(self, *args: Any, **kwargs: Any) -> None:
            self._count_object()
            super().paint_path(*args, **kwargs)

        def render_image(self, *args: Any, **kwargs: Any) -> None:
            self._count_object()
            super().render_image(*args, **kwargs)

        def _count_object(self) -> None:
            self.objects_left -= 1
            if self.objects_left < 0:
                raise ReadFailure("failed", "too_many_objects", f"a page has more than {self.limit} drawing objects (the limit)")

    _AGGREGATOR = CountingAggregator
    return _AGGREGATOR


def _too_many_chars(limit: int) -> ReadFailure:
    return ReadFailure("failed", "too_many_chars", f"the PDF has more than {limit} characters (the limit)")


def _layout(pdf: Any, page: Any, stats: _Stats, options: ExtractOptions) -> int:
    """Interpret the page within the character budget and fill pdfplumber's layout cache.

    Returns the number of characters drawn invisibly (text render mode 3 or 7).
    """
    from pdfminer.pdfinterp import PDFPageInterpreter

    limit = options.limits.chars
    device = _aggregator_class()(pdf, page.page_number, max(0, limit - stats.chars), limit)
    PDFPageInterpreter(pdf.rsrcmgr, device).process_page(page.page_obj)
    page._layout = device.get_result()  # what the page.layout property computes, uncapped
    return int(device.invisible)


def _read_page(builder: TextBuilder, pdf: Any, page: Any, stats: _Stats, options: ExtractOptions, ocr: Any) -> None:
    _read_page_text(builder, pdf, page, stats, options, ocr)
    _add_annotations(builder, page, stats, options)


def _read_page_text(builder: TextBuilder, pdf: Any, page: Any, stats: _Stats, options: ExtractOptions, ocr: Any) -> None:
    invisible = _layout(pdf, page, stats, options)
    deduped, removed = _dedupe(page)
    chars = deduped.chars
    images = page.images
    stats.chars += len(chars)
    stats.images += len(images)
    if stats.chars > options.limits.chars:
        raise _too_many_chars(options.limits.chars)
    if removed:
        builder.warnings.append("dedupe_applied")
    covered = _covered_by_image(page, images)
    if chars:
        if covered and invisible >= len(chars) // 2:
            builder.warnings.append("ocr_text_layer")
        elif invisible:
            builder.warnings.append("hidden_text")
        if _outside(page, chars):
            builder.warnings.append("text_outside_page")
        _add_page(builder, deduped, page.page_number, stats)
        return
    if not images and not page.curves and not page.rects:
        return  # a blank page
    if ocr is not None:
        _ocr_page(builder, ocr, page.page_number - 1, stats, options)
        return
    stats.image_only_pages += 1


def _ocr_page(builder: TextBuilder, ocr: Any, index: int, stats: _Stats, options: ExtractOptions) -> None:
    from .ocr import OcrError

    try:
        lines = ocr.read_page(index)
    except OcrError:
        builder.warnings.append("ocr_failed")
        stats.image_only_pages += 1
        return
    if not lines:
        stats.image_only_pages += 1
        return
    for line in lines:
        builder.add_line(line)
        stats.chars += len(line)
    if stats.chars > options.limits.chars:
        raise _too_many_chars(options.limits.chars)
    builder.warnings.append("ocr")
    stats.ocr_pages += 1


def _covered_by_image(page: Any, images: list[dict[str, Any]]) -> bool:
    area = max(1.0, float(page.width) * float(page.height))
    for image in images:
        width = max(0.0, min(image["x1"], page.bbox[2]) - max(image["x0"], page.bbox[0]))
        height = max(0.0, min(image["bottom"], page.bbox[3]) - max(image["top"], page.bbox[1]))
        if width * height >= SCAN_COVERAGE * area:
            return True
    return False


def _outside(page: Any, chars: list[dict[str, Any]]) -> bool:
    x0, top, x1, bottom = page.bbox
    return any(c["x1"] < x0 or c["x0"] > x1 or c["bottom"] < top or c["top"] > bottom for c in chars)


def _dedupe(page: Any) -> tuple[Any, bool]:
    """pdfplumber's ``dedupe_chars`` (same text, font and position within 1 pt), in n log n.

    pdfplumber restores the original order with ``list.index`` on dicts, which is quadratic
    (minutes on a dense page); the characters kept are the same.
    """
    from pdfplumber.utils import cluster_objects

    chars = page.chars
    key = itemgetter("upright", "text", "fontname", "size")
    position = itemgetter("doctop", "x0")
    keep: set[int] = set()
    by_key: dict[Any, list[dict[str, Any]]] = {}
    for char in chars:
        by_key.setdefault(key(char), []).append(char)
    for group in by_key.values():
        if len(group) == 1:
            keep.add(id(group[0]))
            continue
        for row in cluster_objects(group, itemgetter("doctop"), 1):
            for column in cluster_objects(row, itemgetter("x0"), 1):
                keep.add(id(min(column, key=position)))
    if len(keep) == len(chars):
        return page, False
    return page.filter(lambda obj: obj.get("object_type") != "char" or id(obj) in keep), True


def _no_text_note(warnings: list[str]) -> str:
    """How to read a PDF of page images: the hint depends on whether OCR was asked for."""
    if "ocr_unavailable" in warnings:
        return "no text layer (a scan?); --ocr needs Tesseract: install tesseract-ocr and tesseract-ocr-eng"
    if "ocr_failed" in warnings or "ocr" in warnings:
        return "no text layer, and OCR read no text from its pages"
    return "no text layer (a scan?); run with --ocr to read it (needs tesseract-ocr)"


def _finish(builder: TextBuilder, source: str, stats: _Stats, logged: set[str], has_end: bool) -> Document:
    if stats.pages == 0:
        raise ReadFailure("failed", "no_pages", "the PDF has no pages")
    if stats.failed_pages and stats.failed_pages == stats.pages and stats.failure is not None:
        raise stats.failure
    if stats.image_only_pages and stats.chars:
        builder.warnings.append("image_only_pages")
    if stats.annots_failed:
        builder.warnings.append("annots_unreadable")
    if stats.failed_pages:
        builder.warnings.append("page_unreadable")
    if not has_end:
        builder.warnings.append("pdf_truncated")
    status, reason, note = DocStatus.OK, "", ""
    if stats.chars == 0:
        status = DocStatus.NO_TEXT_LAYER if stats.images or stats.image_only_pages else DocStatus.SUSPECT_EMPTY
        reason = status.value
        if status is DocStatus.NO_TEXT_LAYER:
            note = _no_text_note(builder.warnings)
    elif stats.failed_pages:
        status, reason = DocStatus.PARTIAL, "page_unreadable"
        note = f"{stats.failed_pages} of {stats.pages} pages could not be read"
    elif "stream_data_loss" in logged:
        status, reason = DocStatus.PARTIAL, "stream_data_loss"
    elif not has_end:
        status, reason, note = DocStatus.PARTIAL, "pdf_truncated", "the file is truncated (no end-of-file marker); what could be read was used"
    elif stats.form_values:
        status, reason = DocStatus.PARTIAL, "form_fields_not_read"
        note = f"{stats.form_values} filled form fields are not read (their values are not page text)"
    else:
        found = set(builder.warnings) | logged
        feature = next((name for name in _PARTIAL_FEATURES if name in found), None)
        if feature is not None:
            status, reason, note = DocStatus.PARTIAL, feature, _feature_note(feature, stats)
    return builder.build(source, "reader.pdf.v1", status=status, reason=reason, note=note)


def _feature_note(feature: str, stats: _Stats) -> str:
    """The note of a document that is partial because one feature failed (never content)."""
    if feature == "image_only_pages":
        return f"{stats.image_only_pages} of {stats.pages} pages are images only and were not read (no OCR); their text is missing"
    if feature == "annots_unreadable":
        return f"the annotations (comments, links) of {stats.annots_failed} of {stats.pages} pages could not be read; the page text was"
    if feature == "tables_unreadable":
        return f"table detection failed on {stats.tables_failed} of {stats.pages} pages; their tables were read as plain lines"
    return "the document information (metadata) could not be read; the page text was"


def _add_annotations(builder: TextBuilder, page: Any, stats: _Stats, options: ExtractOptions) -> None:
    """Append the text of the page's markup annotations, marked as :data:`ANNOTATION_REGION`.

    Every annotation is first resolved the way pdfplumber's ``page.annots`` resolves it
    (``resolve_all``: every object it refers to, stopping at pages and at an annotation's
    ``/Parent``), but within :data:`ANNOT_DEPTH` levels and a budget of
    :data:`ANNOT_OBJECTS` objects per document: annotations that refer back to each other
    (real #14 and #23, where pdfplumber fails on recursion) or that share objects so as to
    multiply the walk (a 1 KB file can ask pdfplumber for 2**40 steps) make the page's
    annotations unreadable: their text is left out and the page is counted for the warning
    ``annots_unreadable``.  ``/Contents`` is decoded as a PDF text string (UTF-16 or UTF-8
    with a byte-order mark, otherwise PDFDocEncoding; real #27).
    """
    try:
        texts = _annotation_texts(page, stats)
    except MemoryError:
        raise
    except Exception:  # noqa: BLE001 - _AnnotsUnreadable, broken objects, pdfminer's errors ...
        stats.annots_failed += 1
        return
    for text in texts:
        stats.annot_chars += len(text)
        if stats.chars + stats.annot_chars > options.limits.chars:
            raise _too_many_chars(options.limits.chars)
        start = builder.offset
        builder.add_text(text)
        builder.mark(ANNOTATION_REGION, start)


class _AnnotsUnreadable(Exception):
    """An annotation nests too deeply (a cycle) or refers to too many objects."""


def _deref(obj: Any) -> Any:
    """pdfminer's ``resolve1`` with a bound: ``8 0 obj 8 0 R endobj`` makes it loop forever."""
    from pdfminer.pdftypes import PDFObjRef

    for _ in range(32):
        if not isinstance(obj, PDFObjRef):
            return obj
        obj = obj.resolve()
    raise _AnnotsUnreadable()


def _annotation_texts(page: Any, stats: _Stats) -> list[str]:
    if page.page_obj.annots is None:
        return []
    raw = _deref(page.page_obj.annots)
    if not isinstance(raw, list):
        raw = [raw]
    annots = [_deref(annot) for annot in raw]
    for annot in annots:
        _walk_annotation(annot, stats)
    texts = []
    for annot in annots:
        if not isinstance(annot, dict):
            continue
        kind = getattr(_deref(annot.get("Subtype")), "name", None)
        if kind is None or kind in _ANNOTS_SKIPPED:
            continue
        text = _pdf_text(_deref(annot.get("Contents")))
        text = "\n".join(line.strip() for line in text.replace("\r\n", "\n").replace("\r", "\n").split("\n") if line.strip())
        if text:
            texts.append(text)
    return texts


def _walk_annotation(annot: Any, stats: _Stats) -> None:
    """Resolve everything ``annot`` refers to, as pdfplumber's ``resolve_all`` does, within
    :data:`ANNOT_DEPTH` levels and the document's budget (``stats.annot_objects``, spent
    here: once it is gone, every later page's annotations are unreadable at once)."""
    from pdfminer.pdftypes import PDFObjRef
    from pdfminer.psparser import PSLiteral

    def kind(obj: Any) -> Any:
        value = obj.get("Type") if isinstance(obj, dict) else None
        return value.name if isinstance(value, PSLiteral) else value

    stack: list[tuple[Any, int]] = [(annot, 0)]
    while stack:
        obj, depth = stack.pop()
        stats.annot_objects -= 1
        if stats.annot_objects < 0 or depth > ANNOT_DEPTH:
            raise _AnnotsUnreadable()
        if isinstance(obj, PDFObjRef):
            resolved = obj.resolve()
            if kind(resolved) not in ("Page", b"Page"):  # pdfplumber stops at pages
                stack.append((resolved, depth + 1))
        elif isinstance(obj, (list, tuple)):
            stack.extend((item, depth + 1) for item in obj)
        elif isinstance(obj, dict):
            skip = "Parent" if kind(obj) in ("Annot", b"Annot") else None
            stack.extend((value, depth + 1) for key, value in obj.items() if key != skip)


def _pdf_text(value: Any) -> str:
    """A PDF text string (ISO 32000-2 §7.9.2.2): UTF-16BE or UTF-8 after a byte-order mark,
    else PDFDocEncoding.  A UTF-16LE byte-order mark, which some writers use, is honoured."""
    from pdfminer.utils import PDFDocEncoding

    if isinstance(value, str):
        return value
    if not isinstance(value, bytes):
        return ""
    if value.startswith(b"\xfe\xff"):
        return value[2:].decode("utf-16-be", errors="replace")
    if value.startswith(b"\xff\xfe"):
        return value[2:].decode("utf-16-le", errors="replace")
    if value.startswith(b"\xef\xbb\xbf"):
        return value[3:].decode("utf-8", errors="replace")
    return "".join(PDFDocEncoding[byte] for byte in value)


def _add_page(builder: TextBuilder, page: Any, number: int, stats: _Stats) -> None:
    try:
        tables = [t for t in page.find_tables() if t.bbox]
    except MemoryError:
        raise
    except Exception:  # noqa: BLE001 - the page's text is still read, as lines
        builder.warnings.append("tables_unreadable")
        stats.tables_failed += 1
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
            rows = extract_table(payload[1])
            builder.add_table([[cell or "" for cell in row] for row in rows], page=number)


def extract_table(table: Any) -> list[list[str | None]]:
    """pdfplumber's ``Table.extract()``, with the characters of each row found by bisection.

    pdfplumber tests every character of the page against every row (rows × characters:
    most of the time of a dense 16-page table); this keeps the characters sorted by their
    vertical middle and takes each row's slice.  Same characters, same order, same text.
    """
    from bisect import bisect_left

    from pdfplumber import utils

    chars = table.page.chars
    order = sorted(range(len(chars)), key=lambda i: (chars[i]["top"] + chars[i]["bottom"]) / 2)
    middles = [(chars[i]["top"] + chars[i]["bottom"]) / 2 for i in order]

    def across(char: dict[str, Any], x0: float, x1: float) -> bool:
        middle = (char["x0"] + char["x1"]) / 2
        return x0 <= middle < x1

    out: list[list[str | None]] = []
    for row in table.rows:
        x0, top, x1, bottom = row.bbox
        picked = sorted(order[bisect_left(middles, top) : bisect_left(middles, bottom)])
        row_chars = [chars[i] for i in picked if across(chars[i], x0, x1)]
        cells: list[str | None] = []
        for cell in row.cells:
            if cell is None:
                cells.append(None)
                continue
            cell_chars = [c for c in row_chars if across(c, cell[0], cell[2]) and cell[1] <= (c["top"] + c["bottom"]) / 2 < cell[3]]
            cells.append(utils.extract_text(cell_chars) if cell_chars else "")
        out.append(cells)
    return out


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
