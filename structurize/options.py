"""Run settings in one object, and every default in one place."""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace

from .extract.ner import MODEL_PACKAGE

DEFAULT_SNIPPET_WIDTH = 40
#: Environment variable that may hold the password for encrypted PDFs.
PASSWORD_ENV = "STRUCTURIZE_PDF_PASSWORD"


@dataclass(frozen=True)
class Limits:
    """Bounds on one document, enforced before and while it is read.

    ``seconds`` and ``memory_mb`` bound the worker process that reads and extracts the
    document: it is killed when it runs out of time, and its address space is capped
    (RLIMIT_AS), so a hostile or broken file costs one document, never the batch.
    """

    seconds: float = 60.0
    memory_mb: int = 1536
    pdf_pages: int = 2000
    chars: int = 2_000_000
    text_bytes: int = 50 * 1024 * 1024
    zip_total_bytes: int = 100 * 1024 * 1024
    zip_members: int = 2000
    zip_ratio: int = 100
    email_parts: int = 1000
    email_depth: int = 20
    email_part_bytes: int = 25 * 1024 * 1024
    email_bytes: int = 50 * 1024 * 1024  #: a whole .eml file, checked before it is parsed
    regex_seconds: float = 0.1


def default_workers() -> int:
    """Worker processes to use: the machine's cores, at most four."""
    return max(1, min(os.cpu_count() or 1, 4))


@dataclass(frozen=True)
class ExtractOptions:
    """Settings for one extraction run.

    ``ner`` names the spaCy pipeline package, or is None to run on rules alone (tests,
    or a quick look at a folder).  ``csv_bom`` writes the CSV files with a UTF-8 byte-order
    mark so that Excel opens them as UTF-8 on double-click.  ``workers`` is the number of
    worker processes (None: :func:`default_workers`); 0 extracts in this process, without
    the time and memory limits (for notebooks and tests of the rules).  ``pdf_password`` is
    tried on encrypted PDFs; take it from a file or an environment variable, never from a
    command-line argument.  ``ocr`` reads scanned PDF pages with Tesseract when it is
    installed.  ``encodings`` are tried, in order, on text that is neither UTF-8 nor marked
    by a byte-order mark.  ``time_limit`` (seconds per document) and ``memory_limit``
    (megabytes per worker) override the schema's ``extract.time_limit`` / ``memory_limit``,
    which override :class:`Limits`.
    """

    ner: str | None = MODEL_PACKAGE
    csv_bom: bool = True
    snippet_width: int = DEFAULT_SNIPPET_WIDTH
    workers: int | None = None
    limits: Limits = field(default_factory=Limits)
    pdf_password: str | None = field(default=None, repr=False)
    ocr: bool = False
    encodings: tuple[str, ...] = ("cp1252", "latin-1")
    time_limit: float | None = None
    memory_limit: int | None = None

    def for_schema(self, time_limit: float | None, memory_limit: int | None) -> ExtractOptions:
        """These options with the limits settled: a setting here, else the schema's, else the default."""
        seconds = self.time_limit or time_limit or self.limits.seconds
        megabytes = self.memory_limit or memory_limit or self.limits.memory_mb
        return replace(self, limits=replace(self.limits, seconds=float(seconds), memory_mb=int(megabytes)))
