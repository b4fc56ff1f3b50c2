"""Read a schema file (YAML or JSON), check it against the contract, build a TargetSchema.

Every problem of the file is reported, each as one line naming the file, the place in the
file (``fields[3].extract.as``) and the line, in file order, all in one
:class:`~structurize.errors.SchemaError` (its ``lines``).  Checking stops early only where a
problem makes the rest meaningless (not YAML or JSON, values that are not plain data, a top
level that is not a mapping, no list of fields).  A field's ``extract.as`` must be a kind
that can give a value of its Table Schema type (:data:`~.model.KIND_TYPES`).  The file is data,
never code: YAML is read with the safe loader only, and a file that would expand into a
huge tree through aliases is refused.
"""

from __future__ import annotations

import bisect
import datetime as dt
import difflib
import json
import os
import re
import stat
import unicodedata
from collections.abc import Callable
from pathlib import Path
from typing import Any

import yaml

from ..errors import SchemaError
from ..patterns import PatternError, UserPattern, compile_pattern
from .model import (
    DATE_ORDERS,
    DEFAULT_FUZZY_DISTANCE,
    DEFAULT_REVIEW_BELOW,
    KIND_TYPES,
    KINDS,
    TYPES,
    FieldHints,
    FieldSpec,
    TargetSchema,
)

MAX_SCHEMA_BYTES = 1_000_000
#: Upper bound on YAML nodes after alias expansion (refuses "billion laughs").
MAX_EXPANDED_NODES = 100_000
#: Upper bound on YAML aliases (``*name``) in one file (common practice, no source: a schema
#: needs few; alias bombs need many, PyYAML issue #235).
MAX_ALIASES = 100
#: Upper bound on nested mappings and lists, YAML or JSON.
MAX_DEPTH = 100
#: Longest field name accepted.
MAX_NAME_LENGTH = 200
#: First characters a spreadsheet reads as the start of a formula (a field name is a column header).
FORMULA_STARTS = ("=", "+", "-", "@")
#: Column names the outputs use themselves (table.csv's first column).
RESERVED_NAMES = ("document",)
#: YAML tags a schema may carry explicitly; anything else (``!!python/...``, ``!local``) is refused.
ALLOWED_TAGS = frozenset(
    f"tag:yaml.org,2002:{name}" for name in ("str", "int", "float", "bool", "null", "seq", "map")
)

FIELD_EXTRACT_KEYS = ("as", "cues", "aliases", "pattern", "fuzzy_distance")
SCHEMA_EXTRACT_KEYS = ("date_order", "review_below", "fuzzy_distance", "time_limit", "memory_limit")
CONSTRAINT_KEYS = (
    "required",
    "unique",
    "enum",
    "pattern",
    "minimum",
    "maximum",
    "exclusiveMinimum",
    "exclusiveMaximum",
    "minLength",
    "maxLength",
)
#: Keys Table Schema (and this tool) define on a field and at the top level.  Other keys
#: are kept and written back, but one that looks like a misspelling of these is an error.
FIELD_KEYS = (
    "name", "title", "description", "type", "format", "example", "constraints", "rdfType",
    "missingValues", "trueValues", "falseValues", "bareNumber", "groupChar", "decimalChar", "extract",
)
SCHEMA_KEYS = (
    "name", "title", "description", "fields", "primaryKey", "foreignKeys", "missingValues",
    "extract", "$schema", "profile", "version", "fieldsMatch", "uniqueKeys",
)
#: The kind a field gets when its ``extract.as`` is absent, by Table Schema type.
DEFAULT_KIND_FOR_TYPE = {
    "date": "date",
    "datetime": "date",
    "boolean": "flag",
    "number": "number",
    "integer": "number",
    "year": "number",
}

Locate = Callable[[tuple[Any, ...]], str]


def load_schema(path: str | Path) -> TargetSchema:
    """Load and validate the schema file at ``path``."""
    path = Path(path)
    source = _shown(path.name)
    raw = _read_bounded(path, source)
    text = _decode(raw, source)
    if path.suffix.lower() == ".json":
        data, locate, found = _parse_json(text, source)
    else:
        data, locate, found = _parse_yaml(text, source)
    return _build(data, source, locate, found)


def _read_bounded(path: Path, source: str) -> bytes:
    """The file's bytes, at most :data:`MAX_SCHEMA_BYTES`; only a regular file is opened for reading.

    The file is opened without blocking and checked on the open descriptor, so a FIFO or a
    device named ``schema.yaml`` is refused instead of hanging the run.
    """
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError as exc:
        raise SchemaError(source, "", f"cannot read file ({exc.strerror or type(exc).__name__})") from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise SchemaError(source, "", "not a regular file")
        if info.st_size > MAX_SCHEMA_BYTES:
            raise SchemaError(source, "", f"file is larger than {MAX_SCHEMA_BYTES} bytes")
        chunks: list[bytes] = []
        size = 0
        while size <= MAX_SCHEMA_BYTES:
            chunk = os.read(fd, min(1 << 16, MAX_SCHEMA_BYTES + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as exc:
        raise SchemaError(source, "", f"cannot read file ({exc.strerror or type(exc).__name__})") from None
    finally:
        os.close(fd)
    if size > MAX_SCHEMA_BYTES:  # it grew while being read
        raise SchemaError(source, "", f"file is larger than {MAX_SCHEMA_BYTES} bytes")
    return b"".join(chunks)


def _decode(raw: bytes, source: str) -> str:
    if not raw.strip(b" \t\r\n\xef\xbb\xbf"):
        raise SchemaError(source, "", "file is empty")
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise SchemaError(source, "", "file is UTF-16 text; save it as UTF-8")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        raise SchemaError(source, f"line {line}", "file is not UTF-8 text (binary data, or another encoding)") from None
    if "\x00" in text:
        line = text.count("\n", 0, text.index("\x00")) + 1
        raise SchemaError(source, f"line {line}", "file holds NUL characters (binary data?)")
    return text


def schema_from_descriptor(
    data: Any, *, source: str = "<schema>", locate: Locate | None = None
) -> TargetSchema:
    """Validate an already-parsed descriptor (a dict) and build the schema."""
    return _build(data, source, locate or (lambda path: ""), [])


def _build(data: Any, source: str, locate: Locate, found: list[tuple[int, SchemaError]]) -> TargetSchema:
    """Check everything that can be checked, then raise one error naming every problem.

    ``found`` are problems the parser already met (duplicate keys), with their lines.
    Checks stop early only where a problem makes the rest meaningless: values that are
    not plain data, a top level that is not a mapping, no list of fields.
    """
    checker = _Checker(source, locate)
    for line, error in found:
        checker.add(error, line)
    if not _check_values(data, checker):
        raise checker.collected()  # the checks below assume plain, printable data
    schema = checker.schema(data)
    checker.stop_if_any()
    return schema


#: Integers at or above this size cannot even be printed (Python's integer string conversion length limit of 4,300 digits: Python docs, CVE-2020-10735).
_HUGE = 10**4000
_PLAIN = (str, bool, float, type(None), dt.date)


def _check_values(data: Any, checker: _Checker) -> bool:
    """Only JSON-like data: string keys, bounded nesting, printable numbers (iterative, any depth).

    Every offending value is reported; nothing under it is looked at.  True when there was none.
    """
    before = len(checker.problems)
    stack: list[tuple[Any, tuple[Any, ...]]] = [(data, ())]
    while stack:
        value, path = stack.pop()
        if len(path) > MAX_DEPTH:
            checker.report(path[:MAX_DEPTH], f"nesting is deeper than {MAX_DEPTH} levels")
            continue
        if isinstance(value, dict):
            items = []
            for key, item in value.items():
                # YAML may read keys as booleans (flag aliases: true/false) or numbers
                if not isinstance(key, (str, bool, int, float, type(None))):
                    checker.report(path, f"keys must be strings, not {type(key).__name__}")
                elif isinstance(key, int) and not -_HUGE < key < _HUGE:
                    checker.report(path, "number has too many digits")
                else:
                    items.append((item, (*path, key)))
            stack.extend(reversed(items))
        elif isinstance(value, (list, tuple)):
            stack.extend(reversed([(item, (*path, index)) for index, item in enumerate(value)]))
        elif isinstance(value, int):
            if not -_HUGE < value < _HUGE:
                checker.report(path, "number has too many digits")
        elif not isinstance(value, _PLAIN):
            checker.report(path, f"unsupported value of type {type(value).__name__}")
    return len(checker.problems) == before


# --- parsing -------------------------------------------------------------------------


def _parse_json(text: str, source: str) -> tuple[Any, Locate, list[tuple[int, SchemaError]]]:
    try:
        data = json.loads(text)  # a repeated key: the last one counts here, and the layout scan reports it
    except json.JSONDecodeError as exc:
        raise SchemaError(source, f"line {exc.lineno}, column {exc.colno}", f"not valid JSON ({exc.msg})") from None
    except RecursionError:
        raise SchemaError(source, "", "nesting is too deep") from None
    except ValueError as exc:  # a number over Python's 4,300-digit limit, for one
        raise SchemaError(source, "", f"not valid JSON ({_one_line(exc)})") from None
    lines, found = _json_layout(text, source)  # duplicates (with their lines) and depth

    def locate(path: tuple[Any, ...]) -> str:
        for end in range(len(path), 0, -1):
            line = lines.get(tuple(path[:end]))
            if line is not None:
                return f"line {line}"
        return ""

    return data, locate, found


#: One JSON token of a valid document: a string, a punctuation mark, or a bare literal.
_JSON_TOKEN = re.compile(r'"(?:[^"\\]|\\.)*"|[{}\[\]:,]|[^\s{}\[\]:,"]+')


def _json_layout(text: str, source: str) -> tuple[dict[tuple[Any, ...], int], list[tuple[int, SchemaError]]]:
    """The line of every value of a valid JSON text, by path, and every duplicate key; refuses deep nesting.

    Iterative (no recursion), so any nesting depth gives a clean error.
    """
    found: list[tuple[int, SchemaError]] = []
    starts = [0] + [m.end() for m in re.finditer("\n", text)]

    def line_of(offset: int) -> int:
        return bisect.bisect_right(starts, offset)

    lines: dict[tuple[Any, ...], int] = {}
    # frames: [is_object, path, key or index, expecting a key, keys seen]
    stack: list[list[Any]] = []

    def here() -> tuple[Any, ...]:
        if not stack:
            return ()
        frame = stack[-1]
        return (*frame[1], frame[2])

    for match in _JSON_TOKEN.finditer(text):
        token = match.group()
        offset = match.start()
        if token in ("{", "["):
            path = here()
            lines.setdefault(path, line_of(offset))
            if len(stack) >= MAX_DEPTH:
                raise SchemaError(source, f"line {line_of(offset)}", f"nesting is deeper than {MAX_DEPTH} levels")
            stack.append([token == "{", path, 0 if token == "[" else None, token == "{", set()])
        elif token in ("}", "]"):
            if stack:
                stack.pop()
        elif token == ",":
            if stack:
                frame = stack[-1]
                if frame[0]:
                    frame[3] = True
                else:
                    frame[2] += 1
        elif token == ":":
            continue
        elif stack and stack[-1][0] and stack[-1][3]:
            frame = stack[-1]
            try:
                key = json.loads(token)
            except ValueError:
                key = token
            if key in frame[4]:
                found.append((line_of(offset), SchemaError(source, f"line {line_of(offset)}", f"duplicate key {key!r}")))
            frame[4].add(key)
            frame[2] = key
            frame[3] = False
        else:
            lines.setdefault(here(), line_of(offset))
    return lines, found


def _one_line(text: object) -> str:
    return " ".join(str(text).split())


def _mark(mark: Any) -> str:
    return f"line {mark.line + 1}, column {mark.column + 1}" if mark is not None else ""


def _parse_yaml(text: str, source: str) -> tuple[Any, Locate, list[tuple[int, SchemaError]]]:
    _scan_yaml_events(text, source)
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        raise SchemaError(source, _mark(exc.problem_mark), f"not valid YAML ({_one_line(exc.problem)})") from None
    except yaml.YAMLError as exc:
        raise SchemaError(source, "", f"not valid YAML ({_one_line(exc)})") from None
    except RecursionError:
        raise SchemaError(source, "", "nesting is too deep") from None
    if root is None:
        raise SchemaError(source, "", "file is empty")
    found = _check_node_tree(root, source)
    try:
        data = yaml.SafeLoader("").construct_document(root)
    except yaml.constructor.ConstructorError as exc:
        raise SchemaError(source, _mark(exc.problem_mark), f"unsupported YAML ({_one_line(exc.problem)})") from None
    except (yaml.YAMLError, ValueError, OverflowError) as exc:  # a bad !!int, !!float, date ...
        raise SchemaError(source, "", f"unsupported YAML ({_one_line(exc) or type(exc).__name__})") from None
    except RecursionError:
        raise SchemaError(source, "", "nesting is too deep") from None

    def locate(path: tuple[Any, ...]) -> str:
        node = _node_at(root, path)
        return f"line {node.start_mark.line + 1}" if node is not None else ""

    return data, locate, found


def _scan_yaml_events(text: str, source: str) -> None:
    """Refuse deep nesting, alias floods and explicit tags from the event stream, before any tree is built.

    The parser is a state machine (no recursion), and the scan stops at the first problem,
    so a hostile file costs little.
    """
    depth = 0
    aliases = 0
    try:
        for event in yaml.parse(text, Loader=yaml.SafeLoader):
            if isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
                depth += 1
                if depth > MAX_DEPTH:
                    raise SchemaError(source, _mark(event.start_mark), f"nesting is deeper than {MAX_DEPTH} levels")
            elif isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
                depth -= 1
            elif isinstance(event, yaml.AliasEvent):
                aliases += 1
                if aliases > MAX_ALIASES:
                    raise SchemaError(source, _mark(event.start_mark), f"more than {MAX_ALIASES} aliases")
            tag = getattr(event, "tag", None)
            if tag is not None and tag != "!" and tag not in ALLOWED_TAGS:
                shown = tag.replace("tag:yaml.org,2002:", "!!")
                raise SchemaError(source, _mark(event.start_mark), f"unsupported YAML tag {shown!r} (a schema is data, not code)")
    except yaml.MarkedYAMLError as exc:
        raise SchemaError(source, _mark(exc.problem_mark), f"not valid YAML ({_one_line(exc.problem)})") from None
    except yaml.reader.ReaderError as exc:
        line = text.count("\n", 0, exc.position) + 1
        raise SchemaError(source, f"line {line}", f"not valid YAML (character U+{exc.character:04X} is not allowed)") from None
    except yaml.YAMLError as exc:
        raise SchemaError(source, "", f"not valid YAML ({_one_line(exc)})") from None
    except RecursionError:
        raise SchemaError(source, "", "nesting is too deep") from None


def _check_node_tree(root: yaml.Node, source: str) -> list[tuple[int, SchemaError]]:
    """Refuse alias bombs before anything is constructed; return every duplicate mapping key."""
    sizes: dict[int, int] = {}
    found: list[tuple[int, SchemaError]] = []

    def size(node: yaml.Node, depth: int) -> int:
        if depth > MAX_DEPTH:
            raise SchemaError(source, f"line {node.start_mark.line + 1}", "nesting is too deep")
        known = sizes.get(id(node))
        if known is not None:
            return known
        total = 1
        if isinstance(node, yaml.MappingNode):
            seen: set[str] = set()
            for key, value in node.value:
                if isinstance(key, yaml.ScalarNode):
                    if key.value in seen:
                        line = key.start_mark.line + 1
                        found.append((line, SchemaError(source, f"line {line}", f"duplicate key {key.value!r}")))
                    seen.add(key.value)
                total += size(key, depth + 1) + size(value, depth + 1)
        elif isinstance(node, yaml.SequenceNode):
            for item in node.value:
                total += size(item, depth + 1)
        if total > MAX_EXPANDED_NODES:
            raise SchemaError(
                source, f"line {node.start_mark.line + 1}", "aliases expand to too many nodes"
            )
        sizes[id(node)] = total
        return total

    try:
        size(root, 0)
    except SchemaError as error:  # the duplicates found before it are problems too
        listed = [item for _, item in sorted(found, key=lambda pair: pair[0])]
        raise _several(source, [*listed[: MAX_PROBLEMS - 1], error], len(listed) + 1) from None
    return found


def _several(source: str, shown: list[SchemaError], total: int) -> SchemaError:
    """One error listing ``shown`` (at most :data:`MAX_PROBLEMS`) of ``total`` problems, and
    how many more there are."""
    hidden = total - len(shown)
    return SchemaError.several([*shown, SchemaError(source, "", f"{hidden} more problems not listed")] if hidden else shown)


def _node_at(root: yaml.Node, path: tuple[Any, ...]) -> yaml.Node | None:
    node: yaml.Node | None = root
    for step in path:
        if isinstance(node, yaml.SequenceNode) and isinstance(step, int):
            node = node.value[step] if step < len(node.value) else None
        elif isinstance(node, yaml.MappingNode):
            found = None
            for key, value in node.value:
                if str(key.value) == str(step) or str(key.value).lower() == str(step).lower():
                    found = value
                    break
            node = found
        else:
            return node
        if node is None:
            return None
    return node


# --- checking ------------------------------------------------------------------------


def _suggest(word: str, choices: tuple[str, ...] | list[str]) -> str:
    close = difflib.get_close_matches(str(word), list(choices), n=1, cutoff=0.6)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _shown(text: str) -> str:
    """``text`` for a one-line message: control and invisible characters as escapes."""
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


def _path_text(path: tuple[Any, ...]) -> str:
    out = ""
    for step in path:
        out += f"[{step}]" if isinstance(step, int) else (f".{_shown(str(step))}" if out else _shown(str(step)))
    return out


#: At most this many problems are listed; one more line says how many were left out.
MAX_PROBLEMS = 50


class _Checker:
    """Checks a descriptor and collects every problem with the line it is on.

    :meth:`fail` builds the error for a place.  A check that cannot go on raises it; the
    caller records it with :meth:`attempt` (or :meth:`report`) and goes on with the next
    independent check, so that one run lists every problem of the file, in file order.
    """

    def __init__(self, source: str, locate: Locate) -> None:
        self.source = source
        self.locate = locate
        self.problems: list[tuple[int, int, SchemaError]] = []

    def fail(self, path: tuple[Any, ...], message: str) -> SchemaError:
        where = _path_text(path)
        line = self.locate(path) if path else ""
        if line:
            where = f"{where} ({line})" if where else line
        error = SchemaError(self.source, where, message)
        error._line = self._line_number(path)  # type: ignore[attr-defined]  # the order problems are listed in
        return error

    def _line_number(self, path: tuple[Any, ...]) -> int:
        """The line of ``path``, or of the nearest enclosing place that has one (0: none)."""
        for end in range(len(path), 0, -1):
            found = re.match(r"line (\d+)", self.locate(path[:end]))
            if found:
                return int(found.group(1))
        return 0

    # recording

    def add(self, error: SchemaError, line: int) -> None:
        self.problems.append((line, len(self.problems), error))

    def record(self, error: SchemaError) -> None:
        self.add(error, getattr(error, "_line", 0))

    def report(self, path: tuple[Any, ...], message: str) -> None:
        self.record(self.fail(path, message))

    def attempt(self, check: Callable[..., Any], *args: Any, default: Any = None, **kwargs: Any) -> Any:
        """``check(*args, **kwargs)``; a :class:`SchemaError` it raises is recorded and ``default`` returned."""
        try:
            return check(*args, **kwargs)
        except SchemaError as error:
            self.record(error)
            return default

    def fatal(self, path: tuple[Any, ...], message: str) -> SchemaError:
        """A problem after which nothing else can be checked: it, with every problem found so far."""
        self.report(path, message)
        return self.collected()

    def stop_if_any(self) -> None:
        if self.problems:
            raise self.collected()

    def collected(self) -> SchemaError:
        ordered = [error for _, _, error in sorted(self.problems, key=lambda item: item[:2])]
        unique = list({error.args[0]: error for error in ordered}.values())  # the first of each message
        return _several(self.source, unique[:MAX_PROBLEMS], len(unique))

    # shapes

    def mapping(self, value: Any, path: tuple[Any, ...]) -> dict[str, Any]:
        """``value`` if it is a mapping (raises if not); keys that are not strings are reported and left out."""
        if not isinstance(value, dict):
            raise self.fail(path, f"must be a mapping, not {_type_name(value)}")
        odd = [key for key in value if not isinstance(key, str)]
        for key in odd:
            self.report(path, f"key {key!r} must be a string")
        return {key: item for key, item in value.items() if isinstance(key, str)} if odd else value

    def strings(self, value: Any, path: tuple[Any, ...], *, allow_single: bool = True) -> tuple[str, ...]:
        """The non-empty strings of a list (raises if it is not a list); each bad item is reported."""
        if isinstance(value, str) and allow_single:
            value = [value]
        if not isinstance(value, list):
            raise self.fail(path, f"must be a list of strings, not {_type_name(value)}")
        out = []
        for index, item in enumerate(value):
            if isinstance(item, bool):
                self.report(
                    path + (index,),
                    f"{item!r} was read as a boolean; quote it (YAML reads yes/no/on/off as booleans)",
                )
                continue
            if isinstance(item, (int, float)):
                item = str(item)
            if not isinstance(item, str) or not item.strip():
                self.report(path + (index,), "must be a non-empty string")
                continue
            out.append(item.strip())
        return tuple(out)

    def misspelt_keys(self, block: dict[str, Any], known: tuple[str, ...], path: tuple[Any, ...], what: str) -> None:
        """Unknown keys are kept, unless one is a near miss of a known key (``requried``, ``tpye``)."""
        for key in block:
            if key in known or not isinstance(key, str):
                continue
            guess = _misspelling_of(key, known)
            if guess is not None:
                self.report(path + (key,), f"{key!r} is not a known {what} key (did you mean {guess!r}?)")

    def unknown_keys(self, block: dict[str, Any], allowed: tuple[str, ...], path: tuple[Any, ...], what: str) -> None:
        for key in block:
            if key not in allowed:
                self.report(path + (key,), f"{key!r} is not a known {what} key{_suggest(key, allowed)}")

    # schema level

    def schema(self, data: Any) -> TargetSchema | None:
        """The schema, or None when a problem was recorded (the caller raises them all)."""
        if not isinstance(data, dict):
            raise self.fatal((), f"must be a mapping, not {_type_name(data)}")
        data = self.mapping(data, ())
        self.misspelt_keys(data, SCHEMA_KEYS, (), "schema")
        top = self.attempt(self.mapping, data.get("extract") or {}, ("extract",), default={})
        self.unknown_keys(top, SCHEMA_EXTRACT_KEYS, ("extract",), "extract")
        date_order = self.attempt(self.date_order, top.get("date_order"))
        review_below = self.attempt(self.review_below, top.get("review_below", DEFAULT_REVIEW_BELOW), default=DEFAULT_REVIEW_BELOW)
        fuzzy = self.attempt(
            self.fuzzy, top.get("fuzzy_distance", DEFAULT_FUZZY_DISTANCE), ("extract", "fuzzy_distance"), default=DEFAULT_FUZZY_DISTANCE
        )
        time_limit = self.attempt(self.time_limit, top.get("time_limit"))
        memory_limit = self.attempt(self.memory_limit, top.get("memory_limit"))
        missing = ("",)
        if data.get("missingValues"):
            missing = self.attempt(self.strings, data["missingValues"], ("missingValues",), allow_single=False, default=("",))
        if "fields" not in data:
            raise self.fatal((), "missing 'fields'")
        raw_fields = data["fields"]
        if not isinstance(raw_fields, list) or not raw_fields:
            raise self.fatal(("fields",), "must be a non-empty list of fields")

        fields: list[FieldSpec] = []
        seen: dict[str, int] = {}
        names: list[str] = []
        for index, raw in enumerate(raw_fields):
            name = raw.get("name") if isinstance(raw, dict) else None
            if isinstance(name, str):
                names.append(name)
                # names that differ only in case, spacing or Unicode form collide in
                # spreadsheets and case-insensitive tools: refuse them (catalogue S4)
                folded = normalise_name(name)
                if folded in seen:
                    first = seen[folded]
                    where = self.locate(("fields", first, "name"))
                    self.report(
                        ("fields", index, "name"),
                        f"duplicate field name {name!r} (same as fields[{first}]): {raw_fields[first]['name']!r}"
                        + (f" on {where}" if where else "")
                        + "; names are compared ignoring case and spaces",
                    )
                else:
                    seen[folded] = index
            spec = self.field(raw, ("fields", index), fuzzy)
            if spec is not None:
                fields.append(spec)

        primary: Any = data.get("primaryKey") or ()
        if isinstance(primary, str):
            primary = (primary,)
        if isinstance(primary, (list, tuple)):
            primary = self.attempt(self.strings, list(primary), ("primaryKey",), allow_single=False, default=())
        else:
            self.report(("primaryKey",), f"must be a field name or a list of field names, not {_type_name(primary)}")
            primary = ()
        for key in primary:
            if key not in names:
                self.report(("primaryKey",), f"{key!r} is not a field{_suggest(key, names)}")

        if self.problems:
            return None
        name = data.get("name") or Path(self.source).stem
        return TargetSchema(
            name=str(name),
            fields=tuple(fields),
            source=self.source,
            title=str(data.get("title") or ""),
            description=str(data.get("description") or ""),
            date_order=date_order,
            review_below=float(review_below),
            time_limit=float(time_limit) if time_limit is not None else None,
            memory_limit=memory_limit,
            missing_values=missing,
            primary_key=tuple(primary),
            descriptor=data,
        )

    def date_order(self, value: Any) -> str | None:
        if value is None:
            return None
        if not isinstance(value, str) or value.upper() not in DATE_ORDERS:
            raise self.fail(("extract", "date_order"), f"must be one of {', '.join(DATE_ORDERS)}")
        return value.upper()

    def review_below(self, value: Any) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 <= value <= 1:
            raise self.fail(("extract", "review_below"), "must be a number between 0 and 1")
        return value

    def time_limit(self, value: Any) -> float | None:
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value <= 3600):
            raise self.fail(("extract", "time_limit"), "must be a number of seconds, above 0 and at most 3600")
        return value

    def memory_limit(self, value: Any) -> int | None:
        if value is not None and (isinstance(value, bool) or not isinstance(value, int) or not 256 <= value <= 65536):
            raise self.fail(("extract", "memory_limit"), "must be a whole number of megabytes from 256 to 65536")
        return value

    def fuzzy(self, value: Any, path: tuple[Any, ...]) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= 5:
            raise self.fail(path, "must be a whole number from 0 to 5")
        return value

    # field level

    def field(self, raw: Any, path: tuple[Any, ...], default_fuzzy: int) -> FieldSpec | None:
        """The field, or None when a problem was recorded; every part is checked either way."""
        before = len(self.problems)
        raw = self.attempt(self.mapping, raw, path)
        if raw is None:
            return None
        self.misspelt_keys(raw, FIELD_KEYS, path, "field")
        name = raw.get("name")
        if not isinstance(name, str) or not name.strip():
            self.report(path + ("name",), "every field needs a non-empty string 'name'")
        else:
            self.attempt(self.field_name, name, path + ("name",))
        type_ = raw.get("type", "any")
        known_type: str | None = type_ if isinstance(type_, str) and type_ in TYPES else None
        if known_type is None:
            if isinstance(type_, str) and type_ in ("object", "array", "list", "time", "yearmonth", "duration", "geopoint", "geojson"):
                self.report(path + ("type",), f"type {type_!r} is not supported as an extraction target")
            else:
                self.report(path + ("type",), f"{type_!r} is not a Table Schema type{_suggest(str(type_), TYPES)}")
        constraints, enum_broken = self.constraints(raw.get("constraints") or {}, path + ("constraints",), known_type)
        hints = self.hints(raw.get("extract") or {}, path + ("extract",), known_type, constraints, default_fuzzy, enum_broken)
        missing = raw.get("missingValues")
        if missing is not None:
            missing = self.attempt(self.strings, missing, path + ("missingValues",), allow_single=False)
        true_values = FieldSpec.true_values
        if "trueValues" in raw:
            true_values = self.attempt(self.strings, raw["trueValues"], path + ("trueValues",), default=true_values)
        false_values = FieldSpec.false_values
        if "falseValues" in raw:
            false_values = self.attempt(self.strings, raw["falseValues"], path + ("falseValues",), default=false_values)
        if len(self.problems) > before or hints is None or known_type is None:
            return None
        return FieldSpec(
            name=name,
            type=known_type,
            title=str(raw.get("title") or ""),
            description=str(raw.get("description") or ""),
            format=str(raw.get("format") or "default"),
            constraints=constraints,
            missing_values=missing,
            true_values=true_values,
            false_values=false_values,
            hints=hints,
            descriptor=raw,
        )

    def field_name(self, name: str, path: tuple[Any, ...]) -> None:
        """A field name is a column header in every output: plain, visible text (catalogue S4).

        Quotes, semicolons and SQL words are allowed: the CSV writer quotes every header
        and no SQL is ever built from a name.
        """
        if any(not ch.isprintable() and ch != " " for ch in name):
            raise self.fail(path, f"field name {name!r} has control characters or invisible characters")
        if name != name.strip():
            raise self.fail(path, f"field name {name!r} has surrounding spaces")
        if len(name) > MAX_NAME_LENGTH:
            raise self.fail(path, f"field name is longer than {MAX_NAME_LENGTH} characters")
        if name.startswith(FORMULA_STARTS):
            raise self.fail(
                path, f"field name {name!r} starts with {name[0]!r}, which spreadsheets read as a formula; rename the field"
            )
        if normalise_name(name) in RESERVED_NAMES:
            raise self.fail(path, f"field name {name!r} is the name of the table's own first column; rename the field")

    def constraints(self, raw: Any, path: tuple[Any, ...], type_: str | None) -> tuple[dict[str, Any], bool]:
        """The constraints that are valid, and whether an ``enum`` was given but is not (each problem recorded)."""
        raw = self.attempt(self.mapping, raw, path)
        if raw is None:
            return {}, True
        valid = {key: value for key, value in raw.items() if self.attempt(self.constraint, key, value, path + (key,), type_, default=False)}
        return valid, "enum" in raw and "enum" not in valid

    def constraint(self, key: str, value: Any, path: tuple[Any, ...], type_: str | None) -> bool:
        if key not in CONSTRAINT_KEYS:
            if key == "jsonSchema":
                raise self.fail(path, "constraint 'jsonSchema' is not supported for extraction targets")
            raise self.fail(path, f"{key!r} is not a known constraint{_suggest(key, CONSTRAINT_KEYS)}")
        if key in ("required", "unique") and not isinstance(value, bool):
            raise self.fail(path, "must be true or false")
        if key == "enum" and (not isinstance(value, list) or not value):
            raise self.fail(path, "must be a non-empty list")
        if key == "pattern":
            self.regex(value, path)
        if key in ("minLength", "maxLength") and (isinstance(value, bool) or not isinstance(value, int) or value < 0):
            raise self.fail(path, "must be a whole number, 0 or more")
        if key in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
            if type_ in ("number", "integer", "year") and (isinstance(value, bool) or not isinstance(value, (int, float))):
                raise self.fail(path, f"must be a number for a {type_} field")
        return True

    def regex(self, value: Any, path: tuple[Any, ...]) -> UserPattern:
        """A user pattern, compiled for matching with a time limit (``structurize.patterns``)."""
        if not isinstance(value, str):
            raise self.fail(path, "must be a string")
        try:
            return compile_pattern(value)
        except PatternError as exc:
            raise self.fail(path, f"not a valid regular expression ({_one_line(exc)})") from None

    def hints(
        self,
        raw: Any,
        path: tuple[Any, ...],
        type_: str | None,
        constraints: dict[str, Any],
        default_fuzzy: int,
        enum_broken: bool,
    ) -> FieldHints | None:
        """The field's hints, or None when its kind is unknown (each problem recorded).

        ``type_`` is None when the field's type is not valid: checks that depend on it
        (the default kind, whether the kind fits) are left out rather than guessed.
        """
        raw = self.attempt(self.mapping, raw, path)
        if raw is None:
            return None
        self.unknown_keys(raw, FIELD_EXTRACT_KEYS, path, "extract")
        kind = raw.get("as")
        if kind is None:
            if type_ is not None:
                kind = DEFAULT_KIND_FOR_TYPE.get(type_, "choice" if constraints.get("enum") else "text")
        elif not isinstance(kind, str) or kind not in KINDS:
            self.report(path + ("as",), f"{kind!r} is not a kind{_suggest(str(kind), KINDS)}")
            kind = None
        elif type_ is not None and type_ not in KIND_TYPES[kind]:
            fitting = ", ".join(name for name in KINDS if type_ in KIND_TYPES[name])
            self.report(
                path + ("as",),
                f"kind {kind!r} cannot give a {type_} value; for type {type_} use one of: {fitting} (or change the type)",
            )
        cues = self.attempt(self.strings, raw.get("cues", []), path + ("cues",), default=())
        pattern = self.attempt(self.regex, raw["pattern"], path + ("pattern",)) if raw.get("pattern") else None
        if pattern is None and kind == "identifier" and constraints.get("pattern") and not raw.get("pattern"):
            pattern = self.attempt(self.regex, constraints["pattern"], path)
        fuzzy = self.attempt(self.fuzzy, raw.get("fuzzy_distance", default_fuzzy), path + ("fuzzy_distance",), default=default_fuzzy)
        aliases: list[tuple[str, tuple[str, ...]]] = []
        true_variants: tuple[str, ...] = ()
        false_variants: tuple[str, ...] = ()
        before = len(self.problems)
        block = raw.get("aliases")
        if block is not None and not isinstance(block, dict):
            self.report(path + ("aliases",), f"must be a mapping, not {_type_name(block)}")
        elif block is not None and (type_ == "boolean" or kind == "flag"):
            for key, variants in block.items():
                side = _flag_side(key)
                if side is None:
                    self.report(path + ("aliases", key), f"flag alias keys are true and false, not {key!r}")
                    continue
                found = self.attempt(self.strings, variants, path + ("aliases", key), default=())
                if side:
                    true_variants += found
                else:
                    false_variants += found
        elif block is not None and kind is not None:  # an unknown kind: how to read the keys is unknown too
            enum = constraints.get("enum")
            for key, variants in block.items():
                canonical = str(key)
                if enum is not None and canonical not in [str(item) for item in enum]:
                    self.report(
                        path + ("aliases", key),
                        f"alias key {canonical!r} is not in constraints.enum{_suggest(canonical, [str(e) for e in enum])}",
                    )
                    continue
                aliases.append((canonical, self.attempt(self.strings, variants, path + ("aliases", key), default=())))
        aliases_broken = len(self.problems) > before
        if kind == "choice":
            known = {canonical for canonical, _ in aliases}
            for value in constraints.get("enum") or ():
                if str(value) not in known:
                    aliases.append((str(value), ()))
            if not aliases and not enum_broken and not aliases_broken:
                self.report(path + ("as",), "a choice field needs constraints.enum or extract.aliases")
        if kind is None:
            return None
        return FieldHints(
            kind=kind,
            cues=cues,
            aliases=tuple(aliases),
            true_variants=true_variants,
            false_variants=false_variants,
            pattern=pattern,
            fuzzy_distance=fuzzy,
        )


def _misspelling_of(key: str, known: tuple[str, ...]) -> str | None:
    """The known key ``key`` is a near miss of: another case, or one edit away (two for long keys).

    Edits count a swap of neighbours as one (``tpye``), so that custom keys such as
    ``notes`` or ``x_source`` are kept while typos are caught.
    """
    from rapidfuzz.distance import OSA

    folded = key.casefold()
    for word in known:
        if folded == word.casefold():
            return word
    if len(key) < 4:
        return None
    allowed = 2 if len(key) >= 9 else 1
    best = min(known, key=lambda word: OSA.distance(folded, word.casefold()))
    return best if OSA.distance(folded, best.casefold()) <= allowed else None


def normalise_name(name: str) -> str:
    """The form two field names are compared in: Unicode NFKC, case-folded, spaces collapsed."""
    return " ".join(unicodedata.normalize("NFKC", name).casefold().split())


def _flag_side(key: Any) -> bool | None:
    if isinstance(key, bool):
        return key
    if isinstance(key, str) and key.strip().lower() in ("true", "false"):
        return key.strip().lower() == "true"
    return None


def _type_name(value: Any) -> str:
    return {dict: "a mapping", list: "a list", str: "a string", bool: "a boolean", type(None): "empty"}.get(
        type(value), type(value).__name__
    )
