"""The built-in registries hold exactly these names (a change here must be deliberate)."""

from __future__ import annotations

from structurize.extract import EXTRACTORS
from structurize.readers import READERS, SUFFIXES

EXPECTED_READERS = ["reader.docx.v1", "reader.email.v1", "reader.html.v1", "reader.markdown.v1", "reader.pdf.v1", "reader.text.v1"]
EXPECTED_EXTRACTORS = [
    "dateline.v1", "header.v1", "label.v1", "pattern.v1", "prose-synonym.v1", "prose-title.v1", "prose.v1", "role.v1", "scan.v1", "subject.v1",
    "title-transition.v1", "transition.v1", "unclaimed-label.v1", "unread.v1",
]


def test_registry_readers() -> None:
    assert READERS.names() == EXPECTED_READERS
    assert {suffix: SUFFIXES[suffix] for suffix in (".txt", ".md", ".html", ".eml", ".docx", ".pdf")} == {
        ".txt": "reader.text.v1",
        ".md": "reader.markdown.v1",
        ".html": "reader.html.v1",
        ".eml": "reader.email.v1",
        ".docx": "reader.docx.v1",
        ".pdf": "reader.pdf.v1",
    }


def test_registry_extractors() -> None:
    assert EXTRACTORS.names() == EXPECTED_EXTRACTORS
