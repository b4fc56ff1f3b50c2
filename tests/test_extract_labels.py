"""Values under label wordings a schema's cues do not list, and gaps that should be reviewed.

Scenario: the Larkspur Playhouse, an invented touring theatre company (crew contracts,
leaver notes, casting letters).  Rules only, no NER model.
"""

from __future__ import annotations

import datetime as dt
from decimal import Decimal
from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.extract.text import content_stems, cue_match, field_word_stems, norm, stems_meet, synonym_variants
from structurize.resolve import resolve_field
from structurize.types import Candidate, Span, ValueStatus

from conftest import RULES_ONLY, make_schema

OK, REVIEW, MISSING = ValueStatus.OK, ValueStatus.REVIEW, ValueStatus.MISSING

LAST_DAY = {
    "name": "last_day", "title": "Last day", "type": "date",
    "description": "The final day the crew member works. Not the notice date.",
    "extract": {"as": "date", "cues": ["last day", "final working day"]},
}
START = {"name": "start_date", "title": "Start date", "type": "date", "extract": {"as": "date", "cues": ["start date", "start on", "first day"]}}
LETTER_DATE = {"name": "letter_date", "title": "Letter date", "type": "date", "extract": {"as": "date", "cues": ["date", "dated"]}}
AUDITION = {"name": "audition_date", "title": "Audition date", "type": "date", "extract": {"as": "date", "cues": ["audition on"]}}
OPENING = {
    "name": "opening_night", "title": "Opening night", "type": "date",
    "description": "Date of the first public performance. Not the preview or rehearsal date.",
    "extract": {"as": "date", "cues": ["opens on"]},
}
STAGE_MANAGER = {
    "name": "stage_manager", "title": "Stage manager", "type": "string",
    "description": "The person who runs the prompt desk during performances.",
    "extract": {"as": "person", "cues": ["stage manager"]},
}
CREW_MEMBER = {"name": "crew_member", "title": "Crew member", "type": "string", "extract": {"as": "person", "cues": ["employee", "crew member"]}}
CANDIDATE = {"name": "candidate", "title": "Candidate", "type": "string", "extract": {"as": "person", "cues": ["candidate", "dear"]}}
BADGE = {
    "name": "badge_id", "title": "Badge ID", "type": "string", "constraints": {"pattern": "LP[0-9]{4}"},
    "extract": {"as": "identifier", "cues": ["badge id"]},
}
STAFF_ID = {
    "name": "staff_id", "title": "Employee ID", "type": "string", "constraints": {"pattern": "LP[0-9]{4}"},
    "extract": {"as": "identifier", "cues": ["employee number", "employee id"]},
}
REASON = {
    "name": "leave_reason", "title": "Reason for leaving", "type": "string",
    "constraints": {"enum": ["relocation", "pay", "other"]},
    "extract": {"as": "choice", "cues": ["reason for leaving", "main reason"],
                "aliases": {"relocation": ["relocating", "moving away"], "pay": ["better pay", "salary"], "other": ["other"]}},
}
SALARY = {"name": "base_salary", "title": "Base pay", "type": "number", "extract": {"as": "money", "cues": ["base salary", "salary"]}}
TITLE = {"name": "job_title", "title": "Job title", "type": "string", "extract": {"as": "job_title", "cues": ["position", "position of"]}}
VENUE = {
    "name": "venue", "title": "Venue", "type": "string", "constraints": {"enum": ["Riverside Studio", "Old Corn Exchange"]},
    "extract": {"as": "choice", "cues": ["work location", "location"], "aliases": {"Riverside Studio": ["Riverside"], "Old Corn Exchange": ["Corn Exchange"]}},
}
DEPARTMENT = {
    "name": "department", "title": "Department", "type": "string", "constraints": {"enum": ["Wardrobe", "Lighting", "Front of House"]},
    "extract": {"as": "choice", "cues": ["department"]},
}
MANAGER = {"name": "manager", "title": "Manager", "type": "string", "extract": {"as": "person", "cues": ["manager", "reports to"]}}
REHIRE = {
    "name": "rehire", "title": "Eligible for rehire", "type": "boolean",
    "extract": {"as": "flag", "cues": ["rehire", "eligible for rehire"], "aliases": {True: ["yes", "eligible"], False: ["no", "not eligible"]}},
}


def run(tmp_path: Path, text: str, fields: list[dict], **extract: object):
    path = tmp_path / "doc.txt"
    path.write_text(text, encoding="utf-8")
    schema = make_schema(*fields, **({"date_order": "DMY"} | extract))
    result = extract_document(path, schema, options=RULES_ONLY)
    return {item.field: item for item in result.values}


# --- 1. a label no field's cues name ---------------------------------------------------------------

UNCLAIMED = [
    # (id, text, fields, field, value, status, extractor)
    ("title word, a date", "Callback audition held: 12 May 2025\n", [AUDITION], "audition_date", dt.date(2025, 5, 12), REVIEW, "unclaimed-label.v1"),
    ("description words, a person", "Prompt desk: Ada Quill\n", [STAGE_MANAGER], "stage_manager", "Ada Quill", REVIEW, "unclaimed-label.v1"),
    ("value of another kind: nothing", "Prompt desk: upstage left\n", [STAGE_MANAGER], "stage_manager", None, MISSING, ""),
    ("cued evidence is not displaced", "Prompt desk: Ada Quill\nStage manager: Bea Lorne\n", [STAGE_MANAGER], "stage_manager", "Bea Lorne", OK, "label.v1"),
    ("a negated description sentence names distractors", "Preview: 2 May 2025\n", [OPENING], "opening_night", None, MISSING, ""),
    ("generic words alone share nothing", "Date recorded: 5 May 2025\n", [OPENING], "opening_night", None, MISSING, ""),
    ("other evidence agrees: not held back", "Crew pass badge: LP2041\n", [BADGE], "badge_id", "LP2041", OK, "pattern.v1"),
    ("a word stem, not a whole word", "Managed by: Ada Quill\n", [STAGE_MANAGER], "stage_manager", "Ada Quill", REVIEW, "unclaimed-label.v1"),
]


@pytest.mark.parametrize("name, text, fields, field, value, status, extractor", UNCLAIMED, ids=[c[0] for c in UNCLAIMED])
def test_unclaimed_label(tmp_path: Path, name: str, text: str, fields: list[dict], field: str, value: object, status: ValueStatus, extractor: str) -> None:
    item = run(tmp_path, text, fields)[field]
    assert (item.value, item.status, item.extractor) == (value, status, extractor)
    if extractor == "unclaimed-label.v1":
        assert item.confidence < 0.8
        assert "matches no field's cue" in item.evidence[0]


def test_unclaimed_label_stays_under_a_lower_review_threshold(tmp_path: Path) -> None:
    item = run(tmp_path, "Callback audition held: 12 May 2025\n", [AUDITION], review_below=0.5)["audition_date"]
    assert item.status is REVIEW and item.confidence == pytest.approx(0.45)


def test_unclaimed_label_goes_to_the_field_whose_kind_reads_the_value(tmp_path: Path) -> None:
    # "Leaving" is a word of both fields; only the date field can hold a date
    text = "Leaving: 4 July 2025\n"
    fields = [LAST_DAY | {"extract": {"as": "date", "cues": ["last day"]}}, REASON | {"title": "Leaving reason"}]
    values = run(tmp_path, text, [fields[0] | {"title": "Leaving day"}, fields[1]])
    assert values["last_day"].value == dt.date(2025, 7, 4)
    assert values["last_day"].confidence == pytest.approx(0.6)  # not shared with the choice field
    assert not any("other fields share" in note for note in values["last_day"].evidence)
    assert values["leave_reason"].value is None


def test_unclaimed_label_shared_by_two_fields_of_its_kind_counts_less(tmp_path: Path) -> None:
    fields = [AUDITION | {"title": "Callback date"}, OPENING | {"title": "Callback night", "description": ""}]
    values = run(tmp_path, "Callback held: 12 May 2025\n", fields)
    assert values["audition_date"].value == values["opening_night"].value == dt.date(2025, 5, 12)
    assert values["audition_date"].confidence == pytest.approx(0.48)


# --- 2. label synonyms -----------------------------------------------------------------------------

SYNONYMS = [
    # (id, text, fields, field, value)
    ("employment end date", "Employment end date: 30/06/2025\n", [LAST_DAY], "last_day", dt.date(2025, 6, 30)),
    ("leaves on", "Leaves on: 30/06/2025\n", [LAST_DAY], "last_day", dt.date(2025, 6, 30)),
    ("separation date", "Separation date: 30/06/2025\n", [LAST_DAY], "last_day", dt.date(2025, 6, 30)),
    ("final day", "Final day: 30/06/2025\n", [LAST_DAY | {"extract": {"as": "date", "cues": ["last day"]}}], "last_day", dt.date(2025, 6, 30)),
    ("date of joining", "Date of joining: 02/06/2025\n", [START], "start_date", dt.date(2025, 6, 2)),
    ("reason for resignation", "Reason for resignation: relocating to the coast\n", [REASON], "leave_reason", "relocation"),
    ("principal reason", "Principal reason: better pay elsewhere\n", [REASON], "leave_reason", "pay"),
    ("applicant", "Applicant: Ivo Marsh\n", [CANDIDATE], "candidate", "Ivo Marsh"),
    ("payroll reference", "Payroll reference: LP3310\n", [STAFF_ID], "staff_id", "LP3310"),
    ("staff no.", "Staff no.: LP3310\n", [STAFF_ID], "staff_id", "LP3310"),
    ("basic salary", "Basic salary: $41,500\n", [SALARY | {"extract": {"as": "money", "cues": ["base salary"]}}], "base_salary", Decimal("41500")),
    ("designation", "Designation: Lighting Technician\n", [TITLE | {"extract": {"as": "job_title", "cues": ["position"]}}], "job_title", "Lighting Technician"),
    ("place of work", "Place of work: Riverside Studio\n", [VENUE], "venue", "Riverside Studio"),
    ("section", "Section: Wardrobe\n", [DEPARTMENT], "department", "Wardrobe"),
    ("service area", "Service area: Front of House\n", [DEPARTMENT], "department", "Front of House"),
    ("re-employed", "Re-employed: yes\n", [REHIRE], "rehire", True),
]


@pytest.mark.parametrize("name, text, fields, field, value", SYNONYMS, ids=[c[0] for c in SYNONYMS])
def test_label_synonyms(tmp_path: Path, name: str, text: str, fields: list[dict], field: str, value: object) -> None:
    item = run(tmp_path, text, fields)[field]
    assert (item.value, item.extractor) == (value, "label.v1")
    assert item.status in (OK, REVIEW)


@pytest.mark.parametrize(
    "cue, label, floor",
    [
        ("reason for leaving", "reason for resigning", 0.9),
        ("main reason", "principal reason", 0.9),
        ("employee number", "payroll ref", 0.9),
        ("last day", "date employment ends", 0.8),
        ("candidate", "appointee", 0.9),
    ],
)
def test_cue_match_through_synonyms(cue: str, label: str, floor: float) -> None:
    assert cue_match(norm(cue), norm(label)) >= floor


def test_cue_match_synonyms_do_not_join_unrelated_labels() -> None:
    # "resignation date" is when notice was given, not the last day
    assert cue_match("last day", norm("Resignation date")) < 0.6
    assert cue_match("start on", norm("Before you start")) < 0.6


# --- 3. gaps that are likely errors ----------------------------------------------------------------

GAPS = [
    # (id, text, fields, field, status, extractor)
    ("a label for the field holds no date", "Last day: the Friday after the tour ends\n", [LAST_DAY], "last_day", REVIEW, "unread.v1"),
    ("a cue in running text, nothing readable", "We talked about her last day and the handover.\n", [LAST_DAY], "last_day", REVIEW, "unread.v1"),
    ("nothing at all: missing", "We talked about the handover.\n", [LAST_DAY], "last_day", MISSING, ""),
    ("the document says it is unknown: missing", "Last day: TBD\n", [LAST_DAY], "last_day", MISSING, "label.v1"),
    ("a value was read: the sign is not used", "Last day: 4 July 2025\nWe talked about her last day.\n", [LAST_DAY], "last_day", OK, "label.v1"),
    ("a letter dated by month only", "Larkspur Playhouse\n\nMid-May 2025\n\nDear Ivo,\nThank you.\n", [LETTER_DATE], "letter_date", REVIEW, "unread.v1"),
    ("a letter's date in words is read", "Larkspur Playhouse\n\nThe ninth of May, 2025\n\nDear Ivo,\nThank you.\n", [LETTER_DATE], "letter_date", OK, "dateline.v1"),
    ("the word 'date' in running text is no sign", "Please reply by the date we agreed.\n", [LETTER_DATE], "letter_date", MISSING, ""),
    ("a choice label holds no listed value", "Reason for leaving: a touring contract abroad\n", [REASON], "leave_reason", REVIEW, "unread.v1"),
]


@pytest.mark.parametrize("name, text, fields, field, status, extractor", GAPS, ids=[c[0] for c in GAPS])
def test_gaps(tmp_path: Path, name: str, text: str, fields: list[dict], field: str, status: ValueStatus, extractor: str) -> None:
    item = run(tmp_path, text, fields)[field]
    assert (item.status, item.extractor) == (status, extractor)
    if extractor == "unread.v1":
        assert item.value is None and item.confidence < 0.8
        assert item.reason.startswith("a value may be present but was not read")


def test_gap_of_a_required_field_is_invalid(tmp_path: Path) -> None:
    item = run(tmp_path, "Crew member: see the attached sheet\n", [CREW_MEMBER | {"constraints": {"required": True}}])["crew_member"]
    assert item.status is ValueStatus.INVALID and "a value may be present" in item.reason


# --- 4. prose wordings ---------------------------------------------------------------------------

PROSE = [
    # (id, text, fields, field, value, extractor)
    ("begin on", "Your engagement will begin on Monday 2 June 2025.\n", [START], "start_date", dt.date(2025, 6, 2), "prose-synonym.v1"),
    ("final shift", "Her final shift is on 28 June 2025, after the matinee.\n", [LAST_DAY | {"extract": {"as": "date", "cues": ["last day"]}}],
     "last_day", dt.date(2025, 6, 28), "prose-synonym.v1"),
    ("the post of", "We are pleased to offer you the post of Wardrobe Supervisor at the Playhouse.\n", [TITLE], "job_title", "Wardrobe Supervisor", "prose-synonym.v1"),
    ("a cue in the text wins", "Your start date is 9 June 2025. Rehearsals begin on 2 June 2025.\n", [START], "start_date", dt.date(2025, 6, 9), "prose.v1"),
    ("a word of the title", "The role pays $820 a week.\n", [SALARY], "base_salary", Decimal("820"), "prose-title.v1"),
]


@pytest.mark.parametrize("name, text, fields, field, value, extractor", PROSE, ids=[c[0] for c in PROSE])
def test_prose_wordings(tmp_path: Path, name: str, text: str, fields: list[dict], field: str, value: object, extractor: str) -> None:
    item = run(tmp_path, text, fields)[field]
    assert (item.value, item.extractor) == (value, extractor)
    if extractor == "prose-title.v1":
        assert item.status is REVIEW  # a title word alone is never enough


# --- the word helpers ------------------------------------------------------------------------------

@pytest.mark.parametrize(
    "text, stems",
    [
        ("Date employment ends", {"employ", "end"}),
        ("Who is leaving", {"leav"}),
        ("Name of applicant", {"applicant", "candidat"}),
        ("Date / No.", set()),
    ],
)
def test_content_stems(text: str, stems: set[str]) -> None:
    assert content_stems(text) == stems


@pytest.mark.parametrize("a, b, meet", [("leav", "leaver", True), ("employ", "employer", True), ("end", "ends", False), ("manag", "management", False)])
def test_stems_meet(a: str, b: str, meet: bool) -> None:
    assert stems_meet(a, b) is meet


def test_field_words_leave_out_negated_sentences() -> None:
    strong, weak = field_word_stems(
        "Opening night", "opening_night", "Date of the first public performance. Not the preview or rehearsal date.", ("opens on",)
    )
    assert strong == {"open", "night"}
    assert "preview" not in weak and "performanc" in weak


@pytest.mark.parametrize(
    "cue, variant",
    [("start on", "begin on"), ("last day", "final shift"), ("reason for leaving", "reason for resignation"), ("rehire", "re-employed")],
)
def test_synonym_variants(cue: str, variant: str) -> None:
    assert variant in synonym_variants(cue)


# --- resolution of the new evidence -----------------------------------------------------------------

SPEC = make_schema({"name": "venue", "type": "string"}).field("venue")
INDIRECT = {"indirect", "uncued", "fallback"}


def cand(value, score, start=0, extractor="label.v1", flags=()):
    return Candidate("venue", value, str(value), Span(start, start + 3), extractor, score, ("evidence",), frozenset(flags))


RESOLVE = [
    # (id, candidates, value, status, confidence)
    ("resemblance never displaces a cue", [cand("A", 0.3), cand("B", 0.6, 10, "unclaimed-label.v1", INDIRECT)], "A", REVIEW, 0.3),
    ("resemblance alone stays under the threshold", [cand("B", 0.95, 10, "unclaimed-label.v1", INDIRECT)], "B", REVIEW, 0.75),
    ("agreeing evidence lifts it", [cand("B", 0.8, 0, "pattern.v1"), cand("B", 0.6, 10, "unclaimed-label.v1", INDIRECT)], "B", OK, 0.86),
    ("a synonym in prose ranks below a cue", [cand("A", 0.5), cand("B", 0.7, 10, "prose-synonym.v1", {"indirect", "fallback"})], "A", REVIEW, 0.5),
    ("a gap sign is dropped when a value exists", [cand("A", 0.9), cand(None, 0.4, 10, "unread.v1", {"unread_value", "fallback"})], "A", OK, 0.9),
    ("a gap sign alone: review", [cand(None, 0.4, 10, "unread.v1", {"unread_value", "fallback"})], None, REVIEW, 0.4),
    ("a statement that it is unknown wins over a gap sign",
     [cand(None, 0.9, 0, "label.v1", {"stated_missing"}), cand(None, 0.4, 10, "unread.v1", {"unread_value", "fallback"})], None, MISSING, 0.9),
]


@pytest.mark.parametrize("name, candidates, value, status, confidence", RESOLVE, ids=[c[0] for c in RESOLVE])
def test_resolve_new_evidence(name: str, candidates: list[Candidate], value: object, status: ValueStatus, confidence: float) -> None:
    item = resolve_field(SPEC, candidates, review_below=0.8, cues_seen=False)
    assert (item.value, item.status) == (value, status)
    assert item.confidence == pytest.approx(confidence, abs=0.005)
