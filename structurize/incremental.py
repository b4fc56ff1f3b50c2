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
from .options import ExtractOptions
from .readers import file_sha256
from .schema.model import TargetSchema
from .spool import ResultSpool
from .store import Store
from .types import DocumentResult
from .version import EXTRACTOR_VERSION, __version__

#: Reasons that say more about the machine than the document: such a document is retried.
RETRY_REASONS = frozenset({"timeout", "worker_crash", "memory_limit", "extract_error", "changed_during_read"})
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
        need = f"{documents} document{'s' * (documents != 1)} need {fields} field{'s' * (fields != 1)} re-extracted"
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
    shas = {source: file_sha256(path) for path, source in tasks}
    cached = store.cached_fields(schema.name, shas.values(), EXTRACTOR_VERSION)
    failed = {sha for sha, reason in store.reasons(shas.values()).items() if reason in RETRY_REASONS}
    plan: list[tuple[Path, str, list[str]]] = []
    reuse: list[tuple[str, str]] = []
    for path, source in tasks:
        sha = shas[source]
        have = cached.get(sha, {})
        needed = [name for name in schema.field_names if reextract or hashes[name] not in have.get(name, set())]
        if sha in failed:
            needed = list(schema.field_names)
        if needed:
            plan.append((path, source, needed))
        else:
            reuse.append((source, sha))
    if change.any and previous is not None:
        fields = {name for _, _, needed in plan for name in needed}
        say(change.describe(len(plan), len(fields)))
    run_id = store.begin_run(schema, hashes, schema_hash(schema), input_root, __version__, EXTRACTOR_VERSION)
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
        if result.sha256:
            store.save_document(run_id, schema.name, input_root, result.source, result, hashes, fields, EXTRACTOR_VERSION)
        else:
            unrecorded.append(result)  # not even hashable (unreadable): reported by this run, not stored
        report.extracted += 1
        if progress:
            progress(result.source)
    started = time.perf_counter()
    documents = store.run_documents(run_id)
    results = finish(schema, store, documents, unrecorded)
    counts = {"extracted": report.extracted, "reused": report.reused, "missing": len(report.missing)}
    for result in results:
        counts[str(result.status)] = counts.get(str(result.status), 0) + 1
    store.finish_run(run_id, counts, note=f"rebuilt in {time.perf_counter() - started:.3f} s")
    if not unrecorded:
        report.fingerprint = fingerprint(schema, store, documents)
    return results, report


def fingerprint(schema: TargetSchema, store: Store, documents: list[tuple[str, str]]) -> str:
    """What a run's outputs are made of: the schema, the versions, the documents, and the last
    run that extracted anything for this schema (stored values change only then)."""
    return _digest([schema_hash(schema), EXTRACTOR_VERSION, __version__, sorted(documents), store.last_extraction(schema.name)])


def finish(schema: TargetSchema, store: Store, documents: list[tuple[str, str]],
           extra: list[DocumentResult] | None = None) -> ResultSpool:
    """Stored results for these documents (plus ``extra`` ones), with the table-wide checks
    applied, in a spool: read from the store in chunks, never all in memory at once."""
    spool = ResultSpool(schema, store.results(schema, field_hashes(schema), EXTRACTOR_VERSION, documents))
    for result in extra or ():
        spool.add(result)
    return spool


def export(store: Store, schema: TargetSchema, run_id: int | None = None) -> ResultSpool:
    """Results from the store without extracting: one run's documents, or the whole workspace."""
    documents = store.run_documents(run_id) if run_id is not None else store.workspace_documents(schema.name)
    return finish(schema, store, documents)
