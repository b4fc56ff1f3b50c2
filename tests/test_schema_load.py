"""Schema loading: the contract's files load; every mistake is one located line."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from structurize.errors import SchemaError
from structurize.schema import load_schema

from conftest import CORPUS, SCHEMAS

GOOD = """\
name: offers
extract:
  date_order: MDY
  review_below: 0.75
fields:
  - name: candidate_name
    type: string
    constraints: {required: true}
    extract: {as: person, cues: [dear, candidate]}
  - name: site
    type: string
    constraints:
      enum: [Harbour Point, Millbrook]
    extract:
      as: choice
      cues: [site, location]
      aliases:
        Harbour Point: [HP, H. Point]
  - name: rehire
    type: boolean
    extract:
      as: flag
      cues: [rehire]
      aliases:
        true: ["yes", "y"]
        false: ["no", "n"]
"""


def write(tmp_path: Path, text: str, name: str = "schema.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("folder", [SCHEMAS, CORPUS / "schemas"])
def test_schema_load_shipped_schemas(folder: Path) -> None:
    if not folder.exists():
        pytest.skip(f"{folder} is absent")
    files = sorted(folder.glob("*.yaml"))
    assert files
    for path in files:
        schema = load_schema(path)
        assert schema.fields and all(spec.hints.kind for spec in schema.fields)


def test_schema_load_reads_hints(tmp_path: Path) -> None:
    schema = load_schema(write(tmp_path, GOOD))
    assert schema.date_order == "MDY" and schema.review_below == 0.75
    assert schema.field("candidate_name").required
    site = schema.field("site").hints
    assert ("Harbour Point", ("HP", "H. Point")) in site.aliases
    assert ("Millbrook", ()) in site.aliases  # enum values are variants too
    rehire = schema.field("rehire").hints
    assert rehire.true_variants == ("yes", "y") and rehire.false_variants == ("no", "n")


@pytest.mark.parametrize("keys", [("true", "false"), ("'true'", "'false'"), ('"True"', '"FALSE"')])
def test_schema_load_flag_alias_keys_as_booleans_or_strings(tmp_path: Path, keys: tuple[str, str]) -> None:
    text = GOOD.replace("        true:", f"        {keys[0]}:").replace("        false:", f"        {keys[1]}:")
    rehire = load_schema(write(tmp_path, text)).field("rehire").hints
    assert rehire.true_variants == ("yes", "y") and rehire.false_variants == ("no", "n")


def test_schema_load_json_schema(tmp_path: Path) -> None:
    descriptor = {"fields": [{"name": "start", "type": "date", "extract": {"cues": ["start date"]}}]}
    schema = load_schema(write(tmp_path, json.dumps(descriptor), "s.json"))
    assert schema.field("start").hints.kind == "date"  # kind follows the type


@pytest.mark.parametrize(
    "change, expected",
    [
        (("as: person", "as: persn"), "schema error: schema.yaml: fields[0].extract.as (line 9): 'persn' is not a kind (did you mean 'person'?)"),
        (("cues: [dear, candidate]", "cues: [dear], cue: [x]"), "fields[0].extract.cue (line 9): 'cue' is not a known extract key (did you mean 'cues'?)"),
        (("date_order: MDY", "date_order: DDMM"), "extract.date_order (line 3): must be one of MDY, DMY, YMD"),
        (("review_below: 0.75", "review_below: 2"), "extract.review_below (line 4): must be a number between 0 and 1"),
        (("type: boolean", "type: bool"), "fields[2].type (line 20): 'bool' is not a Table Schema type (did you mean 'boolean'?)"),
        (("required: true", "requried: true"), "'requried' is not a known constraint (did you mean 'required'?)"),
        (("Harbour Point: [HP", "Harbor Pt: [HP"), "alias key 'Harbor Pt' is not in constraints.enum"),
        (('true: ["yes", "y"]', "true: [yes, y]"), "True was read as a boolean; quote it"),
        (("- name: site", "- name: candidate_name"), "duplicate field name 'candidate_name' (same as fields[0])"),
    ],
)
def test_schema_load_errors_are_one_located_line(tmp_path: Path, change: tuple[str, str], expected: str) -> None:
    path = write(tmp_path, GOOD.replace(*change))
    with pytest.raises(SchemaError) as caught:
        load_schema(path)
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith("schema error: schema.yaml: ")
    assert expected in message


@pytest.mark.parametrize(
    "text, expected",
    [
        ("fields: [{name: a, name: b}]\n", "duplicate key 'name'"),
        ("!!python/object/apply:os.system [echo hi]\n", "unsupported YAML"),
        ("fields:\n  - name: x\n    type: !custom string\n", "unsupported YAML"),
        ("", "file is empty"),
        ("fields: [\n", "not valid YAML"),
        ("name: x\n", "missing 'fields'"),
        ("fields: []\n", "must be a non-empty list of fields"),
        ("fields:\n  - type: string\n", "every field needs a non-empty string 'name'"),
        ("fields:\n  - name: \"a\\nb\"\n", "control characters"),
        ("fields:\n  - name: x\n    type: geopoint\n", "not supported as an extraction target"),
        ("fields:\n  - name: x\n    constraints: {pattern: '[a-'}\n", "not a valid regular expression"),
        ("fields:\n  - name: s\n    extract: {as: choice}\n", "a choice field needs constraints.enum or extract.aliases"),
    ],
)
def test_schema_load_rejects(tmp_path: Path, text: str, expected: str) -> None:
    with pytest.raises(SchemaError) as caught:
        load_schema(write(tmp_path, text))
    assert expected in str(caught.value)


def test_schema_load_refuses_alias_bomb(tmp_path: Path) -> None:
    # "billion laughs" in YAML: nine levels of ten aliases each
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    for level in range(1, 9):
        lines.append(f"a{level}: &a{level} [" + ", ".join([f"*a{level - 1}"] * 10) + "]")
    lines.append("fields: [{name: f}]")
    with pytest.raises(SchemaError) as caught:
        load_schema(write(tmp_path, "\n".join(lines) + "\n"))
    assert "aliases expand to too many nodes" in str(caught.value)


def test_schema_load_json_duplicate_keys(tmp_path: Path) -> None:
    path = write(tmp_path, '{"fields": [{"name": "a"}], "fields": []}', "s.json")
    with pytest.raises(SchemaError, match="duplicate key 'fields'"):
        load_schema(path)


def test_schema_load_keeps_user_keys(tmp_path: Path) -> None:
    text = GOOD.replace("name: offers", "name: offers\nx-owner: hr-analytics")
    schema = load_schema(write(tmp_path, text))
    assert schema.descriptor["x-owner"] == "hr-analytics"
