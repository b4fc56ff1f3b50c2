"""Resolution: how candidates combine into one value, a confidence and a status."""

from __future__ import annotations

import pytest

from structurize.resolve import resolve_field
from structurize.types import Candidate, Span, ValueStatus

from conftest import make_schema

SPEC = make_schema({"name": "site", "type": "string"}).field("site")


def cand(value, score, start=0, extractor="label.v1", flags=()):
    return Candidate("site", value, str(value), Span(start, start + 3), extractor, score, flags=frozenset(flags))


def resolve(candidates):
    return resolve_field(SPEC, candidates, review_below=0.8, cues_seen=True)


@pytest.mark.parametrize(
    "candidates, value, status",
    [
        ([cand("A", 0.92)], "A", ValueStatus.OK),
        ([cand("A", 0.6)], "A", ValueStatus.REVIEW),
        ([cand("A", 0.7), cand("A", 0.7, start=10, extractor="prose.v1")], "A", ValueStatus.OK),
        ([cand("A", 0.92), cand("B", 0.9, start=10)], "A", ValueStatus.REVIEW),
        ([cand("A", 0.92, flags={"superseded"}), cand("B", 0.9, start=10)], "B", ValueStatus.OK),
        ([cand("A", 0.92), cand("B", 0.7, start=10, flags={"revised"})], "B", ValueStatus.REVIEW),
        ([cand("A", 0.92, flags={"near_miss"})], "A", ValueStatus.REVIEW),
        ([cand(None, 0.9, flags={"stated_missing"})], None, ValueStatus.MISSING),
        ([], None, ValueStatus.MISSING),
    ],
    ids=["one strong", "one weak", "agreement", "close rival", "superseded", "later revision", "near miss", "stated missing", "nothing"],
)
def test_resolve_status(candidates, value, status) -> None:
    item = resolve(candidates)
    assert item.value == value and item.status is status
    assert 0.0 <= item.confidence <= 1.0


def test_resolve_agreement_raises_and_rivals_lower_confidence() -> None:
    alone = resolve([cand("A", 0.7)]).confidence
    agreed = resolve([cand("A", 0.7), cand("A", 0.7, start=9, extractor="prose.v1")]).confidence
    contested = resolve([cand("A", 0.7), cand("B", 0.6, start=9)]).confidence
    assert contested < alone < agreed


def test_resolve_same_evidence_counts_once() -> None:
    once = resolve([cand("A", 0.7)]).confidence
    twice = resolve([cand("A", 0.7), cand("A", 0.7)]).confidence
    assert once == twice


def test_resolve_weak_cueless_evidence_is_no_rival() -> None:
    cued = resolve([cand("A", 0.9)]).confidence
    with_noise = resolve([cand("A", 0.9), cand("B", 0.3, start=9, extractor="scan.v1", flags={"fallback"})])
    assert with_noise.confidence == cued
    assert [alt.value for alt in with_noise.alternatives] == ["B"]


def test_resolve_flags_lower_confidence() -> None:
    plain = resolve([cand("A", 0.9)]).confidence
    ambiguous = resolve([cand("A", 0.9, flags={"ambiguous_order_unconfigured"})]).confidence
    assert ambiguous < 0.8 <= plain
