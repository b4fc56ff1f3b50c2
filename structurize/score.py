"""Compare an output with a hand-labelled gold table (the ``table.csv`` layout).

Every gold cell counts, empty ones included: an empty gold cell is right only when the
output is empty too.  Comparison is exact after normalisation: dates as ISO dates,
numbers numerically (24.60 = 24.6), text with Unicode NFKC, case folding, one kind of dash
and collapsed spaces.  A cell also counts as right when its value is listed for that
(document, field) in an alternates file (columns ``document, field, value``).

Reported: accuracy per field and overall; precision and recall on filled values; the
review load (share of cells flagged: status ``review`` or ``invalid``, or confidence below
``review_below``); and the error recall of review (share of wrong cells that were flagged).
"""

from __future__ import annotations

import csv
import datetime as dt
import json
from collections import defaultdict
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation
from pathlib import Path

from .errors import UsageError
from .extract.text import fold
from .write import PACKAGE_FILE, TABLE_FILE, VALUES_FILE, unguard


@dataclass
class FieldScore:
    cells: int = 0
    correct: int = 0
    gold_filled: int = 0
    output_filled: int = 0
    filled_correct: int = 0
    flagged: int = 0
    wrong: int = 0
    wrong_flagged: int = 0

    def add(self, other: FieldScore) -> None:
        for name in self.__dataclass_fields__:
            setattr(self, name, getattr(self, name) + getattr(other, name))

    @property
    def accuracy(self) -> float:
        return self.correct / self.cells if self.cells else 0.0

    @property
    def precision(self) -> float:
        return self.filled_correct / self.output_filled if self.output_filled else 0.0

    @property
    def recall(self) -> float:
        return self.filled_correct / self.gold_filled if self.gold_filled else 0.0

    @property
    def review_load(self) -> float:
        return self.flagged / self.cells if self.cells else 0.0

    @property
    def error_recall(self) -> float:
        return self.wrong_flagged / self.wrong if self.wrong else 1.0


@dataclass
class Mistake:
    kind: str
    document: str
    field: str
    gold: str
    output: str
    flagged: bool


@dataclass
class Score:
    fields: dict[str, FieldScore] = field(default_factory=dict)
    kinds: dict[str, FieldScore] = field(default_factory=dict)
    mistakes: list[Mistake] = field(default_factory=list)

    @property
    def overall(self) -> FieldScore:
        total = FieldScore()
        for item in self.kinds.values():
            total.add(item)
        return total

    def as_dict(self) -> dict[str, object]:
        def numbers(item: FieldScore) -> dict[str, float | int]:
            return {
                "cells": item.cells,
                "accuracy": round(item.accuracy, 4),
                "precision": round(item.precision, 4),
                "recall": round(item.recall, 4),
                "review_load": round(item.review_load, 4),
                "error_recall": round(item.error_recall, 4),
                "wrong": item.wrong,
                "flagged": item.flagged,
            }

        return {
            "overall": numbers(self.overall),
            "kinds": {name: numbers(item) for name, item in self.kinds.items()},
            "fields": {name: numbers(item) for name, item in self.fields.items()},
            "mistakes": [m.__dict__ for m in self.mistakes],
        }


def normalise(value: str) -> str:
    text = unguard(value.strip())
    if not text:
        return ""
    try:
        return "date:" + dt.date.fromisoformat(text).isoformat()
    except ValueError:
        pass
    try:
        number = Decimal(text.replace(",", ""))
        if number.is_finite():
            return "num:" + format(number.normalize(), "f")
    except InvalidOperation:
        pass
    lowered = text.lower()
    if lowered in ("true", "false"):
        return "bool:" + lowered
    return "text:" + fold(text)


def _read_csv(path: Path) -> list[dict[str, str]]:
    try:
        with path.open(encoding="utf-8-sig", newline="") as handle:
            return list(csv.DictReader(handle))
    except OSError as exc:
        raise UsageError(f"cannot read {path}: {exc.strerror or exc}") from None


def load_alternates(path: Path | None) -> dict[tuple[str, str], set[str]]:
    out: dict[tuple[str, str], set[str]] = defaultdict(set)
    if path is None or not path.exists():
        return out
    for row in _read_csv(path):
        out[(row.get("document", ""), row.get("field", ""))].add(normalise(row.get("value", "")))
    return out


def _review_below(out_dir: Path, default: float) -> float:
    package = out_dir / PACKAGE_FILE
    try:
        descriptor = json.loads(package.read_text(encoding="utf-8"))
        extract = descriptor["resources"][0]["schema"].get("extract") or {}
        return float(extract.get("review_below", default))
    except (OSError, KeyError, ValueError, IndexError, TypeError):
        return default


def score_table(gold_path: Path, out_dir: Path, *, kind: str = "", alternates: dict[tuple[str, str], set[str]] | None = None,
                review_below: float = 0.8, into: Score | None = None) -> Score:
    """Score one gold table against one output folder (adds into ``into`` when given)."""
    score = into or Score()
    alternates = alternates or {}
    kind = kind or gold_path.stem
    threshold = _review_below(out_dir, review_below)
    gold_rows = _read_csv(gold_path)
    if not gold_rows:
        return score
    table_path = out_dir / TABLE_FILE
    if not table_path.exists():
        raise UsageError(f"no {TABLE_FILE} in {out_dir}")
    output = {row["document"]: row for row in _read_csv(table_path)}
    flags: dict[tuple[str, str], bool] = {}
    values_path = out_dir / VALUES_FILE
    if values_path.exists():
        for row in _read_csv(values_path):
            try:
                low = float(row.get("confidence") or 0) < threshold
            except ValueError:
                low = True
            flags[(row["document"], row["field"])] = row.get("status") in ("review", "invalid") or low
    fields = [name for name in gold_rows[0] if name != "document"]
    kind_score = score.kinds.setdefault(kind, FieldScore())
    for gold in gold_rows:
        document = gold["document"]
        produced = output.get(document, {})
        for name in fields:
            expected = normalise(gold.get(name) or "")
            got = normalise(produced.get(name) or "")
            right = got == expected or (got in alternates.get((document, name), set()))
            flagged = flags.get((document, name), True)
            cell = FieldScore(cells=1, correct=int(right), gold_filled=int(bool(expected)), output_filled=int(bool(got)),
                              filled_correct=int(right and bool(got)), flagged=int(flagged), wrong=int(not right),
                              wrong_flagged=int(not right and flagged))
            score.fields.setdefault(f"{kind}.{name}", FieldScore()).add(cell)
            kind_score.add(cell)
            if not right:
                score.mistakes.append(Mistake(kind, document, name, gold.get(name) or "", produced.get(name) or "", flagged))
    return score


def score_path(gold: str | Path, out: str | Path, *, alternates_path: str | Path | None = None, review_below: float = 0.8) -> Score:
    """Score a gold file against an output folder, or a gold folder against an output folder
    of per-kind subfolders (``gold/<kind>.csv`` ↔ ``out/<kind>/table.csv``)."""
    gold = Path(gold)
    out = Path(out)
    if gold.is_dir():
        alternates = load_alternates(Path(alternates_path) if alternates_path else gold / "alternates.csv")
        score = Score()
        tables = sorted(p for p in gold.glob("*.csv") if p.stem != "alternates")
        if not tables:
            raise UsageError(f"no gold tables (*.csv) in {gold}")
        for table in tables:
            score_table(table, out / table.stem, kind=table.stem, alternates=alternates, review_below=review_below, into=score)
        return score
    if not gold.exists():
        raise UsageError(f"gold table not found: {gold}")
    alternates = load_alternates(Path(alternates_path) if alternates_path else gold.parent / "alternates.csv")
    return score_table(gold, out, alternates=alternates, review_below=review_below)
