"""Write tiny, valid PDF files for tests, with no PDF library.

Each page is a list of text lines set in Helvetica; a page may instead carry only an image
(a grey square), which is what a scan without a text layer looks like to a reader.
"""

from __future__ import annotations

import zlib
from pathlib import Path


def _escape(text: str) -> str:
    return text.replace("\\", "\\\\").replace("(", "\\(").replace(")", "\\)")


def make_pdf(path: Path, pages: list[list[str] | None]) -> Path:
    """``pages``: one list of lines per page, or None for an image-only page."""
    objects: list[bytes] = []

    def add(body: bytes) -> int:
        objects.append(body)
        return len(objects)

    catalog = add(b"")  # placeholder, filled below
    pages_id = add(b"")
    font = add(b"<< /Type /Font /Subtype /Type1 /BaseFont /Helvetica /Encoding /WinAnsiEncoding >>")
    image = add(
        b"<< /Type /XObject /Subtype /Image /Width 2 /Height 2 /ColorSpace /DeviceGray /BitsPerComponent 8"
        b" /Filter /FlateDecode /Length %d >>\nstream\n" % len(zlib.compress(b"\x80\x80\x80\x80"))
        + zlib.compress(b"\x80\x80\x80\x80")
        + b"\nendstream"
    )
    kids = []
    for lines in pages:
        if lines is None:
            stream = b"q 200 0 0 200 100 500 cm /Im1 Do Q"
        else:
            parts = [b"BT /F1 11 Tf 72 770 Td 14 TL"]
            for line in lines:
                parts.append(b"(" + _escape(line).encode("cp1252") + b") Tj T*")
            parts.append(b"ET")
            stream = b"\n".join(parts)
        content = add(b"<< /Length %d >>\nstream\n" % len(stream) + stream + b"\nendstream")
        kids.append(
            add(
                b"<< /Type /Page /Parent %d 0 R /MediaBox [0 0 595 842] /Contents %d 0 R"
                b" /Resources << /Font << /F1 %d 0 R >> /XObject << /Im1 %d 0 R >> >> >>"
                % (pages_id, content, font, image)
            )
        )
    objects[catalog - 1] = b"<< /Type /Catalog /Pages %d 0 R >>" % pages_id
    objects[pages_id - 1] = b"<< /Type /Pages /Kids [%s] /Count %d >>" % (
        b" ".join(b"%d 0 R" % kid for kid in kids),
        len(kids),
    )
    out = bytearray(b"%PDF-1.4\n")
    offsets = []
    for number, body in enumerate(objects, start=1):
        offsets.append(len(out))
        out += b"%d 0 obj\n" % number + body + b"\nendobj\n"
    xref = len(out)
    out += b"xref\n0 %d\n0000000000 65535 f \n" % (len(objects) + 1)
    for offset in offsets:
        out += b"%010d 00000 n \n" % offset
    out += b"trailer\n<< /Size %d /Root %d 0 R >>\nstartxref\n%d\n%%%%EOF\n" % (len(objects) + 1, catalog, xref)
    path.write_bytes(bytes(out))
    return path
