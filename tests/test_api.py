"""The Python API that notebooks use (and the CLI uses too)."""

from __future__ import annotations

import datetime as dt

import pandas as pd

import structurize
from structurize import ExtractOptions, extract_document, extract_folder, load_schema

from conftest import DEMO_DOCS, SCHEMAS


def test_api_folder_returns_plain_data_and_frames() -> None:
    schema = load_schema(SCHEMAS / "exit_interview.yaml")
    result = extract_folder(DEMO_DOCS / "exit_interview", schema, options=ExtractOptions(ner=None))
    rows = result.rows()
    assert [row["document"] for row in rows] == sorted(p.name for p in (DEMO_DOCS / "exit_interview").iterdir())
    assert all(isinstance(value, str) for row in rows for value in row.values())
    table, values = result.to_frames()
    assert isinstance(table, pd.DataFrame) and list(table.columns) == ["document", *schema.field_names]
    assert {"document", "field", "value", "confidence", "status", "start", "end", "page", "snippet"} <= set(values.columns)
    assert len(values) == len(rows) * len(schema.fields)
    assert values["confidence"].between(0, 1).all()


def test_api_one_document_carries_spans_and_confidence() -> None:
    schema = load_schema(SCHEMAS / "offer_letter.yaml")
    path = DEMO_DOCS / "offer_letter" / "offer_dvorakova.txt"
    result = extract_document(path, schema, options=ExtractOptions(ner=None))
    assert result.status == "ok" and len(result.sha256) == 64
    start = result.value("start_date")
    assert isinstance(start.value, dt.date)
    text = path.read_text(encoding="utf-8")
    assert start.span is not None and text[start.span.start : start.span.end] in start.snippet


def test_api_exports() -> None:
    for name in structurize.__all__:
        assert hasattr(structurize, name), name


def test_run_summary_counts_and_problems(tmp_path) -> None:
    # the summaries the CLI prints come from one pass over the documents
    from structurize.api import extract_folder
    from conftest import RULES_ONLY, make_schema

    (tmp_path / "good.txt").write_text("Start date: 3 March 2025\n", encoding="utf-8")
    (tmp_path / "empty.txt").write_bytes(b"")
    schema = make_schema({"name": "start_date", "type": "date", "extract": {"as": "date", "cues": ["start date"]}})
    result = extract_folder(tmp_path, schema, options=RULES_ONLY)
    counts = result.counts()
    assert (counts["documents"], counts["read"], counts["not_read"]) == (2, 1, 1)
    assert counts["ok"] == 1
    assert result.status_counts() == {"ok": 1, "failed": 1}
    assert [(source, str(status), reason) for source, status, reason, _ in result.problems()] == [("empty.txt", "failed", "empty_file")]
