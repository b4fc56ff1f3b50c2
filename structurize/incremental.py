"""Incremental runs over a workspace store: extract only what is new, reuse the rest.

A document is identified by the SHA-256 of its bytes.  A stored value is reused when its
document's hash, its field's definition hash and the extractor version all match; anything
else is extracted again.  So an unchanged folder costs one hash per file; a renamed file is
the same document; a changed file is a new document (its old values stay in the store as
history); a new field, or a field whose definition changed, is extracted for every
document, and nothing else is.
"""

from __future__ import annotations

import hashlib
import json
import time
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from .api import extract_tasks
from .errors import UsageError
from .faults import fault_point
from .options import ExtractOptions
from .readers import file_sha256
from .schema.model import TargetSchema
from .spool import ResultSpool
from .store import Store
from .types import DocumentResult
from .version import EXTRACTOR_VERSION, __version__

#: Reasons that say more about the machine than the document: such a document is retried.
RETRY_REASONS = frozenset({"timeout", "worker_crash", "memory_limit", "extract_error", "changed_during_read"})


def extraction_key(options: ExtractOptions) -> str:
    """What stored values are made by: the extractors' version and the NER pipeline (or
    none).  A value is reused only under the same key; other run settings that change what
    a document yields are handled by :func:`_retry`."""
    return f"{EXTRACTOR_VERSION}/ner={options.ner or 'off'}"


def _retry(state: tuple[str, str, list[str]] | None, options: ExtractOptions) -> bool:
    """Whether a stored document must be read again under this run's settings."""
    if state is None:
        return False
    status, reason, warnings = state
    if reason in RETRY_REASONS:
        return True
    if status == "needs_password" and options.pdf_password:
        return True  # a password is given now
    if options.ocr and (status == "no_text_layer" or "image_only_pages" in warnings):
        return True  # OCR may read it now
    return not options.ocr and "ocr" in warnings  # read by OCR before, not this time
Notify = Callable[[str], None]


def _digest(data: Any) -> str:
    return hashlib.sha256(json.dumps(data, sort_keys=True, default=str).encode("utf-8")).hexdigest()


def schema_hash(schema: TargetSchema) -> str:
    return _digest(schema.descriptor)


def field_hashes(schema: TargetSchema) -> dict[str, str]:
    """One hash per field: its descriptor plus the schema-wide settings that shape extraction.

    A change to another field does not change this field's hash.  (Cues of other fields can
    in rare layouts change which label a field claims; ``--reextract`` redoes everything.)
    """
    settings = dict(schema.descriptor.get("extract") or {})
    for key in ("time_limit", "memory_limit"):  # run settings, not extraction
        settings.pop(key, None)
    return {spec.name: _digest({"field": spec.descriptor, "schema": settings}) for spec in schema.fields}


@dataclass(frozen=True)
class SchemaChange:
    added: tuple[str, ...] = ()
    changed: tuple[str, ...] = ()
    removed: tuple[str, ...] = ()

    @property
    def any(self) -> bool:
        return bool(self.added or self.changed or self.removed)

    def describe(self, documents: int, fields: int) -> str:
        parts = [f"+{len(self.added)} field{'s' * (len(self.added) != 1)}"] if self.added else []
        if self.changed:
            parts.append(f"~{len(self.changed)} field{'s' * (len(self.changed) != 1)}")
        if self.removed:
            parts.append(f"-{len(self.removed)} field{'s' * (len(self.removed) != 1)}")
        need = f"{documents} document{'s' * (documents != 1)} need{'s' * (documents == 1)} {fields} field{'s' * (fields != 1)} re-extracted"
        return f"schema changed: {', '.join(parts)}; {need}"


def compare(previous: dict[str, str] | None, current: dict[str, str]) -> SchemaChange:
    if previous is None:
        return SchemaChange()
    return SchemaChange(
        added=tuple(name for name in current if name not in previous),
        changed=tuple(name for name in current if name in previous and previous[name] != current[name]),
        removed=tuple(name for name in previous if name not in current),
    )


@dataclass
class RunReport:
    run_id: int
    extracted: int = 0
    reused: int = 0
    missing: list[str] = field(default_factory=list)
    change: SchemaChange = field(default_factory=SchemaChange)
    messages: list[str] = field(default_factory=list)
    fingerprint: str = ""


def run(
    tasks: list[tuple[Path, str]],
    schema: TargetSchema,
    store: Store,
    options: ExtractOptions,
    input_root: str,
    *,
    reextract: bool = False,
    progress: Callable[[str], None] | None = None,
    notify: Notify | None = None,
    stats: dict[str, int] | None = None,
) -> tuple[ResultSpool, RunReport]:
    """One incremental run: plan, extract what is needed (one transaction each), rebuild."""
    say = notify or (lambda message: None)
    hashes = field_hashes(schema)
    previous = store.previous_run(schema.name)
    change = compare(json.loads(previous["field_hashes"]) if previous else None, hashes)
    key = extraction_key(options)
    shas = {source: file_sha256(path) for path, source in tasks}
    cached = store.cached_fields(schema.name, shas.values(), key)
    states = store.document_states(shas.values())
    plan: list[tuple[Path, str, list[str]]] = []
    reuse: list[tuple[str, str]] = []
    for path, source in tasks:
        sha = shas[source]
        have = cached.get(sha, {})
        needed = [name for name in schema.field_names if reextract or hashes[name] not in have.get(name, set())]
        if _retry(states.get(sha), options):
            needed = list(schema.field_names)
        if needed:
            plan.append((path, source, needed))
        else:
            reuse.append((source, sha))
    if change.any and previous is not None:
        affected = set(change.added) | set(change.changed)
        known = [needed for _, source, needed in plan if cached.get(shas[source])]
        fields = {name for needed in known for name in needed if name in affected}
        say(change.describe(sum(1 for needed in known if affected & set(needed)), len(fields)))
    run_id = store.begin_run(schema, hashes, schema_hash(schema), input_root, __version__, key)
    report = RunReport(run_id, change=change)
    current = set(shas.values())
    for path, sha in store.known_paths(schema.name, input_root).items():
        if path not in shas and sha not in current:
            store.record_missing(run_id, path, sha)
            report.missing.append(path)
    if report.missing:
        say(f"{len(report.missing)} document{'s' * (len(report.missing) != 1)} seen before in this folder "
            f"{'are' if len(report.missing) != 1 else 'is'} no longer there: " + ", ".join(report.missing[:5])
            + (" ..." if len(report.missing) > 5 else ""))
    store.reuse_documents(run_id, schema.name, input_root, reuse)
    report.reused = len(reuse)
    for source, _ in reuse:
        if progress:
            progress(source)
    needed_by_source = {source: needed for _, source, needed in plan}
    unrecorded: list[DocumentResult] = []
    for result in extract_tasks([(path, source) for path, source, _ in plan], schema, options, stats=stats):
        fields = needed_by_source[result.source]
        if not result.sha256 and shas[result.source]:
            # The worker did not come back (timeout, crash): record the failure under the hash
            # taken when planning, so that it is reported now and retried by the next run.
            result = replace(result, sha256=shas[result.source])
            fields = list(schema.field_names)
        if result.sha256 != shas[result.source]:
            fields = list(schema.field_names)  # the file changed since it was hashed
        fault_point("after_result_before_begin")
        if result.sha256:
            # only the fields needed: values of unchanged fields stay as they were (and so do
            # reviewers' decisions on them), even where another field's new cues would now claim
            # a label differently; --reextract gives exactly what a fresh run gives
            store.save_document(run_id, schema.name, input_root, result.source, result, hashes, fields, key)
        else:
            unrecorded.append(result)  # not even hashable (unreadable): reported by this run, not stored
        fault_point("after_commit_before_progress")
        report.extracted += 1
        if progress:
            progress(result.source)
    started = time.perf_counter()
    documents = store.run_documents(run_id)
    results = finish(schema, store, documents, unrecorded, key=key)
    counts = {"extracted": report.extracted, "reused": report.reused, "missing": len(report.missing)}
    for result in results:
        counts[str(result.status)] = counts.get(str(result.status), 0) + 1
    store.finish_run(run_id, counts, note=f"rebuilt in {time.perf_counter() - started:.3f} s")
    if not unrecorded:
        report.fingerprint = fingerprint(schema, store, documents, key)
    return results, report


def fingerprint(schema: TargetSchema, store: Store, documents: list[tuple[str, str]], key: str) -> str:
    """What a run's outputs are made of: the schema, the versions and settings, the documents,
    and the last run that extracted anything for this schema (stored values change only then)."""
    return _digest([schema_hash(schema), key, __version__, sorted(documents), store.last_extraction(schema.name)])


def finish(schema: TargetSchema, store: Store, documents: list[tuple[str, str]],
           extra: list[DocumentResult] | None = None, *, key: str | None = None) -> ResultSpool:
    """Stored results for these documents (plus ``extra`` ones), with the table-wide checks
    applied, in a spool: read from the store in chunks, never all in memory at once.  With a
    ``key`` (:func:`extraction_key`) only values made under it; else the latest of each."""
    spool = ResultSpool(schema, store.results(schema, field_hashes(schema), key, documents))
    for result in extra or ():
        spool.add(result)
    return spool


def export(store: Store, schema: TargetSchema, run_id: int | None = None, notify: Notify | None = None) -> ResultSpool:
    """Results from the store without extracting: one run's documents, or the whole workspace.

    Refuses a run made with another schema; says in one line (``notify``) when fields are
    defined differently from the run the values come from (they come out empty until the
    next ``extract``).
    """
    with store.snapshot():
        return _export(store, schema, run_id, notify)


def _export(store: Store, schema: TargetSchema, run_id: int | None, notify: Notify | None) -> ResultSpool:
    if run_id is not None:
        run = store.run(run_id)
        if run is None:
            raise UsageError(f"no run {run_id}")
        if run["schema_name"] != schema.name:
            raise UsageError(f"run {run_id} was made with schema '{run['schema_name']}', not '{schema.name}'")
    else:
        run = store.previous_run(schema.name)
    if run is not None and notify is not None:
        change = compare(json.loads(run["field_hashes"]), field_hashes(schema))
        stale = len(change.added) + len(change.changed)
        if stale:
            notify(f"schema changed since run {run['id']}: {stale} field{'s' * (stale != 1)} defined differently "
                   f"{'are' if stale != 1 else 'is'} empty; run `structurize extract` to fill "
                   f"{'them' if stale != 1 else 'it'}")
    documents = store.run_documents(run_id) if run_id is not None else store.workspace_documents(schema.name)
    return finish(schema, store, documents)
