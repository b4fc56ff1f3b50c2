"""Workers take documents in chunks (so that NER can batch them); a fault still costs only
the document that caused it.

A folder of 20 demo documents with one worker gives chunks of 8, 6, 3, 1, 1 and 1, in the
order the file system lists the files.  The five copies of one document hang, crash, exit,
run out of memory or raise, so at least two of them sit in a chunk of several documents.
The parent blames a document when it knows which one the worker was on (a hang), and
otherwise runs every document of the chunk again alone, so that only the culprits fail.
Every other row equals the row of a run without the fault.  (Catalogue FI-10 and FI-11
(tests/CATALOGUE.md), with chunks.)
"""

from __future__ import annotations

import csv
import fnmatch
import os
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from structurize.workers import MAX_CHUNK
from structurize.write import unguard

from conftest import DEMO_DOCS, SCHEMAS

KIND = "offer_letter"
COPIES = 5  # 4 demo offer letters x 5 = 20 documents
CULPRIT = "c*_offer_kearney.docx"  # one copy in each fifth of the folder
FAULTS = [
    pytest.param("hang", "timeout", id="hang"),
    pytest.param("crash", "worker_crash", id="segfault"),
    pytest.param("exit", "worker_crash", id="exit"),
    pytest.param("memory", "memory_limit", id="memory"),
    pytest.param("raise", "extract_error", id="exception"),
]


def _read(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        rows = [{key: unguard(value) for key, value in row.items()} for row in csv.DictReader(handle)]
    for row in rows:
        row.pop("seconds", None)
    return rows


def _run(docs: Path, out: Path, fault: str | None) -> subprocess.Popen[str]:
    environment = dict(os.environ)
    if fault:
        environment.update(STRUCTURIZE_FAULT_INJECTION="1", STRUCTURIZE_FAULT=f"{fault}:{CULPRIT}")
    command = [
        sys.executable, "-m", "structurize", "extract", str(docs), "--schema", str(SCHEMAS / f"{KIND}.yaml"),
        "--out", str(out), "--no-ner", "--quiet", "--workers", "1", "--time-limit", "5", "--memory-limit", "512",
    ]
    return subprocess.Popen(command, env=environment, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


@pytest.fixture(scope="module")
def runs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    root = tmp_path_factory.mktemp("chunks")
    docs = root / "docs"
    docs.mkdir()
    for copy in range(COPIES):
        for path in sorted((DEMO_DOCS / KIND).iterdir()):
            shutil.copy(path, docs / f"c{copy}_{path.name}")
    started = {name: _run(docs, root / name, name if name != "baseline" else None) for name in ["baseline", *(p.values[0] for p in FAULTS)]}
    finished = {}
    for name, process in started.items():
        try:
            _, stderr = process.communicate(timeout=240)
        except subprocess.TimeoutExpired:
            process.kill()
            pytest.fail(f"the {name} run did not finish")
        finished[name] = (process.returncode, stderr)
    return {"root": root, "finished": finished, "documents": sorted(p.name for p in docs.iterdir())}


def culprits(documents: list[str]) -> set[str]:
    return {name for name in documents if fnmatch.fnmatchcase(name, CULPRIT)}


def test_the_folder_is_big_enough_for_chunks(runs: dict[str, Any]) -> None:
    assert len(runs["documents"]) >= 2 * MAX_CHUNK and len(culprits(runs["documents"])) == COPIES
    returncode, stderr = runs["finished"]["baseline"]
    assert returncode == 0 and stderr == ""


@pytest.mark.parametrize("fault, reason", FAULTS)
def test_a_fault_inside_a_chunk_fails_only_its_document(runs: dict[str, Any], fault: str, reason: str) -> None:
    returncode, stderr = runs["finished"][fault]
    assert returncode == 3, stderr
    bad = culprits(runs["documents"])
    lines = stderr.splitlines()
    assert len(lines) == COPIES and "Traceback" not in stderr, stderr
    assert sorted(line.split(": ")[1] for line in lines) == sorted(bad), stderr  # one line per culprit
    assert all(line.startswith(f"structurize: {line.split(': ')[1]}: {reason}: ") for line in lines), stderr
    documents = {row["document"]: row for row in _read(runs["root"] / fault / "documents.csv")}
    assert sorted(documents) == runs["documents"]
    assert {name: (row["status"], row["reason"]) for name, row in documents.items() if name in bad} == dict.fromkeys(bad, ("failed", reason))


@pytest.mark.parametrize("fault, reason", FAULTS)
@pytest.mark.parametrize("output", ["table.csv", "values.csv", "documents.csv"])
def test_the_rest_of_the_chunk_is_unchanged(runs: dict[str, Any], fault: str, reason: str, output: str) -> None:
    bad = culprits(runs["documents"])
    baseline = [row for row in _read(runs["root"] / "baseline" / output) if row["document"] not in bad]
    faulted = [row for row in _read(runs["root"] / fault / output) if row["document"] not in bad]
    assert len({row["document"] for row in baseline}) == len(runs["documents"]) - COPIES and faulted == baseline


def test_the_time_limit_counts_a_documents_whole_time(tmp_path: Path) -> None:
    """Reading and extracting one document share one time limit: 1.2 s at each of its two
    turns is over a limit of 2 s, though each turn alone is under it."""
    docs = tmp_path / "docs"
    docs.mkdir()
    for path in sorted((DEMO_DOCS / KIND).iterdir()):
        shutil.copy(path, docs / path.name)
    environment = dict(os.environ, STRUCTURIZE_FAULT_INJECTION="1", STRUCTURIZE_FAULT="slow:offer_kearney.docx",
                       STRUCTURIZE_FAULT_SECONDS="1.2")
    command = [
        sys.executable, "-m", "structurize", "extract", str(docs), "--schema", str(SCHEMAS / f"{KIND}.yaml"),
        "--out", str(tmp_path / "out"), "--no-ner", "--quiet", "--workers", "1", "--time-limit", "2",
    ]
    done = subprocess.run(command, env=environment, capture_output=True, text=True, timeout=120)
    assert done.returncode == 3, done.stderr
    assert done.stderr.splitlines() == ["structurize: offer_kearney.docx: timeout: reading and extraction took longer than 2 s"]
    documents = {row["document"]: row for row in _read(tmp_path / "out" / "documents.csv")}
    assert documents["offer_kearney.docx"]["sha256"] and documents["offer_kearney.docx"]["reader"] == "reader.docx.v1"
    assert all(row["status"] == "ok" for name, row in documents.items() if name != "offer_kearney.docx")
