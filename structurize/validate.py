"""Cast each value to its Table Schema type and check the field's constraints.

Nothing here raises for a bad value: a value that fails becomes ``invalid`` with the
reason.  ``unique`` is checked across the whole table by :func:`check_unique`.
Output forms follow the contract: ISO 8601 dates, plain decimals, ``true``/``false``.
"""

from __future__ import annotations

import datetime as dt
import re
from collections import defaultdict
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
                raise CastError(f"not a whole number")
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


def check_unique(schema: TargetSchema, results: list[DocumentResult]) -> list[DocumentResult]:
    """Mark values of ``unique`` (and primary-key) fields that repeat across documents."""
    unique = [spec.name for spec in schema.fields if spec.constraints.get("unique") or spec.name in schema.primary_key]
    if not unique:
        return results
    seen: dict[str, dict[str, list[int]]] = {name: defaultdict(list) for name in unique}
    for index, result in enumerate(results):
        for item in result.values:
            if item.field in seen and item.value is not None:
                seen[item.field][to_text(item.value)].append(index)
    duplicated = {
        (name, index) for name, table in seen.items() for indexes in table.values() if len(indexes) > 1 for index in indexes
    }
    if not duplicated:
        return results
    out = []
    for index, result in enumerate(results):
        values = tuple(
            replace(item, status=ValueStatus.INVALID, reason="not unique across the table")
            if (item.field, index) in duplicated
            else item
            for item in result.values
        )
        out.append(replace(result, values=values))
    return out


#: A field filled in at least this share of a batch is "usually present" ...
USUALLY_PRESENT = 0.75
#: ... judged only on batches of at least this many readable documents.
USUALLY_PRESENT_MIN_DOCUMENTS = 5


def flag_unusual_gaps(schema: TargetSchema, results: list[DocumentResult]) -> list[DocumentResult]:
    """Send to review a value that was not found when most documents of the batch have it.

    A value the document itself says is unknown ("TBD", "pending") keeps its status.
    """
    readable = [r for r in results if r.status.readable]
    if len(readable) < USUALLY_PRESENT_MIN_DOCUMENTS:
        return results
    usual = {}
    for spec in schema.fields:
        filled = sum(1 for r in readable if (v := r.value(spec.name)) is not None and v.value is not None)
        if filled / len(readable) >= USUALLY_PRESENT:
            usual[spec.name] = f"usually present (found in {filled} of {len(readable)} documents)"
    out = []
    for result in results:
        if not result.status.readable:
            out.append(result)
            continue
        values = tuple(
            replace(item, status=ValueStatus.REVIEW, confidence=min(item.confidence, 0.5), reason=usual[item.field])
            if item.field in usual and item.value is None and not item.extractor and item.status is ValueStatus.MISSING
            else item
            for item in result.values
        )
        out.append(replace(result, values=values))
    return out


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
