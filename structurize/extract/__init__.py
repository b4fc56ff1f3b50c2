"""Extractors: from a document's analysis to candidates for every schema field.

An extractor is a function ``(analysis, field) -> Iterator[Candidate]`` registered under a
versioned name with the value kinds it serves (``None`` for all kinds).  Plug-ins register
more through the ``structurize.extractors`` entry-point group.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass

from ..registry import Registry
from ..schema.model import FieldSpec, TargetSchema
from ..types import Candidate, Document
from .analysis import Analysis
from .ner import Entity

ExtractFn = Callable[[Analysis, FieldSpec], Iterator[Candidate]]


@dataclass(frozen=True)
class Extractor:
    name: str
    run: ExtractFn
    kinds: frozenset[str] | None = None  #: the value kinds it serves; None means all

    def serves(self, kind: str) -> bool:
        return self.kinds is None or kind in self.kinds


EXTRACTORS: Registry[Extractor] = Registry("extractor", "structurize.extractors")


def register_extractor(name: str, run: ExtractFn, kinds: tuple[str, ...] | None = None) -> None:
    EXTRACTORS.register(name, Extractor(name, run, frozenset(kinds) if kinds else None))


def register_builtin_extractors() -> None:
    from . import extractors as x

    register_extractor("label.v1", x.label_extractor)
    register_extractor("prose.v1", x.prose_extractor)
    register_extractor("header.v1", x.header_extractor, ("email", "person", "date", "text", "job_title"))
    register_extractor("dateline.v1", x.dateline_extractor, ("date",))
    register_extractor("role.v1", x.role_extractor, ("person",))
    register_extractor("scan.v1", x.scan_extractor, ("choice",))
    register_extractor("transition.v1", x.transition_extractor, ("choice",))
    register_extractor("title-transition.v1", x.title_transition_extractor, ("job_title",))
    register_extractor("subject.v1", x.subject_extractor, ("person",))
    register_extractor("pattern.v1", x.pattern_extractor, ("identifier", "email", "phone"))
    register_extractor("unclaimed-label.v1", x.unclaimed_label_extractor, tuple(sorted(x.UNCLAIMED_KINDS)))
    register_extractor("prose-synonym.v1", x.prose_synonym_extractor)
    register_extractor("prose-title.v1", x.prose_title_extractor, tuple(sorted(x.UNCLAIMED_KINDS)))
    register_extractor("unread.v1", x.unread_extractor)


def extract_candidates(
    doc: Document, schema: TargetSchema, entities: tuple[Entity, ...] = ()
) -> tuple[Analysis, dict[str, list[Candidate]]]:
    """Run every extractor that serves each field's kind; return candidates per field."""
    from .extractors import acting_for_alternatives, person_role_penalty

    analysis = Analysis(doc, schema, entities)
    found: dict[str, list[Candidate]] = {}
    extractors = [extractor for _, extractor in EXTRACTORS.items()]
    for spec in schema.fields:
        candidates: list[Candidate] = []
        for extractor in extractors:
            if extractor.serves(spec.hints.kind):
                candidates.extend(extractor.run(analysis, spec))
        if spec.hints.kind == "person":
            candidates = [acting_for_alternatives(analysis, person_role_penalty(analysis, spec, c)) for c in candidates]
        found[spec.name] = candidates
    return analysis, found
