"""Hostile and broken schema files: catalogue S1–S6 and C3 (tests/CATALOGUE.md), and the
schema-file limits (1,000,000 bytes, 100 aliases, 100 levels of nesting).

Every input is generated here.  Each row names its catalogue ID.  Expectations: the file is
refused with one located line (``schema error: <file>: <where>: <what>``) and nothing is
executed; a user regular expression never hangs a worker (S3).
"""

from __future__ import annotations

import csv
import json
import os
import pickle
import threading
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from structurize import patterns
from structurize.api import ExtractionResult, extract_document, extract_folder
from structurize.cli import app
from structurize.errors import SchemaError
from structurize.options import ExtractOptions
from structurize.schema import load_schema
from structurize.types import ValueStatus
from structurize.validate import validate_value
from structurize.types import FieldValue

from conftest import make_schema

runner = CliRunner()
EVIL = "a" * 50 + "!"  # the S3 subject string


def write(tmp_path: Path, text: str | bytes, name: str = "schema.yaml") -> Path:
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def refused(path: Path, seconds: float = 1.0) -> str:
    """The error load_schema gives for ``path`` (one line per problem), checked to come within ``seconds``."""
    started = time.perf_counter()
    with pytest.raises(SchemaError) as caught:
        load_schema(path)
    elapsed = time.perf_counter() - started
    message = str(caught.value)
    assert elapsed < seconds, f"took {elapsed:.2f} s"
    assert "\r" not in message and message.split("\n") == list(caught.value.lines), message
    assert all(line.startswith(f"schema error: {path.name}: ") for line in caught.value.lines), message
    return message


# --- S1: YAML tags -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, line",
    [
        pytest.param('!!python/object/apply:os.system ["touch {canary}"]\n', 1, id="S1-apply-top"),
        pytest.param('fields:\n  - name: x\n    type: !!python/object/apply:os.system ["touch {canary}"]\n', 3, id="S1-apply-nested"),
        pytest.param("fields:\n  - name: !!python/name:os.system x\n", 2, id="S1-python-name"),
        pytest.param("fields:\n  - name: x\n    title: !!python/object/new:os.system [touch {canary}]\n", 3, id="S1-new"),
        pytest.param("fields:\n  - name: x\n    type: !custom string\n", 3, id="S1-local-tag"),
    ],
)
def test_S1_yaml_tags_are_refused_with_the_line_and_nothing_runs(tmp_path: Path, text: str, line: int) -> None:
    canary = tmp_path / "CANARY"
    message = refused(write(tmp_path, text.format(canary=canary)))
    assert f"line {line}" in message and "unsupported YAML tag" in message
    assert not canary.exists()  # CVE-2017-18342 class: nothing was executed


def test_S1_plain_core_tags_still_load(tmp_path: Path) -> None:
    schema = load_schema(write(tmp_path, "fields:\n  - name: !!str x\n    type: !!str string\n"))
    assert schema.field_names == ("x",)


# --- S2: alias bombs --------------------------------------------------------------------------------


def _alias_bomb(levels: int = 9, width: int = 9) -> str:
    lines = ['a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
    previous = "a"
    for index in range(1, levels):
        name = chr(ord("a") + index)
        lines.append(f"{name}: &{name} [{', '.join(['*' + previous] * width)}]")
        previous = name
    lines.append("fields: [{name: x}]")
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize(
    "text, words",
    [
        pytest.param(_alias_bomb(), "aliases expand to too many nodes", id="S2-billion-laughs-9x9"),
        pytest.param(_alias_bomb(levels=5, width=30), "more than 100 aliases", id="S2-alias-flood"),
        pytest.param("x: &x [1]\nfields:\n" + "".join(f"  - {{name: f{i}, x: *x}}\n" for i in range(150)), "more than 100 aliases", id="S2-many-aliases"),
    ],
)
def test_S2_alias_bombs_are_refused_in_under_a_second(tmp_path: Path, text: str, words: str) -> None:
    assert len(text.encode()) < 20_000  # small file, huge expansion
    assert words in refused(write(tmp_path, text), seconds=1.0)


def test_S2_a_few_aliases_are_fine(tmp_path: Path) -> None:
    text = "cues: &cues [salary, pay]\nfields:\n  - {name: a, type: number, extract: {cues: *cues}}\n  - {name: b, type: number, extract: {cues: *cues}}\n"
    schema = load_schema(write(tmp_path, text))
    assert schema.field("b").hints.cues == ("salary", "pay")


# --- S3: catastrophic user regular expressions --------------------------------------------------

#: (a|aa)+$ and (a|a)*$ defeat the regex module's own safeguards; the two catalogue patterns
#: are exponential in :mod:`re` but the module matches them quickly: all must stay bounded.
CATASTROPHIC = [
    pytest.param(r"(a+)+$", id="S3-nested-plus"),
    pytest.param(r"(\w+\s?)*$", id="S3-word-space-star"),
    pytest.param(r"(a|aa)+$", id="S3-overlapping-alternation"),
    pytest.param(r"(a|a)*$", id="S3-identical-alternation"),
]
#: Patterns that really run out of time (so the timeout path itself is exercised).
TIMING_OUT = [r"(a|aa)+$", r"(a|a)*$"]


@pytest.mark.parametrize("pattern", CATASTROPHIC)
def test_S3_constraint_pattern_validation_is_bounded(pattern: str) -> None:
    spec = make_schema({"name": "code", "type": "string", "constraints": {"pattern": pattern}}).fields[0]
    started = time.perf_counter()
    checked = validate_value(spec, FieldValue("code", EVIL, 0.9, ValueStatus.OK))
    elapsed = time.perf_counter() - started
    assert elapsed < 1.0, f"{pattern} took {elapsed:.2f} s"
    assert checked.status is ValueStatus.INVALID  # the value does not match, or ran out of time
    if pattern in TIMING_OUT:
        assert checked.reason.startswith(patterns.TIMEOUT_REASON), checked.reason


def test_S3_time_limit_is_the_configured_one() -> None:
    spec = make_schema({"name": "code", "type": "string", "constraints": {"pattern": r"(a|aa)+$"}}).fields[0]
    with patterns.time_limit(0.02):
        started = time.perf_counter()
        checked = validate_value(spec, FieldValue("code", "a" * 60 + "!", 0.9, ValueStatus.OK))
        elapsed = time.perf_counter() - started
    assert checked.reason == "validation_timeout: the pattern took longer than 0.02 s"
    assert elapsed < 0.5
    assert patterns.default_seconds() == ExtractOptions().limits.regex_seconds  # back to the default


def test_S3_a_value_that_matches_is_still_ok() -> None:
    spec = make_schema({"name": "code", "type": "string", "constraints": {"pattern": r"(a|aa)+"}}).fields[0]
    assert validate_value(spec, FieldValue("code", "aaaa", 0.9, ValueStatus.OK)).status is ValueStatus.OK


def _identifier_schema(pattern: str):
    return make_schema(
        {"name": "employee_id", "type": "string", "extract": {"as": "identifier", "cues": ["employee id"], "pattern": pattern}},
        {"name": "site", "type": "string", "extract": {"as": "text", "cues": ["site"]}},
    )


@pytest.mark.parametrize("pattern", CATASTROPHIC)
def test_S3_extract_pattern_never_hangs_extraction(tmp_path: Path, pattern: str) -> None:
    # identifier candidates are runs of letters and digits: the failing suffix is a digit here;
    # 40 labelled hostile values: without the per-document memory of patterns that ran out
    # of time, each place looked at would cost a full time limit (0.1 s)
    token = "a" * 50 + "1"
    text = "Site: Harbour Point\n" + f"Employee ID: {token}\n" * 40 + " ".join([token] * 200) + "\n"
    path = tmp_path / "memo.txt"
    path.write_text(text, encoding="utf-8")
    schema = _identifier_schema(pattern)
    started = time.perf_counter()
    result = extract_document(path, schema, options=ExtractOptions(ner=None, workers=0))
    elapsed = time.perf_counter() - started
    assert elapsed < 1.5, f"{pattern} took {elapsed:.2f} s"
    assert result.status.value == "ok"
    assert result.value("site").value == "Harbour Point"  # the rest of the document is unaffected
    if pattern in TIMING_OUT:
        assert result.value("employee_id").value is None  # no candidate from a match that ran out of time
        assert patterns.TIMEOUT_WARNING in result.warnings  # the document says a pattern ran out of time
    else:
        assert patterns.TIMEOUT_WARNING not in result.warnings


def test_S3_identifier_still_found_with_a_sane_pattern(tmp_path: Path) -> None:
    path = tmp_path / "memo.txt"
    path.write_text("Employee ID: HP40211\nSite: Harbour Point\n", encoding="utf-8")
    result = extract_document(path, _identifier_schema(r"[A-Z]{2}[0-9]{5}"), options=ExtractOptions(ner=None, workers=0))
    assert result.value("employee_id").value == "HP40211"


def test_S3_hostile_pattern_in_a_worker_fails_no_document(tmp_path: Path) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    for index in range(2):
        (folder / f"memo{index}.txt").write_text(f"Employee ID: {'a' * 50}1\nCode: {EVIL}\n", encoding="utf-8")
    schema = make_schema(
        {"name": "employee_id", "type": "string", "constraints": {"pattern": r"(a|aa)+$"}, "extract": {"as": "identifier", "cues": ["employee id"]}},
        {"name": "code", "type": "string", "constraints": {"pattern": r"(a|aa)+$"}, "extract": {"as": "text", "cues": ["code"]}},
    )
    result = extract_folder(folder, schema, options=ExtractOptions(ner=None, workers=1, time_limit=20))
    assert [doc.status.value for doc in result.documents] == ["ok", "ok"]  # no timeout, no crash
    for doc in result.documents:
        code = doc.value("code")
        assert code.status is ValueStatus.INVALID and code.reason.startswith("validation_timeout"), code


def test_S3_patterns_travel_to_workers_by_source() -> None:
    pattern = patterns.compile_pattern(r"[A-Z]{2}\d{5}")
    copy = pickle.loads(pickle.dumps(pattern))
    assert copy == pattern and copy.pattern == pattern.pattern and copy.fullmatch("HP40211")


@pytest.mark.parametrize(
    "text, where",
    [
        pytest.param("fields:\n  - name: x\n    constraints: {pattern: '(a'}\n", "line 3", id="S3-invalid-constraint"),
        pytest.param("fields:\n  - name: x\n    extract: {as: identifier, pattern: '[a-'}\n", "line 3", id="S3-invalid-extract"),
        pytest.param("fields:\n  - name: x\n    constraints: {pattern: 5}\n", "line 3", id="S3-not-a-string"),
    ],
)
def test_S3_invalid_patterns_are_refused_with_the_line(tmp_path: Path, text: str, where: str) -> None:
    message = refused(write(tmp_path, text))
    assert where in message and ("not a valid regular expression" in message or "must be a string" in message)


# --- S4: bad field names ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "names, line, words",
    [
        pytest.param(["Salary", "Salary"], 3, "duplicate field name 'Salary' (same as fields[0]): 'Salary' on line 2", id="S4-duplicate"),
        pytest.param(["Salary", "salary"], 3, "duplicate field name 'salary' (same as fields[0])", id="S4-case"),
        pytest.param(["Salary", "salary "], 3, "duplicate field name 'salary ' (same as fields[0])", id="S4-trailing-space"),
        pytest.param(["base salary", "Base  Salary"], 3, "duplicate field name", id="S4-inner-spaces"),
        pytest.param(["salary", "ｓａｌａｒｙ"], 3, "duplicate field name", id="S4-fullwidth-NFKC"),
        pytest.param(["a", "b", "A"], 4, "(same as fields[0])", id="S4-third-field"),
        pytest.param(["=cmd|' /C calc'!A0"], 2, "starts with '=', which spreadsheets read as a formula", id="S4-formula-equals"),
        pytest.param(["+total"], 2, "starts with '+'", id="S4-formula-plus"),
        pytest.param(["-x"], 2, "starts with '-'", id="S4-formula-minus"),
        pytest.param(["@sum"], 2, "starts with '@'", id="S4-formula-at"),
        pytest.param(["a\nb"], 2, "control characters", id="S4-newline"),
        pytest.param(["a\rb"], 2, "control characters", id="S4-carriage-return"),
        pytest.param(["name\u202eevil"], 2, "invisible characters", id="S4-bidi-override"),
        pytest.param(["zero\u200bwidth"], 2, "invisible characters", id="S4-zero-width"),
        pytest.param(["Document"], 2, "the name of the table's own first column", id="S4-reserved-document"),
        pytest.param(["x" * 201], 2, "longer than 200 characters", id="S4-too-long"),
    ],
)
def test_S4_bad_field_names_are_refused_with_the_line(tmp_path: Path, names: list[str], line: int, words: str) -> None:
    text = "fields:\n" + "".join(f"  - name: {json.dumps(name)}\n" for name in names)
    message = refused(write(tmp_path, text))
    assert f"(line {line})" in message and words in message, message


SAFE_NAMES = ['say "hi"', "a;b", "order", "select", '"); DROP TABLE v;--', "x, y", "naïve", "日本語"]


def test_S4_quotes_semicolons_and_sql_words_are_kept_verbatim_and_quoted(tmp_path: Path) -> None:
    from structurize.write import write_outputs

    text = "fields:\n" + "".join(f"  - name: {json.dumps(name)}\n" for name in SAFE_NAMES)
    schema = load_schema(write(tmp_path, text))
    assert schema.field_names == tuple(SAFE_NAMES)
    out = tmp_path / "out"
    write_outputs(ExtractionResult(schema=schema, documents=()), out)
    with (out / "table.csv").open(encoding="utf-8-sig", newline="") as handle:
        header = next(csv.reader(handle))  # RFC 4180 round trip through the stdlib reader
    assert header == ["document", *SAFE_NAMES]
    package = json.loads((out / "datapackage.json").read_text(encoding="utf-8"))
    names = [field["name"] for field in package["resources"][0]["schema"]["fields"]]
    assert names[-len(SAFE_NAMES):] == SAFE_NAMES


def test_S4_json_schema_duplicate_names_have_the_line(tmp_path: Path) -> None:
    text = '{\n  "fields": [\n    {"name": "Salary"},\n    {"name": "salary "}\n  ]\n}\n'
    message = refused(write(tmp_path, text, "schema.json"))
    assert "fields[1].name (line 4)" in message and "duplicate field name" in message and "line 3" in message


# --- S5: mistakes, empty files, BOMs, tabs ---------------------------------------------------------


@pytest.mark.parametrize(
    "text, expected",
    [
        pytest.param("fields:\n  - name: x\n    constraints: {requried: true}\n", "'requried' is not a known constraint (did you mean 'required'?)", id="S5-typo-constraint"),
        pytest.param("fields:\n  - name: x\n    tpye: string\n", "fields[0].tpye (line 3): 'tpye' is not a known field key (did you mean 'type'?)", id="S5-typo-field-key"),
        pytest.param("fields:\n  - name: x\n    type: strng\n", "'strng' is not a Table Schema type (did you mean 'string'?)", id="S5-typo-type"),
        pytest.param("fields:\n  - name: x\n    extract: {as: persn}\n", "(did you mean 'person'?)", id="S5-typo-kind"),
        pytest.param("fields:\n  - name: x\n    extract: {cuse: [pay]}\n", "(did you mean 'cues'?)", id="S5-typo-extract-key"),
        pytest.param("feilds:\n  - name: x\n", "'feilds' is not a known schema key (did you mean 'fields'?)", id="S5-typo-top-key"),
        pytest.param("fields:\n  - name: x\n    Type: string\n", "(did you mean 'type'?)", id="S5-wrong-case-key"),
        pytest.param("name: x\n", "missing 'fields'", id="S5-missing-fields"),
        pytest.param("fields: []\n", "must be a non-empty list", id="S5-no-fields"),
        pytest.param("fields:\n  - type: string\n", "needs a non-empty string 'name'", id="S5-missing-name"),
        pytest.param("fields:\n  - name: x\n    extract: {cues: 5}\n", "must be a list of strings", id="S5-wrong-type"),
        pytest.param("fields:\n  - name: x\n    constraints: {required: 'yes'}\n", "must be true or false", id="S5-wrong-type-bool"),
        pytest.param("fields:\n\t- name: x\n", "line 2, column 1: not valid YAML (found character '\\t' that cannot start any token)", id="S5-tab-indent"),
        pytest.param("fields:\n  - name: x\n\ttype: string\n", "line 3", id="S5-tab-later"),
        pytest.param("", "file is empty", id="S5-empty"),
        pytest.param("\n\n   \n", "file is empty", id="S5-blank"),
        pytest.param("# nothing but a comment\n", "file is empty", id="S5-comment-only"),
        pytest.param(b"\xef\xbb\xbf", "file is empty", id="S5-bom-only"),
        pytest.param(b"\xff\xfef\x00i\x00", "file is UTF-16 text; save it as UTF-8", id="S5-utf16-bom"),
        pytest.param("fields: [name: x\n", "not valid YAML", id="S5-unclosed-flow"),
    ],
)
def test_S5_mistakes_give_one_located_line_with_a_suggestion(tmp_path: Path, text: str | bytes, expected: str) -> None:
    assert expected in refused(write(tmp_path, text))


def test_S5_custom_keys_that_are_not_typos_are_kept(tmp_path: Path) -> None:
    text = "notes: quarterly\nfields:\n  - name: x\n    x_source: HRIS\n    unit: EUR\n"
    schema = load_schema(write(tmp_path, text))
    assert schema.descriptor["notes"] == "quarterly" and schema.fields[0].descriptor["unit"] == "EUR"


@pytest.mark.parametrize("bom", [pytest.param(b"\xef\xbb\xbf", id="S5-utf8-bom"), pytest.param(b"", id="S5-no-bom")])
@pytest.mark.parametrize("name", ["schema.yaml", "schema.json"])
def test_S5_a_utf8_bom_is_accepted(tmp_path: Path, bom: bytes, name: str) -> None:
    body = '{"fields": [{"name": "x"}]}' if name.endswith(".json") else "fields:\n  - name: x\n"
    assert load_schema(write(tmp_path, bom + body.encode(), name)).field_names == ("x",)


def test_S5_json_errors_are_located_too(tmp_path: Path) -> None:
    text = '{\n  "fields": [\n    {"name": "x",\n     "type": "strng"}\n  ]\n}\n'
    assert "fields[0].type (line 4)" in refused(write(tmp_path, text, "schema.json"))


# --- S6: JSON duplicates, nesting, size --------------------------------------------------------


@pytest.mark.parametrize(
    "text, expected, name",
    [
        pytest.param('{"fields": [{"name": "a"}],\n "fields": []}', "line 2: duplicate key 'fields'", "s.json", id="S6-json-duplicate-key"),
        pytest.param('{"fields": [{"name": "a", "type": "string",\n "type": "date"}]}', "line 2: duplicate key 'type'", "s.json", id="S6-json-duplicate-nested"),
        pytest.param("[" * 100_000 + "]" * 100_000, "nesting is too deep", "s.json", id="S6-json-100k-lists"),
        pytest.param('{"a":' * 100_000 + "1" + "}" * 100_000, "nesting is too deep", "s.json", id="S6-json-100k-objects"),
        pytest.param('{"fields": [{"name": "a"}], "x": ' + "[" * 150 + "]" * 150 + "}", "nesting is deeper than 100 levels", "s.json", id="S6-json-150-deep"),
        pytest.param("x: " + "[" * 100_000 + "]" * 100_000 + "\nfields: [{name: a}]\n", "nesting is deeper than 100 levels", "s.yaml", id="S6-yaml-100k-flow"),
        pytest.param("x:\n" + "".join("  " * i + "- \n" for i in range(1, 500)), "nesting is deeper than 100 levels", "s.yaml", id="S6-yaml-3k-block"),
        pytest.param("fields:\n  - name: a\n    x: {b: 1, b: 2}\n", "line 3: duplicate key 'b'", "s.yaml", id="S6-yaml-duplicate-key"),
        pytest.param(b"fields:\n  - name: a\x00\n", "line 2: file holds NUL characters", "s.yaml", id="S6-nul"),
        pytest.param(b"fields:\n  - name: a\x07\n", "line 2: not valid YAML (character U+0007 is not allowed)", "s.yaml", id="S6-control-char"),
    ],
)
def test_S6_structure_hazards_give_a_clean_error(tmp_path: Path, text: str | bytes, expected: str, name: str) -> None:
    assert expected in refused(write(tmp_path, text, name), seconds=2.0)


@pytest.mark.parametrize("name", ["big.json", "big.yaml"])
def test_S6_size_is_capped_before_parsing(tmp_path: Path, name: str) -> None:
    path = write(tmp_path, b"#" * 1_000_001 if name.endswith("yaml") else b" " * 1_000_001, name)
    assert "file is larger than 1000000 bytes" in refused(path, seconds=0.5)


def test_S6_a_schema_fifo_is_refused_without_blocking(tmp_path: Path) -> None:
    fifo = tmp_path / "schema.yaml"
    os.mkfifo(fifo)
    outcome: list[str] = []
    thread = threading.Thread(target=lambda: outcome.append(_message(fifo)), daemon=True)
    thread.start()
    thread.join(timeout=5)
    assert outcome == ["schema error: schema.yaml: not a regular file"]  # opening it would block forever


def _message(path: Path) -> str:
    try:
        load_schema(path)
    except SchemaError as exc:
        return str(exc)
    return "loaded"


# --- C3: the schema file is binary junk or not UTF-8 (closest equivalent of a non-store) ----------------


@pytest.mark.parametrize(
    "content, words",
    [
        pytest.param(bytes(range(256)) * 8, "file is not UTF-8 text", id="C3-binary-junk"),
        pytest.param(b"\x89PNG\r\n\x1a\n" + b"\x00" * 64, "file is not UTF-8 text", id="C3-png"),
        pytest.param("fields:\n  - name: café\n".encode("latin-1"), "line 2: file is not UTF-8 text", id="C3-latin-1"),
        pytest.param(b"PK\x03\x04" + b"\x00" * 30, "NUL characters", id="C3-zip-magic"),
        pytest.param(b"\xff\xfef\x00i\x00e\x00", "UTF-16", id="C3-utf16"),
    ],
)
@pytest.mark.parametrize("command", ["extract", "check-schema"])
def test_C3_binary_schema_exits_2_with_one_line_before_any_work(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, content: bytes, words: str, command: str
) -> None:
    import structurize.api

    schema = write(tmp_path, content, "junk.yaml")
    inbox = tmp_path / "in"
    inbox.mkdir()
    (inbox / "memo.txt").write_text("Salary: 1\n", encoding="utf-8")
    calls: list[object] = []
    monkeypatch.setattr(structurize.api, "extract_folder", lambda *a, **k: calls.append(a))
    args = ["extract", str(inbox), "--schema", str(schema), "--out", str(tmp_path / "out"), "--no-ner"] if command == "extract" else ["check-schema", str(schema)]
    result = runner.invoke(app, args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("structurize: schema error: junk.yaml: ") and words in lines[0], result.stderr
    assert result.stdout == ""
    assert calls == []  # no document was read


# --- S5/S6 property: whatever the file holds, a schema or one SchemaError line -----------------------

from datetime import timedelta  # noqa: E402

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from structurize.schema import schema_from_descriptor  # noqa: E402
from structurize.schema.load import CONSTRAINT_KEYS, FIELD_EXTRACT_KEYS, FIELD_KEYS, SCHEMA_EXTRACT_KEYS, SCHEMA_KEYS  # noqa: E402

SCHEMA_FUZZ = settings(
    max_examples=int(os.environ.get("STRUCTURIZE_FUZZ_EXAMPLES", "150")),
    deadline=timedelta(seconds=2),
    derandomize=os.environ.get("STRUCTURIZE_FUZZ_RANDOM") != "1",
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
KEYS = st.sampled_from(sorted({*SCHEMA_KEYS, *FIELD_KEYS, *CONSTRAINT_KEYS, *FIELD_EXTRACT_KEYS, *SCHEMA_EXTRACT_KEYS})) | st.text(max_size=8)


class Huge(int):
    """An int over Python's 4,300-digit ``str()`` limit (Python docs, integer string conversion length limitation;
    CVE-2020-10735) that hypothesis can still print."""

    __str__ = int.__repr__  # str() raises ValueError, as for the plain int

    def __repr__(self) -> str:
        return "Huge(10**4400)"


def _deep(levels: int) -> list:
    value: list = []
    for _ in range(levels):
        value = [value]
    return value


SCALARS = (
    st.none() | st.booleans() | st.integers() | st.just(Huge(10**4400)) | st.floats(allow_nan=True)
    | st.text(max_size=12) | st.sampled_from(["string", "date", "number", "person", "choice", "identifier", "(a|aa)+$", "[a-", "MDY", "true"])
)
VALUES = st.recursive(SCALARS, lambda inner: st.lists(inner, max_size=4) | st.dictionaries(KEYS, inner, max_size=5), max_leaves=25)
FIELD = st.dictionaries(st.sampled_from(FIELD_KEYS) | st.text(max_size=6), VALUES, max_size=6)
DESCRIPTOR = st.fixed_dictionaries({"fields": st.lists(FIELD, max_size=4) | VALUES}, optional={"extract": VALUES, "primaryKey": VALUES, "missingValues": VALUES})


def _schema_or_schema_error(load) -> None:  # type: ignore[no-untyped-def]
    try:
        load()
    except SchemaError as exc:
        assert str(exc).split("\n") == list(exc.lines) and all(line.startswith("schema error: ") for line in exc.lines)


@SCHEMA_FUZZ
@given(descriptor=DESCRIPTOR)
def test_S5_any_descriptor_gives_a_schema_or_a_schema_error(descriptor: dict) -> None:
    _schema_or_schema_error(lambda: schema_from_descriptor(descriptor, source="fuzz.yaml"))


GOOD_TEXT = (
    "name: offers\nextract: {date_order: MDY, review_below: 0.75}\nfields:\n"
    "  - name: candidate_name\n    type: string\n    constraints: {required: true}\n    extract: {as: person, cues: [dear]}\n"
    "  - name: site\n    type: string\n    constraints:\n      enum: [Harbour Point, Millbrook]\n"
    "    extract:\n      aliases:\n        Harbour Point: [HP]\n  - name: code\n    constraints: {pattern: '[A-Z]{2}\\d{5}'}\n"
)


@SCHEMA_FUZZ
@given(
    cut=st.integers(0, len(GOOD_TEXT)),
    insert=st.text(alphabet=st.sampled_from(list(":-[]{}&*!|>'\"#\t\n ,?%@`\\\x00\x85\ufeff") + ["a", "1"]), max_size=12),
    suffix=st.sampled_from([".yaml", ".json"]),
)
def test_S5_any_text_gives_a_schema_or_a_schema_error(tmp_path: Path, cut: int, insert: str, suffix: str) -> None:
    text = GOOD_TEXT[:cut] + insert + GOOD_TEXT[cut:]
    if suffix == ".json":
        text = json.dumps(load_schema(write(tmp_path, GOOD_TEXT)).descriptor)
        text = text[: cut % len(text)] + insert + text[cut % len(text) :]
    path = write(tmp_path, text.encode("utf-8", "surrogatepass"), f"fuzz{suffix}")
    _schema_or_schema_error(lambda: load_schema(path))


@pytest.mark.parametrize(
    "descriptor, words",
    [
        pytest.param({"fields": [{"name": "a", "x": Huge(10**4400)}]}, "fields[0].x: number has too many digits", id="S6-huge-int"),
        pytest.param({"fields": [{"name": "a", (1, 2): "x"}]}, "keys must be strings, not tuple", id="S6-non-string-key"),
        pytest.param({"fields": [{"name": "a", "x": {1, 2}}]}, "unsupported value of type set", id="S6-set"),
        pytest.param({"fields": [{"name": "a", "x": _deep(500)}]}, "nesting is deeper than 100 levels", id="S6-api-deep"),
        pytest.param({"fields": [{"name": "a", "constraints": {"e\num": [1]}}]}, "constraints.e\\num", id="S5-escaped-key-in-message"),
    ],
)
def test_S6_api_descriptors_are_checked_like_files(descriptor: dict, words: str) -> None:
    with pytest.raises(SchemaError) as caught:
        schema_from_descriptor(descriptor, source="api")
    assert words in str(caught.value) and "\n" not in str(caught.value)


def test_S5_a_schema_file_name_with_control_characters_is_escaped(tmp_path: Path) -> None:
    path = write(tmp_path, "fields: []\n", "evil\n\x1b[2J.yaml")
    with pytest.raises(SchemaError) as caught:
        load_schema(path)
    assert str(caught.value) == "schema error: evil\\n\\x1b[2J.yaml: fields (line 1): must be a non-empty list of fields"
