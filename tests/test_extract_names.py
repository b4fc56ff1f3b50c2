"""Names, identifiers and listed values in the forms HR documents write them (rules only).

The scenario is an invented municipal water utility: staff references "WU-" and five
digits, depots and works as the listed sites, letters to new hires and leavers.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from structurize.api import extract_document
from structurize.extract import kinds
from structurize.extract.analysis import Analysis
from structurize.extract.text import is_partial_name, leading_name, normalise_name
from structurize.extract.vocab import Vocabulary
from structurize.readers import read_document
from structurize.types import ValueStatus

from conftest import RULES_ONLY, make_schema

STAFF_REF = {
    "name": "staff_ref",
    "type": "string",
    "constraints": {"pattern": "WU-[0-9]{5}"},
    "extract": {"as": "identifier", "cues": ["staff ref", "staff reference"]},
}
PAYROLL_NO = {
    "name": "payroll_no",
    "type": "string",
    "constraints": {"pattern": "BW[0-9]{5}"},
    "extract": {"as": "identifier", "cues": ["payroll no"]},
}
CREW_CODE = {  # classes only, no literal part
    "name": "crew_code",
    "type": "string",
    "constraints": {"pattern": "[A-Z]{2}[0-9]{4}"},
    "extract": {"as": "identifier", "cues": ["crew code"]},
}
NEW_HIRE = {"name": "new_hire", "type": "string", "extract": {"as": "person", "cues": ["dear", "to", "appointee", "new hire"]}}
DEPOTS = ["Fernhill Depot", "Fernley Depot", "Oakmere Depot", "Oakmore Depot", "Ashcombe Depot", "Ashcombe Works", "Kestrel Treatment Works"]
DEPOT = {
    "name": "depot",
    "type": "string",
    "constraints": {"enum": DEPOTS},
    "extract": {"as": "choice", "cues": ["depot", "base"]},
}


def run(tmp_path: Path, text: str, fields: list[dict], suffix: str = ".txt"):
    path = tmp_path / f"doc{suffix}"
    path.write_bytes(text.encode("utf-8"))
    result = extract_document(path, make_schema(*fields, date_order="DMY"), options=RULES_ONLY)
    return {item.field: item for item in result.values}


def readings(tmp_path: Path, text: str, field: dict) -> list[kinds.Reading]:
    """What the value reader of ``field``'s kind reads out of the whole text."""
    path = tmp_path / "doc.txt"
    path.write_bytes(text.encode("utf-8"))
    schema = make_schema(field)
    analysis = Analysis(read_document(path, "doc.txt", RULES_ONLY), schema)
    return kinds.read(analysis, schema.fields[0], 0, len(analysis.text))


# --- identifiers -------------------------------------------------------------------------

IDENTIFIER_FORMS = [
    # (written, field, value in the pattern's own form)
    ("Staff ref: WU 20417\n", STAFF_REF, "WU-20417"),
    ("Staff ref: WU20417\n", STAFF_REF, "WU-20417"),
    ("Staff ref: wu-20417\n", STAFF_REF, "WU-20417"),
    ("Staff ref: WU – 20417\n", STAFF_REF, "WU-20417"),  # en dash with spaces
    ("Staff ref: WU—20417\n", STAFF_REF, "WU-20417"),  # em dash
    ("Staff ref: WU/20417\n", STAFF_REF, "WU-20417"),
    ("Staff ref: WU.20417\n", STAFF_REF, "WU-20417"),
    ("Payroll no: BW 31886\n", PAYROLL_NO, "BW31886"),
    ("Payroll no: bw-31886\n", PAYROLL_NO, "BW31886"),
    ("Crew code: NE-4471\n", CREW_CODE, "NE4471"),
    ("Crew code: ne4471\n", CREW_CODE, "NE4471"),
]


@pytest.mark.parametrize(("text", "field", "expected"), IDENTIFIER_FORMS, ids=[row[0].strip() for row in IDENTIFIER_FORMS])
def test_identifier_written_forms_read_in_the_patterns_form(tmp_path: Path, text: str, field: dict, expected: str) -> None:
    item = run(tmp_path, text, [field])[field["name"]]
    assert item.value == expected
    assert item.status is ValueStatus.OK  # a labelled reading, normalised at 0.97
    found = [r for r in readings(tmp_path, text, field) if r.value == expected]
    assert found and all("separators_normalised" in r.flags for r in found)


def test_identifier_in_its_own_form_is_not_flagged(tmp_path: Path) -> None:
    found = readings(tmp_path, "Staff ref: WU-20417\n", STAFF_REF)
    assert [(r.value, r.flags) for r in found] == [("WU-20417", frozenset())]


NOT_IDENTIFIERS = [
    # (text, field): the pattern's shape inside a longer token or beside a number
    ("Staff ref: WU-20417-3 (superseded card)\n", STAFF_REF),  # a longer code
    ("Ticket: OPS-WU-20417\n", STAFF_REF),  # the tail of a longer code
    ("Call 0161 WU 20417 33 after six\n", STAFF_REF),  # inside a phone-like run of groups
    ("Meter WU-204170 replaced\n", STAFF_REF),  # one digit too many
    ("Payroll no: BW 318862\n", PAYROLL_NO),
    ("There is no 4471 on file for the crew code\n", CREW_CODE),  # a word and a number
    ("Crew code ideas were discussed\n", CREW_CODE),
]


@pytest.mark.parametrize(("text", "field"), NOT_IDENTIFIERS, ids=[row[0].strip() for row in NOT_IDENTIFIERS])
def test_identifier_never_read_inside_a_longer_token(tmp_path: Path, text: str, field: dict) -> None:
    assert [r.value for r in readings(tmp_path, text, field) if r.value is not None] == []


def test_identifier_pattern_with_groups_keeps_the_plain_reading(tmp_path: Path) -> None:
    # alternation: the literal parts cannot be read off the regex; the exact form still works
    field = dict(STAFF_REF, constraints={"pattern": "(WU|WB)-[0-9]{5}"})
    assert [r.value for r in readings(tmp_path, "Staff ref: WB-20417\n", field)] == ["WB-20417"]


# --- names -------------------------------------------------------------------------------

NORMALISED = [
    # (written, normalised)
    ("FAIRBAIRN, Ewan", "Ewan Fairbairn"),
    ("MCALLISTER, Rory", "Rory McAllister"),
    ("MACDONALD, Isla", "Isla MacDonald"),
    ("MACHADO, Rita", "Rita Machado"),  # "Mac" is not always a prefix
    ("O'SULLIVAN-BYRNE, Niamh", "Niamh O'Sullivan-Byrne"),
    ("D’ARCY, Fionn", "Fionn D’Arcy"),
    ("VAN DER BERG, Anke", "Anke van der Berg"),
    ("de la Fuente, Inés", "Inés de la Fuente"),
    ("INÉS DE LA FUENTE", "Inés de la Fuente"),
    ("Stefania Di Marco", "Stefania Di Marco"),  # mixed case stays as written
    ("HENRY III", "Henry III"),
]


@pytest.mark.parametrize(("written", "expected"), NORMALISED, ids=[row[0] for row in NORMALISED])
def test_normalise_name(written: str, expected: str) -> None:
    assert normalise_name(written) == expected


LEADING = [
    # (text, the name it starts with or None)
    ("FAIRBAIRN, Ewan (Network Operations)", "Ewan Fairbairn"),
    ("de la Fuente, Inés, Senior Hydrologist", "Inés de la Fuente"),
    ("VAN DER BERG, Anke", "Anke van der Berg"),
    ("Ms. van der Berg,", "van der Berg"),
    ("FERNHILL, Mill Road", "Fernhill"),  # a place and a street, not "Mill Road Fernhill"
    ("ROTA, Weekend Supervisor", "Rota"),
    ("Fairbairn, Ewan", "Fairbairn"),  # mixed case, no particle: not turned round
    ("Di Marco, Meter Reader", "Di Marco"),  # a capitalised particle, then a job title
    ("OKAFOR,\nWelcome to the team", "Okafor"),  # the comma ends a line: not a given name
]


@pytest.mark.parametrize(("text", "expected"), LEADING, ids=[row[0].replace("\n", " ") for row in LEADING])
def test_leading_name(text: str, expected: str | None) -> None:
    found = leading_name(text)
    assert (found[2] if found else None) == expected


@pytest.mark.parametrize(
    ("name", "partial"),
    [("Ewan Fairbairn", False), ("Fairbairn", True), ("De Marco", True), ("van der Berg", True), ("E. Fairbairn", True),
     ("Stefania Di Marco", False), ("Ana M. Torres", False)],
)
def test_partial_name(name: str, partial: bool) -> None:
    assert is_partial_name(name) is partial


PEOPLE = [
    # (text, suffix, value, status)
    ("To: FAIRBAIRN, Ewan\nRe: your first week at Oakmere\n", ".txt", "Ewan Fairbairn", ValueStatus.OK),
    ("Appointee: de la Fuente, Inés\nPost: Hydrologist\n", ".txt", "Inés de la Fuente", ValueStatus.OK),
    ("| Item | Detail |\n|---|---|\n| Appointee | MCALLISTER, Rory |\n| Post | Meter Reader |\n", ".md", "Rory McAllister", ValueStatus.OK),
    (
        "Ms. Stefania Di Marco\n12 Weir Lane\n\nDear Ms. Di Marco,\n\nWe are pleased to confirm your post.\n",
        ".txt",
        "Stefania Di Marco",
        ValueStatus.OK,
    ),
    ("Mr. Tobias Vandermeer\n3 Sluice Row\n\nDear Mr. Vandermeer,\nWelcome aboard.\n", ".txt", "Tobias Vandermeer", ValueStatus.OK),
    ("Dear Ms. Di Marco,\n\nWe are pleased to confirm your post.\n", ".txt", "Di Marco", ValueStatus.REVIEW),  # no full name anywhere
    ("Dear Mr. Vandermeer,\nWelcome aboard.\n", ".txt", "Vandermeer", ValueStatus.REVIEW),
]


@pytest.mark.parametrize(("text", "suffix", "value", "status"), PEOPLE, ids=[row[0].splitlines()[0] + f" [{row[2]}]" for row in PEOPLE])
def test_person_forms(tmp_path: Path, text: str, suffix: str, value: str, status: ValueStatus) -> None:
    item = run(tmp_path, text, [NEW_HIRE], suffix=suffix)["new_hire"]
    assert (item.value, item.status) == (value, status), item


def test_surname_alone_is_flagged_partial(tmp_path: Path) -> None:
    found = readings(tmp_path, "Ms. Di Marco, Meter Reader\n", NEW_HIRE)
    assert [(r.value, "partial_name" in r.flags) for r in found if r.value] == [("Di Marco", True)]


def test_surname_completion_needs_a_single_full_name(tmp_path: Path) -> None:
    # two people share the surname: "Mr. Di Marco" cannot be completed and stays a surname
    text = "cc: Stefania Di Marco, Luca Di Marco\n\nDear Mr. Di Marco,\nWelcome aboard.\n"
    item = run(tmp_path, text, [NEW_HIRE])["new_hire"]
    assert (item.value, item.status) == ("Di Marco", ValueStatus.REVIEW)


# --- listed values -----------------------------------------------------------------------


def vocabulary(values: list[str], distance: int = 2) -> Vocabulary:
    schema = make_schema(dict(DEPOT, constraints={"enum": values}, extract={"as": "choice", "cues": ["depot"], "fuzzy_distance": distance}))
    return Vocabulary(schema.fields[0].hints)


def test_near_miss_lists_every_value_within_reach() -> None:
    # "Oakmare" is one edit from both "Oakmere" and "Oakmore" (rapidfuzz Levenshtein)
    found = vocabulary(DEPOTS).near_miss("Oakmare")
    assert sorted(value for value, _, _ in found) == ["Oakmere Depot", "Oakmore Depot"]


def test_near_miss_leaves_out_values_beyond_the_distance() -> None:
    # "Fernhey" is one edit from "Fernley" and three from "Fernhill"
    assert [value for value, _, _ in vocabulary(DEPOTS).near_miss("Fernhey")] == ["Fernley Depot"]


CHOICES = [
    # (text, value, status, alternatives)
    ("Depot: Oakmare\n", None, ValueStatus.REVIEW, {"Oakmere Depot", "Oakmore Depot"}),  # either one, both offered
    ("Depot: Fernhey\n", "Fernley Depot", ValueStatus.REVIEW, set()),
    ("Depot: Fernhill\n", "Fernhill Depot", ValueStatus.OK, set()),  # the distinctive part of one value
    ("Depot: Kestrel Treatment (from March)\n", "Kestrel Treatment Works", ValueStatus.OK, set()),
    ("Base: Fernhill site\n", "Fernhill Depot", ValueStatus.OK, set()),
    ("Depot: Ashcombe\n", None, ValueStatus.REVIEW, {"Ashcombe Depot", "Ashcombe Works"}),  # two values share it
    ("Depot: Fernhill Depot\n", "Fernhill Depot", ValueStatus.OK, set()),
]


@pytest.mark.parametrize(("text", "value", "status", "offered"), CHOICES, ids=[row[0].strip() for row in CHOICES])
def test_choice_forms(tmp_path: Path, text: str, value: str | None, status: ValueStatus, offered: set[str]) -> None:
    item = run(tmp_path, text, [DEPOT])["depot"]
    assert item.status is status, item
    if value is not None:
        assert item.value == value
    else:
        assert item.value in offered
    shown = {item.value} | {alt.value for alt in item.alternatives} if offered else set()
    assert shown == offered


def test_distinctive_part_scores_below_the_full_value(tmp_path: Path) -> None:
    part = run(tmp_path, "Depot: Fernhill\n", [DEPOT])["depot"]
    full = run(tmp_path, "Depot: Fernhill Depot\n", [DEPOT])["depot"]
    assert part.value == full.value == "Fernhill Depot"
    assert part.confidence < full.confidence


def test_distinctive_part_is_for_labelled_values_only(tmp_path: Path) -> None:
    # "Fernhill" in running text, with no cue, is a place name, not the depot
    item = run(tmp_path, "The crew walked the Fernhill footpath on Tuesday.\n", [DEPOT])["depot"]
    assert item.value is None


def test_identifier_pattern_with_two_open_lengths_is_read_as_written(tmp_path: Path) -> None:
    # "[A-Z]+[0-9]+" could backtrack against itself in a loose form: only the written form
    # and its plain separator-free reading count
    field = dict(STAFF_REF, constraints={"pattern": "[A-Z]+[0-9]+"})
    assert [r.value for r in readings(tmp_path, "Staff ref: WU-20417\n", field)] == ["WU20417"]
    assert [r.value for r in readings(tmp_path, "Staff ref: WU 20417\n", field)] == []
