"""External checks for dates: ISO 8601 / RFC 3339 output, RFC 5322 dates, relative dates.

Sources:

* RFC 3339 §5.6 (``full-date = YYYY-MM-DD``) and the §5.8 example timestamps, with the
  Python ≥ 3.11 ``datetime.fromisoformat`` / ``date.fromisoformat`` as the reference parser.
* RFC 5322 §3.3 (date-time in headers) and §4.3 (obsolete two-digit and three-digit
  years: 00–49 → 2000–2049, 50–99 → 1950–1999, three digits + 1900), with the stdlib
  ``email.utils`` as the reference where it agrees with the RFC (it does not for 50–68).
* Relative dates resolve against the document's own date, never against today; the
  expected values are dateparser 1.5.0's with ``RELATIVE_BASE = 2025-03-14 12:00`` (a Friday),
  re-checked here against dateparser itself.
"""

from __future__ import annotations

import datetime as dt
import email.utils
import re
from pathlib import Path

import pytest

from structurize.api import process_text
from structurize.extract.dates import DateMention, find_dates, parse_date_text, resolve
from structurize.options import ExtractOptions
from structurize.readers import read_document
from structurize.schema import schema_from_descriptor
from structurize.types import FieldValue, ValueStatus
from structurize.validate import cast, to_text, validate_value

RELATIVE_BASE = dt.date(2025, 3, 14)  # a Friday: the base of the dateparser 1.5.0 measurements below
FULL_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")  # RFC 3339 §5.6 full-date

MAIL_SCHEMA = schema_from_descriptor(
    {
        "name": "mail",
        "fields": [
            {"name": "sent_on", "type": "date", "extract": {"as": "date", "cues": ["date"]}},
            {"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start"]}},
        ],
    }
)


def _write_mail(tmp_path: Path, date_header: str, body: str = "Thanks for your note.") -> Path:
    path = tmp_path / "mail.eml"
    lines = ["From: Ana Lopez <ana@example.test>", "To: hr@example.test", "Subject: Start", f"Date: {date_header}", "", body]
    path.write_bytes(("\r\n".join(lines) + "\r\n").encode("ascii"))
    return path


def _extract_mail(path: Path) -> dict[str, FieldValue]:
    doc = read_document(path, path.name)
    values = process_text(doc, MAIL_SCHEMA, (), ExtractOptions(ner=None))
    return {item.field: item for item in values}


# --- ISO 8601 / RFC 3339 output form ---------------------------------------------------------


@pytest.mark.parametrize(
    "value",
    [
        dt.date(2025, 3, 3),
        dt.date(2025, 12, 31),
        dt.date(1999, 1, 9),
        dt.date(1969, 2, 13),
        dt.date(2, 3, 4),  # ISO 8601 four-digit year, zero-padded
    ],
)
def test_to_text_date_is_rfc3339_full_date(value):
    # RFC 3339 §5.6 full-date / ISO 8601 extended calendar date (Python datetime documentation)
    text = to_text(value)
    assert FULL_DATE.fullmatch(text)
    assert text == value.isoformat()
    # Python ≥ 3.11 date.fromisoformat is the reference parser (measured with CPython 3.11.7)
    assert dt.date.fromisoformat(text) == value


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        # cast to a date field drops the time of day: the output stays a full-date
        pytest.param(dt.datetime(1996, 12, 19, 16, 39, 57, tzinfo=dt.timezone(dt.timedelta(hours=-8))), "1996-12-19", id="datetime"),
        pytest.param("2025-04-22", "2025-04-22", id="iso-string"),
    ],
)
def test_validate_value_date_output_is_full_date(value, expected):
    spec = schema_from_descriptor({"fields": [{"name": "d", "type": "date"}]}).fields[0]
    item = validate_value(spec, FieldValue("d", value, 0.9, ValueStatus.OK))
    assert item.status is ValueStatus.OK
    assert to_text(item.value) == expected
    assert dt.date.fromisoformat(to_text(item.value)) == item.value


WRITTEN_FORMS = [
    # written forms seen in HR letters; the expected dates are the plain calendar reading
    pytest.param("March 3, 2025", "MDY", None, "2025-03-03", id="month-day-year"),
    pytest.param("3/31/2025", "MDY", None, "2025-03-31", id="numeric-MDY"),
    pytest.param("31/03/2025", "DMY", None, "2025-03-31", id="numeric-DMY"),
    pytest.param("Sept. 2nd, 2025", "MDY", None, "2025-09-02", id="abbrev-ordinal"),
    pytest.param("the 6th of October", "MDY", dt.date(2025, 9, 15), "2025-10-06", id="no-year-anchor"),
    pytest.param("Fri 10 Oct 2025", "MDY", None, "2025-10-10", id="weekday-day-month"),
    pytest.param("2025-04-22", "MDY", None, "2025-04-22", id="iso"),
]


@pytest.mark.parametrize(("text", "order", "anchor", "expected"), WRITTEN_FORMS)
def test_parse_date_text_output_parses_with_fromisoformat(text, order, anchor, expected):
    value = parse_date_text(text, order, anchor)
    assert isinstance(value, dt.date) and not isinstance(value, dt.datetime)
    out = to_text(value)
    assert out == expected
    # every date structurize produces must round-trip through the reference parser
    # (Python ≥ 3.11 date.fromisoformat, measured with CPython 3.11.7)
    assert dt.date.fromisoformat(out) == value


# --- RFC 3339 §5.8 timestamps ---------------------------------------------------------------

RFC3339_EXAMPLES = [
    # RFC 3339 §5.8 example 1 (measured with CPython 3.11.7 datetime.fromisoformat):
    # 23:20:50.52 UTC; as an RFC 5322 header (no fractional seconds) it is a Friday.
    pytest.param(
        "1985-04-12T23:20:50.52Z", "Fri, 12 Apr 1985 23:20:50 +0000", dt.timedelta(0), dt.date(1985, 4, 12), id="5.8-utc"
    ),
    # RFC 3339 §5.8 example 2: 16:39:57 −08:00 is 1996-12-20T00:39:57Z (the RFC's own
    # statement); the calendar date in the header's own offset is still 19 December.
    pytest.param(
        "1996-12-19T16:39:57-08:00",
        "Thu, 19 Dec 1996 16:39:57 -0800",
        dt.timedelta(hours=-8),
        dt.date(1996, 12, 19),
        id="5.8-pst",
    ),
    # RFC 3339 §5.8 example 4: the offset +00:20 (Netherlands, 1937)
    pytest.param(
        "1937-01-01T12:00:27.87+00:20",
        "Fri, 01 Jan 1937 12:00:27 +0020",
        dt.timedelta(minutes=20),
        dt.date(1937, 1, 1),
        id="5.8-amsterdam",
    ),
]


@pytest.mark.parametrize(("stamp", "header", "offset", "local_date"), RFC3339_EXAMPLES)
def test_fromisoformat_rfc3339_examples_reference(stamp, header, offset, local_date):
    # The reference itself (measured with CPython 3.11.7): Python ≥ 3.11 reads every §5.8 example.
    when = dt.datetime.fromisoformat(stamp)
    assert when.utcoffset() == offset
    assert when.date() == local_date
    # the RFC 5322 rendering used as a Date header below is the same instant, whole seconds
    assert email.utils.format_datetime(when.replace(microsecond=0)) == header


def test_fromisoformat_rfc3339_offset_equivalence():
    # RFC 3339 §5.8: "1996-12-19T16:39:57-08:00 ... is equivalent to 1996-12-20T00:39:57Z"
    assert dt.datetime.fromisoformat("1996-12-19T16:39:57-08:00") == dt.datetime.fromisoformat("1996-12-20T00:39:57Z")


@pytest.mark.parametrize(("stamp", "header", "offset", "local_date"), RFC3339_EXAMPLES)
def test_header_extractor_rfc3339_date_in_own_offset(tmp_path, stamp, header, offset, local_date):
    values = _extract_mail(_write_mail(tmp_path, header))
    doc_date = read_document(tmp_path / "mail.eml", "mail.eml").header("Date").date
    # the reader keeps the instant and the header's own offset
    assert doc_date == dt.datetime.fromisoformat(stamp).replace(microsecond=0)
    assert doc_date.utcoffset() == offset
    # header_extractor takes header.date.date(): the calendar date where the mail was written,
    # so 1996-12-19T16:39:57-08:00 gives 1996-12-19, not the UTC date 1996-12-20
    assert values["sent_on"].value == local_date
    assert to_text(values["sent_on"].value) == local_date.isoformat()


@pytest.mark.parametrize(
    ("stamp", "expected"),
    [
        # RFC 3339 §5.6 date-time with numeric offset, as Python ≥ 3.11 writes it
        pytest.param("1996-12-19T16:39:57-08:00", "1996-12-19T16:39:57-08:00", id="5.8-pst"),
        pytest.param("1937-01-01T12:00:27.87+00:20", "1937-01-01T12:00:27.870000+00:20", id="5.8-amsterdam"),
        pytest.param("1985-04-12T23:20:50.52Z", "1985-04-12T23:20:50.520000+00:00", id="5.8-utc"),
    ],
)
def test_to_text_datetime_round_trips_through_fromisoformat(stamp, expected):
    spec = schema_from_descriptor({"fields": [{"name": "t", "type": "datetime"}]}).fields[0]
    value = cast(spec, stamp)
    assert to_text(value) == expected
    assert dt.datetime.fromisoformat(to_text(value)) == dt.datetime.fromisoformat(stamp)


# --- RFC 5322 §4.3 two-digit years -------------------------------------------------------------

TWO_DIGIT_NUMERIC = [
    # RFC 5322 §4.3: 00–49 → 2000–2049, 50–99 → 1950–1999
    pytest.param("3/4/97", dt.date(1997, 3, 4), id="97"),
    pytest.param("3/4/49", dt.date(2049, 3, 4), id="49"),
    pytest.param("3/4/50", dt.date(1950, 3, 4), id="50"),
    pytest.param("3/4/68", dt.date(1968, 3, 4), id="68"),  # the stdlib says 2068 (POSIX pivot)
    pytest.param("3/4/69", dt.date(1969, 3, 4), id="69"),
    pytest.param("3/4/00", dt.date(2000, 3, 4), id="00"),
    pytest.param("3/4/99", dt.date(1999, 3, 4), id="99"),
]


@pytest.mark.parametrize(("text", "expected"), TWO_DIGIT_NUMERIC)
def test_parse_date_text_two_digit_year_rfc5322_rule(text, expected):
    assert parse_date_text(text, "MDY") == expected
    (mention,) = find_dates(text)
    assert mention.parts == (3, 4, expected.year)


@pytest.mark.parametrize(
    ("year", "expected"),
    [
        # RFC 5322 §4.3 and the stdlib agree on these (measured with CPython 3.11.7 email.utils)
        pytest.param("97", 1997, id="97"),
        pytest.param("49", 2049, id="49"),
    ],
)
def test_parsedate_two_digit_year_stdlib_agrees_with_rfc(year, expected):
    assert email.utils.parsedate_to_datetime(f"4 Mar {year} 00:00:00 +0000").year == expected
    assert parse_date_text(f"3/4/{year}", "MDY").year == expected


@pytest.mark.parametrize(
    ("header", "expected"),
    [
        # RFC 5322 Appendix A.6.2 and §4.3
        pytest.param("21 Nov 97 09:55:06 GMT", dt.date(1997, 11, 21), id="97"),
        pytest.param("21 Nov 49 09:55:06 GMT", dt.date(2049, 11, 21), id="49"),
        pytest.param("21 Nov 69 09:55:06 GMT", dt.date(1969, 11, 21), id="69"),
        pytest.param("21 Nov 50 09:55:06 GMT", dt.date(1950, 11, 21), id="50"),
        pytest.param("21 Nov 68 09:55:06 GMT", dt.date(1968, 11, 21), id="68"),
        # RFC 5322 §4.3: "three digits ... add 1900"
        pytest.param("21 Nov 097 09:55:06 GMT", dt.date(1997, 11, 21), id="097"),
        pytest.param("21 Nov 999 09:55:06 GMT", dt.date(2899, 11, 21), id="999"),
    ],
)
def test_read_document_email_date_obsolete_year_rfc5322_rule(tmp_path, header, expected):
    values = _extract_mail(_write_mail(tmp_path, header))
    assert read_document(tmp_path / "mail.eml", "mail.eml").header("Date").date.date() == expected
    assert values["sent_on"].value == expected


# --- relative dates: the document's own date, never today ----------------------------------------

RELATIVE_CASES = [
    # measured with dateparser 1.5.0, RELATIVE_BASE 2025-03-14 12:00
    pytest.param("tomorrow", dt.date(2025, 3, 15), id="tomorrow"),
    pytest.param("next Monday", dt.date(2025, 3, 17), id="next-monday"),
    pytest.param(
        "in two weeks",
        dt.date(2025, 3, 28),
        id="in-two-weeks",
    ),
]


@pytest.mark.parametrize(("phrase", "expected"), RELATIVE_CASES)
def test_find_dates_relative_resolves_against_anchor(phrase, expected):
    text = f"Ana will start {phrase}."
    mentions = [m for m in find_dates(text) if m.kind == "relative"]
    assert len(mentions) == 1
    value, flags = resolve(mentions[0], text, "MDY", RELATIVE_BASE, order_declared=True)
    assert value == expected
    assert "relative" in flags
    assert parse_date_text(text, "MDY", RELATIVE_BASE) == expected


@pytest.mark.parametrize(
    ("phrase", "expected"),
    [
        # the values measured with dateparser 1.5.0, through resolve() on a relative mention of the phrase
        pytest.param("tomorrow", dt.date(2025, 3, 15), id="tomorrow"),
        pytest.param("next Monday", dt.date(2025, 3, 17), id="next-monday"),
        pytest.param("in two weeks", dt.date(2025, 3, 28), id="in-two-weeks"),
        pytest.param("in 30 days", dt.date(2025, 4, 13), id="in-30-days"),
    ],
)
def test_resolve_relative_matches_dateparser_reference(phrase, expected):
    import dateparser

    mention = DateMention(0, len(phrase), None, frozenset({"relative"}), "relative")
    value, _ = resolve(mention, phrase, "MDY", RELATIVE_BASE, order_declared=True)
    assert value == expected
    # the reference (dateparser 1.5.0): dateparser with RELATIVE_BASE 2025-03-14 12:00
    reference = dateparser.parse(phrase, languages=["en"], settings={"RELATIVE_BASE": dt.datetime(2025, 3, 14, 12, 0)})
    assert reference.date() == expected


@pytest.mark.parametrize(
    ("phrase", "expected"),
    [
        # trap, measured with dateparser 1.5.0: dateparser gives 2025-02-28 (the past) for this phrase
        # (dateparser issue #502); structurize must count forward from the document's date.
        pytest.param("two weeks from today", dt.date(2025, 3, 28), id="two-weeks-from-today"),
    ],
)
def test_parse_date_text_avoids_dateparser_from_today_trap(phrase, expected):
    import dateparser

    assert parse_date_text(phrase, "MDY", RELATIVE_BASE) == expected
    reference = dateparser.parse(phrase, languages=["en"], settings={"RELATIVE_BASE": dt.datetime(2025, 3, 14, 12, 0)})
    assert reference.date() == dt.date(2025, 2, 28)  # the trap, as measured with dateparser 1.5.0


@pytest.mark.parametrize(
    ("anchor", "phrase", "expected"),
    [
        # the same phrases against anchors far from today: the result follows the anchor only
        pytest.param(dt.date(1999, 12, 31), "tomorrow", dt.date(2000, 1, 1), id="y2k-tomorrow"),
        pytest.param(dt.date(1999, 12, 31), "next Monday", dt.date(2000, 1, 3), id="y2k-next-monday"),
        pytest.param(dt.date(1985, 4, 12), "tomorrow", dt.date(1985, 4, 13), id="1985-tomorrow"),
    ],
)
def test_resolve_relative_never_uses_today(anchor, phrase, expected):
    (mention,) = find_dates(phrase)
    assert resolve(mention, phrase, "MDY", anchor, order_declared=True)[0] == expected
    # and with no document date there is no answer at all (never today's date)
    value, flags = resolve(mention, phrase, "MDY", None, order_declared=True)
    assert value is None
    assert "no_anchor" in flags


@pytest.mark.parametrize(
    ("date_header", "expected"),
    [
        # RFC 5322 §3.6.1: the Date header is the document's own date
        pytest.param("Fri, 14 Mar 2025 09:00:00 +0000", dt.date(2025, 3, 15), id="2025"),
        # RFC 3339 §5.8 example 1 as a header: "tomorrow" is 13 April 1985, not a date near today
        pytest.param("Fri, 12 Apr 1985 23:20:50 +0000", dt.date(1985, 4, 13), id="1985"),
        # late evening in −08:00: tomorrow counts from the local date (19 Dec), not UTC (20 Dec)
        pytest.param("Thu, 19 Dec 1996 16:39:57 -0800", dt.date(1996, 12, 20), id="1996-local"),
    ],
)
def test_process_text_relative_date_anchored_on_email_date(tmp_path, date_header, expected):
    values = _extract_mail(_write_mail(tmp_path, date_header, "I can start tomorrow."))
    assert values["start_date"].value == expected
