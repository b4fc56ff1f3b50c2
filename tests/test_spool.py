"""The result spool: a run's results on disk, in path order, with the table-wide checks."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from structurize.api import ExtractionResult
from structurize.spool import ResultSpool
from structurize.types import DocStatus, DocumentResult, FieldValue, ValueStatus
from structurize.validate import check_unique, flag_unusual_gaps
from structurize.write import write_outputs

from conftest import make_schema

SCHEMA = make_schema(
    {"name": "id", "type": "string", "constraints": {"unique": True}},
    {"name": "site", "type": "string"},
)


def _result(source: str, ident: str | None, site: str | None, status: DocStatus = DocStatus.OK) -> DocumentResult:
    def value(name: str, text: str | None) -> FieldValue:
        return FieldValue(name, text, 0.9, ValueStatus.OK if text else ValueStatus.MISSING)

    return DocumentResult(source, "", status, values=(value("id", ident), value("site", site)))


# arrival order (as workers finish), not path order; X1 twice; one site gap in a batch of six
BATCH = [
    _result("c.txt", "X3", "North"),
    _result("a.txt", "X1", "North"),
    _result("f.txt", "X6", None),
    _result("b.txt", "X1", "South"),
    _result("e.txt", "X5", "South"),
    _result("d.txt", "X4", "North"),
    _result("g.pdf", None, None, DocStatus.NO_TEXT_LAYER),
]


def test_spool_gives_path_order_with_the_same_checks_as_the_list_functions() -> None:
    spool = ResultSpool(SCHEMA, BATCH)
    expected = flag_unusual_gaps(SCHEMA, check_unique(SCHEMA, sorted(BATCH, key=lambda r: r.source)))
    assert list(spool) == expected
    assert [r.source for r in spool] == ["a.txt", "b.txt", "c.txt", "d.txt", "e.txt", "f.txt", "g.pdf"]
    statuses = {r.source: (r.value("id").status, r.value("site").status) for r in spool}
    assert statuses["a.txt"][0] is statuses["b.txt"][0] is ValueStatus.INVALID  # X1 repeats
    assert statuses["f.txt"][1] is ValueStatus.REVIEW  # 5 of 6 readable documents have a site
    assert statuses["g.pdf"] == (ValueStatus.MISSING, ValueStatus.MISSING)  # unreadable: not a gap


@pytest.mark.parametrize("index, source", [(0, "a.txt"), (3, "d.txt"), (-1, "g.pdf")])
def test_spool_indexes_like_a_sequence(index: int, source: str) -> None:
    spool = ResultSpool(SCHEMA, BATCH)
    assert len(spool) == len(BATCH)
    assert spool[index].source == source
    assert [r.source for r in spool[1:3]] == ["b.txt", "c.txt"]
    with pytest.raises(IndexError):
        spool[len(BATCH)]


def test_spool_refuses_a_source_twice() -> None:
    spool = ResultSpool(SCHEMA, BATCH[:1])
    with pytest.raises(ValueError, match="already in the spool"):
        spool.add(BATCH[0])


def test_outputs_from_a_spool_equal_outputs_from_a_tuple(tmp_path: Path) -> None:
    checked = tuple(flag_unusual_gaps(SCHEMA, check_unique(SCHEMA, sorted(BATCH, key=lambda r: r.source))))
    write_outputs(ExtractionResult(SCHEMA, ResultSpool(SCHEMA, BATCH)), tmp_path / "spool")
    write_outputs(ExtractionResult(SCHEMA, checked), tmp_path / "tuple")
    for name in ("table.csv", "values.csv", "documents.csv", "data_dictionary.csv", "data_dictionary.md", "datapackage.json"):
        assert (tmp_path / "spool" / name).read_bytes() == (tmp_path / "tuple" / name).read_bytes(), name
    with (tmp_path / "spool" / "table.csv").open(encoding="utf-8-sig", newline="") as handle:  # stdlib csv reads it back
        rows = list(csv.DictReader(handle))
    assert [row["document"] for row in rows] == sorted(r.source for r in BATCH)
