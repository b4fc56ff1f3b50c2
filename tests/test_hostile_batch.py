"""Acceptance check of the "broken and hostile input" work: bad documents cost only themselves.

Catalogue E0 (a document-level failure never becomes a batch failure; nothing else is
lost) and FI-10 / FI-11 (worker crash, per-document timeout), in tests/CATALOGUE.md:

* a batch of the demo documents plus an empty file, an image-only PDF with no text layer
  and a truncated .docx gives exactly the same values for the good documents as the batch
  without the bad files; the three bad files are reported with clear reasons
  (documents.csv rows and one stderr line each), and the exit code is 3;
* a worker that hangs, crashes (SIGSEGV), exits or runs out of memory fails only its own
  document, with reason ``timeout`` / ``worker_crash`` / ``worker_crash`` /
  ``memory_limit``, and the rest of the batch is unchanged.

Everything runs through the command line with ``--no-ner``.
"""

from __future__ import annotations

import csv
import os
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from structurize.cli import app
from structurize.write import unguard

from conftest import DEMO_DOCS, SCHEMAS
from pdfmaker import make_pdf

runner = CliRunner()
KINDS = sorted(p.name for p in DEMO_DOCS.iterdir() if p.is_dir())
#: documents.csv columns that measure the run rather than describe the document.
TIMING_COLUMNS = ("seconds",)

#: (file, status, reason, words in the stderr note): the bad files added to offer_letter/.
BAD = [
    pytest.param("empty.txt", "failed", "empty_file", "the file is empty", id="E0-empty-file"),
    pytest.param("scan.pdf", "no_text_layer", "no_text_layer", "no text layer", id="P11-image-only-pdf"),
    pytest.param("truncated.docx", "failed", "not_a_zip", "truncated", id="D5-truncated-docx"),
]
BAD_KIND = "offer_letter"

#: (fault, document, reason): one worker fault per run, over offer_letter/ (FI-10, FI-11).
FAULTS = [
    pytest.param("hang", "offer_dvorakova.txt", "timeout", id="FI-11-hang"),
    pytest.param("crash", "offer_kearney.docx", "worker_crash", id="FI-10-segfault"),
    pytest.param("exit", "offer_ribeiro.pdf", "worker_crash", id="FI-10-exit"),
    pytest.param("memory", "offer_whitlock-reyes.html", "memory_limit", id="FI-10-memory"),
]
FAULT_TIME_LIMIT = "6"
FAULT_MEMORY_LIMIT = "512"


def read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return [{key: unguard(value) for key, value in row.items()} for row in csv.DictReader(handle)]


def rows(out: Path, name: str, documents: set[str] | None = None) -> list[dict[str, str]]:
    """The rows of one output file, without timing columns, optionally only for ``documents``."""
    found = read_csv(out / name)
    for row in found:
        for column in TIMING_COLUMNS:
            row.pop(column, None)
    return [row for row in found if documents is None or row["document"] in documents]


def _make_bad_files(folder: Path) -> None:
    (folder / "empty.txt").write_bytes(b"")
    make_pdf(folder / "scan.pdf", [None])  # one page holding only an image: a scan without OCR
    docx = (DEMO_DOCS / BAD_KIND / "offer_kearney.docx").read_bytes()
    (folder / "truncated.docx").write_bytes(docx[: len(docx) // 2])


def _fault_run(root: Path, fault: str, document: str) -> subprocess.Popen[str]:
    environment = {**os.environ, "STRUCTURIZE_FAULT_INJECTION": "1", "STRUCTURIZE_FAULT": f"{fault}:{document}"}
    command = [
        sys.executable, "-m", "structurize", "extract", str(DEMO_DOCS / BAD_KIND), "--schema", str(SCHEMAS / f"{BAD_KIND}.yaml"),
        "--out", str(root / fault), "--no-ner", "--quiet", "--workers", "2",
        "--time-limit", FAULT_TIME_LIMIT, "--memory-limit", FAULT_MEMORY_LIMIT,
    ]
    return subprocess.Popen(command, env=environment, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


@pytest.fixture(scope="module")
def batch(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    root = tmp_path_factory.mktemp("batch")
    # the worker-fault runs go on in the background while the two CLI runs below happen
    faults = {param.values[0]: _fault_run(root / "faults", param.values[0], param.values[1]) for param in FAULTS}
    good, mixed = root / "good", root / "mixed"
    shutil.copytree(DEMO_DOCS, good)
    shutil.copytree(DEMO_DOCS, mixed)
    _make_bad_files(mixed / BAD_KIND)
    runs = {}
    for name, folder in (("good", good), ("mixed", mixed)):
        runs[name] = runner.invoke(app, ["extract", str(folder), "--schema", str(SCHEMAS), "--out", str(root / f"out-{name}"), "--no-ner", "--quiet"])
    finished = {}
    for fault, process in faults.items():
        try:
            stdout, stderr = process.communicate(timeout=180)
        except subprocess.TimeoutExpired:
            process.kill()
            stdout, stderr = process.communicate()
            pytest.fail(f"the {fault} run did not finish (a hung batch)")
        finished[fault] = (process.returncode, stdout, stderr)
    return {"root": root, "runs": runs, "faults": finished}


def good_documents(kind: str) -> set[str]:
    return {p.name for p in (DEMO_DOCS / kind).iterdir() if p.is_file()}


# --- the bad files ------------------------------------------------------------------------------------------


def test_E0_the_batch_holds_a_dozen_good_documents() -> None:
    assert sum(len(good_documents(kind)) for kind in KINDS) >= 12


def test_E0_exit_codes(batch: dict[str, Any]) -> None:
    good, mixed = batch["runs"]["good"], batch["runs"]["mixed"]
    assert good.exit_code == 0, good.output
    assert good.stderr == ""
    assert mixed.exit_code == 3, mixed.output  # finished, but some documents could not be read


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("output", ["table.csv", "values.csv", "documents.csv"])
def test_E0_good_documents_get_exactly_the_same_values(batch: dict[str, Any], kind: str, output: str) -> None:
    root = batch["root"]
    names = good_documents(kind)
    alone = rows(root / "out-good" / kind, output)
    among_bad = rows(root / "out-mixed" / kind, output, names)
    assert alone and {row["document"] for row in alone} == names
    assert among_bad == alone


@pytest.mark.parametrize("name, status, reason, words", BAD)
def test_E0_bad_files_are_reported_in_documents_csv(batch: dict[str, Any], name: str, status: str, reason: str, words: str) -> None:
    out = batch["root"] / "out-mixed" / BAD_KIND
    documents = {row["document"]: row for row in rows(out, "documents.csv")}
    assert (documents[name]["status"], documents[name]["reason"]) == (status, reason)
    values = [row for row in rows(out, "values.csv") if row["document"] == name]
    assert values and all(row["status"] == "missing" and float(row["confidence"]) == 0 and row["value"] == "" for row in values)
    assert name in {row["document"] for row in rows(out, "table.csv")}  # still a row of the table


@pytest.mark.parametrize("name, status, reason, words", BAD)
def test_E0_bad_files_get_one_clear_stderr_line(batch: dict[str, Any], name: str, status: str, reason: str, words: str) -> None:
    lines = batch["runs"]["mixed"].stderr.splitlines()
    mine = [line for line in lines if line.startswith(f"structurize: {name}: ")]
    assert len(mine) == 1, lines
    prefix = f"structurize: {name}: {reason}: "
    assert mine[0].startswith(prefix) and words in mine[0] and len(mine[0]) > len(prefix) + 5


def test_E0_only_the_bad_files_are_on_stderr(batch: dict[str, Any]) -> None:
    assert len(batch["runs"]["mixed"].stderr.splitlines()) == len(BAD)


# --- worker faults --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("fault, document, reason", FAULTS)
def test_FI_a_worker_fault_fails_only_its_document(batch: dict[str, Any], fault: str, document: str, reason: str) -> None:
    returncode, stdout, stderr = batch["faults"][fault]
    assert returncode == 3, stderr
    assert stderr.splitlines() == [line for line in stderr.splitlines() if line.startswith(f"structurize: {document}: {reason}: ")]
    assert len(stderr.splitlines()) == 1, stderr
    out = batch["root"] / "faults" / fault
    documents = {row["document"]: row for row in rows(out, "documents.csv")}
    assert (documents[document]["status"], documents[document]["reason"]) == ("failed", reason)
    assert all(row["status"] == "ok" for name, row in documents.items() if name != document)


@pytest.mark.parametrize("fault, document, reason", FAULTS)
@pytest.mark.parametrize("output", ["table.csv", "values.csv"])
def test_FI_the_rest_of_the_batch_is_unchanged(batch: dict[str, Any], fault: str, document: str, reason: str, output: str) -> None:
    others = good_documents(BAD_KIND) - {document}
    baseline = rows(batch["root"] / "out-good" / BAD_KIND, output, others)
    faulted = rows(batch["root"] / "faults" / fault, output, others)
    assert baseline and faulted == baseline


def test_FI_documents_csv_of_the_others_is_unchanged(batch: dict[str, Any]) -> None:
    for param in FAULTS:
        fault, document = param.values[0], param.values[1]
        others = good_documents(BAD_KIND) - {document}
        baseline = rows(batch["root"] / "out-good" / BAD_KIND, "documents.csv", others)
        assert rows(batch["root"] / "faults" / fault, "documents.csv", others) == baseline, fault
