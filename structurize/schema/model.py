"""The parsed target schema: a Table Schema plus validated extraction hints."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..patterns import UserPattern, compile_pattern

#: Value kinds a field's ``extract.as`` may name (the schema format: README, "The schema").
KINDS: tuple[str, ...] = (
    "person",
    "organization",
    "place",
    "date",
    "money",
    "job_title",
    "email",
    "phone",
    "identifier",
    "choice",
    "number",
    "flag",
    "text",
)

#: Table Schema types that can be extraction targets.
TYPES: tuple[str, ...] = ("string", "number", "integer", "date", "datetime", "boolean", "year", "any")

_TEXT_ONLY = frozenset({"string", "any"})
#: The Table Schema types each kind's values can be cast to (``validate.cast``).  A kind's
#: value is a name, an address or a phone number (text only), a calendar date (a date, or a
#: datetime at midnight; never a year: "2025-03-01" is not a year), an amount (a number, or a
#: whole amount for an integer; an amount is no year), a plain number (also a whole one or a
#: year), ``true``/``false`` (boolean only: a flag is no number), an identifier (text, or
#: digits read as a number), an enum value or the words after a cue (``choice``, ``text``:
#: cast like any cell, so every type).  ``string`` and ``any`` take every kind.
KIND_TYPES: dict[str, frozenset[str]] = {
    "person": _TEXT_ONLY,
    "organization": _TEXT_ONLY,
    "place": _TEXT_ONLY,
    "job_title": _TEXT_ONLY,
    "email": _TEXT_ONLY,
    "phone": _TEXT_ONLY,
    "date": _TEXT_ONLY | {"date", "datetime"},
    "money": _TEXT_ONLY | {"number", "integer"},
    "number": _TEXT_ONLY | {"number", "integer", "year"},
    "identifier": _TEXT_ONLY | {"number", "integer", "year"},
    "flag": _TEXT_ONLY | {"boolean"},
    "choice": frozenset(TYPES),
    "text": frozenset(TYPES),
}

DATE_ORDERS: tuple[str, ...] = ("MDY", "DMY", "YMD")

DEFAULT_REVIEW_BELOW = 0.8
#: Largest edit distance at which a word is still read as a misspelt choice alias.
DEFAULT_FUZZY_DISTANCE = 2


@dataclass(frozen=True)
class FieldHints:
    """The validated ``extract`` block of one field."""

    kind: str
    cues: tuple[str, ...] = ()
    #: choice fields: (canonical value, variants); the canonical value is a variant too.
    aliases: tuple[tuple[str, tuple[str, ...]], ...] = ()
    #: flag fields: variants read as true / as false.
    true_variants: tuple[str, ...] = ()
    false_variants: tuple[str, ...] = ()
    #: ``extract.pattern`` (or, for identifiers, ``constraints.pattern``); matched with a time limit.
    pattern: UserPattern | None = None
    fuzzy_distance: int = DEFAULT_FUZZY_DISTANCE


@dataclass(frozen=True)
class FieldSpec:
    """One Table Schema field with its hints.  ``descriptor`` is the user's field, verbatim."""

    name: str
    type: str
    title: str = ""
    description: str = ""
    format: str = "default"
    constraints: dict[str, Any] = field(default_factory=dict)
    missing_values: tuple[str, ...] | None = None
    true_values: tuple[str, ...] = ("true", "True", "TRUE", "1")
    false_values: tuple[str, ...] = ("false", "False", "FALSE", "0")
    hints: FieldHints = field(default_factory=lambda: FieldHints(kind="text"))
    descriptor: dict[str, Any] = field(default_factory=dict)

    @property
    def required(self) -> bool:
        return bool(self.constraints.get("required"))

    @property
    def enum(self) -> tuple[Any, ...] | None:
        values = self.constraints.get("enum")
        return tuple(values) if values is not None else None

    @property
    def pattern(self) -> UserPattern | None:
        """The whole-value ``constraints.pattern``, compiled (cached), matched with a time limit."""
        raw = self.constraints.get("pattern")
        return compile_pattern(raw) if raw else None


@dataclass(frozen=True)
class TargetSchema:
    """A loaded, validated schema.  ``descriptor`` is the user's file, verbatim."""

    name: str
    fields: tuple[FieldSpec, ...]
    source: str = ""
    title: str = ""
    description: str = ""
    date_order: str | None = None
    review_below: float = DEFAULT_REVIEW_BELOW
    time_limit: float | None = None  #: seconds per document (``extract.time_limit``)
    memory_limit: int | None = None  #: megabytes per worker (``extract.memory_limit``)
    missing_values: tuple[str, ...] = ("",)
    primary_key: tuple[str, ...] = ()
    descriptor: dict[str, Any] = field(default_factory=dict)

    def field(self, name: str) -> FieldSpec:
        for spec in self.fields:
            if spec.name == name:
                return spec
        raise KeyError(name)

    @property
    def field_names(self) -> tuple[str, ...]:
        return tuple(spec.name for spec in self.fields)
