"""The command line: arguments in, one library call, output and exit codes out."""

from __future__ import annotations

import csv
import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from structurize.cli import app
from structurize.score import score_path

from conftest import DEMO_DOCS, GOLDEN, SCHEMAS

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, [str(a) for a in args])


def read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return list(csv.DictReader(handle))


def test_cli_extract_writes_every_output(tmp_path: Path) -> None:
    result = invoke("extract", DEMO_DOCS / "offer_letter", "--schema", SCHEMAS / "offer_letter.yaml", "--out", tmp_path, "--no-ner")
    assert result.exit_code == 0, result.output
    assert "offer_letter: 4 documents (4 ok); values:" in result.output
    for name in ("table.csv", "values.csv", "documents.csv", "datapackage.json", "data_dictionary.md", "data_dictionary.csv"):
        assert (tmp_path / name).exists(), name
    rows = read_csv(tmp_path / "table.csv")
    assert [row["document"] for row in rows] == sorted(p.name for p in (DEMO_DOCS / "offer_letter").iterdir())
    assert list(rows[0])[:3] == ["document", "candidate_name", "job_title"]


def test_cli_extract_quiet_prints_nothing(tmp_path: Path) -> None:
    result = invoke("extract", DEMO_DOCS / "email", "--schema", SCHEMAS / "email.yaml", "--out", tmp_path, "--no-ner", "--quiet")
    assert result.exit_code == 0 and result.output == ""


def test_cli_extract_bad_documents_exit_3_and_still_appear(tmp_path: Path) -> None:
    inbox = tmp_path / "in"
    shutil.copytree(DEMO_DOCS / "email", inbox)
    (inbox / "empty.eml").write_bytes(b"")
    (inbox / "scan.pdf").write_bytes(b"")
    out = tmp_path / "out"
    result = invoke("extract", inbox, "--schema", SCHEMAS / "email.yaml", "--out", out, "--no-ner")
    assert result.exit_code == 3
    assert "structurize: empty.eml: empty_file: the file is empty" in result.output
    assert "structurize: scan.pdf: empty_file: the file is empty" in result.output
    documents = {row["document"]: row for row in read_csv(out / "documents.csv")}
    assert documents["empty.eml"]["status"] == "failed" and documents["empty.eml"]["reason"] == "empty_file"
    table = {row["document"] for row in read_csv(out / "table.csv")}
    assert {"empty.eml", "scan.pdf"} <= table
    values = [row for row in read_csv(out / "values.csv") if row["document"] == "scan.pdf"]
    assert values and all(row["status"] == "missing" and float(row["confidence"]) == 0 for row in values)


@pytest.mark.parametrize(
    "args, message",
    [
        (("extract", "no-such-folder", "--schema", SCHEMAS / "email.yaml", "--out", "x"), "structurize: no-such-folder: input not found"),
        (("extract", DEMO_DOCS / "email", "--schema", "missing.yaml", "--out", "x"), "structurize: missing.yaml: schema not found"),
        (("check-schema", "missing.yaml"), "structurize: schema error: missing.yaml: cannot read file"),
    ],
)
def test_cli_usage_errors_exit_2_with_one_line(args, message: str) -> None:
    result = invoke(*args)
    assert result.exit_code == 2
    assert result.output.strip() == message or result.output.strip().startswith(message)
    assert result.output.count("\n") == 1


def test_cli_unwritable_output_is_caught_before_reading(tmp_path: Path) -> None:
    blocker = tmp_path / "file"
    blocker.write_text("x")
    result = invoke("extract", DEMO_DOCS / "email", "--schema", SCHEMAS / "email.yaml", "--out", blocker / "out", "--no-ner")
    assert result.exit_code == 2 and "output folder is not writable" in result.output


def test_cli_check_schema(tmp_path: Path) -> None:
    ok = invoke("check-schema", SCHEMAS / "exit_interview.yaml")
    assert ok.exit_code == 0 and ok.output.startswith("exit_interview.yaml: ok, 7 fields")
    bad = tmp_path / "bad.yaml"
    bad.write_text("fields:\n  - name: x\n    extract: {as: persn}\n")
    result = invoke("check-schema", bad)
    assert result.exit_code == 2
    assert result.output.strip() == "structurize: schema error: bad.yaml: fields[0].extract.as (line 3): 'persn' is not a kind (did you mean 'person'?)"


def test_cli_schema_folder_runs_each_kind(tmp_path: Path) -> None:
    result = invoke("extract", DEMO_DOCS, "--schema", SCHEMAS, "--out", tmp_path, "--no-ner")
    assert result.exit_code == 0, result.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["email", "exit_interview", "offer_letter", "transfer_request"]


def test_cli_score_json_equals_library(tmp_path: Path) -> None:
    assert invoke("extract", DEMO_DOCS, "--schema", SCHEMAS, "--out", tmp_path, "--no-ner", "-q").exit_code == 0
    result = invoke("score", GOLDEN, tmp_path, "--json")
    assert result.exit_code == 0
    assert json.loads(result.output) == json.loads(json.dumps(score_path(GOLDEN, tmp_path).as_dict()))
    table = invoke("score", GOLDEN, tmp_path)
    assert "overall" in table.output and "review load" in table.output


@pytest.mark.parametrize(
    "args, words",
    [
        (["extract", "docs", "--schema", "s.yaml", "--out", "o", "--time-limit", "0"], "Invalid value for '--time-limit'"),
        (["extract", "docs", "--out", "o"], "Missing option '--schema'"),
        (["extract", "docs", "--schema", "s.yaml", "--out", "o", "--pdf-password", "x"], "No such option: --pdf-password"),
        (["bogus"], "No such command 'bogus'"),
    ],
)
def test_cli_usage_errors_are_one_line_with_exit_2(tmp_path: Path, args: list[str], words: str) -> None:
    # The console script itself (main), not typer's test runner: what a user sees.
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-m", "structurize", *args], cwd=tmp_path, capture_output=True, text=True, timeout=60)
    assert done.returncode == 2
    assert len(done.stderr.splitlines()) == 1, done.stderr
    assert done.stderr.startswith("structurize: ") and words in done.stderr and "--help" in done.stderr
    assert done.stdout == ""


def test_cli_help_still_works() -> None:
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-m", "structurize", "extract", "--help"], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0 and "--schema" in done.stdout
