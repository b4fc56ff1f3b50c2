"""End to end with the real NER pipeline: the demo folder, and the development corpus.

The corpus test is a ratchet: its floors sit just below the level reached, and only ever
move up, so that a change that loses accuracy cannot land quietly.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from structurize.api import extract_folder
from structurize.schema import load_schema
from structurize.score import score_path
from structurize.write import write_outputs

from conftest import CORPUS, DEMO_DOCS, GOLDEN, SCHEMAS, needs_model

KINDS = ["email", "exit_interview", "offer_letter", "transfer_request"]

#: Reached on the development corpus (52 documents, 351 cells), see DEVELOPERS.md.
CORPUS_FLOOR = {"accuracy": 0.99, "error_recall": 0.95, "review_load_max": 0.15}
DEMO_FLOOR = {"accuracy": 0.98, "review_load_max": 0.19}


def run_kinds(docs: Path, schemas: Path, out: Path) -> None:
    for kind in KINDS:
        result = extract_folder(docs / kind, load_schema(schemas / f"{kind}.yaml"))
        assert all(doc.status.readable for doc in result.documents), [d.source for d in result.documents if not d.status.readable]
        write_outputs(result, out / kind)


@needs_model
@pytest.mark.model
def test_end_to_end_demo_folder(tmp_path: Path) -> None:
    run_kinds(DEMO_DOCS, SCHEMAS, tmp_path)
    overall = score_path(GOLDEN, tmp_path).overall
    assert overall.cells >= 90  # 14 documents × their fields
    assert overall.accuracy >= DEMO_FLOOR["accuracy"]
    assert overall.review_load <= DEMO_FLOOR["review_load_max"]


@needs_model
@pytest.mark.model
@pytest.mark.corpus
@pytest.mark.skipif(not (CORPUS / "docs").exists(), reason="the development corpus (../shared/corpus) is absent")
def test_end_to_end_corpus_ratchet(tmp_path: Path) -> None:
    run_kinds(CORPUS / "docs", CORPUS / "schemas", tmp_path)
    score = score_path(CORPUS / "gold", tmp_path)
    overall = score.overall
    assert overall.cells == 351
    assert overall.accuracy >= CORPUS_FLOOR["accuracy"], score.mistakes
    assert overall.error_recall >= CORPUS_FLOOR["error_recall"], [m for m in score.mistakes if not m.flagged]
    assert overall.review_load <= CORPUS_FLOOR["review_load_max"]
