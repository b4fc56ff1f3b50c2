"""Write a run's outputs: table.csv, values.csv, documents.csv, datapackage.json, dictionary.

CSV files follow RFC 4180 (comma, double quotes doubled, CRLF line ends) and are UTF-8 with
a byte-order mark by default, so that Excel on Windows opens them as UTF-8 on double-click;
pandas, the csv module (``encoding="utf-8-sig"``) and frictionless read the mark correctly.
(Written with the csv module, not pandas: rows are streamed from the run's results to the
files, so memory does not grow with the folder, and an incremental run that changes
nothing does not pay pandas' import; ``ExtractionResult.to_frames`` gives DataFrames.)
Every text cell that starts with a character a spreadsheet treats as a formula
(``= + - @``, tab, CR, LF, NUL, per OWASP "CSV Injection" and ASVS 5.0 1.2.10) gets a
leading apostrophe, and every field is quoted.  Numbers and dates that passed validation
are written in canonical form and are not prefixed (a cell of a typed column that is not
in canonical form, such as the raw text of an invalid value, is guarded like text).  Each
file is written to a temporary file in the same folder, synced, then renamed over the old
one, only once every file is complete.

No writer may crash halfway on what a document contained (cpython #97503 on NUL in the csv
writer; pandas #22610 and pgpq #103 on lone surrogates; catalogue T11 in tests/CATALOGUE.md): before anything is written, NUL and the other C0/C1 control characters (except tab,
line feed and carriage return) and lone surrogates are replaced by U+FFFD in every cell,
header and descriptor.  ``datapackage.json`` records how many cells were changed
(``structurize.sanitised_cells``) and that the formula guard is on, and the ``reason`` of
each changed value in values.csv says so.
"""

from __future__ import annotations

import codecs
import csv
import io
import json
import os
import re
import tempfile
from collections import Counter
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any, BinaryIO

from .api import ExtractionResult, document_row, table_row, value_rows
from .faults import fault_point
from .readers import file_sha256
from .schema.model import FieldSpec, TargetSchema
from .types import DocumentResult, ValueStatus

#: First characters that make a spreadsheet evaluate a cell (OWASP + ASVS 1.2.10).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\n", "\0")
TABLE_FILE = "table.csv"
VALUES_FILE = "values.csv"
DOCUMENTS_FILE = "documents.csv"
PACKAGE_FILE = "datapackage.json"
DICTIONARY_FILE = "data_dictionary.md"
DICTIONARY_CSV = "data_dictionary.csv"
VALUES_COLUMNS = [
    "document", "field", "value", "confidence", "status", "start", "end", "page", "snippet",
    "extractor", "reason", "alternatives",
]
DOCUMENTS_COLUMNS = ["document", "status", "reason", "note", "reader", "encoding", "pages", "chars", "warnings", "seconds", "sha256"]
TABLE_SCHEMA_PROFILE = "https://datapackage.org/profiles/2.0/tableschema.json"
PACKAGE_PROFILE = "https://datapackage.org/profiles/2.0/datapackage.json"


#: Characters no cell may carry into an output: C0/C1 controls but tab, LF and CR; DEL; lone
#: surrogates (from ``surrogateescape`` decoding: no UTF-8 encoder accepts them).
UNSAFE_CHARACTERS = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\ud800-\udfff]")
REPLACEMENT = "\ufffd"
SANITISED_NOTE = "control characters replaced"
#: Cells of typed columns that are left unguarded: canonical numbers, dates, times, booleans.
_CANONICAL = re.compile(r"-?\d+(\.\d+)?([eE][+-]?\d+)?|\d{4}-\d{2}-\d{2}([T ][\d:.]+([+-]\d{2}:\d{2}|Z)?)?|true|false")


def sanitise(text: str) -> str:
    """``text`` with every :data:`UNSAFE_CHARACTERS` character replaced by U+FFFD."""
    return UNSAFE_CHARACTERS.sub(REPLACEMENT, text)


def _no_surrogates(text: str) -> str:
    return re.sub("[\ud800-\udfff]", REPLACEMENT, text)


def guard(cell: Any) -> str:
    """A cell as text, with a leading ``'`` if a spreadsheet would read it as a formula."""
    if cell is None:
        return ""
    text = str(cell)
    if text.startswith(FORMULA_STARTS) or (text.startswith("'") and text[1:].startswith((*FORMULA_STARTS, "'"))):
        return "'" + text  # the second case keeps the round trip through unguard exact
    return text


def unguard(text: str) -> str:
    """Undo :func:`guard` when reading our own CSV back."""
    if text.startswith("'") and text[1:].startswith((*FORMULA_STARTS, "'")):
        return text[1:]
    return text


def csv_bytes(header: Sequence[str], rows: Iterable[Sequence[Any]], *, bom: bool = True, guarded: Sequence[bool] | None = None) -> bytes:
    """RFC 4180 CSV as bytes.  ``guarded[i]`` says whether column i gets the formula guard."""
    buffer = io.BytesIO()
    write_csv(buffer, header, rows, bom=bom, guarded=guarded)
    return buffer.getvalue()


def write_csv(binary: BinaryIO, header: Sequence[str], rows: Iterable[Sequence[Any]], *, bom: bool = True,
              guarded: Sequence[bool] | None = None) -> None:
    """Write RFC 4180 CSV (UTF-8, every field quoted, CRLF) to a binary file."""
    stream = CsvStream(binary, header, bom=bom, guarded=guarded)
    stream.write(rows)
    stream.close()


class CsvStream:
    """RFC 4180 CSV written to a binary file a few rows at a time: the header (and the
    byte-order mark) first, then :meth:`write` as often as needed, then :meth:`close`,
    which leaves the binary file open for its owner."""

    def __init__(self, binary: BinaryIO, header: Sequence[str], *, bom: bool = True, guarded: Sequence[bool] | None = None) -> None:
        if bom:
            binary.write(b"\xef\xbb\xbf")
        self._text = io.TextIOWrapper(binary, encoding="utf-8", errors=_REPLACE_UNENCODABLE, newline="")
        self._writer = csv.writer(self._text, quoting=csv.QUOTE_ALL, lineterminator="\r\n")
        self._guarded = guarded
        self._writer.writerow([guard(sanitise(str(name))) for name in header])

    def write(self, rows: Iterable[Sequence[Any]]) -> None:
        guarded = self._guarded
        for row in rows:
            self._writer.writerow([guard(value) if (guarded is None or guarded[i]) else _typed(value) for i, value in enumerate(row)])

    def close(self) -> None:
        self._text.flush()
        self._text.detach()


def _replace_unencodable(error: UnicodeError) -> tuple[str, int]:
    """Lone surrogates become U+FFFD: never a UnicodeEncodeError halfway through a file."""
    if isinstance(error, UnicodeEncodeError):
        return REPLACEMENT, error.end
    raise error


_REPLACE_UNENCODABLE = "structurize.replacement"
codecs.register_error(_REPLACE_UNENCODABLE, _replace_unencodable)


def _typed(value: Any) -> str:
    """A cell of a typed column: canonical values as they are, anything else guarded."""
    if value is None:
        return ""
    text = str(value)
    return text if not text or _CANONICAL.fullmatch(text) else guard(text)


class OutputFiles:
    """Files written to temporaries beside their final names, then renamed over the old
    files one after the other, each synced first; readers see an old file or a new one,
    never half of one.  If anything fails before :meth:`commit`, every temporary is removed
    and the old files stay as they were."""

    def __init__(self) -> None:
        self._pending: list[tuple[Path, str, BinaryIO]] = []

    def open(self, path: Path) -> BinaryIO:
        path.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
        binary = os.fdopen(handle, "wb")
        self._pending.append((path, temporary, binary))
        return binary

    def commit(self) -> None:
        try:
            for path, temporary, binary in self._pending:
                binary.flush()
                os.fsync(binary.fileno())
                binary.close()
                fault_point("before_output_rename")
                os.replace(temporary, path)
                fault_point("after_output_rename")
        except BaseException:
            self.discard()
            raise
        folders = {path.parent for path, _, _ in self._pending}
        self._pending = []
        for folder in folders:
            _sync_folder(folder)

    def discard(self) -> None:
        for _, temporary, binary in self._pending:
            try:
                binary.close()  # may fail again on a full disk: the temporary goes anyway
            except OSError:
                pass
            try:
                os.unlink(temporary)
            except OSError:
                pass
        self._pending = []

    def __enter__(self) -> OutputFiles:
        return self

    def __exit__(self, kind: object, *rest: object) -> None:
        if kind is None:
            self.commit()
        else:
            self.discard()


def atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` so that readers see the old file or the new one, never half."""
    with OutputFiles() as files:
        files.open(path).write(data)


def _sync_folder(folder: Path) -> None:
    try:
        directory = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(directory)
    except OSError:
        pass
    finally:
        os.close(directory)


def _text_columns(schema: TargetSchema) -> list[bool]:
    """Which table.csv columns hold free text (guarded); typed numbers and dates do not."""
    return [True] + [spec.type in ("string", "any") for spec in schema.fields]


OUTPUT_FILES = (TABLE_FILE, VALUES_FILE, DOCUMENTS_FILE, PACKAGE_FILE, DICTIONARY_FILE, DICTIONARY_CSV)


def _remove_stale_temporaries(out: Path) -> None:
    """Delete temporary files a killed earlier run left behind (only our own names)."""
    if not out.is_dir():
        return
    for name in OUTPUT_FILES:
        for stale in out.glob(f".{name}.*.tmp"):
            try:
                stale.unlink()
            except OSError:
                pass


VALUES_GUARD = [True, True, True, False, False, False, False, False, True, False, True, True]


def write_outputs(result: ExtractionResult, out_dir: str | Path, *, bom: bool = True) -> dict[str, Path]:
    """Write every output file of ``result`` into ``out_dir``; return their paths.

    The documents are read once, in order, and streamed into table.csv, values.csv and
    documents.csv together, so that the memory used does not grow with the number of
    documents; the data dictionary and the data package are written from counts.
    """
    out = Path(out_dir)
    schema = result.schema
    _remove_stale_temporaries(out)
    paths = {
        "table": out / TABLE_FILE,
        "values": out / VALUES_FILE,
        "documents": out / DOCUMENTS_FILE,
        "datapackage": out / PACKAGE_FILE,
        "dictionary": out / DICTIONARY_FILE,
        "dictionary_csv": out / DICTIONARY_CSV,
    }
    fingerprint = f"{result.fingerprint}:bom={bom}" if result.fingerprint else ""
    if fingerprint and _unchanged(out, fingerprint, paths):
        return paths  # the same inputs, values and settings as the outputs already there
    counter = _Sanitiser()
    counts = FieldCounts()
    names = schema.field_names
    table_columns = ["document", *names]
    with OutputFiles() as files:
        table = CsvStream(files.open(paths["table"]), table_columns, bom=bom, guarded=_text_columns(schema))
        values = CsvStream(files.open(paths["values"]), VALUES_COLUMNS, bom=bom, guarded=VALUES_GUARD)
        documents = CsvStream(files.open(paths["documents"]), DOCUMENTS_COLUMNS, bom=bom)
        for doc in result.documents:
            counts.add(doc)
            table.write(_columns(counter.rows([table_row(doc, names)]), table_columns))
            values.write(_columns(counter.rows(value_rows(doc), note_in="reason"), VALUES_COLUMNS))
            documents.write(_columns(counter.rows([document_row(doc)]), DOCUMENTS_COLUMNS))
        for stream in (table, values, documents):
            stream.close()
        dictionary = dictionary_rows(schema, counts)
        write_csv(files.open(paths["dictionary_csv"]), DICTIONARY_COLUMNS, _columns(dictionary, DICTIONARY_COLUMNS), bom=bom)
        files.open(paths["dictionary"]).write(sanitise(dictionary_markdown(schema, dictionary)).encode("utf-8"))
        descriptor = datapackage(result, bom=bom)
        descriptor["structurize"] = {"csv_formula_guard": True, "sanitised_cells": counter.changed}
        files.open(paths["datapackage"]).write((_no_surrogates(json.dumps(descriptor, indent=2, ensure_ascii=False)) + "\n").encode("utf-8"))
    manifest = out / MANIFEST_FILE
    if fingerprint:
        digests = {name: file_sha256(path) for name, path in paths.items()}
        atomic_write(manifest, json.dumps({"fingerprint": fingerprint, "files": digests}, sort_keys=True).encode("utf-8"))
    elif manifest.exists():
        manifest.unlink()
    return paths


#: Records what the outputs in a folder were made from, so that an unchanged run can skip them.
MANIFEST_FILE = ".structurize-outputs.json"


def _unchanged(out: Path, fingerprint: str, paths: dict[str, Path]) -> bool:
    try:
        manifest = json.loads((out / MANIFEST_FILE).read_text(encoding="utf-8"))
        if manifest.get("fingerprint") != fingerprint:
            return False
        return all(file_sha256(path) == manifest["files"][name] for name, path in paths.items())
    except (OSError, ValueError, KeyError, TypeError):
        return False


class _Sanitiser:
    """Replaces unsafe characters in every string cell and counts the cells it changed."""

    def __init__(self) -> None:
        self.changed = 0

    def cell(self, value: Any) -> Any:
        if isinstance(value, str) and UNSAFE_CHARACTERS.search(value):
            self.changed += 1
            return sanitise(value)
        return value

    def rows(self, rows: list[dict[str, Any]], *, note_in: str | None = None) -> list[dict[str, Any]]:
        out = []
        for row in rows:
            clean = {key: self.cell(value) for key, value in row.items()}
            if note_in is not None and clean.get("value") is not row.get("value"):
                reason = clean.get(note_in) or ""
                clean[note_in] = f"{reason}; {SANITISED_NOTE}" if reason else SANITISED_NOTE
            out.append(clean)
        return out


def _columns(rows: Iterable[dict[str, Any]], columns: Sequence[str]) -> list[list[Any]]:
    """Rows as lists in ``columns`` order (None for an absent value)."""
    return [[_plain(row.get(column)) for column in columns] for row in rows]


def _plain(value: Any) -> Any:
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return int(value)
    return value


# --- data package and dictionary -------------------------------------------------------------


def _table_schema(schema: TargetSchema) -> dict[str, Any]:
    """The user's schema (hints included) with the ``document`` key column in front."""
    descriptor = json.loads(json.dumps(schema.descriptor, default=str))
    fields = [
        {
            "name": "document",
            "title": "Document",
            "type": "string",
            "description": "Path of the source document, relative to the input folder.",
            "constraints": {"required": True, "unique": True},
        }
    ] + [_field_descriptor(spec) for spec in schema.fields]
    descriptor["fields"] = fields
    descriptor["$schema"] = TABLE_SCHEMA_PROFILE
    descriptor.setdefault("missingValues", [""])
    descriptor["primaryKey"] = ["document"]
    for key in ("name", "title", "description"):
        descriptor.pop(key, None)
    return descriptor


def _field_descriptor(spec: FieldSpec) -> dict[str, Any]:
    descriptor = json.loads(json.dumps(spec.descriptor, default=str))
    extract = descriptor.get("extract")
    if isinstance(extract, dict) and isinstance(extract.get("aliases"), dict):
        extract["aliases"] = {str(key).lower() if isinstance(key, bool) else str(key): value for key, value in extract["aliases"].items()}
    return descriptor


def datapackage(result: ExtractionResult, *, bom: bool = True) -> dict[str, Any]:
    """A Frictionless Data Package v2 descriptor for table.csv."""
    schema = result.schema
    name = _slug(schema.name or "extraction")
    return {
        "$schema": PACKAGE_PROFILE,
        "name": name,
        "title": schema.title or schema.name,
        "description": schema.description,
        "resources": [
            {
                "name": "table",
                "path": TABLE_FILE,
                "type": "table",
                "format": "csv",
                "mediatype": "text/csv",
                "encoding": "utf-8-sig" if bom else "utf-8",
                "dialect": {"delimiter": ",", "lineTerminator": "\r\n", "quoteChar": '"', "doubleQuote": True, "header": True},
                "schema": _table_schema(schema),
            }
        ],
    }


def _slug(text: str) -> str:
    slug = "".join(ch if ch.isalnum() or ch in "-_." else "-" for ch in text.lower()).strip("-")
    return slug or "extraction"


DICTIONARY_COLUMNS = [
    "field", "title", "type", "definition", "allowed_values", "constraints", "extracted_as", "documents", "filled",
    "fill_rate", "flagged_for_review", "read_documents",
]


class FieldCounts:
    """Per field: documents, filled values and values flagged for review, counted one
    document at a time (for the data dictionary)."""

    def __init__(self) -> None:
        self.readable = 0
        self.total: Counter[str] = Counter()
        self.filled: Counter[str] = Counter()
        self.flagged: Counter[str] = Counter()

    def add(self, doc: DocumentResult) -> None:
        if doc.status.readable:
            self.readable += 1
        for item in doc.values:
            self.total[item.field] += 1
            if item.value is not None:
                self.filled[item.field] += 1
            if item.status in (ValueStatus.REVIEW, ValueStatus.INVALID):
                self.flagged[item.field] += 1


def data_dictionary(result: ExtractionResult) -> list[dict[str, Any]]:
    """One row per field: title, type, definition, allowed values, fill rate, review share."""
    counts = FieldCounts()
    for doc in result.documents:
        counts.add(doc)
    return dictionary_rows(result.schema, counts)


def dictionary_rows(schema: TargetSchema, counts: FieldCounts) -> list[dict[str, Any]]:
    rows = []
    for spec in schema.fields:
        total, filled = counts.total[spec.name], counts.filled[spec.name]
        allowed = spec.enum or ()
        constraints = {k: v for k, v in spec.constraints.items() if k != "enum"}
        rows.append(
            {
                "field": spec.name,
                "title": spec.title or spec.name,
                "type": spec.type + (f" ({spec.format})" if spec.format not in ("default", "") else ""),
                "definition": " ".join(spec.description.split()),
                "allowed_values": "; ".join(str(v) for v in allowed),
                "constraints": ", ".join(f"{k}={v}" for k, v in constraints.items()),
                "extracted_as": spec.hints.kind,
                "documents": total,
                "filled": filled,
                "fill_rate": round(filled / total, 3) if total else 0.0,
                "flagged_for_review": counts.flagged[spec.name],
                "read_documents": counts.readable,
            }
        )
    return rows


def dictionary_markdown(schema: TargetSchema, dictionary: list[dict[str, Any]]) -> str:
    lines = [f"# Data dictionary: {schema.title or schema.name}", ""]
    if schema.description:
        lines += [" ".join(schema.description.split()), ""]
    lines += [
        "Values are machine-extracted from personal data. Review them before anyone decides",
        "anything about a person; local privacy and employment law govern their use.",
        "",
    ]
    for row in dictionary:
        lines.append(f"## {row['field']} — {row['title']}")
        lines.append("")
        lines.append(f"- **Type:** {row['type']}")
        lines.append(f"- **Definition:** {row['definition'] or '(none given)'}")
        if row["allowed_values"]:
            lines.append(f"- **Allowed values:** {row['allowed_values']}")
        if row["constraints"]:
            lines.append(f"- **Constraints:** {row['constraints']}")
        lines.append(f"- **Fill rate:** {row['filled']} of {row['documents']} documents ({row['fill_rate']:.0%})")
        lines.append(f"- **Flagged for review:** {row['flagged_for_review']}")
        lines.append("")
    return "\n".join(lines)
