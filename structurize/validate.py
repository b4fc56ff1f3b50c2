"""Cast each value to its Table Schema type and check the field's constraints.

Nothing here raises for a bad value: a value that fails becomes ``invalid`` with the
reason.  ``unique`` is checked across the whole table by :class:`TableChecks`.
Output forms follow the contract: ISO 8601 dates, plain decimals, ``true``/``false``.
"""

from __future__ import annotations

import datetime as dt
import re
from collections import Counter
from dataclasses import replace
from decimal import Decimal, InvalidOperation
from typing import Any

from .patterns import TIMEOUT_REASON, PatternTimeout
from .schema.model import FieldSpec, TargetSchema
from .types import DocumentResult, FieldValue, ValueStatus

_EMAIL = re.compile(r"^[^@\s]+@[^@\s]+\.[^@\s]+$")


class CastError(ValueError):
    pass


def cast(spec: FieldSpec, value: Any) -> Any:
    """The value as the field's type (``date``, ``Decimal``, ``int``, ``bool``, ``str``)."""
    type_ = spec.type
    if type_ in ("string", "any"):
        if isinstance(value, dt.date):
            return value.isoformat()
        if isinstance(value, bool):
            return "true" if value else "false"
        if isinstance(value, Decimal):
            return format_number(value)
        text = str(value)
        if spec.format == "email" and not _EMAIL.match(text):
            raise CastError("not an email address")
        return text
    if type_ in ("number", "integer", "year"):
        if isinstance(value, bool):
            raise CastError(f"not a {type_}")
        try:
            number = Decimal(str(value).replace(",", "")) if not isinstance(value, Decimal) else value
        except InvalidOperation:
            raise CastError(f"not a {type_}") from None
        if not number.is_finite():
            raise CastError(f"not a finite {type_}")
        if type_ in ("integer", "year"):
            if number != number.to_integral_value():
                raise CastError("not a whole number")
            number = int(number)
            if type_ == "year" and not 0 <= number <= 9999:
                raise CastError("not a year")
        return number
    if type_ == "date":
        if isinstance(value, dt.datetime):
            return value.date()
        if isinstance(value, dt.date):
            return value
        try:
            return dt.date.fromisoformat(str(value))
        except ValueError:
            raise CastError("not an ISO 8601 date") from None
    if type_ == "datetime":
        if isinstance(value, dt.datetime):
            return value
        if isinstance(value, dt.date):
            return dt.datetime(value.year, value.month, value.day)
        try:
            return dt.datetime.fromisoformat(str(value))
        except ValueError:
            raise CastError("not an ISO 8601 datetime") from None
    if type_ == "boolean":
        if isinstance(value, bool):
            return value
        text = str(value)
        if text in spec.true_values:
            return True
        if text in spec.false_values:
            return False
        raise CastError("not a boolean")
    raise CastError(f"unsupported type {type_}")


def check_constraints(spec: FieldSpec, value: Any) -> str | None:
    """The first constraint ``value`` breaks, as a short reason, or None."""
    constraints = spec.constraints
    if "enum" in constraints:
        allowed = [str(item) for item in constraints["enum"]]
        if to_text(value) not in allowed and value not in constraints["enum"]:
            return "not one of the allowed values"
    pattern = spec.pattern
    if pattern is not None:
        try:
            matched = pattern.fullmatch(to_text(value))
        except PatternTimeout as exc:  # a catastrophic user pattern: this value only (catalogue S3)
            return f"{TIMEOUT_REASON}: the pattern took longer than {exc.seconds:g} s"
        if not matched:
            return f"does not match the pattern {pattern.pattern}"
    if isinstance(value, (Decimal, int, dt.date)) and not isinstance(value, bool):
        for key, test, words in (
            ("minimum", lambda v, b: v < b, "below the minimum"),
            ("maximum", lambda v, b: v > b, "above the maximum"),
            ("exclusiveMinimum", lambda v, b: v <= b, "not above the exclusive minimum"),
            ("exclusiveMaximum", lambda v, b: v >= b, "not below the exclusive maximum"),
        ):
            if key in constraints:
                bound = _bound(spec, constraints[key])
                if bound is not None and test(value, bound):
                    return f"{words} {constraints[key]}"
    text = to_text(value) if isinstance(value, str) else None
    if text is not None:
        if "minLength" in constraints and len(text) < constraints["minLength"]:
            return f"shorter than {constraints['minLength']} characters"
        if "maxLength" in constraints and len(text) > constraints["maxLength"]:
            return f"longer than {constraints['maxLength']} characters"
    return None


def _bound(spec: FieldSpec, raw: Any) -> Any:
    if spec.type == "date":
        try:
            return dt.date.fromisoformat(str(raw))
        except ValueError:
            return None
    try:
        return Decimal(str(raw))
    except InvalidOperation:
        return None


def validate_value(spec: FieldSpec, item: FieldValue) -> FieldValue:
    """Cast and check one resolved value; missing required values become invalid."""
    if item.value is None:
        if spec.required:
            reason = "required value missing" + (f"; {item.reason}" if item.reason else "")
            return replace(item, status=ValueStatus.INVALID, reason=reason)
        return item
    try:
        value = cast(spec, item.value)
    except CastError as exc:
        return replace(item, status=ValueStatus.INVALID, reason=str(exc))
    problem = check_constraints(spec, value)
    if problem is not None:
        return replace(item, value=value, status=ValueStatus.INVALID, reason=problem)
    return replace(item, value=value)


#: A field filled in at least this share of a batch is "usually present" ...
USUALLY_PRESENT = 0.75
#: ... judged only on batches of at least this many readable documents.
USUALLY_PRESENT_MIN_DOCUMENTS = 5
NOT_UNIQUE = "not unique across the table"


class TableChecks:
    """The checks that need the whole table, gathered one document at a time.

    ``add`` every result first, then ``apply`` gives each result with the table-wide
    verdicts: a value of a ``unique`` (or primary-key) field that occurs in more than one
    document is ``invalid``; a value not found in a document when at least
    :data:`USUALLY_PRESENT` of a batch of :data:`USUALLY_PRESENT_MIN_DOCUMENTS` or more
    readable documents have it goes to review ("usually present").  Only counts are kept
    (and, for unique fields, each distinct value), so that a run's memory does not hold
    its results.
    """

    def __init__(self, schema: TargetSchema, *, unique: bool = True, gaps: bool = True) -> None:
        self.names = schema.field_names
        self.unique = (
            {spec.name for spec in schema.fields if spec.constraints.get("unique") or spec.name in schema.primary_key} if unique else set()
        )
        self.gaps = gaps
        self.seen: dict[str, Counter[str]] = {name: Counter() for name in self.unique}
        self.readable = 0
        self.filled: Counter[str] = Counter()
        self._usual: dict[str, str] | None = None

    def add(self, result: DocumentResult) -> None:
        self._usual = None
        if result.status.readable:
            self.readable += 1
        for item in result.values:
            if item.value is None:
                continue
            if item.field in self.seen:
                self.seen[item.field][to_text(item.value)] += 1
            if result.status.readable:
                self.filled[item.field] += 1

    def usual(self) -> dict[str, str]:
        """Fields usually present in this batch, with the reason a gap in them is given."""
        if self._usual is None:
            self._usual = {}
            if self.gaps and self.readable >= USUALLY_PRESENT_MIN_DOCUMENTS:
                for name in self.names:
                    if self.filled[name] / self.readable >= USUALLY_PRESENT:
                        self._usual[name] = f"usually present (found in {self.filled[name]} of {self.readable} documents)"
        return self._usual

    def apply(self, result: DocumentResult) -> DocumentResult:
        usual = self.usual() if result.status.readable else {}
        changed = False
        values = []
        for item in result.values:
            if item.value is not None and item.field in self.seen and self.seen[item.field][to_text(item.value)] > 1:
                item = replace(item, status=ValueStatus.INVALID, reason=NOT_UNIQUE)
                changed = True
            elif item.field in usual and item.value is None and not item.extractor and item.status is ValueStatus.MISSING:
                # a value the document itself says is unknown ("TBD", "pending") keeps its status
                item = replace(item, status=ValueStatus.REVIEW, confidence=min(item.confidence, 0.5), reason=usual[item.field])
                changed = True
            values.append(item)
        return replace(result, values=tuple(values)) if changed else result


def check_unique(schema: TargetSchema, results: list[DocumentResult]) -> list[DocumentResult]:
    """Mark values of ``unique`` (and primary-key) fields that repeat across documents."""
    return _checked(TableChecks(schema, gaps=False), results)


def flag_unusual_gaps(schema: TargetSchema, results: list[DocumentResult]) -> list[DocumentResult]:
    """Send to review a value that was not found when most documents of the batch have it."""
    return _checked(TableChecks(schema, unique=False), results)


def _checked(checks: TableChecks, results: list[DocumentResult]) -> list[DocumentResult]:
    for result in results:
        checks.add(result)
    return [checks.apply(result) for result in results]


def format_number(value: Decimal | int) -> str:
    if isinstance(value, int):
        return str(value)
    normalised = value.normalize()
    if normalised == normalised.to_integral_value():
        return str(normalised.quantize(Decimal(1)))
    return format(normalised, "f")


def to_text(value: Any) -> str:
    """The output form of a value: what goes into table.csv."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dt.datetime):
        return value.isoformat()
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, (Decimal, int)):
        return format_number(value)
    return str(value)
