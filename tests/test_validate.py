"""Validation: casting to Table Schema types, constraints, uniqueness; output forms."""

from __future__ import annotations

import datetime as dt
from decimal import Decimal

import pytest

from structurize.types import DocStatus, DocumentResult, FieldValue, ValueStatus
from structurize.validate import check_unique, flag_unusual_gaps, to_text, validate_value

from conftest import make_schema


def check(field: dict, value):
    spec = make_schema(field).field(field["name"])
    return validate_value(spec, FieldValue(spec.name, value, 0.9, ValueStatus.OK))


@pytest.mark.parametrize(
    "field, value, cast, status",
    [
        ({"name": "n", "type": "number"}, Decimal("24.60"), Decimal("24.60"), ValueStatus.OK),
        ({"name": "n", "type": "integer"}, Decimal("3.5"), None, ValueStatus.INVALID),
        ({"name": "n", "type": "integer"}, Decimal("3"), 3, ValueStatus.OK),
        ({"name": "n", "type": "number", "constraints": {"minimum": 0}}, Decimal("-5"), None, ValueStatus.INVALID),
        ({"name": "n", "type": "number", "constraints": {"maximum": 100}}, Decimal("150"), None, ValueStatus.INVALID),
        ({"name": "n", "type": "number", "constraints": {"exclusiveMinimum": 0}}, Decimal("0"), None, ValueStatus.INVALID),
        ({"name": "d", "type": "date"}, dt.date(2025, 3, 3), dt.date(2025, 3, 3), ValueStatus.OK),
        ({"name": "d", "type": "date"}, "2025-13-01", None, ValueStatus.INVALID),
        ({"name": "d", "type": "date", "constraints": {"minimum": "2025-01-01"}}, dt.date(2024, 12, 31), None, ValueStatus.INVALID),
        ({"name": "b", "type": "boolean"}, True, True, ValueStatus.OK),
        ({"name": "b", "type": "boolean"}, "maybe", None, ValueStatus.INVALID),
        ({"name": "s", "type": "string", "constraints": {"enum": ["year", "hour"]}}, "week", None, ValueStatus.INVALID),
        ({"name": "s", "type": "string", "constraints": {"pattern": "[A-Z]{2}[0-9]{4,5}"}}, "NQ40211", "NQ40211", ValueStatus.OK),
        ({"name": "s", "type": "string", "constraints": {"pattern": "[A-Z]{2}[0-9]{4,5}"}}, "xNQ40211", None, ValueStatus.INVALID),
        ({"name": "s", "type": "string", "constraints": {"minLength": 5}}, "plum", None, ValueStatus.INVALID),
        ({"name": "s", "type": "string", "constraints": {"maxLength": 5}}, "grapefruit", None, ValueStatus.INVALID),
        ({"name": "s", "type": "string", "format": "email"}, "not-an-address", None, ValueStatus.INVALID),
        ({"name": "y", "type": "year"}, Decimal(2025), 2025, ValueStatus.OK),
    ],
)
def test_validate_cast_and_constraints(field, value, cast, status) -> None:
    item = check(field, value)
    assert item.status is status
    if status is ValueStatus.OK:
        assert item.value == cast
    else:
        assert item.reason


def test_validate_missing_required_is_invalid() -> None:
    spec = make_schema({"name": "name", "type": "string", "constraints": {"required": True}}).field("name")
    item = validate_value(spec, FieldValue("name", None, 0.9, ValueStatus.MISSING))
    assert item.status is ValueStatus.INVALID and "required" in item.reason


@pytest.mark.parametrize(
    "value, text",
    [(dt.date(2025, 4, 3), "2025-04-03"), (Decimal("24.60"), "24.6"), (Decimal("61800.00"), "61800"), (Decimal("1E+3"), "1000"), (True, "true"), (False, "false"), (None, "")],
)
def test_validate_output_forms(value, text) -> None:
    assert to_text(value) == text


def _result(source: str, value) -> DocumentResult:
    return DocumentResult(source, "", DocStatus.OK, values=(FieldValue("id", value, 0.9, ValueStatus.OK if value else ValueStatus.MISSING),))


def test_validate_unique_across_table() -> None:
    schema = make_schema({"name": "id", "type": "string", "constraints": {"unique": True}})
    results = check_unique(schema, [_result("a", "X1"), _result("b", "X1"), _result("c", "X2"), _result("d", None)])
    statuses = [r.value("id").status for r in results]
    assert statuses == [ValueStatus.INVALID, ValueStatus.INVALID, ValueStatus.OK, ValueStatus.MISSING]


def test_validate_usually_present_gap_goes_to_review() -> None:
    schema = make_schema({"name": "id", "type": "string"})
    results = flag_unusual_gaps(schema, [_result(str(i), f"X{i}") for i in range(5)] + [_result("gap", None)])
    gap = results[-1].value("id")
    assert gap.status is ValueStatus.REVIEW and "usually present" in gap.reason
