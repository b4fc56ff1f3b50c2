"""Run settings in one object, and every default in one place."""

from __future__ import annotations

from dataclasses import dataclass

from .extract.ner import MODEL_PACKAGE

#: Suffixes read by default (the readers' registry may add more).
DEFAULT_SNIPPET_WIDTH = 40


@dataclass(frozen=True)
class ExtractOptions:
    """Settings for one extraction run.

    ``ner`` names the spaCy pipeline package, or is None to run on rules alone (tests,
    or a quick look at a folder).  ``csv_bom`` writes the CSV files with a UTF-8 byte-order
    mark so that Excel opens them as UTF-8 on double-click.
    """

    ner: str | None = MODEL_PACKAGE
    csv_bom: bool = True
    snippet_width: int = DEFAULT_SNIPPET_WIDTH
