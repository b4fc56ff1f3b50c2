"""Read a schema file (YAML or JSON), check it against the contract, build a TargetSchema.

Every problem is reported as one :class:`~structurize.errors.SchemaError` naming the file,
the place in the file (``fields[3].extract.as``) and, for YAML, the line.  The file is data,
never code: YAML is read with the safe loader only, and a file that would expand into a
huge tree through aliases is refused.
"""

from __future__ import annotations

import difflib
import json
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import yaml

from ..errors import SchemaError
from .model import (
    DATE_ORDERS,
    DEFAULT_FUZZY_DISTANCE,
    DEFAULT_REVIEW_BELOW,
    KINDS,
    TYPES,
    FieldHints,
    FieldSpec,
    TargetSchema,
)

MAX_SCHEMA_BYTES = 1_000_000
#: Upper bound on YAML nodes after alias expansion (refuses "billion laughs").
MAX_EXPANDED_NODES = 100_000

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
    source = path.name
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise SchemaError(source, "", f"cannot read file ({exc.strerror or exc})") from None
    if len(raw) > MAX_SCHEMA_BYTES:
        raise SchemaError(source, "", f"file is larger than {MAX_SCHEMA_BYTES} bytes")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise SchemaError(source, "", "file is not UTF-8 text") from None
    if path.suffix.lower() == ".json":
        data, locate = _parse_json(text, source)
    else:
        data, locate = _parse_yaml(text, source)
    return schema_from_descriptor(data, source=source, locate=locate)


def schema_from_descriptor(
    data: Any, *, source: str = "<schema>", locate: Locate | None = None
) -> TargetSchema:
    """Validate an already-parsed descriptor (a dict) and build the schema."""
    return _Checker(source, locate or (lambda path: "")).schema(data)


# --- parsing -------------------------------------------------------------------------


def _parse_json(text: str, source: str) -> tuple[Any, Locate]:
    def no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        result: dict[str, Any] = {}
        for key, value in pairs:
            if key in result:
                raise SchemaError(source, "", f"duplicate key {key!r}")
            result[key] = value
        return result

    try:
        return json.loads(text, object_pairs_hook=no_duplicates), (lambda path: "")
    except json.JSONDecodeError as exc:
        raise SchemaError(source, f"line {exc.lineno}", f"not valid JSON ({exc.msg})") from None
    except RecursionError:
        raise SchemaError(source, "", "nesting is too deep") from None


def _parse_yaml(text: str, source: str) -> tuple[Any, Locate]:
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        where = f"line {mark.line + 1}" if mark else ""
        raise SchemaError(source, where, f"not valid YAML ({exc.problem})") from None
    except yaml.YAMLError as exc:
        raise SchemaError(source, "", f"not valid YAML ({exc})") from None
    if root is None:
        raise SchemaError(source, "", "file is empty")
    _check_node_tree(root, source)
    try:
        data = yaml.SafeLoader("").construct_document(root)
    except yaml.constructor.ConstructorError as exc:
        mark = exc.problem_mark
        where = f"line {mark.line + 1}" if mark else ""
        raise SchemaError(source, where, f"unsupported YAML ({exc.problem})") from None

    def locate(path: tuple[Any, ...]) -> str:
        node = _node_at(root, path)
        return f"line {node.start_mark.line + 1}" if node is not None else ""

    return data, locate


def _check_node_tree(root: yaml.Node, source: str) -> None:
    """Refuse alias bombs and duplicate mapping keys before anything is constructed."""
    sizes: dict[int, int] = {}

    def size(node: yaml.Node, depth: int) -> int:
        if depth > 100:
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
                        raise SchemaError(
                            source, f"line {key.start_mark.line + 1}", f"duplicate key {key.value!r}"
                        )
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

    size(root, 0)


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


def _path_text(path: tuple[Any, ...]) -> str:
    out = ""
    for step in path:
        out += f"[{step}]" if isinstance(step, int) else (f".{step}" if out else str(step))
    return out


class _Checker:
    def __init__(self, source: str, locate: Locate) -> None:
        self.source = source
        self.locate = locate

    def fail(self, path: tuple[Any, ...], message: str) -> SchemaError:
        where = _path_text(path)
        line = self.locate(path) if path else ""
        if line:
            where = f"{where} ({line})" if where else line
        return SchemaError(self.source, where, message)

    def mapping(self, value: Any, path: tuple[Any, ...]) -> dict[str, Any]:
        if not isinstance(value, dict):
            raise self.fail(path, f"must be a mapping, not {_type_name(value)}")
        for key in value:
            if not isinstance(key, str):
                raise self.fail(path, f"key {key!r} must be a string")
        return value

    def strings(self, value: Any, path: tuple[Any, ...], *, allow_single: bool = True) -> tuple[str, ...]:
        if isinstance(value, str) and allow_single:
            value = [value]
        if not isinstance(value, list):
            raise self.fail(path, f"must be a list of strings, not {_type_name(value)}")
        out = []
        for index, item in enumerate(value):
            if isinstance(item, bool):
                raise self.fail(
                    path + (index,),
                    f"{item!r} was read as a boolean; quote it (YAML reads yes/no/on/off as booleans)",
                )
            if isinstance(item, (int, float)):
                item = str(item)
            if not isinstance(item, str) or not item.strip():
                raise self.fail(path + (index,), "must be a non-empty string")
            out.append(item.strip())
        return tuple(out)

    def unknown_keys(self, block: dict[str, Any], allowed: tuple[str, ...], path: tuple[Any, ...], what: str) -> None:
        for key in block:
            if key not in allowed:
                raise self.fail(path + (key,), f"{key!r} is not a known {what} key{_suggest(key, allowed)}")

    # schema level

    def schema(self, data: Any) -> TargetSchema:
        data = self.mapping(data, ())
        if "fields" not in data:
            raise self.fail((), "missing 'fields'")
        raw_fields = data["fields"]
        if not isinstance(raw_fields, list) or not raw_fields:
            raise self.fail(("fields",), "must be a non-empty list of fields")
        top = self.mapping(data.get("extract") or {}, ("extract",))
        self.unknown_keys(top, SCHEMA_EXTRACT_KEYS, ("extract",), "extract")
        date_order = top.get("date_order")
        if date_order is not None:
            if not isinstance(date_order, str) or date_order.upper() not in DATE_ORDERS:
                raise self.fail(("extract", "date_order"), f"must be one of {', '.join(DATE_ORDERS)}")
            date_order = date_order.upper()
        review_below = top.get("review_below", DEFAULT_REVIEW_BELOW)
        if isinstance(review_below, bool) or not isinstance(review_below, (int, float)) or not 0 <= review_below <= 1:
            raise self.fail(("extract", "review_below"), "must be a number between 0 and 1")
        fuzzy = self.fuzzy(top.get("fuzzy_distance", DEFAULT_FUZZY_DISTANCE), ("extract", "fuzzy_distance"))
        time_limit = top.get("time_limit")
        if time_limit is not None and (isinstance(time_limit, bool) or not isinstance(time_limit, (int, float)) or not 0 < time_limit <= 3600):
            raise self.fail(("extract", "time_limit"), "must be a number of seconds, above 0 and at most 3600")
        memory_limit = top.get("memory_limit")
        if memory_limit is not None and (isinstance(memory_limit, bool) or not isinstance(memory_limit, int) or not 256 <= memory_limit <= 65536):
            raise self.fail(("extract", "memory_limit"), "must be a whole number of megabytes from 256 to 65536")
        missing = self.strings(data.get("missingValues", [""]), ("missingValues",), allow_single=False) if data.get("missingValues") else ("",)

        fields: list[FieldSpec] = []
        seen: dict[str, int] = {}
        for index, raw in enumerate(raw_fields):
            spec = self.field(raw, ("fields", index), fuzzy)
            folded = spec.name.strip().casefold()
            if folded in seen:
                raise self.fail(
                    ("fields", index, "name"),
                    f"duplicate field name {spec.name!r} (same as fields[{seen[folded]}])",
                )
            seen[folded] = index
            fields.append(spec)

        primary = data.get("primaryKey") or ()
        if isinstance(primary, str):
            primary = (primary,)
        primary = self.strings(list(primary), ("primaryKey",), allow_single=False) if primary else ()
        names = [spec.name for spec in fields]
        for key in primary:
            if key not in names:
                raise self.fail(("primaryKey",), f"{key!r} is not a field{_suggest(key, names)}")

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

    def fuzzy(self, value: Any, path: tuple[Any, ...]) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= 5:
            raise self.fail(path, "must be a whole number from 0 to 5")
        return value

    # field level

    def field(self, raw: Any, path: tuple[Any, ...], default_fuzzy: int) -> FieldSpec:
        raw = self.mapping(raw, path)
        name = raw.get("name")
        if not isinstance(name, str) or not name.strip():
            raise self.fail(path + ("name",), "every field needs a non-empty string 'name'")
        if name != name.strip() or any(ord(ch) < 32 or ord(ch) == 127 for ch in name):
            raise self.fail(path + ("name",), f"field name {name!r} has control characters or surrounding spaces")
        type_ = raw.get("type", "any")
        if type_ not in TYPES:
            if isinstance(type_, str) and type_ in ("object", "array", "list", "time", "yearmonth", "duration", "geopoint", "geojson"):
                raise self.fail(path + ("type",), f"type {type_!r} is not supported as an extraction target")
            raise self.fail(path + ("type",), f"{type_!r} is not a Table Schema type{_suggest(str(type_), TYPES)}")
        constraints = self.constraints(raw.get("constraints") or {}, path + ("constraints",), type_)
        hints = self.hints(raw.get("extract") or {}, path + ("extract",), type_, constraints, default_fuzzy)
        missing = raw.get("missingValues")
        return FieldSpec(
            name=name,
            type=type_,
            title=str(raw.get("title") or ""),
            description=str(raw.get("description") or ""),
            format=str(raw.get("format") or "default"),
            constraints=constraints,
            missing_values=self.strings(missing, path + ("missingValues",), allow_single=False) if missing is not None else None,
            true_values=self.strings(raw["trueValues"], path + ("trueValues",)) if "trueValues" in raw else FieldSpec.true_values,
            false_values=self.strings(raw["falseValues"], path + ("falseValues",)) if "falseValues" in raw else FieldSpec.false_values,
            hints=hints,
            descriptor=raw,
        )

    def constraints(self, raw: Any, path: tuple[Any, ...], type_: str) -> dict[str, Any]:
        raw = self.mapping(raw, path)
        for key, value in raw.items():
            if key not in CONSTRAINT_KEYS:
                if key == "jsonSchema":
                    raise self.fail(path + (key,), "constraint 'jsonSchema' is not supported for extraction targets")
                raise self.fail(path + (key,), f"{key!r} is not a known constraint{_suggest(key, CONSTRAINT_KEYS)}")
            if key in ("required", "unique") and not isinstance(value, bool):
                raise self.fail(path + (key,), "must be true or false")
            if key == "enum" and (not isinstance(value, list) or not value):
                raise self.fail(path + (key,), "must be a non-empty list")
            if key == "pattern":
                if not isinstance(value, str):
                    raise self.fail(path + (key,), "must be a string")
                self.regex(value, path + (key,))
            if key in ("minLength", "maxLength") and (isinstance(value, bool) or not isinstance(value, int) or value < 0):
                raise self.fail(path + (key,), "must be a whole number, 0 or more")
            if key in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
                if type_ in ("number", "integer", "year") and (isinstance(value, bool) or not isinstance(value, (int, float))):
                    raise self.fail(path + (key,), f"must be a number for a {type_} field")
        return dict(raw)

    def regex(self, value: str, path: tuple[Any, ...]) -> re.Pattern[str]:
        try:
            return re.compile(value)
        except re.error as exc:
            raise self.fail(path, f"not a valid regular expression ({exc})") from None

    def hints(
        self, raw: Any, path: tuple[Any, ...], type_: str, constraints: dict[str, Any], default_fuzzy: int
    ) -> FieldHints:
        raw = self.mapping(raw, path)
        self.unknown_keys(raw, FIELD_EXTRACT_KEYS, path, "extract")
        kind = raw.get("as")
        if kind is None:
            kind = DEFAULT_KIND_FOR_TYPE.get(type_, "choice" if constraints.get("enum") else "text")
        elif kind not in KINDS:
            raise self.fail(path + ("as",), f"{kind!r} is not a kind{_suggest(str(kind), KINDS)}")
        cues = self.strings(raw.get("cues", []), path + ("cues",))
        pattern = self.regex(raw["pattern"], path + ("pattern",)) if raw.get("pattern") else None
        if pattern is None and kind == "identifier" and constraints.get("pattern"):
            pattern = self.regex(constraints["pattern"], path)
        fuzzy = self.fuzzy(raw.get("fuzzy_distance", default_fuzzy), path + ("fuzzy_distance",))
        aliases: list[tuple[str, tuple[str, ...]]] = []
        true_variants: tuple[str, ...] = ()
        false_variants: tuple[str, ...] = ()
        raw_aliases = raw.get("aliases")
        if raw_aliases is not None:
            block = raw_aliases
            if not isinstance(block, dict):
                raise self.fail(path + ("aliases",), f"must be a mapping, not {_type_name(block)}")
            if type_ == "boolean" or kind == "flag":
                for key, variants in block.items():
                    side = _flag_side(key)
                    if side is None:
                        raise self.fail(path + ("aliases", key), f"flag alias keys are true and false, not {key!r}")
                    found = self.strings(variants, path + ("aliases", key))
                    if side:
                        true_variants += found
                    else:
                        false_variants += found
            else:
                enum = constraints.get("enum")
                for key, variants in block.items():
                    canonical = str(key)
                    if enum is not None and canonical not in [str(item) for item in enum]:
                        raise self.fail(
                            path + ("aliases", key),
                            f"alias key {canonical!r} is not in constraints.enum{_suggest(canonical, [str(e) for e in enum])}",
                        )
                    aliases.append((canonical, self.strings(variants, path + ("aliases", key))))
        if kind == "choice":
            known = {canonical for canonical, _ in aliases}
            for value in constraints.get("enum") or ():
                if str(value) not in known:
                    aliases.append((str(value), ()))
            if not aliases:
                raise self.fail(path + ("as",), "a choice field needs constraints.enum or extract.aliases")
        return FieldHints(
            kind=kind,
            cues=cues,
            aliases=tuple(aliases),
            true_variants=true_variants,
            false_variants=false_variants,
            pattern=pattern,
            fuzzy_distance=fuzzy,
        )


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
