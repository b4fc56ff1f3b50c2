"""Readers: one per file format, each returning a :class:`~structurize.types.Document`.

A reader is a callable ``(path, source, options) -> Document``; ``options`` carries the
limits, the PDF password, the fallback encodings and whether to OCR.  It raises
:class:`~structurize.errors.ReadFailure` for a document it cannot read; :func:`read_document`
turns that (and any other exception) into a document with a status and a reason code, so
that one bad file never stops a batch.
"""

from __future__ import annotations

import errno
import hashlib
import os
import stat
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
#: The SHA-256 of zero bytes.
EMPTY_SHA256 = hashlib.sha256(b"").hexdigest()
#: file suffix (lower case, with the dot) → reader name.
SUFFIXES: dict[str, str] = {}
#: Notes of the failures a reader does not classify itself (never empty, never the document's
#: content: OWASP Logging Cheat Sheet, "data to exclude").
MEMORY_NOTE = "reading the document needed more memory than the limit"
NESTED_NOTE = "the document's structure is nested too deeply to read"


def register_reader(name: str, suffixes: tuple[str, ...], reader: Reader) -> None:
    READERS.register(name, reader)
    for suffix in suffixes:
        SUFFIXES[suffix.lower()] = name


def reader_for(path: Path) -> str | None:
    READERS.ensure_populated()
    return SUFFIXES.get(path.suffix.lower())


def read_document(path: Path, source: str, options: ExtractOptions | None = None) -> Document:
    """Read one file.  Never raises for a bad document: the status says what went wrong.

    * Only a regular file is opened: a FIFO, socket, device or folder is
      ``failed: not_regular_file`` (opening a FIFO would block forever), and a symbolic link
      is never followed here (``failed: symlink_skipped``; :func:`structurize.api.discover`
      resolves the links that stay inside the input folder).
    * A file of zero bytes is ``failed: empty_file`` whatever its format.
    * The file is hashed before and after it is read; when the two differ it changed while
      it was read, and it is read once more; a second change gives
      ``failed: changed_during_read``.
    """
    options = options or ExtractOptions()
    name = reader_for(path)
    refused = _not_regular(path)
    if refused is not None:
        code, note = refused
        return _failed(source, name or "", DocStatus.FAILED, code, note)
    digest = file_sha256(path)
    if name is None:
        return replace(_failed(source, "", DocStatus.FAILED, "unsupported_format", ""), sha256=digest)
    if digest == EMPTY_SHA256:  # zero bytes, whatever the format: checked before any parser runs
        return replace(_failed(source, name, DocStatus.FAILED, "empty_file", "the file is empty"), sha256=digest)
    for _ in range(2):
        doc = _read(path, source, options, name)
        after = file_sha256(path)
        if after == digest:
            return replace(doc, sha256=digest)
        digest = after
    return _failed(source, name, DocStatus.FAILED, "changed_during_read", "the file changed while it was being read")


_KINDS_OF_FILE = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a named pipe (FIFO)"),
    (stat.S_ISSOCK, "a socket"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
)


def _not_regular(path: Path) -> tuple[str, str] | None:
    """``(reason, note)`` when ``path`` is not a regular file, judged without opening it."""
    try:
        info = os.lstat(path)
    except OSError:
        return None  # gone or unreadable: the reader reports it (unreadable_file)
    if stat.S_ISLNK(info.st_mode):
        try:
            os.stat(path)
        except OSError as exc:
            where = "in a loop" if exc.errno == errno.ELOOP else "nowhere"
        else:
            where = "out of the input folder"
        return "symlink_skipped", f"a symbolic link that leads {where}; not followed"
    if stat.S_ISREG(info.st_mode):
        return None
    for test, words in _KINDS_OF_FILE:
        if test(info.st_mode):
            return "not_regular_file", f"{words}, not a regular file; not opened"
    return "not_regular_file", "not a regular file; not opened"


def file_sha256(path: Path) -> str:
    """SHA-256 of a regular file's bytes, read in blocks ("" when it cannot be read).

    The file is opened without blocking and checked on the open descriptor, so a file
    swapped for a FIFO after it was listed cannot hang the read.
    """
    digest = hashlib.sha256()
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError:
        return ""
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            return ""
        with os.fdopen(fd, "rb", closefd=False) as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError:
        return ""
    finally:
        os.close(fd)
    return digest.hexdigest()


def _read(path: Path, source: str, options: ExtractOptions, name: str) -> Document:
    reader = READERS.get(name)
    try:
        return reader(path, source, options)
    except ReadFailure as failure:
        return _failed(source, name, DocStatus(failure.status), failure.code, failure.detail)
    except MemoryError:
        return _failed(source, name, DocStatus.FAILED, "memory_limit", MEMORY_NOTE)
    except RecursionError:
        return _failed(source, name, DocStatus.FAILED, "too_deeply_nested", NESTED_NOTE)
    except OSError as exc:
        return _failed(source, name, DocStatus.FAILED, "unreadable_file", exc.strerror or type(exc).__name__)
    except Exception as exc:  # noqa: BLE001 - a parser bug must fail one document only
        return _failed(source, name, DocStatus.FAILED, "reader_error", type(exc).__name__)


def _failed(source: str, reader: str, status: DocStatus, code: str, note: str) -> Document:
    return Document(source=source, text="", reader=reader, status=status, reason=code, note=note)
