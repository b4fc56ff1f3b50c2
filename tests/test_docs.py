"""The docs say what the code does: commands, extension keys, extractors, cautions."""

from __future__ import annotations

import re

import pytest

from structurize.cli import app
from structurize.extract import EXTRACTORS
from structurize.readers import READERS
from structurize.schema.load import FIELD_EXTRACT_KEYS, SCHEMA_EXTRACT_KEYS

from conftest import ROOT

README = (ROOT / "README.md").read_text(encoding="utf-8")
DEVELOPERS = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")


def block(name: str) -> str:
    match = re.search(rf"<!-- {name} -->\s*```sh\n(.+?)\n```\s*<!-- /{name} -->", README, re.S)
    assert match, name
    return match.group(1).strip()


@pytest.mark.parametrize("name", ["demo-command", "test-command"])
def test_docs_readme_commands_set_up_from_nothing(name: str) -> None:
    command = block(name)
    assert "\n" not in command
    assert command.startswith("python3 -m venv .venv && .venv/bin/pip install ")


def test_docs_readme_first_paragraph_states_the_job() -> None:
    first = README.split("\n\n")[1]
    for words in ("HR documents", "table", "schema", "confidence", "span", "offline"):
        assert words in first


def test_docs_readme_cautions() -> None:
    flat = " ".join(README.replace("\n> ", "\n").split())
    for words in ("personal data", "machine-extracted", "Review the values before anyone decides", "privacy and employment law", "licensed legal and HR practice"):
        assert words in flat


@pytest.mark.parametrize("command", [c.name for c in app.registered_commands])
def test_docs_every_command_is_in_the_readme(command: str) -> None:
    assert f"`structurize {command}" in README


@pytest.mark.parametrize("key", sorted(set(FIELD_EXTRACT_KEYS) | set(SCHEMA_EXTRACT_KEYS)))
def test_docs_every_extract_key_is_documented(key: str) -> None:
    assert f"| `{key}` |" in DEVELOPERS


@pytest.mark.parametrize("name", EXTRACTORS.names() + READERS.names())
def test_docs_every_component_is_documented(name: str) -> None:
    assert f"`{name}`" in DEVELOPERS
