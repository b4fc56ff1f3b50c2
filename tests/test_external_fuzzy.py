"""External checks for the near-miss matcher: Levenshtein distance reference values.

Source: rapidfuzz documentation (Levenshtein distance), measured with rapidfuzz 3.14.6:
kitten→sitting 3, saturday→sunday 3, flaw→lawn 2.  ``rapidfuzz.distance.Levenshtein.distance``
is the reference; structurize's ``Vocabulary.near_miss`` must accept a variant within the field's
configured ``extract.fuzzy_distance`` and reject one beyond it.
"""

from __future__ import annotations

import pytest
from rapidfuzz.distance import Levenshtein

from structurize.extract.vocab import Vocabulary
from structurize.schema import schema_from_descriptor


def _vocabulary(value: str, distance: int) -> Vocabulary:
    schema = schema_from_descriptor(
        {
            "name": "fuzzy",
            "fields": [
                {
                    "name": "choice",
                    "type": "string",
                    "constraints": {"enum": [value]},
                    "extract": {"as": "choice", "fuzzy_distance": distance},
                }
            ],
        }
    )
    return Vocabulary(schema.fields[0].hints)


PAIRS = [
    # rapidfuzz documentation (Levenshtein distance); measured with rapidfuzz 3.14.6
    pytest.param("kitten", "sitting", 3, id="kitten-sitting"),
    pytest.param("flaw", "lawn", 2, id="flaw-lawn"),
    pytest.param("saturday", "sunday", 3, id="saturday-sunday"),
]


@pytest.mark.parametrize(("written", "value", "distance"), PAIRS)
def test_levenshtein_reference_values(written, value, distance):
    # the reference distances (measured with rapidfuzz 3.14.6), both directions
    assert Levenshtein.distance(written, value) == distance
    assert Levenshtein.distance(value, written) == distance


def test_levenshtein_reference_kitten_editops():
    # measured with rapidfuzz 3.14.6: kitten→sitting is replace 0, replace 4, insert 6
    ops = [(op.tag, op.src_pos) for op in Levenshtein.editops("kitten", "sitting")]
    assert ops == [("replace", 0), ("replace", 4), ("insert", 6)]


NEAR_MISS_TABLE = [
    # (written, schema value, configured fuzzy_distance, accepted?) — accepted iff the
    # reference distance (rapidfuzz Levenshtein.distance) is within the configured distance, whatever
    # the length of the value (no hidden cap below the configured fuzzy_distance)
    pytest.param("kitten", "sitting", 1, False, id="kitten-sitting-d1"),
    pytest.param("kitten", "sitting", 2, False, id="kitten-sitting-d2"),
    pytest.param("kitten", "sitting", 3, True, id="kitten-sitting-d3"),
    pytest.param("flaw", "lawn", 1, False, id="flaw-lawn-d1"),
    pytest.param("flaw", "lawn", 2, True, id="flaw-lawn-d2"),
    pytest.param("flaw", "lawn", 3, True, id="flaw-lawn-d3"),
    pytest.param("sunday", "saturday", 1, False, id="sunday-saturday-d1"),
    pytest.param("sunday", "saturday", 2, False, id="sunday-saturday-d2"),
    pytest.param("sunday", "saturday", 3, True, id="sunday-saturday-d3"),
]


@pytest.mark.parametrize(("written", "value", "configured", "accepted"), NEAR_MISS_TABLE)
def test_vocabulary_near_miss_reference_pairs(written, value, configured, accepted):
    assert (Levenshtein.distance(written, value) <= configured) is accepted  # the reference
    found = _vocabulary(value, configured).near_miss(written)
    assert [item[0] for item in found] == ([value] if accepted else [])


SITE = "Juniper Wharf Emergency Hospital"  # a long value, so only the configured limit applies

LONG_VALUE_TABLE = [
    # written forms at a known reference distance (checked with rapidfuzz below), tried at
    # configured distances 1..3: accepted iff distance <= fuzzy_distance
    pytest.param("Junipr Wharf Emergency Hospital", 1, 1, True, id="d1-at-1"),
    pytest.param("Junipr Wharf Emergncy Hospital", 2, 1, False, id="d2-at-1"),
    pytest.param("Junipr Wharf Emergncy Hospital", 2, 2, True, id="d2-at-2"),
    pytest.param("Junipr Whrf Emergncy Hospital", 3, 2, False, id="d3-at-2"),
    pytest.param("Junipr Whrf Emergncy Hospital", 3, 3, True, id="d3-at-3"),
    pytest.param("Junipr Whrf Emergncy Hospitl", 4, 3, False, id="d4-at-3"),
]


@pytest.mark.parametrize(("written", "distance", "configured", "accepted"), LONG_VALUE_TABLE)
def test_vocabulary_near_miss_configured_distance(written, distance, configured, accepted):
    assert Levenshtein.distance(written.casefold(), SITE.casefold()) == distance  # the reference
    found = _vocabulary(SITE, configured).near_miss(written)
    assert [item[0] for item in found] == ([SITE] if accepted else [])
    if accepted:
        assert 0 < found[0][2] <= 1


@pytest.mark.parametrize(("written", "value"), [("kitten", "sitting"), ("Junipr Wharf Emergency Hospital", SITE)])
def test_vocabulary_near_miss_distance_zero_is_off(written, value):
    # extract.fuzzy_distance 0 turns near misses off entirely
    assert _vocabulary(value, 0).near_miss(written) == []
