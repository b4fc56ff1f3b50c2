"""Extraction, rules only (no NER model): one table row per behaviour."""

from __future__ import annotations

import datetime as dt
from decimal import Decimal
from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.types import ValueStatus

from conftest import RULES_ONLY, make_schema

DATE = {"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start date", "first day", "start on"]}}
LETTER_DATE = {"name": "letter_date", "type": "date", "extract": {"as": "date", "cues": ["date", "dated"]}}
LAST_DAY = {"name": "last_day", "type": "date", "extract": {"as": "date", "cues": ["last day", "final day"]}}
SALARY = {"name": "base_salary", "type": "number", "constraints": {"minimum": 0}, "extract": {"as": "money", "cues": ["base salary", "salary", "pay rate", "base of"]}}
PERIOD = {
    "name": "pay_period",
    "type": "string",
    "constraints": {"enum": ["year", "hour"]},
    "extract": {"as": "choice", "cues": ["per year", "per hour"], "aliases": {"year": ["per year", "annually", "a year"], "hour": ["per hour", "/hr", "an hour"]}},
}
SITE = {
    "name": "site",
    "type": "string",
    "constraints": {"enum": ["Harbour Point", "Millbrook Yard"]},
    "extract": {"as": "choice", "cues": ["site", "location", "based at"], "aliases": {"Harbour Point": ["HP", "H. Point"], "Millbrook Yard": ["MY"]}},
}
REHIRE = {
    "name": "rehire",
    "type": "boolean",
    "extract": {"as": "flag", "cues": ["rehire", "eligible for rehire"], "aliases": {True: ["yes", "y", "eligible"], False: ["no", "n", "not eligible"]}},
}
EMPLOYEE_ID = {"name": "employee_id", "type": "string", "constraints": {"pattern": "[A-Z]{2}[0-9]{5}"}, "extract": {"as": "identifier", "cues": ["employee id", "employee no."]}}
MANAGER = {"name": "manager", "type": "string", "extract": {"as": "person", "cues": ["reports to", "report to", "manager"]}}
APPROVER = {"name": "approver", "type": "string", "extract": {"as": "person", "cues": ["approved by", "approved", "final approval"]}}
CANDIDATE = {"name": "candidate", "type": "string", "extract": {"as": "person", "cues": ["dear", "candidate"]}}
TITLE = {"name": "job_title", "type": "string", "extract": {"as": "job_title", "cues": ["position", "offer you the position of", "join us as"]}}
SENDER = {"name": "sender", "type": "string", "format": "email", "extract": {"as": "email", "cues": ["from"]}}
RECIPIENT = {"name": "recipient", "type": "string", "format": "email", "extract": {"as": "email", "cues": ["to"]}}
SENT = {"name": "sent", "type": "date", "extract": {"as": "date", "cues": ["date", "sent"]}}


def run(tmp_path: Path, text: str, fields: list[dict], suffix: str = ".txt", **extract: object):
    path = tmp_path / f"doc{suffix}"
    path.write_bytes(text.encode("utf-8"))
    schema = make_schema(*fields, **({"date_order": "MDY"} | extract))
    result = extract_document(path, schema, options=RULES_ONLY)
    return {item.field: item for item in result.values}


CASES = [
    # (name, text, fields, expected values, extra schema settings)
    ("label line", "Start date: March 3, 2025\n", [DATE], {"start_date": dt.date(2025, 3, 3)}, {}),
    ("markdown table row", "| Term | Detail |\n|---|---|\n| Start date | 04/07/2025 |\n", [DATE], {"start_date": dt.date(2025, 4, 7)}, {}),
    ("prose cue", "We are glad to confirm that your first day will be Monday, April 7, 2025.\n", [DATE], {"start_date": dt.date(2025, 4, 7)}, {}),
    ("inflected cue", "We talked about you starting on the 6th of October 2025.\n", [DATE], {"start_date": dt.date(2025, 10, 6)}, {}),
    ("revised value", "Start date: was June 2, 2025 -- now June 16, 2025\n", [DATE], {"start_date": dt.date(2025, 6, 16)}, {}),
    (
        "later correction",
        "Last day: May 9, 2025\n\nUPDATE 05/02/2025: her last day is now May 16, 2025.\n",
        [LAST_DAY],
        {"last_day": dt.date(2025, 5, 16)},
        {},
    ),
    (
        "relative date against the document's own date",
        "Date: Thursday, May 8, 2025\n\nShe handed in her badge today and tomorrow is her last day.\n",
        [LETTER_DATE, LAST_DAY],
        {"letter_date": dt.date(2025, 5, 8), "last_day": dt.date(2025, 5, 9)},
        {},
    ),
    (
        "document declares day-first dates",
        "(All dates in this note are DD/MM/YYYY)\nLast day: 11/07/2025\nInterview: 27/06/2025\n",
        [LAST_DAY],
        {"last_day": dt.date(2025, 7, 11)},
        {},
    ),
    ("year from the letter's date", "June 2, 2025\n\nDear Ana,\nYou start on Monday, June 16th.\n", [DATE], {"start_date": dt.date(2025, 6, 16)}, {}),
    ("letter dateline", "Harbour Point Clinic\n\nFebruary 10, 2025\n\nDear Ana,\nWelcome.\n", [LETTER_DATE], {"letter_date": dt.date(2025, 2, 10)}, {}),
    ("money with period", "Base salary: $61,800 per year, paid biweekly\n", [SALARY, PERIOD], {"base_salary": Decimal(61800), "pay_period": "year"}, {}),
    ("money in k", "We have landed at a base of 78.5k a year plus a 6% bonus.\n", [SALARY, PERIOD], {"base_salary": Decimal(78500), "pay_period": "year"}, {}),
    ("hourly rate, premium excluded", "Pay rate: $21.75/hour\nNight premium: $1.25/hour\n", [SALARY, PERIOD], {"base_salary": Decimal("21.75"), "pay_period": "hour"}, {}),
    ("choice alias", "Location: H. Point (east wing)\n", [SITE], {"site": "Harbour Point"}, {}),
    ("ticked box", "Site: [ ] Harbour Point   [X] Millbrook Yard\n", [SITE], {"site": "Millbrook Yard"}, {}),
    ("flag alias", "Rehire: N - final warning on file\n", [REHIRE], {"rehire": False}, {}),
    ("flag in prose", "Jo is eligible for rehire and would be welcome back.\n", [REHIRE], {"rehire": True}, {}),
    ("flag undecided", "Rehire: TBD - manager to confirm\n", [REHIRE], {"rehire": None}, {}),
    ("identifier with separators", "Employee no.: HP-40211\nRequisition: REQ-HP-04190\n", [EMPLOYEE_ID], {"employee_id": "HP40211"}, {}),
    ("identifier not stated", "Employee ID: not on file - HR to look up\nCase: HP-C-0611\n", [EMPLOYEE_ID], {"employee_id": None}, {}),
    ("surname first, in capitals", "Reports to: REED, Samira\n", [MANAGER], {"manager": "Samira Reed"}, {}),
    ("first person means the signer", "Dear Ana,\nYou will be reporting directly to me.\n\nBest wishes,\nDana Whitfield\n", [MANAGER], {"manager": "Dana Whitfield"}, {}),
    ("addressee, completed to a full name", "Ana Torres\n12 Mill Lane\n\nDear Ana,\nWelcome aboard.\n\nSincerely,\nDana Whitfield\n", [CANDIDATE], {"candidate": "Ana Torres"}, {}),
    ("job title in prose", "We are pleased to offer you the position of Senior Kennel Technician at our clinic.\n", [TITLE], {"job_title": "Senior Kennel Technician"}, {}),
    ("job title after join ... as", "I am happy to invite you to join Harbour Point Clinic as a Practice Analyst.\n", [TITLE], {"job_title": "Practice Analyst"}, {}),
    ("pending approval is not an approval", "Final approval - Dana Whitfield: pending\n", [APPROVER], {"approver": None}, {}),
    (
        "missing value next to a distractor",
        "Your annual base salary is set out in the enclosed schedule.\nTool allowance: $600 per year\n",
        [SALARY],
        {"base_salary": None},
        {},
    ),
]


@pytest.mark.parametrize("name, text, fields, expected, extra", CASES, ids=[case[0] for case in CASES])
def test_extract_rules(tmp_path: Path, name: str, text: str, fields: list[dict], expected: dict, extra: dict) -> None:
    values = run(tmp_path, text, fields, **extra)
    for field, value in expected.items():
        item = values[field]
        assert item.value == value, f"{field}: {item}"
        if value is not None:
            assert item.span is not None
            assert item.status in (ValueStatus.OK, ValueStatus.REVIEW)


def test_extract_span_points_at_the_evidence(tmp_path: Path) -> None:
    text = "Offer of employment\nStart date: Monday, 3/31/2025\n"
    values = run(tmp_path, text, [DATE])
    item = values["start_date"]
    assert text[item.span.start : item.span.end] == "Monday, 3/31/2025"
    assert "3/31/2025" in item.snippet


def test_extract_on_behalf_of_keeps_the_principal_as_alternative(tmp_path: Path) -> None:
    values = run(tmp_path, "Approved: Sam Reed, Transport Manager, on behalf of Dana Whitfield (on leave)\n", [APPROVER])
    item = values["approver"]
    assert item.value == "Sam Reed"
    assert "Dana Whitfield" in [alt.value for alt in item.alternatives]


def test_extract_near_miss_goes_to_review_with_alternatives(tmp_path: Path) -> None:
    values = run(tmp_path, "Location: Milbrook Yrd\n", [SITE])
    item = values["site"]
    assert item.value == "Millbrook Yard"
    assert item.status is ValueStatus.REVIEW and "near miss" in item.reason


def test_extract_ambiguous_date_without_an_order_is_flagged(tmp_path: Path) -> None:
    path = tmp_path / "doc.txt"
    path.write_text("Start date: 03/04/2025\n", encoding="utf-8")
    schema = make_schema(DATE)  # no date_order anywhere
    item = extract_document(path, schema, options=RULES_ONLY).value("start_date")
    assert item.value == dt.date(2025, 3, 4)
    assert item.status is ValueStatus.REVIEW


EMAIL = (
    "From: Dana Whitfield <dana.whitfield@harbour.example>\r\n"
    "To: Sam Reed <sam.reed@harbour.example>, ops@harbour.example\r\n"
    "Date: Sun, 31 Aug 2025 23:47:10 -0700\r\n"
    "Subject: RE: Rota\r\n"
    "\r\n"
    "Thanks Sam, that works.\r\n"
    "\r\n"
    "On Fri, Aug 29, 2025 at 9:14 AM Sam Reed <sam.reed@harbour.example> wrote:\r\n"
    "> From: Lee Park <lee.park@harbour.example>\r\n"
    "> Date: Thu, 28 Aug 2025\r\n"
    "> Can we swap shifts?\r\n"
)


def test_extract_email_uses_its_own_headers(tmp_path: Path) -> None:
    values = run(tmp_path, EMAIL, [SENDER, RECIPIENT, SENT], suffix=".eml")
    assert values["sender"].value == "dana.whitfield@harbour.example"
    assert values["recipient"].value == "sam.reed@harbour.example"  # the first To address
    assert values["sent"].value == dt.date(2025, 8, 31)  # in the header's own offset, not UTC
    assert all(item.status is ValueStatus.OK for item in values.values())


def test_extract_undisclosed_recipients_is_missing(tmp_path: Path) -> None:
    text = EMAIL.replace("To: Sam Reed <sam.reed@harbour.example>, ops@harbour.example", "To: undisclosed-recipients:;")
    values = run(tmp_path, text, [RECIPIENT], suffix=".eml")
    assert values["recipient"].value is None
