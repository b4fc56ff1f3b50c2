"""Accuracy and calibration on a labelled folder, with and without the NER pipeline.

    python benchmarks/accuracy.py DOCS SCHEMAS GOLD

DOCS holds one subfolder per kind, SCHEMAS one <kind>.yaml per kind, GOLD one <kind>.csv per
kind (the table.csv layout).  For each configuration it prints accuracy, review load, the
share of wrong cells flagged, and the calibration of the confidence scores: the expected
calibration error over ten equal-width bins (Guo et al. 2017: ECE = Σ |B|/n · |acc(B) −
conf(B)|) and the Brier score.  The rules-only run is the baseline the NER run is compared
with.
"""

from __future__ import annotations

import csv
import sys
import tempfile
import time
from pathlib import Path

from structurize import ExtractOptions, extract_folder, load_schema, write_outputs
from structurize.score import normalise, score_path


def cells(gold_dir: Path, out_dir: Path) -> list[tuple[float, bool]]:
    """(confidence, correct) for every gold cell."""
    pairs = []
    for gold in sorted(gold_dir.glob("*.csv")):
        if gold.stem == "alternates":
            continue
        values = {}
        with (out_dir / gold.stem / "values.csv").open(encoding="utf-8-sig", newline="") as handle:
            for row in csv.DictReader(handle):
                values[(row["document"], row["field"])] = (float(row["confidence"] or 0), row["value"])
        with gold.open(encoding="utf-8-sig", newline="") as handle:
            for row in csv.DictReader(handle):
                for field, expected in row.items():
                    if field == "document":
                        continue
                    confidence, got = values.get((row["document"], field), (0.0, ""))
                    pairs.append((confidence, normalise(got) == normalise(expected or "")))
    return pairs


def calibration(pairs: list[tuple[float, bool]], bins: int = 10) -> tuple[float, float]:
    n = len(pairs)
    ece = 0.0
    for index in range(bins):
        low, high = index / bins, (index + 1) / bins
        members = [(c, ok) for c, ok in pairs if (low < c <= high) or (index == 0 and c == 0)]
        if members:
            accuracy = sum(ok for _, ok in members) / len(members)
            confidence = sum(c for c, _ in members) / len(members)
            ece += len(members) / n * abs(accuracy - confidence)
    brier = sum((c - ok) ** 2 for c, ok in pairs) / n
    return ece, brier


def run(docs: Path, schemas: Path, gold: Path, options: ExtractOptions) -> dict[str, float]:
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        started = time.perf_counter()
        for schema_file in sorted(schemas.glob("*.yaml")):
            folder = docs / schema_file.stem
            if folder.is_dir():
                write_outputs(extract_folder(folder, load_schema(schema_file), options=options), out / schema_file.stem)
        seconds = time.perf_counter() - started
        overall = score_path(gold, out).overall
        ece, brier = calibration(cells(gold, out))
    return {
        "accuracy": overall.accuracy,
        "review_load": overall.review_load,
        "errors_flagged": overall.error_recall,
        "ece": ece,
        "brier": brier,
        "seconds": seconds,
    }


def main(argv: list[str]) -> int:
    if len(argv) != 3:
        print(__doc__)
        return 2
    docs, schemas, gold = (Path(arg) for arg in argv)
    baseline = run(docs, schemas, gold, ExtractOptions(ner=None))
    full = run(docs, schemas, gold, ExtractOptions())
    print(f"{'metric':16} {'rules only':>11} {'rules + NER':>12} {'ratio':>7}")
    for key in baseline:
        ratio = full[key] / baseline[key] if baseline[key] else float("nan")
        print(f"{key:16} {baseline[key]:11.3f} {full[key]:12.3f} {ratio:7.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
