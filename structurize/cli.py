"""The ``structurize`` command.  It parses arguments, calls the library once, renders.

Exit codes: 0 success; 1 an unexpected failure; 2 a usage or schema error; 3 the run
finished but some documents could not be read.
"""

from __future__ import annotations

import errno
import json
import os
import sys
import time
from pathlib import Path
from typing import Annotated, Optional

import typer
from rich.console import Console

from . import api
from .errors import StructurizeError, UsageError
from .options import PASSWORD_ENV, ExtractOptions
from .schema import TargetSchema, load_schema
from .store import Store
from .score import score_path
from .write import write_outputs

EXIT_OK, EXIT_FAILURE, EXIT_USAGE, EXIT_DOCUMENTS_FAILED = 0, 1, 2, 3
PROGRESS_AFTER_SECONDS = 1.0
#: Short texts for reason codes whose reader gave no note of its own.
NOTES = {
    "no_text_layer": "no text layer (a scanned image?); run with --ocr, which needs tesseract-ocr",
    "suspect_empty": "the pages decode to no text at all",
    "stream_data_loss": "part of the file is damaged; what could be read was used",
    "unsupported_format": "not a format structurize reads",
    "partial": "read in part; see the warnings in documents.csv",
}

app = typer.Typer(
    name="structurize",
    help="Turn folders of HR documents into validated, traceable tables.",
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
)
err = Console(stderr=True, highlight=False, soft_wrap=True)
out = Console(highlight=False, soft_wrap=True)

SchemaOpt = Annotated[Path, typer.Option("--schema", "-s", help="Schema file (YAML or JSON), or a folder of schemas named after the input's subfolders.")]
StoreOpt = Annotated[Optional[Path], typer.Option("--store", help="Workspace store file: extract only what is new, and record the run.")]
QuietOpt = Annotated[bool, typer.Option("--quiet", "-q", help="No progress bar and no summary; errors only.")]


def _fail(message: str, code: int) -> typer.Exit:
    """Print an error (one line, or one line per problem of a schema) and say how to exit."""
    for line in message.splitlines() or [""]:
        err.print(f"structurize: {line}", markup=False)
    return typer.Exit(code)


def _escape(text: str) -> str:
    """File names in messages: control characters shown as escapes, never raw."""
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


@app.command("extract")
def extract_command(
    input_path: Annotated[Path, typer.Argument(metavar="INPUT", help="Folder (or one file) of documents.")],
    schema: SchemaOpt,
    output: Annotated[Path, typer.Option("--out", "-o", help="Folder for the outputs.")],
    quiet: QuietOpt = False,
    no_ner: Annotated[bool, typer.Option("--no-ner", help="Rules only: do not load the NER pipeline.")] = False,
    plain_csv: Annotated[bool, typer.Option("--plain-csv", help="Write CSV without the UTF-8 byte-order mark Excel needs.")] = False,
    workers: Annotated[Optional[int], typer.Option("--workers", min=0, help="Worker processes (default: the cores, at most 4; 0: no isolation).")] = None,
    time_limit: Annotated[Optional[float], typer.Option("--time-limit", min=0.1, max=3600, help="Seconds allowed per document (default 60, or the schema's extract.time_limit).")] = None,
    memory_limit: Annotated[Optional[int], typer.Option("--memory-limit", min=256, max=65536, help="Megabytes allowed per worker (default 1536, or the schema's extract.memory_limit).")] = None,
    password_file: Annotated[Optional[Path], typer.Option("--pdf-password-file", help=f"File holding the password for encrypted PDFs (or set {PASSWORD_ENV}).")] = None,
    ocr: Annotated[bool, typer.Option("--ocr", help="Read scanned PDF pages with Tesseract (tesseract-ocr must be installed).")] = False,
    store: StoreOpt = None,
    reextract: Annotated[bool, typer.Option("--reextract", help="With --store: extract every document again, ignoring stored values.")] = False,
) -> None:
    """Extract every schema field from every document under INPUT into OUT."""
    try:
        options = ExtractOptions(
            ner=None if no_ner else ExtractOptions.ner,
            csv_bom=not plain_csv,
            workers=min(workers, (os.cpu_count() or 1) * 2) if workers is not None else None,
            time_limit=time_limit,
            memory_limit=memory_limit,
            pdf_password=_password(password_file),
            ocr=ocr,
        )
        jobs = _jobs(input_path, schema, output)
        # pre-flight: every schema valid, every output folder writable, the store usable
        loaded = [(folder, load_schema(schema_file), out_dir) for folder, schema_file, out_dir in jobs]
        for _, _, out_dir in loaded:
            _check_writable(out_dir)
        opened = _open_store(store, lock=True, quiet=quiet) if store is not None else None
        failed = 0
        try:
            for folder, target, out_dir in loaded:
                failed += _run_one(folder, target, out_dir, options, quiet, opened, reextract)
        finally:
            if opened is not None:
                opened.close()
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    if failed:
        raise typer.Exit(EXIT_DOCUMENTS_FAILED)


def _password(path: Path | None) -> str | None:
    """The PDF password from a file or the environment; never from the command line."""
    if path is not None:
        try:
            return path.read_text(encoding="utf-8").strip("\r\n")
        except OSError as exc:
            raise UsageError(f"{_escape(str(path))}: cannot read the password file ({exc.strerror or exc})") from None
    return os.environ.get(PASSWORD_ENV) or None


def _jobs(input_path: Path, schema: Path, output: Path) -> list[tuple[Path, Path, Path]]:
    if not input_path.exists():
        raise UsageError(f"{_escape(str(input_path))}: input not found")
    if not schema.exists():
        raise UsageError(f"{_escape(str(schema))}: schema not found")
    if schema.is_dir():
        if not input_path.is_dir():
            raise UsageError("a schema folder needs an input folder with one subfolder per schema")
        jobs = []
        for schema_file in sorted([*schema.glob("*.yaml"), *schema.glob("*.yml"), *schema.glob("*.json")]):
            folder = input_path / schema_file.stem
            if folder.is_dir():
                jobs.append((folder, schema_file, output / schema_file.stem))
        if not jobs:
            raise UsageError(f"no subfolder of {_escape(str(input_path))} is named after a schema in {_escape(str(schema))}")
        return jobs
    return [(input_path, schema, output)]


def _open_store(path: Path, *, lock: bool, quiet: bool, create: bool = True) -> Store:
    opened = Store.open(path, create=create)
    if lock:
        warning = opened.location_warning()
        if warning and not quiet:
            err.print(f"structurize: {_escape(str(path))}: {warning}", markup=False)
        try:
            message = opened.acquire()
        except StructurizeError:
            opened.close()
            raise
        if message and not quiet:
            err.print(f"structurize: {_escape(str(path))}: {message}", markup=False)
    return opened


def _run_one(folder: Path, target: TargetSchema, out_dir: Path, options: ExtractOptions, quiet: bool,
             store: Store | None = None, reextract: bool = False) -> int:
    total = api.count_inputs(folder)
    started = time.monotonic()
    progress = None
    task = None
    done = 0

    def tick(source: str) -> None:
        nonlocal progress, task, done
        done += 1
        if quiet or not err.is_terminal:
            return
        if progress is None and time.monotonic() - started > PROGRESS_AFTER_SECONDS and done < total:
            from rich.progress import Progress

            progress = Progress(console=err, transient=True)
            progress.start()
            task = progress.add_task(f"{target.name}", total=total)
        if progress is not None and task is not None:
            progress.update(task, completed=done)

    try:
        result = api.extract_folder(
            folder, target, options=options, progress=tick, store=store, reextract=reextract,
            notify=lambda message: None if quiet else err.print(f"structurize: {message}", markup=False),
        )
    finally:
        if progress is not None:
            progress.stop()
    paths = _write(result, out_dir, options.csv_bom)
    _report_documents(result, quiet)
    if not quiet:
        _summary(target.name, result, paths["table"].parent)
    return result.counts()["not_read"]


def _write(result: api.ExtractionResult, out_dir: Path, bom: bool) -> dict[str, Path]:
    """Write the outputs; a full or unwritable disk is one line (the old outputs stay)."""
    try:
        return write_outputs(result, out_dir, bom=bom)
    except OSError as exc:
        reason = "no space left on the device" if exc.errno in (errno.ENOSPC, errno.EDQUOT, errno.EFBIG) else (exc.strerror or type(exc).__name__)
        hint = "; the values are in the store: run `structurize export` once it is fixed" if result.settings.get("run") else ""
        raise StructurizeError(f"{_escape(str(out_dir))}: cannot write the outputs ({reason}){hint}") from None


def _report_documents(result: api.ExtractionResult, quiet: bool) -> None:
    for source, status, reason, note in result.problems():
        note = note or NOTES.get(reason or str(status), status.value.replace("_", " "))
        err.print(f"structurize: {_escape(source)}: {reason or status}: {note}", markup=False)


def _summary(name: str, result: api.ExtractionResult, where: Path) -> None:
    counts = result.counts()
    statuses = ", ".join(f"{n} {status}" for status, n in result.status_counts().items()) or "none"
    run = f"run {result.settings['run']}: " if result.settings.get("run") else ""
    out.print(
        f"{name}: {run}{counts['documents']} documents ({statuses}); values: "
        f"{counts['ok']} ok, {counts['review']} to review, {counts['missing']} missing, {counts['invalid']} invalid; "
        f"outputs in {where}",
        markup=False,
    )


def _check_writable(out_dir: Path) -> None:
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        probe = out_dir / ".structurize-write-test"
        probe.write_bytes(b"")
        probe.unlink()
    except OSError as exc:
        raise UsageError(f"{_escape(str(out_dir))}: output folder is not writable ({exc.strerror or exc})") from None


@app.command("check-schema")
def check_schema_command(schema: Annotated[Path, typer.Argument(help="Schema file (YAML or JSON).")]) -> None:
    """Check a schema file without reading any document."""
    try:
        target = load_schema(schema)
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    kinds = ", ".join(f"{spec.name} ({spec.hints.kind})" for spec in target.fields)
    out.print(f"{schema.name}: ok, {len(target.fields)} fields: {kinds}", markup=False)


@app.command("score")
def score_command(
    gold: Annotated[Path, typer.Argument(metavar="GOLD", help="Gold table (table.csv layout), or a folder of <kind>.csv.")],
    output: Annotated[Path, typer.Argument(metavar="OUT", help="Output folder of `extract` (or of per-kind subfolders).")],
    alternates: Annotated[Optional[Path], typer.Option("--alternates", help="CSV of accepted alternative answers (document, field, value).")] = None,
    as_json: Annotated[bool, typer.Option("--json", help="Print the scores as JSON.")] = False,
    show_mistakes: Annotated[bool, typer.Option("--mistakes", help="List every wrong cell.")] = False,
) -> None:
    """Compare an output with a hand-labelled gold table."""
    try:
        score = score_path(gold, output, alternates_path=alternates)
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    if as_json:
        import json

        out.print(json.dumps(score.as_dict(), indent=2, ensure_ascii=False), markup=False)
        return
    _render_score(score, show_mistakes)


def _render_score(score, show_mistakes: bool) -> None:  # type: ignore[no-untyped-def]
    from rich.table import Table

    wide = Console(highlight=False, width=None if out.is_terminal else 132)
    table = Table(title="structurize score", show_lines=False)
    for column in ("scope", "cells", "accuracy", "precision", "recall", "review load", "errors flagged"):
        table.add_column(column, justify="right" if column != "scope" else "left")
    rows = [(f"  {name}", item) for name, item in score.fields.items()]
    for name, item in score.kinds.items():
        rows.append((name, item))
    rows.append(("overall", score.overall))
    for name, item in rows:
        table.add_row(name, str(item.cells), f"{item.accuracy:.3f}", f"{item.precision:.3f}", f"{item.recall:.3f}",
                      f"{item.review_load:.3f}", f"{item.error_recall:.3f} ({item.wrong_flagged}/{item.wrong})")
    wide.print(table)
    if show_mistakes:
        for mistake in score.mistakes:
            mark = "flagged" if mistake.flagged else "NOT flagged"
            out.print(f"{mistake.kind}/{mistake.document} {mistake.field}: gold {mistake.gold!r} got {mistake.output!r} ({mark})", markup=False)


@app.command("runs")
def runs_command(store: Annotated[Path, typer.Option("--store", help="The workspace store file.")]) -> None:
    """List the runs recorded in a workspace store."""
    try:
        opened = _open_store(store, lock=False, quiet=True, create=False)
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    with opened:
        rows = opened.runs()
    from rich.table import Table

    table = Table(title=f"runs in {store.name}")
    for column in ("run", "schema", "started", "finished", "state", "documents"):
        table.add_column(column)
    for row in rows:
        counts = json.loads(row["counts"] or "{}")
        documents = f"{counts.get('extracted', 0)} extracted, {counts.get('reused', 0)} reused, {counts.get('missing', 0)} gone" if counts else ""
        table.add_row(str(row["id"]), row["schema_name"], row["started_at"], row["finished_at"] or "", row["state"], documents)
    Console(highlight=False, width=None if out.is_terminal else 132).print(table)


@app.command("run")
def run_command(
    run_id: Annotated[int, typer.Argument(metavar="RUN", help="Run number (see `structurize runs`).")],
    store: Annotated[Path, typer.Option("--store", help="The workspace store file.")],
) -> None:
    """Show one run: when, which schema and tool version, counts, and every input."""
    try:
        opened = _open_store(store, lock=False, quiet=True, create=False)
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    with opened:
        run = opened.run(run_id)
    if run is None:
        raise _fail(f"{_escape(str(store))}: no run {run_id}", EXIT_USAGE)
    for key in ("id", "schema_name", "schema_hash", "tool_version", "extractor_version", "input_root", "started_at", "finished_at", "state"):
        out.print(f"{key}: {run[key] if run[key] is not None else ''}", markup=False)
    out.print(f"counts: {run['counts'] or '{}'}", markup=False)
    for doc in run["documents"]:
        fields = json.loads(doc["fields"])
        extra = f" ({', '.join(fields)})" if fields and doc["action"] == "extracted" else ""
        out.print(f"  {doc['action']:9} {_escape(doc['path'])} {doc['sha256'][:12]}{extra}", markup=False)


@app.command("export")
def export_command(
    schema: SchemaOpt,
    output: Annotated[Path, typer.Option("--out", "-o", help="Folder for the outputs.")],
    store: Annotated[Path, typer.Option("--store", help="The workspace store file.")],
    run_id: Annotated[Optional[int], typer.Option("--run", help="Only the documents of this run (default: the whole workspace).")] = None,
    plain_csv: Annotated[bool, typer.Option("--plain-csv", help="Write CSV without the UTF-8 byte-order mark Excel needs.")] = False,
    quiet: QuietOpt = False,
) -> None:
    """Write the outputs from the store, without extracting anything."""
    from . import incremental

    try:
        target = load_schema(schema)
        _check_writable(output)
        opened = _open_store(store, lock=False, quiet=True, create=False)
        with opened:
            notify = None if quiet else (lambda message: err.print(f"structurize: {message}", markup=False))
            try:
                documents = incremental.export(opened, target, run_id, notify=notify)
            except UsageError as exc:
                raise UsageError(f"{_escape(str(store))}: {exc}") from None
        result = api.ExtractionResult(schema=target, documents=documents, settings={"run": run_id})
        paths = _write(result, output, not plain_csv)
    except StructurizeError as exc:
        raise _fail(str(exc), exc.exit_code) from None
    if not quiet:
        _summary(target.name, result, paths["table"].parent)


def main() -> None:
    """The console script: like ``app()``, but a usage error is one line on stderr (exit 2)."""
    from typer.exceptions import Abort, TyperException

    try:
        code = app(standalone_mode=False)
    except TyperException as exc:  # typer's own copy of click's exceptions derive from it
        if type(exc).__name__ == "NoArgsIsHelpError":
            exc.show()  # type: ignore[attr-defined]  # no arguments at all: the help, as ever
            sys.exit(EXIT_USAGE)
        message = " ".join(exc.format_message().split())
        context = getattr(exc, "ctx", None)
        if exc.exit_code == EXIT_USAGE and context is not None:
            message += f" (see '{context.command_path} --help')"
        err.print(f"structurize: {message}", markup=False)
        sys.exit(exc.exit_code)
    except (KeyboardInterrupt, Abort):
        err.print("structurize: interrupted", markup=False)
        sys.exit(130)
    sys.exit(code or 0)

if __name__ == "__main__":
    main()
