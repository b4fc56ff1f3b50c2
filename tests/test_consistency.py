"""Consistency between fields: an amount and its pay period, a field left empty while the
document holds an untaken value of its kind, a greeting with no "Dear", a From display name
that names a system.  Invented scenario: a municipal water utility.  Rules only (no NER)."""

from __future__ import annotations

import datetime as dt
from decimal import Decimal
from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.extract.money import period_unit, periods_in, restatement_between, same_pay
from structurize.extract.text import system_sender
from structurize.types import ValueStatus

from conftest import RULES_ONLY, make_schema

SALARY = {"name": "base_salary", "type": "number", "constraints": {"minimum": 0}, "extract": {"as": "money", "cues": ["base salary", "salary", "pay"]}}
PERIOD = {
    "name": "pay_period",
    "type": "string",
    "constraints": {"enum": ["year", "hour"]},
    "extract": {"as": "choice", "cues": ["per year", "per hour"], "aliases": {"year": ["per year", "annually", "per annum"], "hour": ["per hour", "hourly"]}},
}
START = {"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start date", "first day"]}}
EFFECTIVE = {"name": "effective_date", "type": "date", "extract": {"as": "date", "cues": ["effective date", "effective from"]}}
CANDIDATE = {"name": "candidate", "type": "string", "extract": {"as": "person", "cues": ["dear", "candidate"]}}
SENDER_NAME = {"name": "sender_name", "type": "string", "extract": {"as": "person", "cues": ["from"]}}


def run(tmp_path: Path, text: str, fields: list[dict], suffix: str = ".txt"):
    path = tmp_path / f"doc{suffix}"
    path.write_bytes(text.encode("utf-8"))
    result = extract_document(path, make_schema(*fields, date_order="DMY"), options=RULES_ONLY)
    return {item.field: item for item in result.values}


# --- the building blocks -----------------------------------------------------------------

@pytest.mark.parametrize(
    "display, expected",
    [
        ("Rivermouth Water Careers Portal", True),
        ("HR System", True),
        ("no-reply", True),
        ("Payroll Notifications", True),
        ("Ines Calder", False),
        ("Ines Calder (HR)", False),
        ("Ines Calder via Careers Portal", False),
        ("CALDER, Ines", False),
    ],
)
def test_system_sender(display: str, expected: bool) -> None:
    assert system_sender(display) is expected


@pytest.mark.parametrize(
    "first, first_period, second, second_period, expected",
    [
        ("5600", "month", "67200", "year", True),  # 12 x 5,600
        ("5600", "month", "60000", "year", False),  # 10 % short
        ("21", "hour", "43680", "year", True),  # 2,080 working hours (40 x 52; common practice, no source)
        ("21", "hour", "90000", "year", False),
        ("1000", "week", "52000", "year", True),
        ("0", "month", "0", "year", False),  # nothing is no pay to compare
        ("5600", "fortnight", "67200", "year", False),  # a period with no yearly count
    ],
)
def test_same_pay(first: str, first_period: str, second: str, second_period: str, expected: bool) -> None:
    assert same_pay(Decimal(first), first_period, Decimal(second), second_period) is expected


@pytest.mark.parametrize(
    "between, expected",
    [
        (", i.e. ", True),
        (" (that is ", True),
        (", or about ", True),
        (" = ", True),
        (", equivalent to approximately ", True),
        (" plus a shift allowance of ", False),
        (", and a sign-on bonus of ", False),
        (".\n\nYour annual leave allowance is worth ", False),
    ],
)
def test_restatement_between(between: str, expected: bool) -> None:
    assert restatement_between(between) is expected


@pytest.mark.parametrize(
    "word, unit",
    [("per annum", "year"), ("Hourly", "hour"), ("a month", "month"), ("weekly", "week"), ("per fortnight", None), ("shift", None)],
)
def test_period_unit(word: str, unit: str | None) -> None:
    assert period_unit(word) == unit


def test_periods_in_a_description() -> None:
    assert periods_in("Annual salary or hourly rate, before tax") == {"year", "hour"}


# --- an amount and its pay period -------------------------------------------------------

PAY_CASES = [
    # (name, text, expected salary, expected period, salary status)
    (
        "monthly pay restated per year: the yearly figure",
        "Dear Ines Calder,\n\nYour base salary will be USD 5,600 per month, i.e. USD 67,200 per annum.\n",
        Decimal("67200"), "year", ValueStatus.OK,
    ),
    (
        "yearly pay restated per month: the yearly figure stays",
        "Dear Ines Calder,\n\nYour base salary will be USD 67,200 per annum (that is USD 5,600 per month).\n",
        Decimal("67200"), "year", ValueStatus.OK,
    ),
    (
        "monthly pay and no restatement: review",
        "Dear Ines Calder,\n\nYour base salary will be USD 5,600 per month.\n",
        Decimal("5600"), None, ValueStatus.REVIEW,
    ),
    (
        "hourly pay is a period the schema records",
        "Dear Ines Calder,\n\nBase salary: $24.50 per hour\n",
        Decimal("24.50"), "hour", ValueStatus.OK,
    ),
]


@pytest.mark.parametrize("name, text, salary, period, status", PAY_CASES, ids=[case[0] for case in PAY_CASES])
def test_amount_and_its_period(tmp_path: Path, name: str, text: str, salary: Decimal, period: str | None, status: ValueStatus) -> None:
    values = run(tmp_path, text, [SALARY, PERIOD])
    assert values["base_salary"].value == salary
    assert values["base_salary"].status is status
    if status is ValueStatus.OK:
        assert values["pay_period"].value == period
    else:
        # a monthly amount for a field that records only yearly or hourly pay is never ok,
        # and the period field cannot be ok either
        assert values["pay_period"].status is not ValueStatus.OK


def test_restated_pay_keeps_the_first_statement_as_an_alternative(tmp_path: Path) -> None:
    values = run(tmp_path, "Dear Ines Calder,\n\nYour base salary will be USD 5,600 per month, i.e. USD 67,200 per annum.\n", [SALARY, PERIOD])
    assert Decimal("5600") in [alt.value for alt in values["base_salary"].alternatives]


def test_amount_period_against_a_contradicting_period_field(tmp_path: Path) -> None:
    """The amount says per month; the period field was read as year from elsewhere."""
    text = "Dear Ines Calder,\n\nThis is a salaried post paid annually.\n\nYour base salary will be USD 5,600 per month.\n"
    values = run(tmp_path, text, [SALARY, PERIOD])
    assert values["base_salary"].status is not ValueStatus.OK
    assert values["pay_period"].status is not ValueStatus.OK


# --- a gap next to an untaken value of the field's kind ---------------------------------

def test_empty_date_field_next_to_an_untaken_date_goes_to_review(tmp_path: Path) -> None:
    text = "Transfer note\n\nInes Calder moves to the Eastbank pumping station.\nHandover complete by: 20/10/2025\n"
    values = run(tmp_path, text, [EFFECTIVE])
    item = values["effective_date"]
    assert item.value is None
    assert item.status is ValueStatus.REVIEW
    assert dt.date(2025, 10, 20) in [alt.value for alt in item.alternatives]


NEW_TITLE = {"name": "new_title", "type": "string", "extract": {"as": "job_title", "cues": ["new title", "new position"]}}


@pytest.mark.parametrize(
    "text, status, alternative",
    [
        ("Transfer note\n\nEmployee: Ines Calder\nMoving into: Leak Detection Technician\nReason: closer to home\n",
         ValueStatus.REVIEW, "Leak Detection Technician"),
        ("Transfer note\n\nEmployee: Ines Calder\nReason: closer to home\n", ValueStatus.MISSING, None),
    ],
    ids=["a title under a label no field claims", "no title anywhere"],
)
def test_empty_title_field_next_to_an_untaken_title(tmp_path: Path, text: str, status: ValueStatus, alternative: str | None) -> None:
    item = run(tmp_path, text, [NEW_TITLE])["new_title"]
    assert item.value is None
    assert item.status is status
    assert [alt.value for alt in item.alternatives] == ([alternative] if alternative else [])


def test_the_documents_own_date_is_no_untaken_date(tmp_path: Path) -> None:
    """A letter dated 3 March with no start date anywhere: missing, not a review."""
    text = "3 March 2025\n\nDear Ines Calder,\n\nThank you for your application to Rivermouth Water.\n"
    values = run(tmp_path, text, [START])
    assert values["start_date"].value is None
    assert values["start_date"].status is ValueStatus.MISSING


def test_a_date_another_field_took_is_no_untaken_date(tmp_path: Path) -> None:
    text = "Start date: 6 October 2025\n\nWelcome to Rivermouth Water.\n"
    values = run(tmp_path, text, [START, EFFECTIVE])
    assert values["start_date"].value == dt.date(2025, 10, 6)
    assert values["effective_date"].status is ValueStatus.MISSING


# --- greetings and senders --------------------------------------------------------------

def test_bare_greeting_names_the_addressee(tmp_path: Path) -> None:
    text = "14 May 2025\n\nInes Calder\n12 Weir Lane\nRivermouth\n\nInes,\n\nWe are pleased to offer you a place on the meter reading team at Rivermouth Water.\n\nKind regards,\nTobias Hale\n"
    values = run(tmp_path, text, [CANDIDATE])
    assert values["candidate"].value == "Ines Calder"


def test_a_name_and_comma_after_the_closing_greets_no_one(tmp_path: Path) -> None:
    text = "Thank you for your time on the call today, we will be in touch shortly.\n\nKind regards,\nTobias Hale,\nRivermouth Water\nWorks depot\nEastbank\n"
    values = run(tmp_path, text, [CANDIDATE])
    assert values["candidate"].value != "Tobias Hale"


SYSTEM_EMAIL = (
    "From: Rivermouth Water Careers Portal <careers@rivermouth-water.example>\n"
    "To: Ines Calder <ines.calder@example.org>\n"
    "Subject: Your application has been received\n"
    "Date: Mon, 12 May 2025 09:30:00 +0000\n"
    "\n"
    "Thank you for applying for the post of Meter Reader. This message was sent automatically.\n"
)
PERSON_EMAIL = SYSTEM_EMAIL.replace("Rivermouth Water Careers Portal", "Tobias Hale")


@pytest.mark.parametrize(
    "text, value, status",
    [
        (SYSTEM_EMAIL, None, ValueStatus.MISSING),
        (PERSON_EMAIL, "Tobias Hale", ValueStatus.OK),
    ],
    ids=["system sender: no person", "a person sends"],
)
def test_sender_display_name(tmp_path: Path, text: str, value: str | None, status: ValueStatus) -> None:
    item = run(tmp_path, text, [SENDER_NAME], suffix=".eml")["sender_name"]
    assert item.value == value
    assert item.status is status


def test_system_sender_offers_the_display_name_to_a_reviewer(tmp_path: Path) -> None:
    item = run(tmp_path, SYSTEM_EMAIL, [SENDER_NAME], suffix=".eml")["sender_name"]
    assert "Rivermouth Water Careers Portal" in [alt.value for alt in item.alternatives]
    assert "system" in item.reason
