"""Turn the bytes of a text file into ``str`` and say how that was done."""

from __future__ import annotations

import codecs
import re
from dataclasses import dataclass
from pathlib import Path

from ..errors import ReadFailure

#: Tried, in order, after a BOM and strict UTF-8.  latin-1 accepts any byte, so it is last.
DEFAULT_FALLBACK_ENCODINGS: tuple[str, ...] = ("cp1252", "latin-1")

_BOMS = (
    (codecs.BOM_UTF32_LE, "utf-32"),
    (codecs.BOM_UTF32_BE, "utf-32"),
    (codecs.BOM_UTF8, "utf-8-sig"),
    (codecs.BOM_UTF16_LE, "utf-16"),
    (codecs.BOM_UTF16_BE, "utf-16"),
)
#: UTF-8 text that was decoded as cp1252/latin-1 somewhere upstream ("JosÃ©", "â€™").
MOJIBAKE = re.compile("[ÃÂ][\u0080-\u00bf]|â€[\u0080-\u00ff™œ]|\ufffd")
_MOJIBAKE = MOJIBAKE


@dataclass(frozen=True)
class Decoded:
    text: str
    encoding: str
    guessed: bool
    warnings: tuple[str, ...] = ()


def decode_bytes(data: bytes, fallbacks: tuple[str, ...] = DEFAULT_FALLBACK_ENCODINGS) -> Decoded:
    """BOM, then strict UTF-8, then each fallback; record which one worked."""
    for bom, encoding in _BOMS:
        if data.startswith(bom):
            try:
                return _finish(data.decode(encoding), encoding, guessed=False)
            except UnicodeDecodeError:
                raise ReadFailure("failed", "bad_encoding", f"invalid {encoding} after its byte-order mark") from None
    if b"\x00" in data[:4096]:
        raise ReadFailure("failed", "not_text", "binary content (NUL bytes) in a text file")
    try:
        return _finish(data.decode("utf-8"), "utf-8", guessed=False)
    except UnicodeDecodeError:
        pass
    for encoding in fallbacks:
        try:
            return _finish(data.decode(encoding), encoding, guessed=True)
        except (UnicodeDecodeError, LookupError):
            continue
    raise ReadFailure("failed", "bad_encoding", "not decodable with any configured encoding")


def _finish(text: str, encoding: str, *, guessed: bool) -> Decoded:
    warnings = ["encoding_guessed"] if guessed else []
    if _MOJIBAKE.search(text):
        warnings.append("suspect_mojibake")
    return Decoded(text.replace("\r\n", "\n").replace("\r", "\n"), encoding, guessed, tuple(warnings))


def read_limited(path: Path, limit: int) -> bytes:
    """The bytes of ``path``, or ``failed: too_large`` past ``limit`` without reading it all.

    The size is checked before reading, and the read itself stops one byte past the limit,
    so a file that grows (or lies about its size) costs at most ``limit`` bytes of memory.
    """
    if path.stat().st_size > limit:
        raise too_large(limit)
    with path.open("rb") as handle:
        data = handle.read(limit + 1)
    if len(data) > limit:
        raise too_large(limit)
    return data


def shown_size(size: int) -> str:
    """A byte count as a person reads it: "20 MB", "512 bytes"."""
    return f"{size / (1024 * 1024):g} MB" if size >= 1024 * 1024 else f"{size} bytes"


def too_large(limit: int) -> ReadFailure:
    return ReadFailure("failed", "too_large", f"the file is larger than the limit ({shown_size(limit)})")


def decode_fallback(data: bytes, declared: str, fallbacks: tuple[str, ...] = DEFAULT_FALLBACK_ENCODINGS) -> tuple[str, str]:
    """Decode bytes whose declared charset is unknown or wrong; never raises.

    Tries the declared charset's first word ("utf-8 junk" → ``utf-8``), strict UTF-8, then
    each fallback; the last resort is UTF-8 with U+FFFD for what does not decode.  Returns
    the text and the encoding used.
    """
    words = declared.strip().strip("\"'").split()
    first = words[0].lower() if words else ""
    for encoding in dict.fromkeys([first, "utf-8", *fallbacks]):
        if not encoding:
            continue
        try:
            return data.decode(encoding), codecs.lookup(encoding).name
        except (UnicodeDecodeError, LookupError, ValueError, TypeError):  # "embedded null character" ...
            continue
    return data.decode("utf-8", errors="replace"), "utf-8"
