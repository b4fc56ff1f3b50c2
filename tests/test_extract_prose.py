"""Values stated in running text: ranked choices, flags answered or negated, first-person
approvals in memos, memo header lines, and titles set apart by words or emphasis.

Scenario: the Tarnbeck Valley Water Board, an invented municipal water utility (leaver
notes, secondment memos, offer letters).  Rules only, no NER model.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.extract.vocab import vocabulary_for
from structurize.types import ValueStatus

from conftest import RULES_ONLY, make_schema

OK, REVIEW, MISSING = ValueStatus.OK, ValueStatus.REVIEW, ValueStatus.MISSING

REASON = {
    "name": "leave_reason", "title": "Primary reason for leaving", "type": "string",
    "constraints": {"enum": ["pay", "growth", "relocation", "workload", "other"]},
    "extract": {
        "as": "choice", "cues": ["reason for leaving", "main reason", "primary reason"],
        "aliases": {
            "pay": ["salary", "wages", "better paid"],
            "growth": ["career growth", "promotion", "progression", "development"],
            "relocation": ["relocating", "moving away"],
            "workload": ["overtime", "shift pattern", "burnout"],
            "other": ["other", "returning to study"],
        },
    },
}
REHIRE = {
    "name": "rehire", "title": "Eligible for rehire", "type": "boolean",
    "extract": {"as": "flag", "cues": ["rehire", "re-hire", "eligible for rehire"],
                "aliases": {True: ["yes", "y", "eligible"], False: ["no", "n", "not eligible", "ineligible"]}},
}
SITES = ["Fennick Reservoir", "Millbrook Works", "Harrow Lane Depot"]
SITE_ALIASES = {"Fennick Reservoir": ["FR"], "Millbrook Works": ["MW"], "Harrow Lane Depot": ["HL"]}
CURRENT_SITE = {
    "name": "current_site", "type": "string", "constraints": {"enum": SITES},
    "extract": {"as": "choice", "cues": ["current site", "from"], "aliases": SITE_ALIASES},
}
NEW_SITE = {
    "name": "new_site", "type": "string", "constraints": {"enum": SITES},
    "extract": {"as": "choice", "cues": ["new site", "transfer to", "to"], "aliases": SITE_ALIASES},
}
APPROVER = {"name": "approver", "type": "string", "extract": {"as": "person", "cues": ["approved by", "approved", "I approve"]}}
SITE = {
    "name": "site", "type": "string", "constraints": {"enum": SITES},
    "extract": {"as": "choice", "cues": ["site", "based at"], "aliases": SITE_ALIASES},
}
TITLE = {"name": "job_title", "type": "string", "extract": {"as": "job_title", "cues": ["position", "join us as"]}}


def run(tmp_path: Path, text: str, fields: list[dict], suffix: str = ".txt"):
    path = tmp_path / f"doc{suffix}"
    path.write_text(text, encoding="utf-8")
    result = extract_document(path, make_schema(*fields, date_order="DMY", review_below=0.8), options=RULES_ONLY)
    return text, {item.field: item for item in result.values}


# --- 1. a choice stated with a rank -----------------------------------------------------------

RANKED = [
    # (id, text, value, status)
    ("primary before its cue, secondary after",
     "We logged relocation as the primary reason and shift pattern as a secondary one.\n", "relocation", OK),
    ("primary after its cue, another value also mentioned",
     "The main reason was pay, although career growth also played a part.\n", "pay", OK),
    ("the secondary one named first",
     "Overtime was a minor factor; the main reason was relocating to the coast.\n", "relocation", OK),
    ("a negated rank is no statement for the value",
     "Pay wasn't the main reason; she is relocating to the coast.\n", "relocation", OK),
    ("two values with no rank word: a reviewer decides",
     "Her reasons for leaving were pay and the shift pattern.\n", "pay", REVIEW),
    ("an alias after the cue does not outrank an explicit statement",
     "We recorded salary as the primary reason and progression as a secondary one.\n", "pay", OK),
    ("the value the cue governs, another merely mentioned",
     "He had weighed relocating for a year, but the reason for leaving he gave us was overtime.\n", "workload", OK),
    ("a list after the cue with no rank: a reviewer decides",
     "Reason for leaving, in her words: burnout, pay or both.\n", "workload", REVIEW),
    ("one value in the sentence: read as before",
     "The main reason for leaving was burnout after a winter of call-outs.\n", "workload", OK),
]


@pytest.mark.parametrize("name, text, value, status", RANKED, ids=[c[0] for c in RANKED])
def test_choice_with_a_rank(tmp_path: Path, name: str, text: str, value: str, status: ValueStatus) -> None:
    _, values = run(tmp_path, text, [REASON])
    item = values["leave_reason"]
    assert (item.value, item.status) == (value, status)
    if status is REVIEW:
        assert item.confidence < 0.8


NEGATIONS = [
    # (id, text, variant, negated)
    ("not the main reason", "Pay wasn't the main reason for going.", "pay", True),
    ("was not the real issue", "Her salary was not the real issue.", "salary", True),
    ("nothing about", "Nothing about salary or the rota came up.", "salary", True),
    ("a plain statement", "Salary was the main reason for going.", "salary", False),
]


@pytest.mark.parametrize("name, text, variant, negated", NEGATIONS, ids=[c[0] for c in NEGATIONS])
def test_negated_mentions(name: str, text: str, variant: str, negated: bool) -> None:
    schema = make_schema(REASON)
    mentions = [m for m in vocabulary_for(schema.fields[0].hints).find(text) if m.variant == variant]
    assert [m.negated for m in mentions] == [negated]


def test_a_training_site_before_the_cue_does_not_compete(tmp_path: Path) -> None:
    text = "You will train at Millbrook Works for two weeks and then be based at Fennick Reservoir.\n"
    item = run(tmp_path, text, [SITE])[1]["site"]
    assert (item.value, item.status) == ("Fennick Reservoir", OK)


# --- 2. flags: a question answered, a negated label ------------------------------------------

FLAGS = [
    # (id, text, value, status)
    ("question, then yes", "Notes\nWould we rehire? Yes, without a second thought.\n", True, OK),
    ("question, then no", "Notes\nWould the depot rehire him? No -- two unexplained absences.\n", False, OK),
    ("question and answer lines", "Q: Would you re-hire Dana?\nA: Yes, gladly.\n", True, OK),
    ("a cue as a label inside an answer", "Q: Anything else for the file?\nA: Rehire: yes.\n", True, OK),
    ("negated label, a reason after it", "Rehire\nNot eligible for rehire: a confined-space permit breach is on file.\n", False, OK),
    ("a negated label, confirmed", "Not eligible for rehire: yes\n", False, OK),
    ("ineligible label (a looser label match)", "Ineligible for rehire: falsified meter readings.\n", False, REVIEW),
    ("a negated label over a double negative", "Not eligible for rehire: no\n", None, REVIEW),
    ("a label listing both options", "Eligible for rehire (yes / not eligible): yes\n", True, OK),
    ("a plain label still reads", "Eligible for rehire: no\n", False, OK),
    ("a plain label still reads (yes)", "Eligible for rehire: yes\n", True, OK),
    ("a question left open", "Would we rehire? We have not decided.\n", None, REVIEW),
    ("boxes after the answers: the ticked one", "Would we rehire? Yes [ ] No [x]\n", False, OK),
    ("boxes before the answers: the ticked one", "Rehire: [ ] Yes [x] No\n", False, OK),
    ("boxes after the answers, the other way", "Eligible for rehire: Yes [x] No [ ]\n", True, OK),
    ("boxes as marks", "Eligible for rehire:  ☐ Yes  ☒ No\n", False, OK),
]


@pytest.mark.parametrize("name, text, value, status", FLAGS, ids=[c[0] for c in FLAGS])
def test_flag_in_running_text(tmp_path: Path, name: str, text: str, value: bool | None, status: ValueStatus) -> None:
    _, values = run(tmp_path, text, [REHIRE])
    item = values["rehire"]
    assert (item.value, item.status) == (value, status)


# --- 3. memos: a first-person approval, header lines that name people --------------------------

MEMO = (
    "MEMO\n\n"
    "From:    Oksana Treherne, Head of Network Operations\n"
    "To:      People Services; Payroll\n"
    "Date:    02/06/2025\n"
    "Re:      Secondment of Idris Polgar\n\n"
    "{body}\n\n"
    "Oksana Treherne\n"
)
APPROVALS = [
    # (id, body, value)
    ("I have approved X's request", "I have approved Idris Polgar's request to move to the meter shop.", "Oksana Treherne"),
    ("I've now approved", "I've now approved Idris Polgar for the meter shop secondment.", "Oksana Treherne"),
    ("I approve", "Having read the case, I approve Idris Polgar's secondment.", "Oksana Treherne"),
    ("we have reviewed and approved", "We have reviewed and approved Idris Polgar's request.", "Oksana Treherne"),
    ("approved by me", "The request from Idris Polgar was approved by me this morning.", "Oksana Treherne"),
    ("someone else approved it", "The request from Idris Polgar was approved by Wendell Aske on Monday.", "Wendell Aske"),
]


@pytest.mark.parametrize("name, body, value", APPROVALS, ids=[c[0] for c in APPROVALS])
def test_first_person_approval_is_the_author(tmp_path: Path, name: str, body: str, value: str) -> None:
    text, values = run(tmp_path, MEMO.format(body=body), [APPROVER])
    item = values["approver"]
    assert item.value == value
    assert text[item.span.start : item.span.end] == value


def test_a_move_across_a_wrapped_line(tmp_path: Path) -> None:
    body = "Idris Polgar has asked, with his supervisor's support, to move from his current\npost at Millbrook Works to Fennick Reservoir in July."
    _, values = run(tmp_path, MEMO.format(body=body), [CURRENT_SITE, NEW_SITE])
    assert values["current_site"].value == "Millbrook Works"
    assert values["new_site"].value == "Fennick Reservoir"


def test_memo_header_lines_are_not_site_cues(tmp_path: Path) -> None:
    text = (
        "MEMO\n"
        "From: Oksana Treherne, Millbrook Works\n"
        "To: Duty Manager, Harrow Lane Depot\n\n"
        "Please note that the chlorine delivery is moved to Thursday.\n"
    )
    _, values = run(tmp_path, text, [CURRENT_SITE, NEW_SITE])
    assert values["current_site"].value is None
    assert values["new_site"].value is None


def test_a_from_to_line_with_sites_still_reads(tmp_path: Path) -> None:
    text = "Transfer form\nFrom: Millbrook Works\nTo: Harrow Lane Depot\n"
    _, values = run(tmp_path, text, [CURRENT_SITE, NEW_SITE])
    assert values["current_site"].value == "Millbrook Works"
    assert values["new_site"].value == "Harrow Lane Depot"


# --- 4. job titles: words between the cue and the title, emphasis around it -------------------

TITLES = [
    # (id, text, suffix, value)
    ("words between the cue's parts",
     "We'd like you to join the treatment team at Fennick Reservoir as our **Senior Process Scientist**.\n", ".md",
     "Senior Process Scientist"),
    ("underscores", "We'd like you to join us as __Network Planner__ from June.\n", ".md", "Network Planner"),
    ("single asterisks", "We'd like you to join us as our *Leakage Technician* from June.\n", ".md", "Leakage Technician"),
    ("emphasis under a label", "Position: **Meter Reader**\n", ".md", "Meter Reader"),
    ("emphasis before a cue", "We are pleased to offer you the **Leakage Technician** position at the works.\n", ".md", "Leakage Technician"),
]


@pytest.mark.parametrize("name, text, suffix, value", TITLES, ids=[c[0] for c in TITLES])
def test_job_title_in_offer_prose(tmp_path: Path, name: str, text: str, suffix: str, value: str) -> None:
    text, values = run(tmp_path, text, [TITLE], suffix=suffix)
    item = values["job_title"]
    assert item.value == value
    assert text[item.span.start : item.span.end] == value  # the span points at the words, not the markers
