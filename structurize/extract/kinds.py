"""Read a value of a given kind out of a stretch of text.

``read(analysis, spec, start, end)`` returns the readings of ``spec``'s kind found in
``text[start:end]``, in text order, each with its own span, a quality in 0..1 and flags.
The label, prose and fallback extractors all use these readers; they differ only in where
they look and how much they trust the place.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field
from decimal import Decimal
from functools import lru_cache
from typing import Any

from .. import patterns
from ..schema.model import FieldSpec
from ..types import Alternative, Span
from .analysis import Analysis, Person
from .money import period_in
from .text import TITLE_HEADS, fold, is_partial_name, leading_name, normalise_name

_STATED_MISSING = re.compile(
    r"^\W*(?:n/?a\b|none\b|nil\b|tbd\b|tbc\b|t\.b\.[cd]\.|pending\b|unknown\b|undecided\b|awaiting\b|"
    r"not\s+(?:yet\s+)?(?:known|decided|available|provided|stated|applicable|given|on\s+file|confirmed|"
    r"on\s+the\b|recorded|listed|included)|to\s+be\s+(?:confirmed|decided|determined|advised|agreed)|"
    r"\?+(?:\s|$)|[-–—]+\s*$|_{3,}|to\s+follow\b|see\s+below\b)",
    re.IGNORECASE,
)
_PENDING = re.compile(
    r"\b(?:pending|awaiting|not yet (?:approved|signed|given|received)|to be (?:signed|approved|confirmed)|tbc|tbd|outstanding)\b",
    re.IGNORECASE,
)
#: Words that mark an amount as some other payment than the one a money field asks for.
_MONEY_EXTRA = re.compile(
    r"\b(?:bonus(?:es)?|premiums?|differentials?|allowances?|stipends?|sign-on|signing|relocation|reimburse\w*|"
    r"additional|extra|overtime|incentives?|commissions?|fees?|expenses|per diem|uplift|on-call|one-off|lump sum)\b",
    re.IGNORECASE,
)
_EMAIL = re.compile(r"(?<![\w.+-])[\w.+-]+@[\w-]+(?:\.[\w-]+)+(?![\w-])")
_PHONE = re.compile(r"(?<![\w+])(?:\+\d{1,3}[\s.-]?)?(?:\(\d{2,4}\)[\s.-]?)?\d{3}[\s.-]\d{4}(?:[\s.-]\d{2,4})?(?!\d)|(?<![\w+])\d{3}[\s.-]\d{3}[\s.-]\d{4}(?!\d)")
_NUMBER = re.compile(r"(?<![\w.])[-+]?\d{1,3}(?:,\d{3})+(?:\.\d+)?(?![\w])|(?<![\w.])[-+]?\d+(?:\.\d+)?(?![\w])")
_COMPOUND = re.compile(r"[A-Za-z0-9]+(?:[-./][A-Za-z0-9]+)*")
_ID_SEPARATORS = re.compile(r"[-./ ]")
_TITLE_WORD = re.compile(r"[A-Z][\w'’&-]*(?:\.(?=\w))?|[IVX]{1,4}\b|&|of|and|for|the|(?:\([^)]{1,30}\))")
_DATE_LIKE = re.compile(r"^\W*\d{1,4}[/.-]\d{1,2}")
_TITLE_LINKS = {"of", "and", "for", "&", "the"}


@dataclass(frozen=True)
class Reading:
    value: Any
    start: int
    end: int
    quality: float
    flags: frozenset[str] = frozenset()
    facets: tuple[tuple[str, str], ...] = ()
    alternatives: tuple[Alternative, ...] = ()
    evidence: tuple[str, ...] = field(default_factory=tuple)


Reader = Callable[[Analysis, FieldSpec, int, int], list[Reading]]


def stated_missing(an: Analysis, start: int, end: int) -> Reading | None:
    """A value that says it is unknown or pending ("TBD", "not on file", "PENDING")."""
    text = an.text[start:end]
    stripped = text.strip(" *_")
    match = _STATED_MISSING.match(stripped)
    if match:
        offset = start + (len(text) - len(text.lstrip(" *_")))
        return Reading(None, offset, min(end, offset + max(1, match.end())), 0.9, frozenset({"stated_missing"}))
    return None


def read(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    reader = READERS.get(spec.hints.kind, read_text)
    return reader(an, spec, start, end)


# --- people, organisations, places ---------------------------------------------------


def read_person(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    text = an.text
    out = []
    segment = text[start:end]
    lead = len(segment) - len(segment.lstrip(" *_\"'([")) if segment else 0
    if an.first_person(segment.strip(" .,;")[:6].split(" ")[0] if segment.strip() else ""):
        out.append(Reading(None, start, start + lead + 1, 0.8, frozenset({"first_person"})))
        return out
    found = leading_name(segment[lead:], start + lead)  # also "REED, Samira" → "Samira Reed"
    reading = _person_reading(an, found) if found is not None else None
    if reading is not None:
        if _PENDING.search(an.text[reading.end : end]):
            # "Final approval – D. Achterberg: pending": named, but has not acted yet
            alternative = Alternative(reading.value, reading.quality * 0.5, Span(reading.start, reading.end))
            return [Reading(None, reading.start, end, 0.85, frozenset({"stated_missing", "pending"}), alternatives=(alternative,),
                            evidence=("marked as pending",))]
        out.append(reading)
    for person in an.ner_people:
        if start <= person.start < end and (found is None or person.start >= found[1]):
            out.append(ner_person_reading(an, person))
    if not out:
        missing = stated_missing(an, start, end)
        if missing is not None:
            out.append(missing)
    return out


def not_a_person(an: Analysis, name: str) -> bool:
    """A name-shaped phrase that is one of the schema's listed values (a site, a department)."""
    return any(vocabulary.find(name, loose=False) for vocabulary in an.vocabularies.values() if vocabulary.kind == "choice")


def _person_reading(an: Analysis, found: tuple[int, int, str]) -> Reading | None:
    start, end, name = found
    if not_a_person(an, name):
        return None
    flags: set[str] = set()
    evidence = []
    quality = 0.9
    if is_partial_name(name):  # "Walsh", "Mr. De Luca", "E. Walsh": completed from the document if possible
        full = an.complete_name(name)
        if full is None:
            flags.add("partial_name")
            quality = 0.55
        else:
            evidence.append(f"completed from {name!r}")
            name = full
    if an.ner_overlaps(start, end):
        quality = min(1.0, quality + 0.08)
        evidence.append("ner PERSON agrees")
    elif any(e.label in ("GPE", "LOC", "FAC") and e.start <= start and end <= e.end for e in an.entities):
        quality *= 0.8
        evidence.append("ner calls it a place")
    return Reading(name, start, end, quality, frozenset(flags), evidence=tuple(evidence))


def ner_person_reading(an: Analysis, person: Person) -> Reading:
    """A PERSON entity, completed to a full name when the document holds one; a surname or
    given name alone stays flagged ``partial_name``."""
    full = an.full_name(person.name)
    if is_partial_name(full):
        return Reading(full, person.start, person.end, 0.6, frozenset({"partial_name"}), evidence=("ner PERSON", "no full name found"))
    return Reading(full, person.start, person.end, 0.8, frozenset(), evidence=("ner PERSON",))


def person_flags(name: str) -> frozenset[str]:
    """``partial_name`` for a name that is not a full name ("De Luca", "E. Walsh")."""
    return frozenset({"partial_name"}) if is_partial_name(name) else frozenset()


def read_entity(label: str) -> Reader:
    def reader(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
        labels = {"ORG": ("ORG",), "PLACE": ("GPE", "LOC", "FAC")}[label]
        out = []
        for entity in an.entities:
            if entity.label in labels and start <= entity.start < end:
                out.append(Reading(entity.text, entity.start, entity.end, 0.85, evidence=(f"ner {entity.label}",)))
        if not out:
            segment = an.text[start:end]
            piece = re.split(r"[,;(|\n]|\s[-–—]\s", segment, maxsplit=1)[0].strip(" *_")
            if piece and piece[0].isupper() and len(piece.split()) <= 6:
                offset = start + segment.find(piece)
                out.append(Reading(piece, offset, offset + len(piece), 0.7))
        return out or _missing_list(an, start, end)

    return reader


# --- dates, money, numbers ---------------------------------------------------------------


def read_date(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    out = []
    for mention in an.dates:
        if start <= mention.start < end and mention.value is not None:
            flags = set(mention.flags)
            state = an.revision(mention.start, kind="date")
            if state:
                flags.add(state)
            out.append(Reading(mention.value, mention.start, mention.end, 1.0, frozenset(flags)))
    return out or _missing_list(an, start, end)


def read_money(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    out = []
    label_period = period_in(an.text[max(0, start - 40) : start])
    cue_words = {word for cue in spec.hints.cues for word in cue.lower().split()}
    for mention in an.money:
        if start <= mention.start < end:
            flags = set(mention.flags)  # ambiguous_separator, no_currency (money.py)
            quality = 1.0 if mention.currency else 0.85
            line = an.line_of(mention.start)
            before = re.split(r"[.;!?]\s|\|", an.text[max(line.start, mention.start - 45) : mention.start])[-1]
            after = re.split(r"[.;!?,]\s|\|", an.text[mention.end : min(line.end, mention.end + 25)])[0]
            context = before + " " + after
            extra = {m.group().lower() for m in _MONEY_EXTRA.finditer(context)} - cue_words
            if extra:  # "a $600 tool allowance", "an additional $1.00/hr": not the amount asked for
                flags.add("other_payment")
                quality *= 0.35
            state = an.revision(mention.start, kind="money")
            if state:
                flags.add(state)
            period = mention.period or label_period
            facets = (("period", period), ("period_from", "amount" if mention.period else "context")) if period else ()
            if mention.currency:
                facets += (("currency", mention.currency),)
            out.append(Reading(mention.amount, mention.start, mention.end, quality, frozenset(flags), facets, evidence=mention.notes))
    return out or _missing_list(an, start, end)


def read_number(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    out = []
    for match in _NUMBER.finditer(an.text, start, end):
        value = Decimal(match.group().replace(",", ""))
        out.append(Reading(value, match.start(), match.end(), 0.85))
    return out or _missing_list(an, start, end)


# --- vocabularies ----------------------------------------------------------------------------


def read_vocab(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    vocabulary = an.vocabularies[spec.name]
    mentions = vocabulary.find(an.text, start, end)
    out = []
    kind = spec.hints.kind
    party = an.memo_header_value(start) if kind == "choice" else None
    if party is not None:
        # "From: Ana Ruiz, Hilltop Branch": a memo's sender or recipient, not the record's
        # site; a listed value names one only when it opens the line ("From: Hilltop Branch
        # (night shift)") or is most of it
        raw = an.text[party.start : party.end]
        value = raw.strip(" *_.")
        opening = party.start + len(raw) - len(raw.lstrip(" *_"))
        inside = [m for m in mentions if party.start <= m.start < party.end]
        if not any(m.start == opening for m in inside) and sum(m.end - m.start for m in inside) < 0.6 * len(value):
            return []
    person = an.person_at(an.text[start:end], start) if kind == "choice" else None
    about_person = person is not None and len(person.name.split()) >= 2
    for mention in mentions:
        if mention.ticked is False:
            continue
        value: Any = mention.value
        flags = set()
        quality = 1.0 if not mention.loose else 0.75
        if about_person:
            quality *= 0.3  # "Gustavo Lima, HR Generalist (Tamsin Flats)": the site of a person
        if mention.ticked:
            flags.add("ticked")
        if mention.negated:
            if kind == "flag":
                value = "false" if value == "true" else "true"
                flags.add("negation")
                quality = 0.8
            else:
                flags.add("negated")
                quality = 0.0
        if kind == "flag":
            value = value == "true"
        out.append(Reading(value, mention.start, mention.end, quality, frozenset(flags), evidence=(f"variant {mention.variant!r}",)))
    if kind == "flag":
        negated = _under_negated_label(an, vocabulary, start, end, out)
        if negated is not None:
            return negated
    if not out and kind == "choice":
        part = _distinctive_reading(an, vocabulary, start, end)
        if part is not None:
            out.append(part)
    if not out:
        segment = an.text[start:end]
        words = segment.strip(" *_.").split()
        probe = " ".join(words[:4])
        if probe:
            misses = vocabulary.near_miss(probe)
            if not misses and len(words) > 1:
                misses = vocabulary.near_miss(" ".join(words[:2])) or vocabulary.near_miss(words[0])
            if misses:
                value, variant, score = misses[0]
                # every listed value within reach is an alternative a reviewer may pick
                alternatives = tuple(Alternative(v if kind != "flag" else v == "true", round(s, 3)) for v, _, s in misses[1:])
                offset = start + segment.find(words[0])
                final: Any = value if kind != "flag" else value == "true"
                out.append(
                    Reading(final, offset, offset + len(probe), 0.7 * score, frozenset({"near_miss"}), alternatives=alternatives,
                            evidence=(f"near miss of {variant!r}",))
                )
    return out or _missing_list(an, start, end)


def _under_negated_label(an: Analysis, vocabulary: Any, start: int, end: int, readings: list[Reading]) -> list[Reading] | None:
    """The value of a label that itself states the flag's negative value ("Not eligible for
    rehire: a safety violation", "Ineligible for rehire: yes"): false, whatever follows it
    (a reason, a date, a tick or a yes).  A "no" under it is a double negative nobody should
    guess at, an empty or pending value says nothing, and a label listing both options
    ("Eligible / Not eligible") states neither.  None when ``start:end`` is not the value of
    such a label (the readings stand)."""
    pair = an.pair_with_value(start)
    if pair is None or end > pair.value_span.end:
        return None
    label = pair.label_span
    mentions = vocabulary.find(an.text, label.start, label.end, loose=False)
    states_false = [m for m in mentions if (m.value == "true") == m.negated]
    if not states_false or len(states_false) < len(mentions):
        return None
    if any(r.value is False for r in readings) or stated_missing(an, start, end) is not None:
        return []
    if not readings and not re.search(r"[^\W_]|\[[xX✓✔]\]|[☒☑✓✔]", an.text[start:end]):
        return []
    mention = states_false[0]
    return [Reading(False, mention.start, mention.end, 0.95, frozenset({"negated_label"}),
                    evidence=(f"the label {an.text[label.start:label.end]!r} states the negative value",))]


#: Where a labelled value ends: "Hilltop (from May)", "Hilltop, east wing", "Hilltop – temporary".
_VALUE_END = re.compile(r"[,;(|\n]|\s[-–—]\s")


def _distinctive_reading(an: Analysis, vocabulary: Any, start: int, end: int) -> Reading | None:
    """A value written as the distinctive part of one listed value ("Hilltop" for "Hilltop
    Branch"): that value, at a slightly lower quality; a part two values share ("Hilltop"
    for "Hilltop Branch" and "Hilltop Depot") goes to review with the others as alternatives."""
    segment = an.text[start:end]
    piece = _VALUE_END.split(segment, maxsplit=1)[0]
    stripped = piece.strip(" *_.")
    if not stripped or len(stripped.split()) > 4:
        return None
    values = vocabulary.by_distinctive_part(stripped)
    if not values:
        return None
    offset = start + segment.find(stripped)
    evidence = (f"distinctive part of {values[0]!r}",)
    if len(values) == 1:
        return Reading(values[0], offset, offset + len(stripped), 0.9, evidence=evidence)
    alternatives = tuple(Alternative(value, 0.5) for value in values[1:])
    return Reading(values[0], offset, offset + len(stripped), 0.5, frozenset({"near_miss"}), alternatives=alternatives,
                   evidence=(f"shared by {len(values)} listed values",))


# --- identifiers, emails, phones, text ----------------------------------------------------


def read_identifier(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    pattern = spec.hints.pattern or spec.pattern
    if pattern is None:
        return read_text(an, spec, start, end)
    budget = patterns.budget_for(an)
    shape = id_shape(pattern.pattern)
    try:
        if shape is not None:
            out = _shaped_identifiers(an.text, start, end, pattern, shape, budget)
        else:
            out = []
            for match in _COMPOUND.finditer(an.text, start, end):
                raw = match.group()
                value = _identifier_value(raw, pattern, budget)
                if value is not None:
                    flags = frozenset({"separators_normalised"}) if value != raw else frozenset()
                    out.append(Reading(value, match.start(), match.end(), 1.0, flags))
    except patterns.PatternTimeout:
        # a catastrophic user pattern (catalogue S3): no candidate from it in this
        # document; the timeout is recorded for the document's ``pattern_timeout`` warning
        return _missing_list(an, start, end)
    return out or _missing_list(an, start, end)


def _identifier_value(raw: str, pattern: patterns.UserPattern, budget: patterns.Budget) -> str | None:
    """``raw`` (or it without separators, upper-cased, dashed) if it matches; raises PatternTimeout."""
    fullmatch = budget.fullmatch
    if fullmatch(pattern, raw):
        return raw
    bare = _ID_SEPARATORS.sub("", raw)
    if bare != raw and fullmatch(pattern, bare):
        return bare
    upper = bare.upper()
    if upper != bare and fullmatch(pattern, upper) and any(ch.isdigit() for ch in upper):
        return upper
    dashed = _ID_SEPARATORS.sub("-", raw)
    if dashed != raw and fullmatch(pattern, dashed):
        return dashed
    return None


# An identifier pattern made of literal parts, character classes and separators ("LB-[0-9]{4}",
# "TV[0-9]{5}", "[A-Z]{2}[0-9]{4,5}") is read in the forms people write it in: with a space,
# a hyphen, an en or em dash (with or without spaces), a slash, a dot or nothing between
# its parts, and in either letter case; the value is then written in the pattern's own form.
_SEPARATOR_CHARS = "-/. _"
_LOOSE_SEPARATOR = r"(?:[ \t\u00a0]?[-‐‑‒–—―/.][ \t\u00a0]?|[ \t\u00a0])"
_DASH_CHARS = "-‐‑‒–—―/."


@dataclass(frozen=True)
class IdPart:
    kind: str  #: ``literal``, ``class`` or ``separator``
    source: str  #: regex source of a class with its quantifier; the text of a literal or separator
    letters: bool = False  #: can hold letters
    digits: bool = False  #: can hold digits
    case: str = ""  #: ``upper`` / ``lower`` for a class of capitals / small letters only
    fixed: bool = True  #: holds a fixed number of characters


@dataclass(frozen=True)
class IdShape:
    parts: tuple[IdPart, ...]
    loose: re.Pattern[str]


def _parse_id_pattern(source: str) -> list[tuple[str, str, str]] | None:
    r"""``source`` as ``(kind, text, quantifier)`` atoms, or None when it holds anything but
    literal characters, classes, ``\d``/``\w``/``\s`` and quantifiers (groups, alternation ...)."""
    if source.startswith("^"):
        source = source[1:]
    if source.endswith("$") and not source.endswith("\\$"):
        source = source[:-1]
    atoms: list[tuple[str, str, str]] = []
    index = 0
    while index < len(source):
        ch = source[index]
        if ch == "[":
            close = index + 1
            if close < len(source) and source[close] == "^":
                return None
            if close < len(source) and source[close] == "]":
                close += 1
            while close < len(source) and source[close] != "]":
                close += 2 if source[close] == "\\" else 1
            if close >= len(source):
                return None
            atoms.append(("class", source[index : close + 1], ""))
            index = close + 1
        elif ch == "\\":
            if index + 1 >= len(source):
                return None
            nxt = source[index + 1]
            if nxt in "dw":
                atoms.append(("class", "\\" + nxt, ""))
            elif nxt == "s":
                atoms.append(("char", " ", ""))
            elif not nxt.isalnum():
                atoms.append(("char", nxt, ""))
            else:
                return None
            index += 2
        elif ch in "{*+?":
            if not atoms or atoms[-1][2]:
                return None
            if ch == "{":
                close = source.find("}", index)
                if close < 0 or not re.fullmatch(r"\{\d+(?:,\d*)?\}", source[index : close + 1]):
                    return None
                quantifier = source[index : close + 1]
                index = close + 1
            else:
                quantifier = ch
                index += 1
            kind, text, _ = atoms[-1]
            atoms[-1] = (kind, text, quantifier)
        elif ch in "()|.^$":
            return None
        else:
            atoms.append(("char", ch, ""))
            index += 1
    return atoms


@lru_cache(maxsize=256)
def id_shape(source: str) -> IdShape | None:
    """The parts of an identifier pattern and a loose regex finding its written forms, or
    None when the pattern's literal parts and separators cannot be read off it."""
    atoms = _parse_id_pattern(source)
    if not atoms:
        return None
    parts: list[IdPart] = []
    for kind, text, quantifier in atoms:
        if kind == "char" and text in _SEPARATOR_CHARS and quantifier in ("", "?"):
            parts.append(IdPart("separator", text))  # "-" and "-?" alike: written as "-"
        elif kind == "char" and not quantifier:
            if parts and parts[-1].kind == "literal":
                last = parts[-1]
                parts[-1] = IdPart("literal", last.source + text, last.letters or text.isalpha(), last.digits or text.isdigit())
            else:
                parts.append(IdPart("literal", text, text.isalpha(), text.isdigit()))
        else:
            body = re.escape(text) if kind == "char" else text
            if quantifier in ("+", "*"):
                quantifier = "{1,40}" if quantifier == "+" else "{0,40}"  # identifiers are short
            try:
                compiled = re.compile(body)
            except re.error:
                return None
            upper, lower, digit = (bool(compiled.fullmatch(c)) for c in ("A", "a", "0"))
            case = "upper" if upper and not lower else "lower" if lower and not upper else ""
            fixed = not quantifier or bool(re.fullmatch(r"\{\d+\}", quantifier))
            parts.append(IdPart("class", body + quantifier, upper or lower, digit, case, fixed=fixed))
    if not any(part.kind != "separator" for part in parts) or len(parts) > 12:
        return None
    if sum(1 for part in parts if not part.fixed) > 1:
        return None  # two parts of varying length could backtrack against each other: read as written only
    pieces: list[str] = []
    previous: IdPart | None = None
    for index, part in enumerate(parts):
        if part.kind == "separator":
            pieces.append(_LOOSE_SEPARATOR + "?")
            previous = part
            continue
        if previous is not None and previous.kind != "separator" and _kinds_differ(previous, part):
            pieces.append(_LOOSE_SEPARATOR + "?")  # "TV 30992" for "TV[0-9]{5}"
        if part.kind == "literal":
            pieces.append(f"(?P<p{index}>(?i:{re.escape(part.source)}))")
        else:
            pieces.append(f"(?P<p{index}>(?i:{part.source}))" if part.case else f"(?P<p{index}>{part.source})")
        previous = part
    first = next(part for part in parts if part.kind != "separator")
    last = next(part for part in reversed(parts) if part.kind != "separator")
    dashes = re.escape(_DASH_CHARS)
    left = rf"(?<!\w)(?<!\w[{dashes}])" + (r"(?<!\d[ \t\u00a0])" if first.digits else "")
    right = rf"(?!\w)(?![{dashes}]\w)" + (r"(?![ \t\u00a0]\d)" if last.digits else "")
    try:
        loose = re.compile(left + "".join(pieces) + right)
    except re.error:
        return None
    return IdShape(tuple(parts), loose)


def _kinds_differ(a: IdPart, b: IdPart) -> bool:
    """Two neighbouring parts that a separator may be written between: letters, then digits."""
    return (a.letters and not a.digits and b.digits and not b.letters) or (a.digits and not a.letters and b.letters and not b.digits)


def _shaped_identifiers(
    text: str, start: int, end: int, pattern: patterns.UserPattern, shape: IdShape, budget: patterns.Budget
) -> list[Reading]:
    """Identifiers in ``text[start:end]`` written in any of the loose forms, in the pattern's own form."""
    fullmatch = budget.fullmatch
    neighbours = _neighbours(shape)
    out = []
    for match in shape.loose.finditer(text, start, end):
        raw = match.group()
        if fullmatch(pattern, raw):
            out.append(Reading(raw, match.start(), match.end(), 1.0))
            continue
        gaps = {pair: text[match.end(f"p{pair[0]}") : match.start(f"p{pair[1]}")] for pair in neighbours}
        spaced = {index for pair, gap in gaps.items() if gap and not gap.strip() for index in pair}
        written: list[str] = []
        recased = False
        word_and_number = False
        for index, part in enumerate(shape.parts):
            if part.kind == "separator":
                written.append(part.source)
                continue
            piece = match.group(f"p{index}")
            if part.kind == "literal":
                recased |= piece != part.source
                written.append(part.source)
                continue
            cased = piece.upper() if part.case == "upper" else piece.lower() if part.case == "lower" else piece
            if cased != piece:
                recased = True
                word_and_number |= index in spaced  # "no 40211": a word and a number, not "NO40211"
            written.append(cased)
        value = "".join(written)
        if word_and_number or (recased and not any(ch.isdigit() for ch in value)):
            continue  # a word in other case ("ideas") is not an identifier either
        if not fullmatch(pattern, value):
            continue
        # two classes set apart by a space only ("NY 10001" for "[A-Z]{2}[0-9]{5}") may be two things
        loose_join = any(j == i + 1 and shape.parts[i].kind == shape.parts[j].kind == "class" and pair_gap and not pair_gap.strip()
                         for (i, j), pair_gap in gaps.items())
        out.append(Reading(value, match.start(), match.end(), 0.9 if loose_join else 1.0, frozenset({"separators_normalised"})))
    return out


def _neighbours(shape: IdShape) -> list[tuple[int, int]]:
    """Index pairs of neighbouring non-separator parts."""
    indices = [i for i, part in enumerate(shape.parts) if part.kind != "separator"]
    return list(zip(indices, indices[1:]))


def read_email(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    out = [Reading(m.group().lower(), m.start(), m.end(), 1.0) for m in _EMAIL.finditer(an.text, start, end)]
    return out or _missing_list(an, start, end)


def read_phone(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    out = [Reading(" ".join(m.group().split()), m.start(), m.end(), 0.9) for m in _PHONE.finditer(an.text, start, end)]
    return out or _missing_list(an, start, end)


def read_text(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    segment = an.text[start:end]
    value = " ".join(segment.split()).strip(" *_")
    if not value:
        return []
    missing = stated_missing(an, start, end)
    if missing is not None:
        return [missing]
    offset = start + (len(segment) - len(segment.lstrip(" *_")))
    return [Reading(value, offset, offset + len(segment.strip(" *_")), 0.9)]


def read_job_title(an: Analysis, spec: FieldSpec, start: int, end: int) -> list[Reading]:
    segment = an.text[start:end]
    missing = stated_missing(an, start, end)
    if missing is not None:
        return [missing]
    pieces = re.split(r"(\s[-–—/]\s|\s/\s|,|;|\s\|\s|\n|\s{3,}|\.\s)", segment)
    kept: list[tuple[int, int]] = []
    cursor = start
    separator_before = ""
    for piece in pieces:
        piece_start = cursor
        cursor += len(piece)
        if re.fullmatch(r"\s[-–—/]\s|\s/\s|,|;|\s\|\s|\n|\s{3,}|\.\s", piece):
            separator_before = piece
            if piece.strip() in (",", ";", "|", ".") or "\n" in piece or len(piece) >= 3 and not piece.strip():
                if kept:
                    break
            continue
        words = piece.strip()
        if not words:
            continue
        if _is_place_or_schedule(an, words):
            if kept:
                break
            continue
        if not words[0].isupper() or not re.search(r"[A-Za-z]{2}", words) or _DATE_LIKE.match(words):
            if kept:
                break
            continue
        leading = len(piece) - len(piece.lstrip())
        s = piece_start + leading
        kept.append((s, s + len(words)))
        if kept and separator_before.strip() in ("-", "–", "—", "/") and len(kept) > 1:
            pass
        separator_before = ""
    if not kept:
        return []
    first, last = kept[0][0], kept[-1][1]
    value = " ".join(an.text[first:last].split())
    value = _trim_title(value)
    if not value:
        return []
    quality = 0.95 if _has_head(value) else 0.7
    return [Reading(value, first, first + len(an.text[first:last].rstrip(".")), quality)]


def _trim_title(value: str) -> str:
    value = value.strip(" .*_")
    value = re.sub(r"\s*\((?:[^)]*\b(?:from|was|previously|formerly|revised|until)\b[^)]*)\)\s*$", "", value)
    return value


def _has_head(value: str) -> bool:
    words = [w.strip("().,;:").lower() for w in re.split(r"[\s–—-]+", value)]
    return any(w.rstrip("s") in TITLE_HEADS or w in TITLE_HEADS for w in words)


def _is_place_or_schedule(an: Analysis, words: str) -> bool:
    lowered = words.lower()
    if re.search(r"\b(?:shift|nights?|days?|weekends?|hours|schedule|rota|pm|am)\b", lowered) and not _has_head(words):
        return True
    for name, vocabulary in an.vocabularies.items():
        if an.field(name).hints.kind != "choice":
            continue
        mentions = vocabulary.find(words, loose=False)
        if mentions and sum(m.end - m.start for m in mentions) >= len(words.strip("() ")) * 0.6:
            return True
    return False


def title_phrase(an: Analysis, start: int, limit: int) -> Reading | None:
    """A capitalised title phrase starting at ``start`` ("Maintenance Technician II")."""
    text = an.text
    words: list[tuple[int, int]] = []
    position = start
    while position < limit:
        match = _TITLE_WORD.match(text, position)
        gap = 0
        while match is None and position < limit and text[position] in " \t":
            position += 1
            gap += 1
            match = _TITLE_WORD.match(text, position)
        if match is None or gap > 2:
            break
        token = match.group()
        if not words and token.lower() in _TITLE_LINKS:
            break
        closed = len(token) - len(token.rstrip("_"))
        words.append((match.start(), match.end() - closed))
        position = match.end()
        if closed:
            break  # "__Network Planner__": the emphasis ends the title
        dash = re.match(r"\s[–—]\s(?=[A-Z])", text[position : position + 4])
        if dash:
            position += dash.end()
    while words and text[words[-1][0] : words[-1][1]].lower() in _TITLE_LINKS:
        words.pop()
    if not words:
        return None
    first, last = words[0][0], words[-1][1]
    value = " ".join(text[first:last].split())
    if not _has_head(value):
        return None
    return Reading(value, first, last, 0.95)  # a recognised head word, as for a labelled title (read_job_title)


def _missing_list(an: Analysis, start: int, end: int) -> list[Reading]:
    missing = stated_missing(an, start, end)
    return [missing] if missing is not None else []


def normalised_name(raw: str) -> str:
    return normalise_name(raw)


def same_value(a: Any, b: Any) -> bool:
    if isinstance(a, str) and isinstance(b, str):
        return fold(a) == fold(b)
    return bool(a == b)


READERS: dict[str, Reader] = {
    "person": read_person,
    "organization": read_entity("ORG"),
    "place": read_entity("PLACE"),
    "date": read_date,
    "money": read_money,
    "number": read_number,
    "choice": read_vocab,
    "flag": read_vocab,
    "identifier": read_identifier,
    "email": read_email,
    "phone": read_phone,
    "text": read_text,
    "job_title": read_job_title,
}
