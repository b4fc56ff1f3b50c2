"""The fast path of the PDF reader: pypdfium2 for the text layer of ordinary pages.

pdfplumber (pdfminer) interprets every page in Python, about 100 times slower than
PDFium.  This module reads, with PDFium, the pages that need nothing pdfplumber alone does
well, and says "no" (``None``) for everything else, so that :mod:`structurize.readers.pdf`
reads that page, or the whole document, with pdfplumber exactly as before.  What it
produces is what the pdfplumber path produces for the same page: the words of the page
(PDFium's text, split at white space and at the line-end hyphens PDFium joins), each with
the box pdfminer would give it (PDFium's "loose" character boxes: origin to advance width,
font ascent to descent), in pdfplumber's coordinates; :func:`structurize.readers.pdf._lines`
then rebuilds the lines, wide gaps included, from those words for both paths.

**A document** goes to pdfplumber whole unless a scan of its bytes, at C speed, and PDFium
both find it ordinary (:func:`scan`, :meth:`FastDocument.open`): an end-of-file marker;
every stream either inflates (Flate) within the caps and without error, is uncompressed, or
is an image; the content streams hold no more bytes than ``limits.chars`` (a character
costs at least one byte, so a flood is left to pdfminer, which counts while it interprets);
no invisible text (``Tr`` 3, 7), no character spacing, no ``/ActualText``; no Type 3 font,
no vertical writing, no Type 0 font without a ``/ToUnicode`` map; no ``/Encrypt``, no
``/AcroForm``; objects nested at most :data:`MAX_DEPTH` deep; a page tree whose every node
is named once as a kid and whose page count PDFium agrees with; PDFium opens it with a valid
cross-reference table and without a password.  Every hostile case of the catalogue
(truncation, encryption, bombs, floods, loops, deep nesting, lying page counts, corrupt
streams) fails one of these tests, so its status, reason and warnings stay pdfminer's.

**A page** of such a document goes to pdfplumber when PDFium's page objects hold anything
but text (a path may rule a table; an image may be a scan, a form XObject may loop), when
it is rotated, when a text object is not upright, has zero width or overprints another one
(fake bold: pdfplumber de-duplicates it and says so), when it has annotations (pdfplumber
reads their text, or reports that it cannot), or when its text has characters
PDFium could not map, control characters, private-use or right-to-left characters, or
characters outside the page box.

The ctypes calls that run once per word are made through prototypes without ``argtypes``
(about 2.5 times cheaper than pypdfium2's checked bindings); everything else uses
``pypdfium2.raw`` as it is.
"""

from __future__ import annotations

import ctypes
import re
import struct
import zlib
from dataclasses import dataclass
from typing import Any

#: Deepest nesting of arrays and dictionaries accepted on the fast path (pdfminer's
#: recursion fails far deeper; ordinary files stay under 10).
MAX_DEPTH = 32
#: Decoded bytes of font files, object streams and cross-reference streams the scan
#: accepts in total (content streams have their own budget, ``limits.chars``).
OTHER_BYTES = 64 * 1024 * 1024
#: Largest horizontal offset between two text objects of the same size, as a share of the
#: smaller of their height and width, still taken as one overprinting the other (the
#: vertical offset must stay within a quarter of the height).
OVERPRINT = 0.95

_OBJ = re.compile(rb"(?<!\d)\d{1,10}\s{1,64}\d{1,5}\s{1,64}obj\b")
_PAGES = re.compile(rb"/Type\s*/Pages(?![A-Za-z0-9#])")
_PAGE = re.compile(rb"/Type\s*/Page(?![A-Za-z0-9#])")
_KIDS = re.compile(rb"/Kids\s*\[([^\]]*)\]")
_REF = re.compile(rb"(?<!\d)(\d{1,10})\s{1,64}(\d{1,5})\s{1,64}R\b")
_FILTER = re.compile(rb"/Filter\s*(/[^\s/<>\[\]()]+|\[[^\]]*\])")
_NAME = re.compile(rb"/([^\s/<>\[\]()]+)")
_OBJSTM = re.compile(rb"/Type\s*/ObjStm\b")
_OTHER_STREAM = re.compile(rb"/Length[123]\b|/Subtype\s*/(?:Type1C|CIDFontType0C|OpenType)\b|/Type\s*/(?:ObjStm|XRef)\b")
_IMAGE = re.compile(rb"/Subtype\s*/Image\b")
_REFUSED = re.compile(rb"/Encrypt\b|/AcroForm\b|/ActualText\b|/Subtype\s*/Type3\b|/Encoding\s*/[^\s/<>\[\]()]*-V(?![A-Za-z0-9])")
_TYPE0 = re.compile(rb"/Subtype\s*/Type0\b")
_BRACKETS = re.compile(rb"<<|>>|\[|\]")
#: The text render mode (``Tr``) and character spacing (``Tc``) operators.  Their operand is
#: taken from the bytes just before them, so the scan stays linear on binary streams.
_TEXT_STATE = re.compile(rb"(?<=\s)T([rc])(?![A-Za-z0-9*'\"])")
_CONTENT_REFUSED = re.compile(rb"/ActualText\b")
_VISIBLE_MODES = {b"0", b"1", b"2", b"4", b"5", b"6"}
_IMAGE_FILTERS = {b"DCTDecode", b"DCT", b"JPXDecode", b"JBIG2Decode", b"CCITTFaxDecode", b"CCF"}
_FLATE = {b"FlateDecode", b"Fl"}
#: Characters that send a page to pdfplumber: C0 controls (but tab, CR, LF), U+FFFD-U+FFFF
#: (U+FFFE is also PDFium's mark for a line-end hyphen; those are checked one by one),
#: private use, and right-to-left scripts (PDFium reorders them, pdfminer does not).
_SUSPECT = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ufffd\uffff\ue000-\uf8ff\u0590-\u08ff\ufb1d-\ufdff\ufe70-\ufefe]")
_WORD = re.compile(r"\S+")
_HYPHEN_MARK = "\ufffe"

_TEXT_OBJECT = 1  # FPDF_PAGEOBJ_TEXT
#: The four floats of an ``FS_RECTF`` (left, top, right, bottom) in one call.
_RECT = struct.Struct("4f").unpack_from


class Refused(Exception):
    """The document is not for the fast path; the message names the reason (never content)."""


# --- the scan of the bytes -----------------------------------------------------------------------


@dataclass
class Scan:
    """What the byte scan found out about an ordinary document."""

    page_leaves: int = 0
    page_nodes: int = 0
    kids: int = 0
    has_cropbox: bool = False
    content_bytes: int = 0
    other_bytes: int = 0


def scan(data: bytes, *, stream_cap: int, content_budget: int) -> Scan:
    """Scan the file's objects and streams; raise :class:`Refused` for anything unordinary."""
    found = Scan()
    kid_refs: set[tuple[bytes, bytes]] = set()
    dicts: list[bytes] = []
    pos = 0
    size = len(data)
    while True:
        match = _OBJ.search(data, pos)
        if match is None:
            break
        start = match.end()
        end = data.find(b"endobj", start)
        keyword = data.find(b"stream", start, end if end >= 0 else size)
        if keyword < 0:
            stop = end if end >= 0 else size
            dicts.append(data[start:stop])
            pos = stop + 6
            continue
        head = data[start:keyword]
        body = keyword + 6
        if data.startswith(b"\r\n", body):
            body += 2
        elif data.startswith((b"\n", b"\r"), body):
            body += 1
        else:
            raise Refused("stream keyword without end of line")
        finish = data.find(b"endstream", body)
        if finish < 0:
            raise Refused("stream without endstream")
        dicts.append(head)
        _stream(found, head, data[body:finish], dicts, stream_cap, content_budget)
        pos = finish + 9
    trailer = data.rfind(b"trailer")
    if trailer >= 0:
        dicts.append(data[trailer : trailer + 4096])
    for part in dicts:
        _check_dict(found, part, kid_refs)
    if found.page_nodes == 0 or found.page_leaves == 0:
        raise Refused("no page tree found")
    if len(kid_refs) != found.kids or found.kids != found.page_nodes + found.page_leaves - 1:
        raise Refused("page tree is not a tree")
    return found


def _filters(head: bytes) -> list[bytes]:
    match = _FILTER.search(head)
    if match is None:
        return []
    return _NAME.findall(match.group(1))


def _stream(found: Scan, head: bytes, raw: bytes, dicts: list[bytes], cap: int, content_budget: int) -> None:
    filters = _filters(head)
    if _IMAGE.search(head) or any(name in _IMAGE_FILTERS for name in filters):
        return  # image data: neither PDFium's text layer nor pdfminer decodes it
    if not filters:
        decoded = raw
    elif len(filters) == 1 and filters[0] in _FLATE:
        inflater = zlib.decompressobj()
        try:
            decoded = inflater.decompress(raw, cap + 1)
        except zlib.error:
            raise Refused("corrupt Flate stream") from None
        if len(decoded) > cap or inflater.unconsumed_tail:
            raise Refused("stream inflates past the cap")
        if not inflater.eof:
            raise Refused("truncated Flate stream")
    else:
        raise Refused("stream filter not handled")
    if _OTHER_STREAM.search(head):
        found.other_bytes += len(decoded)
        if found.other_bytes > OTHER_BYTES:
            raise Refused("too many decoded bytes")
        if _OBJSTM.search(head):
            dicts.extend(_objstm_members(head, decoded))
        return
    found.content_bytes += len(decoded)
    if found.content_bytes > content_budget:
        raise Refused("content streams longer than the character limit")
    if _CONTENT_REFUSED.search(decoded):
        raise Refused("marked content with /ActualText")
    for match in _TEXT_STATE.finditer(decoded):
        before = decoded[max(0, match.start() - 32) : match.start()].split()
        operand = before[-1] if before else b""
        if match.group(1) == b"r":
            if operand not in _VISIBLE_MODES:
                raise Refused("invisible text")
            continue
        try:
            spacing = float(operand)
        except ValueError:
            raise Refused("character spacing") from None
        if spacing != 0:
            raise Refused("character spacing")


def _objstm_members(head: bytes, decoded: bytes) -> list[bytes]:
    first = re.search(rb"/First\s+(\d+)", head)
    count = re.search(rb"/N\s+(\d+)", head)
    if first is None or count is None:
        raise Refused("object stream without /N or /First")
    offset, number = int(first.group(1)), int(count.group(1))
    numbers = decoded[:offset].split()
    if len(numbers) != 2 * number or not all(item.isdigit() for item in numbers):
        raise Refused("object stream header")
    starts = [offset + int(item) for item in numbers[1::2]]
    ends = [*starts[1:], len(decoded)]
    return [decoded[a:b] for a, b in zip(starts, ends)]


def _check_dict(found: Scan, part: bytes, kid_refs: set[tuple[bytes, bytes]]) -> None:
    if _REFUSED.search(part):
        raise Refused("encryption, forms, Type 3 or vertical fonts, or /ActualText")
    if b"/CropBox" in part:
        found.has_cropbox = True
    openings = part.count(b"[") + part.count(b"<<")
    if openings > MAX_DEPTH:
        depth = deepest = 0
        for token in _BRACKETS.findall(part):
            if token in (b"[", b"<<"):
                depth += 1
                deepest = max(deepest, depth)
            else:
                depth = max(0, depth - 1)
        if deepest > MAX_DEPTH:
            raise Refused("deeply nested objects")
    if _TYPE0.search(part) and b"/ToUnicode" not in part:
        raise Refused("Type 0 font without /ToUnicode")
    if _PAGES.search(part):
        found.page_nodes += 1
        kids = _KIDS.search(part)
        if kids is None:
            raise Refused("page tree node without a literal /Kids array")
        refs = _REF.findall(kids.group(1))
        found.kids += len(refs)
        kid_refs.update(refs)
    elif _PAGE.search(part):
        found.page_leaves += 1


# --- PDFium ----------------------------------------------------------------------------------------


_FAST: Any = None


def _fast_calls() -> Any:
    """pypdfium2's functions once per word, as prototypes without argument checking."""
    global _FAST
    if _FAST is None:
        import pypdfium2  # noqa: F401 - initialises the library
        import pypdfium2.raw as pdfium_c

        def bare(function: Any, restype: Any) -> Any:
            return ctypes.CFUNCTYPE(restype)(ctypes.cast(function, ctypes.c_void_p).value)

        class Calls:
            raw = pdfium_c
            loose_box = bare(pdfium_c.FPDFText_GetLooseCharBox, ctypes.c_int)
            unicode = bare(pdfium_c.FPDFText_GetUnicode, ctypes.c_uint)
            get_object = bare(pdfium_c.FPDFPage_GetObject, ctypes.c_void_p)
            object_type = bare(pdfium_c.FPDFPageObj_GetType, ctypes.c_int)
            matrix = bare(pdfium_c.FPDFPageObj_GetMatrix, ctypes.c_int)
            bounds = bare(pdfium_c.FPDFPageObj_GetBounds, ctypes.c_int)
            get_text = bare(pdfium_c.FPDFText_GetText, ctypes.c_int)

        _FAST = Calls
    return _FAST


@dataclass
class FastPage:
    """One page read by PDFium: pdfplumber-like words and the number of characters."""

    words: list[dict[str, Any]]
    chars: int


class FastDocument:
    """A PDFium document for :func:`read_page`; :meth:`open` raises :class:`Refused`."""

    def __init__(self, data: bytes, found: Scan) -> None:
        self.data = data  # PDFium reads from this buffer while the document is open
        self.found = found
        self.handle: Any = None
        self.pages = 0

    @classmethod
    def open(cls, data: bytes, found: Scan, page_limit: int) -> FastDocument:
        calls = _fast_calls()
        raw = calls.raw
        document = cls(data, found)
        handle = raw.FPDF_LoadMemDocument64(data, len(data), None)
        if not handle:
            raise Refused("PDFium cannot open the file")
        document.handle = handle
        try:
            if raw.FPDF_GetSecurityHandlerRevision(handle) != -1:
                raise Refused("encrypted")
            if raw.FPDF_GetFormType(handle) != 0:
                raise Refused("a fillable form")
            if not raw.FPDF_DocumentHasValidCrossReferenceTable(handle):
                raise Refused("cross-reference table rebuilt")
            pages = raw.FPDF_GetPageCount(handle)
            if pages != found.page_leaves or not 0 < pages <= page_limit:
                raise Refused("page count")
            document.pages = pages
        except BaseException:
            document.close()
            raise
        return document

    def close(self) -> None:
        if self.handle:
            _fast_calls().raw.FPDF_CloseDocument(self.handle)
            self.handle = None

    def read_page(self, index: int) -> FastPage | None:
        """Page ``index`` (0-based) read by PDFium, or None when pdfplumber must read it."""
        raw = _fast_calls().raw
        page = raw.FPDF_LoadPage(self.handle, index)
        if not page:
            return None
        try:
            return self._read_page(page)
        finally:
            raw.FPDF_ClosePage(page)

    def _read_page(self, page: Any) -> FastPage | None:
        calls = _fast_calls()
        raw = calls.raw
        if raw.FPDFPage_GetRotation(page) != 0:
            return None
        box = self._media_box(page)
        if box is None:
            return None
        left, bottom, right, top = box
        if raw.FPDFPage_GetAnnotCount(page) != 0:
            return None  # annotations: pdfplumber reads their text (or reports annots_unreadable)
        count = raw.FPDFPage_CountObjects(page)
        if count == 0:
            return FastPage([], 0)  # a blank page
        if not _only_plain_text(calls, ctypes.cast(page, ctypes.c_void_p), count):
            return None
        textpage = raw.FPDFText_LoadPage(page)
        if not textpage:
            return None
        try:
            return _words(calls, textpage, left, bottom, right, top)
        finally:
            raw.FPDFText_ClosePage(textpage)

    def _media_box(self, page: Any) -> tuple[float, float, float, float] | None:
        raw = _fast_calls().raw
        left, bottom, right, top = (ctypes.c_float() for _ in range(4))
        if not raw.FPDFPage_GetMediaBox(page, left, bottom, right, top):
            if self.found.has_cropbox:
                return None  # inherited media box and some crop box: not told apart here
            rect = raw.FS_RECTF()
            if not raw.FPDF_GetPageBoundingBox(page, rect):
                return None
            left.value, bottom.value, right.value, top.value = rect.left, rect.bottom, rect.right, rect.top
        box = (min(left.value, right.value), min(bottom.value, top.value), max(left.value, right.value), max(bottom.value, top.value))
        if box[2] - box[0] <= 0 or box[3] - box[1] <= 0:
            return None
        return box


def _only_plain_text(calls: Any, page: Any, count: int) -> bool:
    """Every object is upright text of some width, none printed over another one."""
    matrix = calls.raw.FS_MATRIX()
    matrix_ref = ctypes.byref(matrix)
    edges = [ctypes.c_float() for _ in range(4)]
    refs = [ctypes.byref(edge) for edge in edges]
    get_object, object_type, get_matrix, get_bounds = calls.get_object, calls.object_type, calls.matrix, calls.bounds
    boxes = []
    for index in range(count):
        obj = ctypes.c_void_p(get_object(page, index))
        if object_type(obj) != _TEXT_OBJECT:
            return False
        if not get_matrix(obj, matrix_ref) or matrix.b != 0 or matrix.c != 0 or matrix.a <= 0 or matrix.d <= 0:
            return False
        if not get_bounds(obj, *refs):
            return False
        x0, y0, x1, y1 = (edge.value for edge in edges)
        if x1 - x0 < 0.01:
            return False  # PDFium skips zero-width text objects; pdfminer keeps their characters
        boxes.append((y0, x0, x1 - x0, y1 - y0))
    boxes.sort()
    if any(_overprints(a, b) for a, b in zip(boxes, boxes[1:])):
        return False  # overprinted (fake bold): pdfplumber de-duplicates and says so
    if len(boxes) > 2:  # the same test across the neighbours the first sort separated
        by_x = sorted(boxes, key=lambda b: (b[1], b[0]))
        if any(_overprints(a, b) for a, b in zip(by_x, by_x[1:])):
            return False
    return True


def _overprints(one: tuple[float, float, float, float], other: tuple[float, float, float, float]) -> bool:
    """Two text objects of one size, nearly in one place: PDFium drops the second one
    silently when it is offset by less than 0.9 of a character, pdfplumber keeps both
    unless within 1 pt (and then reports ``dedupe_applied``)."""
    y0, x0, width, height = one
    y1, x1, width1, height1 = other
    return (
        abs(width - width1) < 1
        and abs(height - height1) < 1
        and abs(y0 - y1) <= max(height, 1) / 4
        and abs(x0 - x1) <= OVERPRINT * min(max(height, 1), width)
    )


def _words(calls: Any, textpage: Any, left: float, bottom: float, right: float, top: float) -> FastPage | None:
    raw = calls.raw
    count = raw.FPDFText_CountChars(textpage)
    if count <= 0:
        return None
    buffer = ctypes.create_string_buffer(2 * (count + 1))
    tp = ctypes.cast(textpage, ctypes.c_void_p)
    written = calls.get_text(tp, 0, count, buffer)
    text = buffer.raw[: 2 * max(0, written - 1)].decode("utf-16-le", errors="replace")
    if len(text) != count:
        return None  # control characters or surrogate pairs: text and character indices differ
    if _SUSPECT.search(text):
        return None
    hyphens = []
    position = text.find(_HYPHEN_MARK)
    while position >= 0:
        if calls.unicode(tp, position) != 2:
            return None  # a glyph PDFium could not map
        hyphens.append(position)
        position = text.find(_HYPHEN_MARK, position + 1)
    if hyphens:
        text = text.replace(_HYPHEN_MARK, "-")
    spans = [match.span() for match in _WORD.finditer(text)]
    if hyphens:
        spans = _split_at(spans, hyphens)
    if not spans:
        return None  # only white space: pdfplumber counts those characters
    first, last = raw.FS_RECTF(), raw.FS_RECTF()  # left, top, right, bottom
    first_ref, last_ref = ctypes.byref(first), ctypes.byref(last)
    loose_box = calls.loose_box
    words = []
    chars = 0
    seen: set[tuple[str, int, int]] = set()
    for start, end in spans:
        if not loose_box(tp, start, first_ref):
            return None
        x0, y_top, first_right, y_bottom = _RECT(first)
        if end - start > 1:
            if not loose_box(tp, end - 1, last_ref):
                return None
            _, y_top2, x1, y_bottom2 = _RECT(last)
        else:
            y_top2, x1, y_bottom2 = y_top, first_right, y_bottom
        if x1 < x0 or first_right < x0 or abs(y_bottom2 - y_bottom) > 3:
            return None  # right to left, mirrored or broken across lines: pdfplumber orders it
        hi = y_top if y_top > y_top2 else y_top2
        lo = y_bottom if y_bottom < y_bottom2 else y_bottom2
        if x1 < left or x0 > right or hi < bottom or lo > top:
            return None  # outside the page box: pdfplumber flags it (text_outside_page)
        word = text[start:end]
        key = (word, round(x0), round(hi))
        if key in seen:
            return None  # the same word printed twice in one place
        seen.add(key)
        words.append({"text": word, "x0": x0 - left, "x1": x1 - left, "top": top - hi})
        chars += end - start
    return FastPage(words, chars)


def _split_at(spans: list[tuple[int, int]], hyphens: list[int]) -> list[tuple[int, int]]:
    """End a word after each line-end hyphen (PDFium joins the two lines' words)."""
    out = []
    marks = iter(hyphens)
    mark = next(marks, None)
    for start, end in spans:
        while mark is not None and mark < start:
            mark = next(marks, None)
        while mark is not None and start <= mark < end - 1:
            out.append((start, mark + 1))
            start = mark + 1
            mark = next(marks, None)
        out.append((start, end))
    return out
