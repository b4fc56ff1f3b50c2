"""External checks against the Frictionless Table Schema (Data Package v2) and ``frictionless``.

Sources: the Frictionless Table Schema specification (v2).  (a) The spec's constraint worked
examples, each invalid at data row 2 (physical row 3), run through structurize's own
validator and through frictionless 5.21.0, the reference validator, so both must agree on
which row is bad.  (b) The ``datapackage.json`` structurize writes must validate with
frictionless, carry the user's schema with its ``extract`` hints, and have the v2
``$schema`` at the root (measured with frictionless 5.21.0: exclusiveMinimum/Maximum are
enforced only then).
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import pytest
import yaml
from frictionless import Package, Resource

from structurize.api import extract_folder
from structurize.options import ExtractOptions
from structurize.schema import load_schema, schema_from_descriptor
from structurize.types import DocStatus, DocumentResult, FieldValue, ValueStatus
from structurize.validate import check_unique, validate_value
from structurize.write import write_outputs

ROOT = Path(__file__).resolve().parent.parent
DEMO_FOLDER = ROOT / "demo_docs" / "offer_letter"
DEMO_SCHEMA = ROOT / "schemas" / "offer_letter.yaml"
RESOURCE_PROFILE_V2 = "https://datapackage.org/profiles/2.0/dataresource.json"
PACKAGE_PROFILE_V2 = "https://datapackage.org/profiles/2.0/datapackage.json"

ID = {"name": "id", "type": "integer"}
NAME = {"name": "name", "type": "string"}

# (csv text, fields, field under test, frictionless error type).  Every row is
# a Frictionless Table Schema specification example, measured with frictionless 5.21.0.
SPEC_EXAMPLES = [
    pytest.param(
        "id,name\n1,apple\n2,\n", [ID, {**NAME, "constraints": {"required": True}}], "name", "constraint-error", id="required"
    ),
    pytest.param(
        "id,name\n1,apple\n2,plum\n", [ID, {**NAME, "constraints": {"minLength": 5}}], "name", "constraint-error", id="minLength"
    ),
    pytest.param(
        "id,name\n1,apple\n2,grapefruit\n",
        [ID, {**NAME, "constraints": {"maxLength": 5}}],
        "name",
        "constraint-error",
        id="maxLength",
    ),
    pytest.param(
        "id,name,price\n1,apple,100\n2,orange,50\n",
        [ID, NAME, {"name": "price", "type": "integer", "constraints": {"minimum": 100}}],
        "price",
        "constraint-error",
        id="minimum",
    ),
    pytest.param(
        "id,name,price\n1,apple,100\n2,orange,150\n",
        [ID, NAME, {"name": "price", "type": "integer", "constraints": {"maximum": 100}}],
        "price",
        "constraint-error",
        id="maximum",
    ),
    # exclusiveMinimum/Maximum: only with a v2 $schema at the resource root (measured with frictionless 5.21.0)
    pytest.param(
        "id,name,price\n1,apple,100\n2,orange,0\n",
        [ID, NAME, {"name": "price", "type": "integer", "constraints": {"exclusiveMinimum": 0}}],
        "price",
        "constraint-error",
        id="exclusiveMinimum",
    ),
    pytest.param(
        "id,name,price\n1,apple,100\n2,orange,150\n",
        [ID, NAME, {"name": "price", "type": "integer", "constraints": {"exclusiveMaximum": 150}}],
        "price",
        "constraint-error",
        id="exclusiveMaximum",
    ),
    # pattern is a whole-value match (XML Schema regex)
    pytest.param(
        "id,name\n1,apple\n2,orange\n", [ID, {**NAME, "constraints": {"pattern": "^a.*$"}}], "name", "constraint-error", id="pattern"
    ),
    pytest.param(
        "id,name\n1,apple\n2,orange\n", [ID, {**NAME, "constraints": {"enum": ["apple"]}}], "name", "constraint-error", id="enum"
    ),
    pytest.param(
        "id,name\n1,apple\n2,apple\n", [ID, {**NAME, "constraints": {"unique": True}}], "name", "unique-error", id="unique"
    ),
]


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


def _structurize_statuses(descriptor: dict, text: str, field: str) -> list[ValueStatus]:
    """Statuses structurize gives the values of ``field``, one per data row."""
    schema = schema_from_descriptor(descriptor)
    spec = schema.field(field)
    results = []
    for index, row in enumerate(_rows(text), start=1):
        raw = row[field]
        value = None if raw in schema.missing_values else raw  # missingValues [""] (spec default)
        status = ValueStatus.MISSING if value is None else ValueStatus.OK
        item = validate_value(spec, FieldValue(field, value, 0.9, status))
        results.append(DocumentResult(source=f"row{index}.txt", sha256="", status=DocStatus.OK, values=(item,)))
    results = check_unique(schema, results)
    return [result.value(field).status for result in results]


def _frictionless_errors(tmp_path: Path, descriptor: dict, text: str) -> list[list]:
    (tmp_path / "data.csv").write_text(text, encoding="utf-8")
    resource = Resource.from_descriptor(
        {"$schema": RESOURCE_PROFILE_V2, "name": "example", "path": "data.csv", "schema": descriptor},
        basepath=str(tmp_path),
    )
    report = resource.validate()
    assert report.tasks[0].stats["rows"] == 2  # it read the data, not just the descriptor
    return report.flatten(["rowNumber", "fieldName", "type"])


@pytest.mark.parametrize(("text", "fields", "field", "error"), SPEC_EXAMPLES)
def test_validate_value_table_schema_spec_examples(text, fields, field, error):
    # Frictionless Table Schema specification example: data row 1 is good, data row 2 is bad
    statuses = _structurize_statuses({"fields": fields}, text, field)
    assert statuses[1] is ValueStatus.INVALID
    if error != "unique-error":
        assert statuses[0] is ValueStatus.OK
    else:
        # structurize's rule: every occurrence of a repeated value is invalid (frictionless
        # reports only the repeat, at row 3); a value that does not repeat stays ok
        assert statuses[0] is ValueStatus.INVALID
        extra = _structurize_statuses({"fields": fields}, text + "3,banana\n", field)
        assert extra[2] is ValueStatus.OK


@pytest.mark.parametrize(("text", "fields", "field", "error"), SPEC_EXAMPLES)
def test_frictionless_table_schema_spec_examples(tmp_path, text, fields, field, error):
    # Frictionless Table Schema specification example (measured with frictionless 5.21.0): invalid at row 3
    assert _frictionless_errors(tmp_path, {"fields": fields}, text) == [[3, field, error]]


@pytest.mark.parametrize(("text", "fields", "field", "error"), SPEC_EXAMPLES)
def test_validate_value_agrees_with_frictionless(tmp_path, text, fields, field, error):
    # Both validators, same CSV, same schema: the rows frictionless flags are flagged by
    # structurize too, and a row structurize passes is one frictionless passes.
    statuses = _structurize_statuses({"fields": fields}, text, field)
    invalid = {data_row for data_row, status in enumerate(statuses, start=1) if status is ValueStatus.INVALID}
    flagged = {row - 1 for row, _, _ in _frictionless_errors(tmp_path, {"fields": fields}, text)}  # physical → data row
    assert flagged == {2}
    if error == "unique-error":
        assert flagged <= invalid  # structurize also flags the first occurrence (see above)
    else:
        assert invalid == flagged


@pytest.mark.parametrize(
    ("fields", "field", "good", "bad"),
    [
        # good and bad values of the spec examples, the other way round from the CSV too:
        # the bounds themselves (Frictionless Table Schema specification: minimum/maximum inclusive, exclusive* not)
        pytest.param([{"name": "price", "type": "integer", "constraints": {"minimum": 100}}], "price", "100", "99", id="minimum-bound"),
        pytest.param([{"name": "price", "type": "integer", "constraints": {"maximum": 100}}], "price", "100", "101", id="maximum-bound"),
        pytest.param([{"name": "price", "type": "integer", "constraints": {"exclusiveMinimum": 0}}], "price", "1", "0", id="exclusiveMinimum-bound"),
        pytest.param([{"name": "price", "type": "integer", "constraints": {"exclusiveMaximum": 150}}], "price", "149", "150", id="exclusiveMaximum-bound"),
        # pattern is anchored on the whole value even without ^...$ (XML Schema regex)
        pytest.param([{"name": "code", "type": "string", "constraints": {"pattern": "[A-Z]{3}"}}], "code", "USD", "USDX", id="pattern-whole-value"),
    ],
)
def test_validate_value_agrees_with_frictionless_on_bounds(tmp_path, fields, field, good, bad):
    text = f"{field}\n{good}\n{bad}\n"
    assert _structurize_statuses({"fields": fields}, text, field) == [ValueStatus.OK, ValueStatus.INVALID]
    assert [row for row, *_ in _frictionless_errors(tmp_path, {"fields": fields}, text)] == [3]


# --- (b) the datapackage.json structurize writes -------------------------------------------------


@pytest.fixture(scope="module")
def demo_output(tmp_path_factory):
    """Rules-only extraction of the offer-letter demo folder, written to a temp folder."""
    schema = load_schema(DEMO_SCHEMA)
    result = extract_folder(DEMO_FOLDER, schema, options=ExtractOptions(ner=None))
    out = tmp_path_factory.mktemp("demo_output")
    write_outputs(result, out)
    return result, out


def _values_status(out: Path) -> dict[tuple[str, str], str]:
    with (out / "values.csv").open(encoding="utf-8-sig", newline="") as handle:
        return {(row["document"], row["field"]): row["status"] for row in csv.DictReader(handle)}


def test_datapackage_validates_with_frictionless(demo_output):
    result, out = demo_output
    # measured with frictionless 5.21.0: Package("datapackage.json").validate() works offline
    report = Package(str(out / "datapackage.json")).validate()
    task = report.tasks[0]
    assert len(report.tasks) == 1
    assert task.stats["rows"] == len(result.documents) == 4
    assert task.stats["fields"] == 1 + len(result.schema.fields)
    assert task.warnings == []
    if not report.valid:
        # the only errors allowed are on cells the tool itself reported as invalid
        with (out / "table.csv").open(encoding="utf-8-sig", newline="") as handle:
            documents = [row["document"] for row in csv.DictReader(handle)]
        statuses = _values_status(out)
        for row_number, field_name, error_type in report.flatten(["rowNumber", "fieldName", "type"]):
            document = documents[row_number - 2]
            assert statuses.get((document, field_name)) == "invalid", (document, field_name, error_type)


def test_datapackage_frictionless_catches_a_broken_cell(demo_output, tmp_path):
    # negative control: the same package with one enum cell broken must be reported
    _, out = demo_output
    for name in ("datapackage.json", "table.csv"):
        shutil.copy(out / name, tmp_path / name)
    table = (tmp_path / "table.csv").read_bytes()
    assert b'"Oriel Street Clinic"' in table
    (tmp_path / "table.csv").write_bytes(table.replace(b'"Oriel Street Clinic"', b'"Oriel St"', 1))
    report = Package(str(tmp_path / "datapackage.json")).validate()
    assert not report.valid
    assert [(field, kind) for _, field, kind in report.flatten(["rowNumber", "fieldName", "type"])] == [("site", "constraint-error")]


def test_datapackage_has_v2_schema_at_root(demo_output):
    _, out = demo_output
    descriptor = json.loads((out / "datapackage.json").read_text(encoding="utf-8"))
    # the v2 $schema at the datapackage root (Frictionless Data Package specification;
    # measured with frictionless 5.21.0: exclusive* constraints need it there)
    assert descriptor["$schema"] == PACKAGE_PROFILE_V2
    (resource,) = descriptor["resources"]
    # Frictionless Data Package specification: a relative path next to the descriptor, CSV dialect declared
    assert resource["path"] == "table.csv"
    assert (out / resource["path"]).is_file()
    assert resource["format"] == "csv"
    assert resource["mediatype"] == "text/csv"
    assert resource["dialect"]["lineTerminator"] == "\r\n"
    assert resource["schema"]["$schema"] == "https://datapackage.org/profiles/2.0/tableschema.json"
    # frictionless reads it as a v2 package (exclusive* constraints would need it)
    assert Package(str(out / "datapackage.json")).to_descriptor()["$schema"] == PACKAGE_PROFILE_V2


def test_datapackage_carries_user_schema_and_extract_hints(demo_output):
    _, out = demo_output
    user = yaml.safe_load(DEMO_SCHEMA.read_text(encoding="utf-8"))
    schema = json.loads((out / "datapackage.json").read_text(encoding="utf-8"))["resources"][0]["schema"]
    fields = {field["name"]: field for field in schema["fields"]}
    assert list(fields) == ["document"] + [field["name"] for field in user["fields"]]
    for field in user["fields"]:
        # Frictionless Table Schema specification: extra field properties (the extraction hints) are conformant
        assert fields[field["name"]] == field
        assert fields[field["name"]]["extract"] == field["extract"]
    assert schema["extract"] == user["extract"]
    assert schema["primaryKey"] == ["document"]


def test_datapackage_extract_hints_survive_frictionless_round_trip(demo_output):
    # measured with frictionless 5.21.0: custom field keys are preserved by Schema.to_descriptor()
    _, out = demo_output
    user = yaml.safe_load(DEMO_SCHEMA.read_text(encoding="utf-8"))
    fields = Package(str(out / "datapackage.json")).resources[0].schema.to_descriptor()["fields"]
    hints = {field["name"]: field.get("extract") for field in fields}
    assert hints == {"document": None, **{field["name"]: field["extract"] for field in user["fields"]}}
