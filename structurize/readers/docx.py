"""Word documents (.docx) through python-docx: paragraphs and tables in document order.

The container is checked before python-docx opens it (Python ``zipfile`` documentation,
"Decompression pitfalls"; python-docx ``oxml/parser.py`` on its main branch sets
``huge_tree=True``; catalogue D1–D10 in tests/CATALOGUE.md), because the library does not
bound what it inflates and a future python-docx may lift libxml2's limits (``huge_tree``):

* OLE2 magic: an OOXML package encrypted with a password (an OLE2 compound file holding
  the streams ``EncryptionInfo`` and ``EncryptedPackage``, MS-OFFCRYPTO §2.3.4) →
  ``needs_password: encrypted_office``; any other OLE2 file (a legacy .doc, .xls … renamed
  .docx) → ``failed: legacy_office`` ("save it as .docx");
* not a zip, or a truncated or corrupt one → ``failed: not_a_zip``;
* more than ``limits.zip_members`` members, a declared total over ``limits.zip_total_bytes``,
  or a large member inflating more than ``limits.zip_ratio`` times → ``failed: zip_limits``;
* every member is then inflated through a counting reader that stops at the cap, whatever
  the headers say, and every XML part is scanned for ``<!DOCTYPE`` (in UTF-8, UTF-16 and
  UTF-32): OOXML never needs a DTD, so a DTD is ``failed: dtd_in_ooxml``.  That closes
  entity expansion (billion laughs) and external entities (XXE) whatever lxml does.

Only then does python-docx parse it, inside the worker's time and memory limits.
"""

from __future__ import annotations

import zipfile
import zlib
from pathlib import Path
from typing import Any
from xml.etree import ElementTree

from ..errors import ReadFailure
from ..options import ExtractOptions, Limits
from ..types import Document
from .builder import TextBuilder

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
#: The streams of an encrypted OOXML package (MS-OFFCRYPTO §2.3.4.1): both must be there.
ENCRYPTED_STREAMS = ("EncryptionInfo", "EncryptedPackage")
#: Size of a directory entry of a compound file (MS-CFB §2.6); every entry starts at a
#: multiple of it in the file, whatever the sector size (512 or 4096 bytes).
_DIR_ENTRY = 128
#: Bytes of a compound file searched for its directory entries.
OLE_SCAN_BYTES = 64 * 1024 * 1024
#: A member this small may inflate any number of times (tiny XML parts compress well).
RATIO_EXEMPT_BYTES = 1024 * 1024
CHUNK = 1 << 16
_DOCTYPE = tuple({"<!DOCTYPE".encode(codec) for codec in ("utf-8", "utf-16-le", "utf-16-be", "utf-32-le", "utf-32-be")})
_OVERLAP = max(len(marker) for marker in _DOCTYPE) - 1
_CONTENT_TYPES = "[Content_Types].xml"
#: Check-box glyphs Word users type or that content controls render.
_TICKS = {"☒": "[x]", "☑": "[x]", "✓": "[x]", "✔": "[x]", "☐": "[ ]"}


def _ticks(text: str) -> str:
    for glyph, shown in _TICKS.items():
        if glyph in text:
            text = text.replace(glyph, shown)
    return text


def read_docx(path: Path, source: str, options: ExtractOptions) -> Document:
    with path.open("rb") as handle:
        head = handle.read(8)
    if not head:
        raise ReadFailure("failed", "empty_file", "the file is empty")
    if head == OLE_MAGIC:
        if encrypted_ooxml(path, min(OLE_SCAN_BYTES, options.limits.zip_total_bytes)):
            raise ReadFailure("needs_password", "encrypted_office", "a password-protected Office document; remove the password and save it again")
        raise ReadFailure("failed", "legacy_office", "a legacy Office file (.doc, OLE2), not a .docx; open it in Word and save it as .docx")
    check_container(path, options.limits)
    import docx  # lazy: python-docx pulls in lxml
    from docx.opc.exceptions import OpcError
    from lxml import etree

    try:
        document = docx.Document(str(path))
    except etree.XMLSyntaxError as exc:
        message = f"{exc} {getattr(exc, 'error_log', '')}".lower()
        if getattr(exc, "code", None) == etree.ErrorTypes.ERR_NO_MEMORY or "no_memory" in message or "memory" in message:
            raise ReadFailure("failed", "memory_limit", "the document needs more memory than the limit") from None
        if any(word in message for word in ("limit", "amplification", "huge", "depth")):
            raise ReadFailure("failed", "xml_limits", "the document's XML exceeds the parser's limits") from None
        raise ReadFailure("failed", "bad_docx", "the document's XML is malformed") from None
    except (KeyError, ValueError, zipfile.BadZipFile, OpcError, AttributeError, TypeError, IndexError, AssertionError) as exc:
        # a package python-docx cannot make sense of: missing parts, rels without relationships ...
        raise ReadFailure("failed", "bad_docx", f"not a readable Word document ({type(exc).__name__})") from None
    builder = TextBuilder()
    styles: dict[str | None, str] = {}
    for block in document.iter_inner_content():
        if hasattr(block, "rows"):
            builder.add_table([_row_cells(row) for row in block.rows])
            continue
        text = _ticks(block.text)
        style = _style_name(block, styles)
        if not text.strip():
            builder.blank()
            continue
        if style.lower().startswith("list"):
            text = "- " + text
        builder.add_text(text)
        if style.lower().startswith(("heading", "title")):
            builder.blank()
    return builder.build(source, "reader.docx.v1")


def _dir_entry(name: str, object_type: int) -> bytes:
    """The first 67 bytes of a compound-file directory entry (MS-CFB §2.6.1) naming ``name``:
    the UTF-16LE name padded with zeros to 64 bytes, its length with the terminator, its type."""
    encoded = name.encode("utf-16-le") + b"\x00\x00"
    return encoded.ljust(64, b"\x00") + len(encoded).to_bytes(2, "little") + bytes([object_type])


_STREAM_ENTRIES = tuple(_dir_entry(name, 2) for name in ENCRYPTED_STREAMS)  # 2: a stream object


def encrypted_ooxml(path: Path, limit: int) -> bool:
    """Whether the compound file at ``path`` holds the streams of an encrypted OOXML package.

    Directory entries are found where the format puts them: at 128-byte boundaries, as the
    exact bytes of an entry naming the stream.  No FAT chain is followed, so a damaged
    file cannot send the search anywhere; the first ``limit`` bytes are searched.
    """
    found: set[bytes] = set()
    carry = b""
    offset = 0  # file offset of carry[0]
    with path.open("rb") as handle:
        while offset + len(carry) < limit:
            chunk = handle.read(min(1 << 20, limit - offset - len(carry)))
            if not chunk:
                break
            window = carry + chunk
            for entry in _STREAM_ENTRIES:
                at = window.find(entry)
                while at >= 0:
                    if (offset + at) % _DIR_ENTRY == 0:
                        found.add(entry)
                        break
                    at = window.find(entry, at + 1)
            keep = len(window) - (len(window) % _DIR_ENTRY) - _DIR_ENTRY
            keep = max(0, keep)
            offset += keep
            carry = window[keep:]
            if len(found) == len(_STREAM_ENTRIES):
                return True
    return False


def _style_name(paragraph: Any, names: dict[str | None, str]) -> str:
    """The paragraph's style name, looked up once per style id: python-docx resolves a style
    (or the default one) by walking every style of the document each time it is asked."""
    style_id = paragraph._p.style  # w:pStyle/@w:val; None for the default paragraph style
    if style_id not in names:
        style = paragraph.style
        names[style_id] = (style.name if style is not None else "") or ""
    return names[style_id]


def check_container(path: Path, limits: Limits) -> None:
    """Raise :class:`ReadFailure` unless ``path`` is a zip within ``limits`` and free of DTDs."""
    try:
        archive = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, zipfile.LargeZipFile, EOFError, ValueError, UnicodeError, NotImplementedError):
        raise ReadFailure("failed", "not_a_zip", "not a .docx (zip) container, or a truncated one") from None
    with archive:
        members = archive.infolist()
        if len(members) > limits.zip_members:
            raise _limits(f"{len(members)} members (the limit is {limits.zip_members})")
        declared = sum(info.file_size for info in members)
        if declared > limits.zip_total_bytes:
            raise _limits(f"{_mb(declared)} uncompressed (the limit is {_mb(limits.zip_total_bytes)})")
        for info in members:
            if info.file_size > RATIO_EXEMPT_BYTES and info.file_size > limits.zip_ratio * max(1, info.compress_size):
                raise _limits(f"a member inflates {info.file_size // max(1, info.compress_size)} times (the limit is {limits.zip_ratio})")
        xml_names = _xml_parts(archive, members, limits)
        budget = limits.zip_total_bytes
        for info in members:
            budget -= _scan_member(archive, info, budget, scan=info.filename in xml_names)


def _xml_parts(archive: zipfile.ZipFile, members: list[zipfile.ZipInfo], limits: Limits) -> set[str]:
    """Names of the members python-docx may parse as XML: by suffix and by declared content type."""
    names = {info.filename for info in members}
    xml = {name for name in names if name.lower().endswith((".xml", ".rels")) or name == _CONTENT_TYPES}
    if _CONTENT_TYPES not in names:
        return xml
    info = archive.getinfo(_CONTENT_TYPES)
    data = _read_capped(archive, info, min(limits.zip_total_bytes, 16 * 1024 * 1024))
    if any(marker in data for marker in _DOCTYPE):
        raise ReadFailure("failed", "dtd_in_ooxml", "the document's XML declares a DTD (OOXML never needs one)")
    try:
        root = ElementTree.fromstring(data)  # no DTD (checked above), so no entity can expand
    except (ElementTree.ParseError, LookupError, ValueError):  # python-docx will refuse it too
        return xml
    extensions = set()
    for element in root:
        tag = element.tag.rsplit("}", 1)[-1]
        kind = element.get("ContentType", "").lower()
        if not (kind.endswith("+xml") or kind.endswith("/xml")) or "html" in kind:
            continue
        if tag == "Default":
            extensions.add("." + element.get("Extension", "").lower())
        elif tag == "Override":
            xml.add(element.get("PartName", "").lstrip("/"))
    xml.update(name for name in names if any(name.lower().endswith(ext) for ext in extensions if ext != "."))
    return xml


def _read_capped(archive: zipfile.ZipFile, info: zipfile.ZipInfo, cap: int) -> bytes:
    chunks = []
    size = 0
    try:
        with archive.open(info) as member:
            while chunk := member.read(CHUNK):
                size += len(chunk)
                if size > cap:
                    raise _limits(f"a member inflates past {_mb(cap)}")
                chunks.append(chunk)
    except _CORRUPT as exc:
        raise _corrupt(exc) from None
    return b"".join(chunks)


def _scan_member(archive: zipfile.ZipFile, info: zipfile.ZipInfo, budget: int, *, scan: bool) -> int:
    """Inflate one member in chunks, counting; look for ``<!DOCTYPE`` in XML parts.  Returns bytes read."""
    size = 0
    carry = b""
    try:
        with archive.open(info) as member:
            while chunk := member.read(CHUNK):
                size += len(chunk)
                if size > budget:
                    raise _limits("the members inflate past the limit (whatever their headers say)")
                if scan:
                    window = carry + chunk
                    if any(marker in window for marker in _DOCTYPE):
                        raise ReadFailure("failed", "dtd_in_ooxml", "the document's XML declares a DTD (OOXML never needs one)")
                    carry = window[-_OVERLAP:]
    except _CORRUPT as exc:
        raise _corrupt(exc) from None
    return size


#: What reading a member of a damaged zip raises: bad CRC, a broken deflate stream, a name
#: that is not UTF-8 although flagged so, an unsupported method or an encrypted member.
_CORRUPT = (zipfile.BadZipFile, EOFError, OSError, NotImplementedError, RuntimeError, zlib.error, UnicodeError, ValueError)


def _limits(detail: str) -> ReadFailure:
    return ReadFailure("failed", "zip_limits", f"the .docx container is too large: {detail}")


def _corrupt(exc: BaseException) -> ReadFailure:
    if isinstance(exc, RuntimeError) and "password" in str(exc).lower():
        return ReadFailure("needs_password", "encrypted_office", "a member of the container is encrypted")
    cause = "a broken compressed stream" if isinstance(exc, zlib.error) else type(exc).__name__
    return ReadFailure("failed", "not_a_zip", f"the .docx (zip) container is corrupt ({cause})")


def _mb(size: int) -> str:
    return f"{size / (1024 * 1024):.0f} MB"


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
