"""Dates and amounts in the many forms HR documents write them (rules only, no NER).

The examples are invented: letters and contracts of a touring theatre company, the
Lanternfield Playhouse.
"""

from __future__ import annotations

import datetime as dt
from decimal import Decimal
from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.extract.dates import century_near, find_dates, parse_date_text, resolve
from structurize.extract.money import find_money, parse_number
from structurize.types import ValueStatus
from structurize.validate import to_text

from conftest import RULES_ONLY, make_schema

SEASON = dt.date(2025, 3, 10)  # the date of an invented letter, the anchor below

# --- dates -----------------------------------------------------------------------------------

DATE_FORMS = [
    # (text, date order, expected date, the flag saying what was inferred)
    pytest.param("Contract ends 31 Dec 25.", "DMY", dt.date(2025, 12, 31), "century_inferred", id="day-month-yy"),
    pytest.param("Rehearsals from 3 Feb 26", "DMY", dt.date(2026, 2, 3), "century_inferred", id="day-month-yy-short"),
    pytest.param("Tour closes 31st Dec '25", "MDY", dt.date(2025, 12, 31), "century_inferred", id="ordinal-apostrophe-year"),
    pytest.param("Get-in: April 14th '25", "MDY", dt.date(2025, 4, 14), "century_inferred", id="month-ordinal-apostrophe"),
    pytest.param("Wed, 30 Apr 25 (matinee)", "MDY", dt.date(2025, 4, 30), "century_inferred", id="weekday-day-month-yy"),
    pytest.param("Opening 31-Dec-2025", "MDY", dt.date(2025, 12, 31), None, id="hyphens"),
    pytest.param("Opening 31/Dec/2025", "MDY", dt.date(2025, 12, 31), None, id="slashes"),
    pytest.param("Opening 31.Dec.2025", "MDY", dt.date(2025, 12, 31), None, id="dots"),
    pytest.param("Opening 07-Nov-25", "MDY", dt.date(2025, 11, 7), "century_inferred", id="hyphens-yy"),
    pytest.param("Opening Nov-07-2025", "DMY", dt.date(2025, 11, 7), None, id="month-first-hyphens"),
    pytest.param("Opening 2025-Nov-07", "DMY", dt.date(2025, 11, 7), None, id="year-first-month-name"),
    pytest.param("Fourteenth of April, 2025", "MDY", dt.date(2025, 4, 14), None, id="ordinal-word-of"),
    pytest.param("on the thirty-first of December 2025", "MDY", dt.date(2025, 12, 31), None, id="compound-ordinal-word"),
    pytest.param("signed this twenty second day of May, 2025", "MDY", dt.date(2025, 5, 22), None, id="day-of-ordinal-word"),
    pytest.param("from April fourteenth, 2025", "MDY", dt.date(2025, 4, 14), None, id="month-ordinal-word"),
    pytest.param("from the ninth of June", "MDY", dt.date(2025, 6, 9), "year_inferred", id="ordinal-word-no-year"),
    pytest.param("from March the first", "MDY", dt.date(2025, 3, 1), "year_inferred", id="month-the-ordinal-word"),
    pytest.param("14.04.2025", "DMY", dt.date(2025, 4, 14), None, id="dotted-day-first"),
    pytest.param("04.14.2025", "MDY", dt.date(2025, 4, 14), None, id="dotted-month-first"),
    pytest.param("05.06.2025", "DMY", dt.date(2025, 6, 5), None, id="dotted-honours-order-dmy"),
    pytest.param("05.06.2025", "MDY", dt.date(2025, 5, 6), None, id="dotted-honours-order-mdy"),
    pytest.param("2025/04/14", "DMY", dt.date(2025, 4, 14), None, id="year-first-slashes"),
    pytest.param("2025.04.14", "MDY", dt.date(2025, 4, 14), None, id="year-first-dots"),
]


@pytest.mark.parametrize(("text", "order", "expected", "inferred"), DATE_FORMS)
def test_find_dates_reads_written_forms(text: str, order: str, expected: dt.date, inferred: str | None) -> None:
    mentions = find_dates(text)
    assert len(mentions) == 1, [text[m.start : m.end] for m in mentions]
    value, flags = resolve(mentions[0], text, order, SEASON, order_declared=True)
    assert value == expected
    assert flags & {"year_inferred", "century_inferred"} == ({inferred} if inferred else set())
    # the output form stays an RFC 3339 full-date
    assert to_text(value) == expected.isoformat() and dt.date.fromisoformat(to_text(value)) == value


@pytest.mark.parametrize(
    ("text", "covered"),
    [
        # two digits after a day and month are a year only when nothing makes them a count or a time
        pytest.param("Call on 5 June 25 dancers to the stage", "5 June", id="count-after-date"),
        pytest.param("Fit-up 29 April, 10:00 sharp", "29 April", id="time-after-comma"),
        pytest.param("Fit-up 29 April 10:30", "29 April", id="time-after-space"),
        pytest.param("Fit-up 29 April 14.30", "29 April", id="dotted-time"),
        pytest.param("Performances March 3-20, 2025", "March 3", id="range-of-days"),
        pytest.param("Tour 12 May 25 - 30 May 25", "12 May", id="range-of-dates-keeps-first-day"),
    ],
)
def test_find_dates_two_digits_that_are_not_a_year(text: str, covered: str) -> None:
    mentions = find_dates(text)
    assert text[mentions[0].start : mentions[0].end] == covered
    assert mentions[0].parts is not None and mentions[0].parts[2] == 0


@pytest.mark.parametrize(
    "text",
    [
        pytest.param("Seat 2514 in row 12", id="bare-numbers"),
        pytest.param("Invoice 20250414", id="digits-only"),
        pytest.param("lighting desk firmware 2020.3.1", id="version-number"),
        pytest.param("the first April preview sold out", id="ordinal-word-without-of"),
        pytest.param("Box office takings Apr-25", id="month-and-year-only"),
        pytest.param("Clause 14.04 applies", id="clause-number"),
        pytest.param("Dressing room 4-Mar-B", id="room-code-with-month-letters"),
        pytest.param("the second act runs 45 minutes", id="ordinal-word-no-month"),
    ],
)
def test_find_dates_never_reads_a_number_alone(text: str) -> None:
    assert find_dates(text) == []
    assert parse_date_text(text, "DMY", SEASON) is None


@pytest.mark.parametrize(
    ("text", "anchor", "expected_year"),
    [
        # no document date: RFC 5322 §4.3 (00–49 → 20xx, 50–99 → 19xx)
        pytest.param("born 3 May 51", None, 1951, id="rfc5322-51"),
        pytest.param("ends 1 Jan 49", None, 2049, id="rfc5322-49"),
        # a document date: 80 years before to 20 years after it
        pytest.param("born 3 May 51", dt.date(2025, 3, 10), 1951, id="window-birth"),
        pytest.param("ends 1 Jan 45", dt.date(2025, 3, 10), 2045, id="window-20-ahead"),
        pytest.param("ends 1 Jan 46", dt.date(2025, 3, 10), 1946, id="window-80-back"),
        pytest.param("ends 1 Jan 15", dt.date(1990, 6, 1), 1915, id="window-old-letter"),
        pytest.param("signed 3/4/97", dt.date(2030, 1, 1), 1997, id="numeric-window"),
        pytest.param("signed 3/4/12", dt.date(1985, 1, 1), 1912, id="numeric-window-old-letter"),
    ],
)
def test_two_digit_year_century_from_the_document_date(text: str, anchor: dt.date | None, expected_year: int) -> None:
    (mention,) = find_dates(text)
    value, flags = resolve(mention, text, "MDY", anchor, order_declared=True)
    assert value is not None and value.year == expected_year
    assert "century_inferred" in flags and "year_inferred" not in flags


@pytest.mark.parametrize(
    ("year", "anchor", "expected"),
    [(2025, dt.date(2025, 1, 1), 2025), (1968, dt.date(2025, 1, 1), 1968), (2049, dt.date(2025, 1, 1), 1949), (2045, dt.date(2025, 1, 1), 2045)],
)
def test_century_near_window(year: int, anchor: dt.date, expected: int) -> None:
    assert century_near(year, anchor) == expected


START = {"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start date", "first performance"]}}


def _run(tmp_path: Path, text: str, *fields: dict, **extract: object) -> dict:
    path = tmp_path / "letter.txt"
    path.write_text(text, encoding="utf-8")
    schema = make_schema(*fields, **({"date_order": "DMY"} | extract))
    return {item.field: item for item in extract_document(path, schema, options=RULES_ONLY).values}


def test_inferred_century_lowers_confidence_a_little(tmp_path: Path) -> None:
    # the letter's only date is its own anchor: a two-digit year is not a weakly anchored
    # guess of the year, only of the century
    full = _run(tmp_path, "Lanternfield Playhouse\n\nStart date: 31 Dec 2025\n", START)["start_date"]
    short = _run(tmp_path, "Lanternfield Playhouse\n\nStart date: 31 Dec 25\n", START)["start_date"]
    assert full.value == short.value == dt.date(2025, 12, 31)
    assert short.confidence < full.confidence
    assert short.confidence == pytest.approx(full.confidence * 0.96, abs=0.002)


def test_ordinal_word_date_is_the_letters_date(tmp_path: Path) -> None:
    letter = {"name": "letter_date", "type": "date", "extract": {"as": "date", "cues": ["date", "dated"]}}
    text = "Lanternfield Playhouse\n\nTwenty-Third of June, 2025\n\nDear Ines,\nWe are delighted to cast you.\n"
    item = _run(tmp_path, text, letter)["letter_date"]
    assert item.value == dt.date(2025, 6, 23)
    assert item.status is ValueStatus.OK


# --- money -----------------------------------------------------------------------------------

MONEY_FORMS = [
    # (text, amount, currency, period)
    pytest.param("a fee of €41.000,00 for the season", Decimal(41000), "EUR", None, id="euro-dot-groups-comma-decimal"),
    pytest.param("4.200 EUR per month", Decimal(4200), "EUR", "month", id="euro-dot-groups-code-after"),
    pytest.param("41 000,00 € a year", Decimal(41000), "EUR", "year", id="space-groups-symbol-after"),
    pytest.param("1,234,567 JPY", Decimal(1234567), "JPY", None, id="yen-comma-groups"),
    pytest.param("JPY 350.000", Decimal(350000), "JPY", None, id="yen-no-minor-units"),
    pytest.param("CHF 5'500 monthly", Decimal(5500), "CHF", "month", id="swiss-apostrophe"),
    pytest.param("CHF 5’500.50", Decimal("5500.5"), "CHF", None, id="swiss-typographic-apostrophe"),
    pytest.param("SEK 32 500,50", Decimal("32500.5"), "SEK", None, id="krona-space-groups"),
    pytest.param("₹12,34,567 per annum", Decimal(1234567), "INR", "year", id="indian-grouping"),
    pytest.param("the role pays £13.85 an hour", Decimal("13.85"), "GBP", "hour", id="prose-an-hour"),
    pytest.param("£21.40 p.h.", Decimal("21.4"), "GBP", "hour", id="p-h"),
    pytest.param("£640 pcm", Decimal(640), "GBP", "month", id="pcm"),
    pytest.param("$31,000 gross per annum", Decimal(31000), "USD", "year", id="gross-per-annum"),
    pytest.param("(£38,500) a year", Decimal(38500), "GBP", "year", id="period-after-bracket"),
    pytest.param("€ 2,5 per hour", Decimal("2.5"), "EUR", "hour", id="decimal-comma-one-digit"),
    pytest.param("0.125 EUR", Decimal("0.125"), "EUR", None, id="leading-zero-is-a-fraction"),
]


@pytest.mark.parametrize(("text", "amount", "currency", "period"), MONEY_FORMS)
def test_find_money_reads_separator_conventions(text: str, amount: Decimal, currency: str, period: str | None) -> None:
    mentions = [m for m in find_money(text) if not m.in_words]
    assert [m.amount for m in mentions] == [amount]
    assert mentions[0].currency == currency
    assert mentions[0].period == period
    assert "ambiguous_separator" not in mentions[0].flags


def test_find_money_words_then_figures_in_brackets_both_carry_the_period() -> None:
    text = "a salary of thirty-eight thousand five hundred pounds (£38,500) a year"
    mentions = find_money(text)
    assert [(m.amount, m.period, m.in_words) for m in mentions] == [(Decimal(38500), "year", True), (Decimal(38500), "year", False)]


@pytest.mark.parametrize(
    ("number", "currency", "decimal_mark", "expected"),
    [
        # two different marks: the last is the decimal mark
        pytest.param("41.000,00", "EUR", None, (Decimal("41000.00"), False), id="dot-then-comma"),
        pytest.param("41,000.00", "EUR", None, (Decimal("41000.00"), False), id="comma-then-dot"),
        # one mark written twice groups thousands
        pytest.param("1.234.567", None, None, (Decimal(1234567), False), id="repeated-dot"),
        # not three digits after a single mark: a decimal mark
        pytest.param("19.75", None, None, (Decimal("19.75"), False), id="two-decimals"),
        pytest.param("19,75", "EUR", None, (Decimal("19.75"), False), id="decimal-comma"),
        # three digits after a single mark: custom, then document, else flagged
        pytest.param("1,234", "USD", None, (Decimal(1234), False), id="comma-groups-in-english"),
        pytest.param("4.200", "EUR", None, (Decimal(4200), False), id="euro-custom-dot-groups"),
        pytest.param("4.200", "USD", None, (Decimal(4200), True), id="dollar-dot-three-digits-flagged"),
        pytest.param("4.200", None, None, (Decimal(4200), True), id="no-currency-dot-flagged"),
        pytest.param("4,200", "SEK", None, (Decimal(4200), True), id="krona-comma-three-digits-flagged"),
        pytest.param("4.200", "USD", ",", (Decimal(4200), False), id="document-uses-decimal-comma"),
        pytest.param("4.200", "EUR", ".", (Decimal(4200), True), id="document-uses-decimal-dot"),
        pytest.param("4.200", "JPY", ".", (Decimal(4200), False), id="no-minor-units"),
        # shapes that are not amounts
        pytest.param("1.2.3", None, None, None, id="version-like"),
        pytest.param("12,34,5", None, None, None, id="broken-groups"),
        pytest.param("1234,567", None, None, None, id="first-group-too-long"),
        pytest.param("1.234'567", None, None, None, id="decimal-before-group"),
    ],
)
def test_parse_number_separators(number: str, currency: str | None, decimal_mark: str | None, expected) -> None:
    assert parse_number(number, currency, decimal_mark) == expected


@pytest.mark.parametrize(
    ("text", "expected", "ambiguous"),
    [
        # the document's other amounts show the decimal mark
        pytest.param("Touring fee €1.250,50; per diem €4.200", Decimal(4200), False, id="document-decimal-comma"),
        pytest.param("Rate $19.75 an hour; fit-up bonus $4.200", Decimal(4200), True, id="document-decimal-dot"),
        pytest.param("fit-up bonus $4.200", Decimal(4200), True, id="nothing-else-to-go-by"),
    ],
)
def test_find_money_uses_the_documents_other_amounts(text: str, expected: Decimal, ambiguous: bool) -> None:
    last = find_money(text)[-1]
    assert last.amount == expected
    assert ("ambiguous_separator" in last.flags) is ambiguous


@pytest.mark.parametrize(
    ("text", "expected", "period"),
    [
        pytest.param("Hourly rate: 19.75\n", Decimal("19.75"), None, id="colon"),
        pytest.param("- **Day rate:** 180 per day\n", Decimal(180), "day", id="markdown-bold-with-period"),
        pytest.param("| Role | Stage manager |\n| Salary | 31,500 |\n", Decimal(31500), None, id="table-cell"),
        pytest.param("Rate of pay        21.75/hr\n", Decimal("21.75"), "hour", id="wide-gap"),
        pytest.param("Stipend = 450\n", Decimal(450), None, id="equals"),
        pytest.param("Pay grade: 7\n", None, None, id="grade-not-an-amount"),
        pytest.param("Pay band: 4\n", None, None, id="band-not-an-amount"),
        pytest.param("Sick pay: 5 days\n", None, None, id="days-not-an-amount"),
        pytest.param("Salary increase: 3%\n", None, None, id="percent"),
        pytest.param("Absence rate: 3.5\n", None, None, id="rate-that-is-not-pay"),
        pytest.param("Hours per week: 37.5\n", None, None, id="no-pay-word"),
        pytest.param("Salary: 2026 review pending\n", None, None, id="more-than-a-number"),
        pytest.param("We pay 19.75 to each usher\n", None, None, id="prose-without-a-sign"),
    ],
)
def test_find_money_number_under_a_pay_label(text: str, expected: Decimal | None, period: str | None) -> None:
    mentions = find_money(text)
    if expected is None:
        assert mentions == []
        return
    (mention,) = mentions
    assert (mention.amount, mention.currency, mention.period) == (expected, None, period)
    assert "no_currency" in mention.flags


SALARY = {"name": "base_salary", "type": "number", "constraints": {"minimum": 0},
          "extract": {"as": "money", "cues": ["base salary", "salary", "hourly rate", "rate of pay"]}}
PERIOD = {
    "name": "pay_period",
    "type": "string",
    "constraints": {"enum": ["year", "hour"]},
    "extract": {"as": "choice", "cues": ["per", "paid"],
                "aliases": {"year": ["per year", "a year", "per annum", "annually"], "hour": ["per hour", "an hour", "/hr"]}},
}


def test_period_after_a_bracketed_amount_fills_the_companion_field(tmp_path: Path) -> None:
    text = ("Dear Ines,\n\nYour salary will be thirty-eight thousand five hundred pounds (£38,500) a year, "
            "paid monthly in arrears.\n")
    values = _run(tmp_path, text, SALARY, PERIOD)
    assert values["base_salary"].value == Decimal(38500)
    period = values["pay_period"]
    assert (period.value, period.extractor, period.status) == ("year", "companion.v1", ValueStatus.OK)


def test_period_written_at_another_mention_of_the_same_amount(tmp_path: Path) -> None:
    text = "Salary: £38,500\n\nYour base salary of £38,500 a year is reviewed each April.\n"
    values = _run(tmp_path, text, SALARY, PERIOD)
    assert values["base_salary"].value == Decimal(38500)
    period = values["pay_period"]
    assert (period.value, period.extractor) == ("year", "companion.v1")
    assert period.confidence >= 0.8 and "another mention" in " ".join(period.evidence)


@pytest.mark.parametrize(
    ("text", "expected", "status"),
    [
        pytest.param("Base salary: €41.000,00 per year\n", Decimal(41000), ValueStatus.OK, id="euro-form-ok"),
        pytest.param("Base salary: CHF 85'000 per year\n", Decimal(85000), ValueStatus.OK, id="apostrophe-ok"),
        pytest.param("Base salary: $4.200 per year\n", Decimal(4200), ValueStatus.REVIEW, id="ambiguous-goes-to-review"),
        pytest.param("Hourly rate: 19.75\n", Decimal("19.75"), ValueStatus.REVIEW, id="no-sign-goes-to-review"),
    ],
)
def test_money_field_value_and_status(tmp_path: Path, text: str, expected: Decimal, status: ValueStatus) -> None:
    item = _run(tmp_path, text, SALARY)["base_salary"]
    assert item.value == expected
    assert item.status is status


def test_number_without_a_sign_counts_less_than_with_one(tmp_path: Path) -> None:
    bare = _run(tmp_path, "Hourly rate: 19.75\n", SALARY)["base_salary"]
    signed = _run(tmp_path, "Hourly rate: £19.75\n", SALARY)["base_salary"]
    assert bare.value == signed.value == Decimal("19.75")
    assert 0.5 < bare.confidence < signed.confidence
