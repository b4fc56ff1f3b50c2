"""Schema errors: every problem of a file is reported, one located line each, in file order;
and a field's ``extract.as`` must be a kind that can give a value of the field's type.

The schemas are invented for a touring theatre company's contracts and call sheets.
"""

from __future__ import annotations

import datetime as dt
import json
from decimal import Decimal
from pathlib import Path

import pytest
from typer.testing import CliRunner

from structurize.cli import app
from structurize.errors import SchemaError
from structurize.schema import load_schema, schema_from_descriptor
from structurize.schema.model import KINDS, TYPES
from structurize.validate import CastError, cast

from conftest import CORPUS, SCHEMAS

runner = CliRunner()


def write(tmp_path: Path, text: str, name: str = "contracts.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def problems(path: Path) -> list[str]:
    with pytest.raises(SchemaError) as caught:
        load_schema(path)
    error = caught.value
    assert str(error) == "\n".join(error.lines)  # one line per problem, nothing else
    assert (error.source, error.where, error.message) == (
        error.problems[0].source,
        error.problems[0].where,
        error.problems[0].message,
    )  # the first problem's parts, as before
    return list(error.lines)


# --- every problem, in file order ----------------------------------------------------------------

MANY = """\
name: stage_contracts
extract:
  date_order: DDMM
  reviw_below: 0.5
fields:
  - name: performer
    type: string
    extract: {as: persn, cues: [performer]}
  - name: opening_night
    type: date
    extract:
      cue: [opening]
      as: money
  - name: fee
    type: numbr
    constraints: {minimum: 0, requried: true}
  - name: Performer
    type: boolean
    extract: {as: person}
  - name: understudy
    type: string
    extract: {as: person, cues: [understudy, true]}
primaryKey: [performr]
"""

MANY_LINES = [
    "schema error: contracts.yaml: extract.date_order (line 3): must be one of MDY, DMY, YMD",
    "schema error: contracts.yaml: extract.reviw_below (line 4): 'reviw_below' is not a known extract key (did you mean 'review_below'?)",
    "schema error: contracts.yaml: fields[0].extract.as (line 8): 'persn' is not a kind (did you mean 'person'?)",
    "schema error: contracts.yaml: fields[1].extract.cue (line 12): 'cue' is not a known extract key (did you mean 'cues'?)",
    "schema error: contracts.yaml: fields[1].extract.as (line 13): kind 'money' cannot give a date value; "
    "for type date use one of: date, choice, text (or change the type)",
    "schema error: contracts.yaml: fields[2].type (line 15): 'numbr' is not a Table Schema type (did you mean 'number'?)",
    "schema error: contracts.yaml: fields[2].constraints.requried (line 16): 'requried' is not a known constraint (did you mean 'required'?)",
    "schema error: contracts.yaml: fields[3].name (line 17): duplicate field name 'Performer' (same as fields[0]): 'performer' "
    "on line 6; names are compared ignoring case and spaces",
    "schema error: contracts.yaml: fields[3].extract.as (line 19): kind 'person' cannot give a boolean value; "
    "for type boolean use one of: choice, flag, text (or change the type)",
    "schema error: contracts.yaml: fields[4].extract.cues[1] (line 22): True was read as a boolean; quote it (YAML reads yes/no/on/off as booleans)",
    "schema error: contracts.yaml: primaryKey (line 23): 'performr' is not a field (did you mean 'performer'?)",
]


def test_every_problem_is_one_line_in_file_order(tmp_path: Path) -> None:
    assert problems(write(tmp_path, MANY)) == MANY_LINES


def test_the_same_problems_from_json_in_order(tmp_path: Path) -> None:
    descriptor = {
        "fields": [
            {"name": "call_time", "type": "datetime", "extract": {"as": "flag"}},
            {"name": "venue", "type": "strng", "constraints": {"enum": []}},
            {"name": "crew_size", "type": "integer", "extract": {"as": "number", "fuzzy_distance": 9}},
        ],
        "primaryKey": 7,
    }
    text = json.dumps(descriptor, indent=1)
    lines = problems(write(tmp_path, text, "calls.json"))
    assert [line.split(": ", 2)[2] for line in lines] == [
        "fields[0].extract.as (line 7): kind 'flag' cannot give a datetime value; for type datetime use one of: date, choice, text (or change the type)",
        "fields[1].type (line 12): 'strng' is not a Table Schema type (did you mean 'string'?)",
        "fields[1].constraints.enum (line 14): must be a non-empty list",
        "fields[2].extract.fuzzy_distance (line 22): must be a whole number from 0 to 5",
        "primaryKey (line 26): must be a field name or a list of field names, not int",
    ]


@pytest.mark.parametrize(
    "text, suffix, expected",
    [
        pytest.param(
            "fields:\n  - name: venue\n    type: string\n    type: date\n  - name: fee\n    title: Fee\n    title: Fee (GBP)\n",
            ".yaml",
            ["line 4: duplicate key 'type'", "line 7: duplicate key 'title'"],
            id="yaml-two-duplicates",
        ),
        pytest.param(
            '{"fields": [{"name": "venue", "name": "hall"},\n {"name": "fee", "type": "number", "type": "date"}]}',
            ".json",
            ["line 1: duplicate key 'name'", "line 2: duplicate key 'type'"],
            id="json-two-duplicates",
        ),
        pytest.param(
            "fields:\n  - name: venue\n    extract: {as: place}\n    extract: {as: plac}\n",
            ".yaml",
            ["line 4: duplicate key 'extract'", "fields[0].extract.as (line 3): 'plac' is not a kind (did you mean 'place'?)"],
            id="duplicate-and-the-value-kept-is-checked",
        ),
    ],
)
def test_duplicate_keys_are_all_reported(tmp_path: Path, text: str, suffix: str, expected: list[str]) -> None:
    lines = problems(write(tmp_path, text, f"sheet{suffix}"))
    assert [line.split(": ", 2)[2] for line in lines] == sorted(expected, key=lambda item: item.split("line ")[1])


@pytest.mark.parametrize(
    "field, expected",
    [
        pytest.param(
            {"name": "=fee", "type": "number", "constraints": {"minimum": "0", "pattern": "[0-9"}},
            [
                "fields[0].name: field name '=fee' starts with '=', which spreadsheets read as a formula; rename the field",
                "fields[0].constraints.minimum: must be a number for a number field",
                "fields[0].constraints.pattern: not a valid regular expression",
            ],
            id="name-and-two-constraints",
        ),
        pytest.param(
            {"type": "date", "extract": {"as": "date", "cues": ["", "opening night"], "pattern": 5}},
            [
                "fields[0].name: every field needs a non-empty string 'name'",
                "fields[0].extract.cues[0]: must be a non-empty string",
                "fields[0].extract.pattern: must be a string",
            ],
            id="no-name-and-bad-hints",
        ),
        pytest.param(
            {"name": "touring", "type": "boolean", "extract": {"aliases": {"maybe": ["perhaps"], "true": [3, ""]}}},
            [
                "fields[0].extract.aliases.maybe: flag alias keys are true and false, not 'maybe'",
                "fields[0].extract.aliases.true[1]: must be a non-empty string",
            ],
            id="flag-aliases",
        ),
        pytest.param(
            {"name": "venue", "type": "string", "constraints": {"enum": ["Lyric", "Apollo"]},
             "extract": {"as": "choice", "aliases": {"Lyrik": ["L"], "Apolo": ["A"]}}},
            [
                "fields[0].extract.aliases.Lyrik: alias key 'Lyrik' is not in constraints.enum (did you mean 'Lyric'?)",
                "fields[0].extract.aliases.Apolo: alias key 'Apolo' is not in constraints.enum (did you mean 'Apollo'?)",
            ],
            id="every-alias-key",
        ),
    ],
)
def test_every_problem_of_one_field(field: dict, expected: list[str]) -> None:
    with pytest.raises(SchemaError) as caught:
        schema_from_descriptor({"fields": [field]}, source="api")
    lines = caught.value.lines
    assert len(lines) == len(expected), lines
    for line, words in zip(lines, expected):
        assert line.startswith(f"schema error: api: {words}"), (line, words)


@pytest.mark.parametrize(
    "field",
    [
        pytest.param({"name": "venue", "type": "strng", "extract": {"aliases": {"Lyric": ["L"]}}}, id="bad-type-no-kind-guess"),
        pytest.param(
            {"name": "venue", "type": "string", "constraints": {"enum": "Lyric"}, "extract": {"as": "choice"}},
            id="bad-enum-no-choice-complaint",
        ),
        pytest.param({"name": "venue", "extract": {"as": "choise", "aliases": {"Lyric": ["L"]}}}, id="bad-kind-no-alias-guess"),
    ],
)
def test_a_problem_does_not_cascade_into_made_up_ones(field: dict) -> None:
    with pytest.raises(SchemaError) as caught:
        schema_from_descriptor({"fields": [field]}, source="api")
    assert len(caught.value.lines) == 1, caught.value.lines


# --- where one problem makes the rest meaningless, it is the only one ----------------------------


@pytest.mark.parametrize(
    "text, expected",
    [
        pytest.param("fields: [\n  - name: venue\n", ["not valid YAML"], id="not-yaml"),
        pytest.param("- name: venue\n- name: fee\n", ["contracts.yaml: must be a mapping, not a list"], id="not-a-mapping"),
        pytest.param(
            "name: x\nextract: {review_below: 3}\nfeilds:\n  - {name: venue, type: strng}\n",
            [
                "contracts.yaml: missing 'fields'",
                "extract.review_below (line 2): must be a number between 0 and 1",
                "feilds (line 4): 'feilds' is not a known schema key (did you mean 'fields'?)",
            ],
            id="no-fields-list-field-checks-skipped",
        ),
        pytest.param(
            "fields: {name: venue, type: strng}\n",
            ["fields (line 1): must be a non-empty list of fields"],
            id="fields-not-a-list",
        ),
        pytest.param(
            "fields:\n  - name: venue\n    type: !!set {a, b}\n  - name: fee\n    type: numbr\n",
            ["unsupported YAML tag"],
            id="tag-stops-before-fields",
        ),
    ],
)
def test_fatal_problems_stop_the_checks(tmp_path: Path, text: str, expected: list[str]) -> None:
    lines = problems(write(tmp_path, text))
    assert len(lines) == len(expected), lines
    for line, words in zip(lines, expected):
        assert words in line, (line, words)


def test_values_that_are_not_plain_data_are_all_reported_and_stop_the_rest() -> None:
    descriptor = {"fields": [{"name": "venue", "x": {1, 2}, "type": "strng"}, {"name": "fee", "y": 10**5000}]}
    with pytest.raises(SchemaError) as caught:
        schema_from_descriptor(descriptor, source="api")
    assert [line.split(": ", 2)[2] for line in caught.value.lines] == [
        "fields[0].x: unsupported value of type set",
        "fields[1].y: number has too many digits",
    ]  # and not the bad type: values like these are refused before any field check


def test_a_flood_of_problems_is_capped(tmp_path: Path) -> None:
    text = "fields:\n" + "".join(f"  - name: role_{index}\n    type: strng\n" for index in range(80))
    lines = problems(write(tmp_path, text))
    assert len(lines) == 51
    assert lines[0] == "schema error: contracts.yaml: fields[0].type (line 3): 'strng' is not a Table Schema type (did you mean 'string'?)"
    assert lines[-1] == "schema error: contracts.yaml: 30 more problems not listed"


def test_check_schema_prints_every_problem_and_exits_2(tmp_path: Path) -> None:
    result = runner.invoke(app, ["check-schema", str(write(tmp_path, MANY))])
    assert result.exit_code == 2
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == len(MANY_LINES)
    for line, expected in zip(lines, MANY_LINES):
        assert line.endswith(expected), (line, expected)


def test_a_single_problem_is_still_exactly_one_line(tmp_path: Path) -> None:
    path = write(tmp_path, "fields:\n  - name: performer\n    extract: {as: persn}\n")
    with pytest.raises(SchemaError) as caught:
        load_schema(path)
    assert caught.value.problems == (caught.value,)
    assert str(caught.value) == "schema error: contracts.yaml: fields[0].extract.as (line 3): 'persn' is not a kind (did you mean 'person'?)"


# --- a kind must be able to give the field's type ----------------------------------------------

#: For each kind, the Table Schema types it can fill, worked out from the values it yields:
#: names, addresses and phone numbers are text; a calendar date fills date and datetime; an
#: amount fills number and integer; a plain number or an all-digit identifier also fills a
#: year; a flag is true/false; an enum value or free text is cast like any cell.
FITS = {
    "person": {"string"},
    "organization": {"string"},
    "place": {"string"},
    "job_title": {"string"},
    "email": {"string"},
    "phone": {"string"},
    "date": {"string", "date", "datetime"},
    "money": {"string", "number", "integer"},
    "number": {"string", "number", "integer", "year"},
    "identifier": {"string", "number", "integer", "year"},
    "flag": {"string", "boolean"},
    "choice": {"string", "number", "integer", "date", "datetime", "boolean", "year"},
    "text": {"string", "number", "integer", "date", "datetime", "boolean", "year"},
}
TARGETS = ("string", "number", "integer", "date", "datetime", "boolean", "year")


def _field(kind: str, type_: str) -> dict:
    field: dict = {"name": "value", "type": type_, "extract": {"as": kind, "cues": ["value"]}}
    if kind == "choice":
        field["constraints"] = {"enum": ["1"]}
    return field


def test_the_table_covers_every_kind_and_type() -> None:
    assert set(FITS) == set(KINDS)
    assert set(TARGETS) | {"any"} == set(TYPES)


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("type_", TARGETS)
def test_kind_and_type_fit_or_are_refused(kind: str, type_: str) -> None:
    descriptor = {"fields": [_field(kind, type_)]}
    if type_ in FITS[kind]:
        schema = schema_from_descriptor(descriptor, source="api")
        assert schema.fields[0].hints.kind == kind
    else:
        with pytest.raises(SchemaError) as caught:
            schema_from_descriptor(descriptor, source="api")
        assert str(caught.value).startswith(f"schema error: api: fields[0].extract.as: kind {kind!r} cannot give a {type_} value; ")
        assert len(caught.value.lines) == 1


@pytest.mark.parametrize("kind", KINDS)
def test_type_any_and_an_absent_type_take_every_kind(kind: str) -> None:
    for field in (_field(kind, "any"), {k: v for k, v in _field(kind, "any").items() if k != "type"}):
        assert schema_from_descriptor({"fields": [field]}, source="api").fields[0].hints.kind == kind


@pytest.mark.parametrize("type_", TARGETS)
def test_the_default_kind_of_every_type_fits_it(type_: str) -> None:
    schema = schema_from_descriptor({"fields": [{"name": "value", "type": type_}]}, source="api")
    assert type_ in FITS[schema.fields[0].hints.kind]


#: A value each kind's extractor typically yields (types.Candidate: normalised values).
TYPICAL = {
    "person": "Ines Okafor",
    "organization": "Lyric Touring Company",
    "place": "Wolverhampton",
    "job_title": "Deputy Stage Manager",
    "email": "ines.okafor@lyric.example",
    "phone": "+44 1632 960 123",
    "date": dt.date(2026, 3, 14),
    "money": Decimal("41500"),
    "number": Decimal("1998"),
    "identifier": "004512",
    "flag": True,
}


@pytest.mark.parametrize("kind", sorted(TYPICAL))
@pytest.mark.parametrize("type_", TARGETS)
def test_what_the_loader_allows_is_what_a_cast_can_do(kind: str, type_: str) -> None:
    """The refusals are not arbitrary: a refused pair's typical value never casts to the type."""
    spec = schema_from_descriptor({"fields": [{"name": "value", "type": type_}]}, source="api").fields[0]
    try:
        cast(spec, TYPICAL[kind])
        casts = True
    except CastError:
        casts = False
    assert casts == (type_ in FITS[kind]), (kind, type_)


@pytest.mark.parametrize("folder", [SCHEMAS, CORPUS / "schemas"])
def test_every_shipped_schema_still_loads(folder: Path) -> None:
    if not folder.exists():
        pytest.skip(f"{folder} is absent")
    files = sorted(folder.glob("*.yaml"))
    assert files
    for path in files:
        for spec in load_schema(path).fields:
            assert spec.type in FITS[spec.hints.kind] or spec.type == "any", (path.name, spec.name)
