"""The spaCy adapter: long texts go through NER in pieces; a text NER fails on fails alone."""

from __future__ import annotations

from pathlib import Path

import pytest

from structurize import load_schema
from structurize.api import extract_documents
from structurize.extract import ner as ner_module
from structurize.extract.ner import Entity, NoNer, _pieces
from structurize.options import ExtractOptions
from structurize.types import DocStatus

from conftest import DEMO_DOCS, SCHEMAS, make_schema, needs_model


@pytest.mark.parametrize(
    "text, size",
    [
        ("", 10),
        ("short line", 100),
        ("line one\nline two\nline three\n" * 40, 100),
        ("no line breaks at all " * 60, 100),
        ("x" * 450, 100),  # nowhere to cut: hard cuts
    ],
)
def test_pieces_cover_the_text_exactly(monkeypatch: pytest.MonkeyPatch, text: str, size: int) -> None:
    monkeypatch.setattr(ner_module, "PIECE_CHARS", size)
    pieces = list(_pieces(text))
    assert "".join(piece for _, piece in pieces) == text
    assert all(text[offset : offset + len(piece)] == piece for offset, piece in pieces)
    assert all(len(piece) <= size for _, piece in pieces)
    if "\n" in text:
        assert all(piece.endswith("\n") for _, piece in pieces[:-1])  # cut after a line break


@needs_model
@pytest.mark.model
def test_long_text_entities_keep_their_offsets(monkeypatch: pytest.MonkeyPatch) -> None:
    model = ner_module.load_model()
    monkeypatch.setattr(model.nlp, "max_length", 3_000)  # spaCy refuses longer texts in one piece
    monkeypatch.setattr(ner_module, "PIECE_CHARS", 1_000)
    filler = "The clinic opens at eight and the rota is on the board by the staff room.\n"
    text = "Dear Priya Lindahl,\n" + filler * 60 + "Kind regards,\nMarcus Oyelaran\n"
    assert len(text) > 3_000
    entities = model.entities(text)
    assert all(text[e.start : e.end] == e.text for e in entities)
    people = {e.text for e in entities if e.label == "PERSON"}
    assert "Marcus Oyelaran" in people  # found in the last piece, at its offset in the whole text
    (single,) = list(model.pipe([text]))
    assert single == entities


class _FailingNer(NoNer):
    """NER that raises on any text holding a marker: in a batch, and alone."""

    def pipe(self, texts, batch_size: int = 16):  # type: ignore[no-untyped-def]
        texts = list(texts)
        if any("Quillfeather" in text for text in texts):
            raise ValueError("cannot process")
        yield from (() for _ in texts)

    def entities(self, text: str) -> tuple[Entity, ...]:
        if "Quillfeather" in text:
            raise ValueError("cannot process")
        return ()


def test_a_text_ner_fails_on_fails_only_its_document(tmp_path: Path) -> None:
    bad = tmp_path / "bad.txt"
    bad.write_text("Employee: Quillfeather Smith\n", encoding="utf-8")
    good = DEMO_DOCS / "offer_letter" / "offer_dvorakova.txt"
    schema = make_schema({"name": "employee", "type": "string", "extract": {"as": "text", "cues": ["employee"]}})
    results = extract_documents([(good, "good.txt"), (bad, "bad.txt")], schema, options=ExtractOptions(ner=None), ner=_FailingNer())
    by_source = {result.source: result for result in results}
    assert by_source["good.txt"].status is DocStatus.OK
    assert (by_source["bad.txt"].status, by_source["bad.txt"].reason) == (DocStatus.FAILED, "extract_error")
    assert "Quillfeather" not in by_source["bad.txt"].note  # messages never quote a document


@needs_model
@pytest.mark.model
def test_batched_extraction_equals_one_at_a_time() -> None:
    schema = load_schema(SCHEMAS / "offer_letter.yaml")
    tasks = [(path, path.name) for path in sorted((DEMO_DOCS / "offer_letter").iterdir())]
    options = ExtractOptions()  # with the NER pipeline: nlp.pipe over the batch against one text at a time
    together = extract_documents(tasks, schema, options=options)
    alone = [extract_documents([task], schema, options=options)[0] for task in tasks]

    def without_timing(result):  # type: ignore[no-untyped-def]
        return result.source, result.status, result.values

    assert [without_timing(r) for r in together] == [without_timing(r) for r in alone]
