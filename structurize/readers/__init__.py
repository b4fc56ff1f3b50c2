"""Readers: one per file format, each returning a :class:`~structurize.types.Document`.

A reader is a callable ``(path, source, options) -> Document``; ``options`` carries the
limits, the PDF password, the fallback encodings and whether to OCR.  It raises
:class:`~structurize.errors.ReadFailure` for a document it cannot read; :func:`read_document`
turns that (and any other exception) into a document with a status and a reason code, so
that one bad file never stops a batch.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path

from ..errors import ReadFailure
from ..options import ExtractOptions
from ..registry import Registry
from ..types import Document, DocStatus

Reader = Callable[[Path, str, ExtractOptions], Document]

#: name → reader; names look like ``reader.pdf.v1``.
READERS: Registry[Reader] = Registry("reader", "structurize.readers")
#: file suffix (lower case, with the dot) → reader name.
SUFFIXES: dict[str, str] = {}


def register_reader(name: str, suffixes: tuple[str, ...], reader: Reader) -> None:
    READERS.register(name, reader)
    for suffix in suffixes:
        SUFFIXES[suffix.lower()] = name


def reader_for(path: Path) -> str | None:
    READERS.ensure_populated()
    return SUFFIXES.get(path.suffix.lower())


def read_document(path: Path, source: str, options: ExtractOptions | None = None) -> Document:
    """Read one file.  Never raises for a bad document: the status says what went wrong."""
    options = options or ExtractOptions()
    name = reader_for(path)
    digest = file_sha256(path)
    if name is None:
        return replace(_failed(source, "", DocStatus.FAILED, "unsupported_format", ""), sha256=digest)
    return replace(_read(path, source, options, name), sha256=digest)


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes, read in blocks ("" when it cannot be read)."""
    digest = hashlib.sha256()
    try:
        with path.open("rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError:
        return ""
    return digest.hexdigest()


def _read(path: Path, source: str, options: ExtractOptions, name: str) -> Document:
    reader = READERS.get(name)
    try:
        return reader(path, source, options)
    except ReadFailure as failure:
        return _failed(source, name, DocStatus(failure.status), failure.code, failure.detail)
    except MemoryError:
        return _failed(source, name, DocStatus.FAILED, "memory_limit", "")
    except RecursionError:
        return _failed(source, name, DocStatus.FAILED, "too_deeply_nested", "")
    except OSError as exc:
        return _failed(source, name, DocStatus.FAILED, "unreadable_file", exc.strerror or type(exc).__name__)
    except Exception as exc:  # noqa: BLE001 - a parser bug must fail one document only
        return _failed(source, name, DocStatus.FAILED, "reader_error", type(exc).__name__)


def _failed(source: str, reader: str, status: DocStatus, code: str, note: str) -> Document:
    return Document(source=source, text="", reader=reader, status=status, reason=code, note=note)
