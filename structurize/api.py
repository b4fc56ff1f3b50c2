"""The public Python API.  The CLI is a thin layer over these functions.

>>> from structurize import load_schema, extract_folder
>>> schema = load_schema("schemas/offer_letter.yaml")
>>> result = extract_folder("demo_docs/offer_letter", schema)   # doctest: +SKIP
>>> table, values = result.to_frames()                           # doctest: +SKIP
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from itertools import islice
from dataclasses import dataclass, field, replace
from functools import cached_property
from pathlib import Path
from typing import Any

from . import patterns
from .errors import ModelMissing, UsageError
from .store import Store
from .extract import extract_candidates
from .extract.ner import Entity, NerModel, NoNer, load_model
from .options import ExtractOptions
from .readers import read_document
from .resolve import resolve_document, unread_values
from .schema import TargetSchema, load_schema
from .spool import ResultSpool
from .types import Document, DocumentResult, DocStatus, FieldValue, ValueStatus
from .validate import to_text, validate_value

__all__ = ["ExtractionResult", "discover", "extract_document", "extract_folder", "load_schema"]

Progress = Callable[[str], None]
#: Documents read and passed through NER together (``nlp.pipe``) when there is no worker.
BATCH_SIZE = 16


@dataclass(frozen=True)
class ExtractionResult:
    """The outcome of a run: one :class:`DocumentResult` per input file, in path order.

    ``documents`` is any sequence: a tuple, or (from :func:`extract_folder`) a
    :class:`~structurize.spool.ResultSpool` that reads the results from disk as they are
    iterated, so that a large folder does not have to fit in memory.
    """

    schema: TargetSchema
    documents: Sequence[DocumentResult]
    input_root: str = ""
    seconds: float = 0.0
    settings: dict[str, Any] = field(default_factory=dict)
    #: What the results were made from (store-backed runs): equal fingerprints, equal outputs.
    fingerprint: str = ""

    def rows(self) -> list[dict[str, str]]:
        """The wide table: one dict per document, the contract's output forms."""
        names = self.schema.field_names
        return [table_row(doc, names) for doc in self.documents]

    def values(self) -> list[dict[str, Any]]:
        """The long table: one dict per (document, field)."""
        return [row for doc in self.documents for row in value_rows(doc)]

    def document_rows(self) -> list[dict[str, Any]]:
        return [document_row(doc) for doc in self.documents]

    def to_frames(self) -> tuple[Any, Any]:
        """``(table, values)`` as pandas DataFrames."""
        import pandas as pd

        table = pd.DataFrame(self.rows(), columns=["document", *self.schema.field_names])
        values = pd.DataFrame(self.values())
        return table, values

    def status_counts(self) -> dict[str, int]:
        """Documents per status, in the order of :class:`DocStatus`."""
        return dict(self._tally.statuses)

    def counts(self) -> dict[str, int]:
        """Documents read and failed; values by status."""
        return dict(self._tally.counts)

    def problems(self) -> list[tuple[str, DocStatus, str, str]]:
        """``(source, status, reason, note)`` of every document not read cleanly, in path order."""
        return list(self._tally.problems)

    @cached_property
    def _tally(self) -> _Tally:
        # one pass over the documents (a spool reads them from disk) for all the summaries
        statuses = {str(status): 0 for status in DocStatus}
        counts = {"documents": 0, "read": 0, "not_read": 0} | {str(status): 0 for status in ValueStatus}
        problems = []
        for doc in self.documents:
            statuses[str(doc.status)] += 1
            counts["documents"] += 1
            counts["read" if doc.status.readable else "not_read"] += 1
            for item in doc.values:
                counts[str(item.status)] += 1
            if doc.status is not DocStatus.OK:
                problems.append((doc.source, doc.status, doc.reason, doc.note))
        return _Tally({status: n for status, n in statuses.items() if n}, counts, tuple(problems))


@dataclass(frozen=True)
class _Tally:
    statuses: dict[str, int]
    counts: dict[str, int]
    problems: tuple[tuple[str, DocStatus, str, str], ...]


def table_row(doc: DocumentResult, names: Sequence[str]) -> dict[str, str]:
    """One row of table.csv: the document, then each field's output form ("" when missing)."""
    row = {"document": doc.source}
    for name in names:
        item = doc.value(name)
        row[name] = to_text(item.value) if item is not None and item.value is not None else ""
    return row


def value_rows(doc: DocumentResult) -> list[dict[str, Any]]:
    """The rows of values.csv for one document: one per field."""
    return [
        {
            "document": doc.source,
            "field": item.field,
            "value": to_text(item.value),
            "confidence": item.confidence,
            "status": str(item.status),
            "start": item.span.start if item.span is not None else None,
            "end": item.span.end if item.span is not None else None,
            "page": item.page,
            "snippet": item.snippet,
            "extractor": item.extractor,
            "reason": item.reason,
            "alternatives": " | ".join(to_text(alt.value) for alt in item.alternatives),
        }
        for item in doc.values
    ]


def document_row(doc: DocumentResult) -> dict[str, Any]:
    """The row of documents.csv for one input file."""
    return {
        "document": doc.source,
        "status": str(doc.status),
        "reason": doc.reason,
        "note": doc.note,
        "reader": doc.reader,
        "encoding": doc.encoding or "",
        "pages": doc.pages,
        "chars": doc.chars,
        "warnings": " ".join(doc.warnings),
        "seconds": round(doc.seconds, 3),
        "sha256": doc.sha256,
    }


# --- discovery ---------------------------------------------------------------------------


def discover(root: Path, *, ordered: bool = True) -> Iterator[tuple[Path, str]]:
    """Files under ``root`` in path order, as ``(path, relative source)``.

    With ``ordered=False`` they come in the order the file system lists them, as the walk
    finds them, so that a large folder is never held in memory as one list.

    Hidden files and folders (names starting with ".") are skipped; everything else is
    listed, including formats no reader handles and things that are not regular files
    (FIFOs, sockets, devices): they are reported by :func:`read_document`, never opened
    for reading, and not dropped.  The walk never follows a symbolic link to a folder, so
    link loops cannot hang it.  A link to a regular file inside the input folder is read
    through its target (the source keeps the link's name); any other link (out of the
    folder, dangling, a loop) is listed as the link itself, which :func:`read_document`
    reports as ``symlink_skipped``.

    The source is always printable text, the same in every output and message: bytes that
    are not UTF-8 become ``\\xNN`` and control or invisible characters (a newline, an ANSI
    escape, a right-to-left override) their Python escapes (``\\n``, ``\\x1b``,
    ``\\u202e``), so that no name can break a line, drive a terminal or fail to encode.
    """
    import os
    import stat

    def shown(parts: tuple[str, ...]) -> str:
        text = "/".join(os.fsencode(part).decode("utf-8", "backslashreplace") for part in parts)
        return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)

    if not root.is_dir():
        # one file named on purpose: a link to it is followed; anything else is reported
        yield (Path(os.path.realpath(root)) if root.is_symlink() and root.is_file() else root), shown((root.name,))
        return
    base = os.path.realpath(root)

    def walk() -> Iterator[tuple[str, Path]]:
        folders: list[tuple[str, tuple[str, ...]]] = [(str(root), ())]
        while folders:
            folder, parts = folders.pop()
            try:
                entries = os.scandir(folder)
            except OSError:
                if parts:  # a folder that cannot be listed is reported, not silently dropped
                    yield shown(parts), Path(folder)
                continue
            with entries:
                for entry in entries:
                    if entry.name.startswith("."):
                        continue
                    relative = (*parts, entry.name)
                    try:
                        if entry.is_symlink():
                            target = os.path.realpath(entry.path)
                            inside = os.path.commonpath([base, target]) == base
                            info = os.stat(target) if inside else None
                            if info is not None and stat.S_ISDIR(info.st_mode):
                                continue  # its files are listed where they really are
                            if info is not None and stat.S_ISREG(info.st_mode):
                                yield shown(relative), Path(target)
                                continue
                            yield shown(relative), Path(entry.path)  # reported: symlink_skipped
                        elif entry.is_dir(follow_symlinks=False):
                            folders.append((entry.path, relative))
                        else:
                            yield shown(relative), Path(entry.path)
                    except (OSError, ValueError, RuntimeError):  # a link loop, a vanished entry
                        yield shown(relative), Path(entry.path)

    found = sorted(walk(), key=lambda item: item[0]) if ordered else walk()
    for source, path in found:
        yield path, source


# --- one document ---------------------------------------------------------------------------


def ner_for(options: ExtractOptions) -> NerModel | NoNer:
    """The NER pipeline the options ask for (loaded once per process), or none."""
    return load_model(options.ner) if options.ner else NoNer()


def extract_document(
    path: str | Path,
    schema: TargetSchema,
    *,
    source: str | None = None,
    options: ExtractOptions | None = None,
    ner: NerModel | NoNer | None = None,
) -> DocumentResult:
    """Read one file and extract every field of ``schema`` from it."""
    path = Path(path)
    return extract_documents([(path, source or path.name)], schema, options=options, ner=ner)[0]


def extract_documents(
    tasks: list[tuple[Path, str]],
    schema: TargetSchema,
    *,
    options: ExtractOptions | None = None,
    ner: NerModel | NoNer | None = None,
    on_step: Callable[[str | None], None] | None = None,
) -> list[DocumentResult]:
    """Read several files, run NER over their texts in one batch, extract each one.

    The result of each document is the same as :func:`extract_document`'s; batching only
    lets the NER pipeline work on several texts at once (``nlp.pipe``).  ``on_step`` is
    told which document is being worked on (None while NER runs over the whole batch).
    """
    options = options or ExtractOptions()
    ner = ner if ner is not None else ner_for(options)
    step = on_step or (lambda source: None)
    read = []
    for path, source in tasks:
        step(source)
        started = time.perf_counter()
        read.append((read_document(Path(path), source, options), time.perf_counter() - started))
    texts = [doc.text if doc.status.readable and doc.text.strip() else "" for doc, _ in read]
    step(None)
    started = time.perf_counter()
    entities = _entities_of(ner, texts)
    ner_share = (time.perf_counter() - started) / max(1, len(texts))
    results = []
    for (doc, seconds), found in zip(read, entities):
        step(doc.source)
        results.append(_finish_document(doc, schema, found, options, seconds + ner_share))
    return results


def extract_tasks(
    tasks: Iterable[tuple[Path, str]], schema: TargetSchema, options: ExtractOptions, *, stats: dict[str, int] | None = None
) -> Iterator[DocumentResult]:
    """Extract ``(path, source)`` tasks, yielding each result as it is done: in worker
    processes, or in this process, a batch at a time, with ``workers=0``.  ``tasks`` is
    read as it goes (it may be a generator)."""
    if options.workers == 0:
        ner = ner_for(options)
        pending = iter(tasks)
        while batch := list(islice(pending, BATCH_SIZE)):
            yield from extract_documents(batch, schema, options=options, ner=ner)
        return
    from .workers import run_documents

    yield from run_documents(tasks, schema, options, stats=stats)


class _NerFailed(Exception):
    """The NER pipeline raised on this document's text."""


def _entities_of(ner: NerModel | NoNer, texts: list[str]) -> list[tuple[Entity, ...] | None]:
    """NER over a batch of texts; if the batch fails, each text alone (None: that one failed)."""
    if not any(texts):
        return [() for _ in texts]
    try:
        return list(ner.pipe(texts))
    except (ModelMissing, KeyboardInterrupt, MemoryError):
        raise
    except Exception:  # noqa: BLE001 - find the text at fault; the others go on
        out: list[tuple[Entity, ...] | None] = []
        for text in texts:
            try:
                out.append(ner.entities(text) if text else ())
            except (ModelMissing, KeyboardInterrupt, MemoryError):
                raise
            except Exception:  # noqa: BLE001
                out.append(None)
        return out


def _finish_document(doc: Document, schema: TargetSchema, entities: tuple[Entity, ...] | None, options: ExtractOptions,
                     seconds: float) -> DocumentResult:
    started = time.perf_counter()
    status, reason, note = doc.status, doc.reason, doc.note
    warnings = doc.warnings
    try:
        if entities is None:
            raise _NerFailed()
        with patterns.time_limit(options.limits.regex_seconds), patterns.collect_timeouts() as timed_out:
            values = process_text(doc, schema, entities, options)
        if timed_out:
            warnings += (patterns.TIMEOUT_WARNING,)
    except (ModelMissing, KeyboardInterrupt):
        raise
    except _NerFailed:
        status, reason, note = DocStatus.FAILED, "extract_error", "named-entity recognition failed on this document"
        values = unread_values(schema, reason)
    except Exception as exc:  # noqa: BLE001 - an extractor bug must fail one document only
        status, reason, note = DocStatus.FAILED, "extract_error", f"extraction failed ({type(exc).__name__})"
        values = unread_values(schema, reason)
    return DocumentResult(
        source=doc.source,
        sha256=doc.sha256,
        status=status,
        reason=reason,
        note=note,
        reader=doc.reader,
        encoding=doc.encoding,
        pages=doc.pages,
        chars=len(doc.text),
        warnings=warnings,
        seconds=seconds + time.perf_counter() - started,
        values=values,
    )


def process_text(doc: Document, schema: TargetSchema, entities: tuple[Entity, ...], options: ExtractOptions) -> tuple[FieldValue, ...]:
    """Extract, resolve and validate every field of one read document (its NER entities given)."""
    if not doc.status.readable:
        return unread_values(schema, doc.reason or str(doc.status))
    analysis, candidates = extract_candidates(doc, schema, entities)
    resolved = resolve_document(schema, analysis, candidates)
    out = []
    for spec in schema.fields:
        item = validate_value(spec, resolved[spec.name])
        if item.span is not None:
            item = replace(item, page=doc.page_of(item.span.start), snippet=doc.snippet(item.span, options.snippet_width))
        out.append(item)
    return tuple(out)


# --- a folder --------------------------------------------------------------------------------


def extract_folder(
    input_path: str | Path,
    schema: TargetSchema,
    *,
    options: ExtractOptions | None = None,
    progress: Progress | None = None,
    store: Store | None = None,
    reextract: bool = False,
    notify: Callable[[str], None] | None = None,
) -> ExtractionResult:
    """Extract every file under ``input_path``.  One bad file never stops the run.

    With a ``store`` (:class:`structurize.store.Store`, opened and locked by the caller),
    only documents and fields the store does not already hold are extracted, each document
    is recorded in its own transaction, and the run is recorded; ``notify`` receives one-line
    messages about the run (a schema change, documents no longer in the folder).
    """
    options = options or ExtractOptions()
    root = Path(input_path)
    if not root.exists():
        raise UsageError(f"input not found: {root}")
    options = options.for_schema(schema.time_limit, schema.memory_limit)
    started = time.perf_counter()
    run_id = None
    fingerprint = ""
    stats: dict[str, int] = {}
    if store is not None:
        from . import incremental

        results, report = incremental.run(
            list(discover(root)), schema, store, options, str(root.resolve()), reextract=reextract, progress=progress, notify=notify,
            stats=stats,
        )
        run_id = report.run_id
        fingerprint = report.fingerprint
    else:
        results = ResultSpool(schema)
        # the results are put in path order by the spool: the walk need not sort them
        for result in extract_tasks(discover(root, ordered=False), schema, options, stats=stats):
            results.add(result)
            if progress is not None:
                progress(result.source)
    return ExtractionResult(
        schema=schema,
        documents=results,
        input_root=str(root),
        seconds=time.perf_counter() - started,
        settings={
            "ner": options.ner or "off",
            "review_below": schema.review_below,
            "workers": options.workers if options.workers is not None else "auto",
            "time_limit": options.limits.seconds,
            "memory_limit": options.limits.memory_mb,
            "run": run_id,
            **stats,
        },
        fingerprint=fingerprint,
    )


def count_inputs(input_path: str | Path) -> int:
    root = Path(input_path)
    return sum(1 for _ in discover(root, ordered=False)) if root.exists() else 0
