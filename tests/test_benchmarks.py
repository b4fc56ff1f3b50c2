"""The benchmarks still run: their quick modes, end to end, in a fresh process.

Nothing here looks at a time or a ratio's value (speed is measured in ``benchmarks/``,
never asserted); it checks that every figure the benchmark promises is printed.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import needs_model

BENCHMARKS = Path(__file__).resolve().parent.parent / "benchmarks"
NUMBER = r"[0-9]+(?:\.[0-9]+)?"

pytestmark = [pytest.mark.model, needs_model]


def run(script: str, *args: str) -> str:
    done = subprocess.run([sys.executable, str(BENCHMARKS / script), *args], capture_output=True, text=True, timeout=900)
    assert done.returncode == 0, done.stderr[-3000:]
    return done.stdout


def test_throughput_quick_prints_every_figure() -> None:
    output = run("throughput.py", "--quick")
    for pattern in (
        rf"\(a\) NER floor.* {NUMBER} docs/s .* {NUMBER} words/s",
        rf"\(b\) tokenizer floor.* {NUMBER} docs/s",
        rf"\(c\) structurize, 1 worker .* first result after {NUMBER} s",
        rf"\(d\) structurize, \d+ workers .* first result after {NUMBER} s",
        rf"ratio c/a \(target <= 1.5\): {NUMBER}",
        rf"speed-up c/d with \d+ workers .*: {NUMBER}",
        rf"\(e\) PDF, pypdfium2 text \+ word boxes +{NUMBER} ms/page",
        rf"PDF ratio structurize / pypdfium2 text \+ word boxes .*: {NUMBER}",
        rf"peak RSS at N = +60: parent +{NUMBER} MB .* largest worker +{NUMBER} MB",
        rf"RSS ratio N=240 / N=60 .*: parent {NUMBER}, workers {NUMBER}",
    ):
        assert re.search(pattern, output), (pattern, output)
    workers = re.search(rf"peak RSS at N = +240: .* largest worker +({NUMBER}) MB", output)
    assert workers and float(workers.group(1)) > 0, "the workers reported no peak RSS"


def test_incremental_quick_reuses_everything() -> None:
    output = run("incremental.py", "--quick")
    assert re.search(r"first run .* 40 extracted, 0 reused", output), output
    assert re.search(r"no-op run .* 0 extracted, 40 reused", output), output
    assert re.search(rf"ratio no-op / first: {NUMBER}", output), output
