"""The built-in extractors.  Each one looks in one kind of place and yields candidates.

=================  ===================================================================
``label.v1``       ``Label: value`` lines, table rows and form layouts whose label matches
                   a cue of the field
``prose.v1``       a value close to a cue in running text ("report to ...", "your first
                   day will be ...")
``header.v1``      email headers (From, To, Date, Subject ...)
``dateline.v1``    the date line of a letter, for a field cued as the document's "date"
``role.v1``        people by their role: addressee, signer, author, someone signed for
``scan.v1``        vocabulary mentions and ticked boxes anywhere (weak evidence)
``pattern.v1``     identifiers, email addresses and phone numbers anywhere (weak evidence)
=================  ===================================================================

Scores are the strength of one piece of evidence alone; :mod:`structurize.resolve`
combines them.  How each score is built is documented in DEVELOPERS.md ("Confidence").
"""

from __future__ import annotations

import re
from collections.abc import Iterator

from ..readers.builder import UNICODE_CONTROLS
from ..schema.model import FieldSpec
from ..types import Alternative, Candidate, Span
from . import kinds
from .analysis import Analysis, Person
from .kinds import Reading
from .vocab import Vocabulary
from .text import cue_match, leading_name, norm

#: Below this cue/label match a label is not taken as naming the field.
MIN_LABEL_MATCH = 0.6
#: Column headings that say what kind of value a cell holds, not which field it is.
GENERIC_COLUMNS = frozenset(
    "name names date dates signature signed status detail details value values response answer comments notes note info information".split()
)
LABEL_WEIGHT = 0.92
PROSE_WEIGHT = 0.88
PROSE_REACH = 110  #: characters after a cue in which a value may start
EXCLUDED_FACTOR = 0.2
#: Evidence on every value of a document read (in part) by OCR, which counts 0.8: Tesseract
#: read it in this run (warning ``ocr``), or it comes from a scan's own OCR text layer
#: (warning ``ocr_text_layer``).
OCR_EVIDENCE = "read by OCR"
OCR_LAYER_EVIDENCE = "read from the scan's OCR text layer"

_FILLERS = {
    "a", "an", "the", "as", "of", "to", "by", "is", "was", "will", "be", "our", "your", "his", "her", "their",
    "full-time", "part-time", "permanent", "temporary", "new", "position", "role", "job", "title", "for",
    "directly", "on", "at", "with", "within", "been", "being", "are", "am", "that", "this", "now",
    "who", "which", "also", "formally", "officially", "fixed-term", "regular", "date", "day",
}
_AUTHOR_CUE = re.compile(r"^(?:i|we)\b|^from$", re.IGNORECASE)
#: "interviewed by", "approved by": the agent may be whoever wrote the document.
_AGENT_CUE = re.compile(r"\w+(?:ed|en)\s+by$", re.IGNORECASE)
_FIRST_PERSON_CLAUSE = re.compile(r"(?:^|[\s(])I(?:'d|'m| would| am| wish| want| hereby)?\s+(?:\w+\s+){0,4}$")
#: Single-word cues too common in running text to anchor a value there (labels only).
_LABEL_ONLY_CUES = {
    "to", "from", "by", "for", "at", "on", "in", "of", "with", "per", "as", "re", "cc", "id", "no", "date", "name", "current", "new",
}
_ADDRESSEE_CUE = {"dear", "to", "candidate", "addressee", "recipient", "attention", "attn"}


def _candidate(
    spec: FieldSpec, reading: Reading, extractor: str, score: float, evidence: tuple[str, ...], an: Analysis, *, fallback: bool = False
) -> Candidate:
    flags = set(reading.flags)
    if fallback:
        flags.add("fallback")
    region = an.excluded(reading.start)
    if region:
        flags.add(region)
        score *= EXCLUDED_FACTOR
        evidence += (f"inside a {region} block",)
    if an.doc.encoding_guessed:
        flags.add("encoding_guessed")
    if an.ocr:
        flags.add("ocr")
        evidence += (OCR_EVIDENCE if "ocr" in an.doc.warnings else OCR_LAYER_EVIDENCE,)
    raw = an.text[reading.start : reading.end]
    if "\ufffd" in raw or UNICODE_CONTROLS.search(raw):
        flags.add("unreadable_characters")  # a reviewer must see what the value really holds
        evidence += ("holds replaced or invisible characters",)
    return Candidate(
        field=spec.name,
        value=reading.value,
        raw=raw,
        span=Span(reading.start, reading.end),
        extractor=extractor,
        score=max(0.0, min(1.0, score)),
        evidence=evidence + reading.evidence,
        flags=frozenset(flags),
        facets=reading.facets,
        alternatives=reading.alternatives,
    )


def _best_cue(spec: FieldSpec, label: str) -> tuple[float, str]:
    best = (0.0, "")
    for cue in spec.hints.cues:
        score = cue_match(norm(cue), label)
        if score > best[0]:
            best = (score, cue)
    return best


def _owner_margin(an: Analysis, spec: FieldSpec, label: str, score: float) -> float:
    """How much another field's cues claim this label more strongly (0 when none does)."""
    margin = 0.0
    for other in an.schema.fields:
        if other.name == spec.name:
            continue
        other_score, _ = _best_cue(other, label)
        margin = max(margin, other_score - score)
    return margin


def _resolve_first_person(an: Analysis, spec: FieldSpec, reading: Reading) -> Reading | None:
    """"reporting to me", "I approve": the person is the document's author or signer."""
    roles = an.roles
    person = roles.author or roles.signer
    if person is None:
        return None
    name = an.complete_name(person.name) or person.name
    return Reading(name, person.start, person.end, 0.85 * reading.quality, reading.flags | {"first_person"},
                   evidence=("first person: the author or signer",))


def _ordered(readings: list[Reading]) -> list[Reading]:
    """Revised values first, superseded ones last, otherwise text order."""
    def rank(reading: Reading) -> int:
        return 0 if "revised" in reading.flags else 2 if "superseded" in reading.flags else 1

    return sorted(readings, key=rank)


# --- label.v1 ------------------------------------------------------------------------------


def label_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    for pair in an.pairs:
        if pair.source == "header":
            continue
        label = pair.label
        match, cue = _best_cue(spec, label)
        if pair.column and pair.column not in GENERIC_COLUMNS:
            # A cell of a wider table is named by its row and column headings together
            # ("Title" × "Requested"); a cue must name the row, not only the column.
            row_words = set(label.split())
            options = [(f"{pair.column} {label}", True), (f"{label} {pair.column}", True)]
            if not any(_best_cue(other, pair.column)[0] >= MIN_LABEL_MATCH for other in an.schema.fields):
                options.append((label, False))
            match, cue, chosen = 0.0, "", label
            for option, needs_row in options:
                option_match, option_cue = _best_cue(spec, option)
                if needs_row and not set(norm(option_cue).split()) & row_words:
                    continue
                if option_match > match:
                    match, cue, chosen = option_match, option_cue, option
            label = chosen
        if match < MIN_LABEL_MATCH:
            continue
        margin = _owner_margin(an, spec, label, match)
        if margin >= 0.25 or (margin > 0.2 and match + margin >= 0.95):
            continue  # another field's cues name this label clearly better
        ownership = 1.0 if margin <= 0.02 else max(0.3, 1.0 - 2 * margin)
        readings = kinds.read(an, spec, pair.value_span.start, pair.value_span.end)
        readings = [r for r in readings if r.quality > 0]
        if not readings:
            continue
        evidence = (f"label {an.text[pair.label_span.start:pair.label_span.end]!r} matches cue {cue!r} ({match:.2f})", f"layout {pair.source}")
        for rank, reading in enumerate(_ordered(readings)[:3]):
            if "first_person" in reading.flags and reading.value is None:
                resolved = _resolve_first_person(an, spec, reading)
                if resolved is None:
                    continue
                reading = resolved
            weight = 1.0 if rank == 0 else 0.45
            score = LABEL_WEIGHT * pair.strength * match * ownership * reading.quality * weight
            yield _candidate(spec, reading, "label.v1", score, evidence, an)


# --- prose.v1 ------------------------------------------------------------------------------


def _inside_label(an: Analysis, start: int, end: int) -> bool:
    return any(span.start <= start and end <= span.end for span in an.label_spans)


def _skip_fillers(text: str, position: int, limit: int) -> tuple[int, str | None]:
    """Move past filler words; return the new position and a first-person word if met."""
    for _ in range(6):
        match = re.match(r"[\s,:–—-]*([\w'’-]+)", text[position:limit])
        if not match:
            return position, None
        word = match.group(1)
        if word.lower() in ("me", "myself", "i"):
            return position + match.start(1), word
        if word.lower() not in _FILLERS:
            return position + match.start(1), None
        position += match.end()
    return position, None


def prose_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    kind = spec.hints.kind
    for hit in an.cue_hits.get(spec.name, ()):
        if norm(hit.cue) in _LABEL_ONLY_CUES or _inside_label(an, hit.start, hit.end):
            continue
        sentence_start, sentence_end = an.sentence(hit.start)
        limit = min(len(an.text), hit.end + PROSE_REACH, max(sentence_end, hit.end + 1))
        weight = PROSE_WEIGHT * (1.0 if len(hit.cue.split()) > 1 else 0.85)
        evidence = (f"cue {hit.cue!r} in running text",)
        if kind == "person" and _AUTHOR_CUE.search(hit.cue) and not an.excluded(hit.start):
            # "I approve the transfer": the person is whoever wrote the document
            resolved = _resolve_first_person(an, spec, Reading(None, hit.start, hit.end, 1.0))
            if resolved is not None:
                yield _candidate(spec, resolved, "prose.v1", weight, evidence + ("first-person cue",), an)
            continue
        found = False
        for reading, distance in _prose_readings(an, spec, hit.start, hit.end, limit):
            if reading.value is None and "stated_missing" in reading.flags and not re.search(r"[A-Za-z]", an.text[reading.start : reading.end]):
                continue  # a blank to fill in ("dated ______") is not a statement that the value is unknown
            decay = max(0.45, 1.0 - max(0, distance - 30) / 250)
            if "first_person" in reading.flags and reading.value is None:
                resolved = _resolve_first_person(an, spec, reading)
                if resolved is None:
                    continue
                reading = resolved
            yield _candidate(spec, reading, "prose.v1", weight * decay * reading.quality, evidence, an)
            found = True
            break
        if found or kind not in ("date", "person", "flag", "choice"):
            continue
        before_start = max(sentence_start, hit.start - 70)
        clause = an.text[before_start : hit.start]
        if kind == "person" and _FIRST_PERSON_CLAUSE.search(clause) and not an.excluded(hit.start):
            # "I would like to request a transfer": the writer is the person
            resolved = _resolve_first_person(an, spec, Reading(None, hit.start, hit.end, 1.0))
            if resolved is not None:
                yield _candidate(spec, resolved, "prose.v1", weight * 0.8, evidence + ("first-person clause",), an)
            continue
        readings = [
            r for r in kinds.read(an, spec, before_start, hit.start)
            if r.quality > 0 and r.value is not None and not (kind == "person" and "partial_name" in r.flags)
        ]
        if readings:
            reading = readings[-1]
            yield _candidate(spec, reading, "prose.v1", weight * 0.7 * reading.quality, evidence + ("value before the cue",), an)


def _prose_readings(an: Analysis, spec: FieldSpec, start: int, end: int, limit: int) -> Iterator[tuple[Reading, int]]:
    kind = spec.hints.kind
    text = an.text
    if kind == "person":
        position, first_person = _skip_fillers(text, end, limit)
        if first_person:
            yield Reading(None, position, position + len(first_person), 0.9, frozenset({"first_person"})), position - end
            return
        found = leading_name(text[position:limit], position)
        reading = kinds._person_reading(an, found) if found is not None and position - end <= 40 else None
        if reading is not None and ("partial_name" not in reading.flags or an.ner_overlaps(reading.start, reading.end)):
            yield reading, position - end
            return
        for person in an.ner_people:
            if end <= person.start < limit:
                yield kinds.ner_person_reading(an, person), person.start - end
                return
        return
    if kind == "job_title":
        position, _ = _skip_fillers(text, end, limit)
        reading = kinds.title_phrase(an, position, limit)
        if reading is not None:
            yield reading, position - end
            return
        before = re.search(r"((?:[A-Z][\w'’&()-]*\s+){0,5}[A-Z][\w'’&()-]*)\s+$", text[max(0, start - 60) : start])
        if before and re.match(r"(?:position|role|job|post)\b", text[start:end], re.IGNORECASE):
            phrase_start = max(0, start - 60) + before.start(1)
            reading = kinds.title_phrase(an, phrase_start, start)
            if reading is not None:
                yield reading, 0
        return
    if kind == "flag":
        window_start = an.sentence(start)[0]
        readings = kinds.read(an, spec, max(window_start, start - 40), limit)
        for reading in readings:
            if reading.quality > 0:
                yield reading, abs(reading.start - end)
                return
        return
    for reading in _ordered([r for r in kinds.read(an, spec, end, limit) if r.quality > 0]):
        yield reading, max(0, reading.start - end)


# --- header.v1 ------------------------------------------------------------------------------


def header_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    kind = spec.hints.kind
    for header in an.doc.headers:
        match, cue = _best_cue(spec, norm(header.name))
        if match < 0.9:
            continue
        evidence = (f"{header.name} header (cue {cue!r})",)
        span = header.span
        if kind == "email":
            if not header.addresses:
                yield Candidate(spec.name, None, an.text[span.start : span.end], span, "header.v1", 0.9, evidence + ("no address in the header",), frozenset({"stated_missing"}))
                continue
            for index, address in enumerate(header.addresses):
                at = address.email_span or span
                yield Candidate(spec.name, address.email, address.email, at, "header.v1", 0.97 if index == 0 else 0.3,
                                evidence + (("first address",) if index == 0 else (f"address {index + 1}",)))
        elif kind == "person" and header.addresses:
            address = header.addresses[0]
            if address.name and "@" not in address.name:
                at = address.name_span or span
                found = leading_name(address.name) or (0, len(address.name), address.name)
                name = kinds.normalise_name(address.name) if "," in address.name else found[2] if len(found[2].split()) > 1 else kinds.normalise_name(address.name)
                yield Candidate(spec.name, name, address.name, at, "header.v1", 0.95, evidence + ("display name",))
            else:
                yield from _signature_for_address(an, spec, address.email, evidence)
        elif kind == "date" and header.date is not None:
            yield Candidate(spec.name, header.date.date(), an.text[span.start : span.end], span, "header.v1", 0.97,
                            evidence + ("calendar date in the header's own offset",))
        elif kind in ("text", "job_title"):
            value = " ".join(an.text[span.start : span.end].split())
            if value:
                yield Candidate(spec.name, value, value, span, "header.v1", 0.95, evidence)


def _signature_for_address(an: Analysis, spec: FieldSpec, address: str, evidence: tuple[str, ...]) -> Iterator[Candidate]:
    """A From header with no display name: the body's signer, if it is a person."""
    signer = an.roles.signer
    if signer is None:
        yield Candidate(spec.name, None, address, Span(0, 0), "header.v1", 0.6, evidence + ("no display name and no signature",), frozenset({"stated_missing"}))
        return
    name = an.complete_name(signer.name) or signer.name
    signer = Person(signer.start, signer.end, name, signer.source)
    local = re.split(r"[._-]", address.split("@")[0].lower())
    tokens = [t.lower() for t in signer.name.split()]
    agrees = bool(set(local) & set(tokens))
    score = 0.88 if agrees else 0.6
    yield Candidate(spec.name, signer.name, an.text[signer.start : signer.end], Span(signer.start, signer.end), "header.v1", score,
                    evidence + ("no display name: signature", "signature matches the address" if agrees else "signature does not match the address"))


# --- dateline.v1 ------------------------------------------------------------------------------


def dateline_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    cues = {norm(cue) for cue in spec.hints.cues}
    if not cues & {"date", "dated"} or an.doc.headers:
        return
    line = an.dateline
    if line is None or line.value is None:
        return
    reading = Reading(line.value, line.start, line.end, 1.0, line.flags)
    yield _candidate(spec, reading, "dateline.v1", 0.88, ("a line holding only a date near the top (the letter's date)",), an)


# --- role.v1 ------------------------------------------------------------------------------------


def role_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    cues = [norm(cue) for cue in spec.hints.cues]
    roles = an.roles
    people: list[tuple[Person, float, str]] = []
    if any(cue in _ADDRESSEE_CUE for cue in cues):
        for person in roles.addressee[:1]:
            people.append((person, 0.85, "addressee"))
    addressee_cues = any(cue in _ADDRESSEE_CUE for cue in cues)
    if any(_AUTHOR_CUE.search(cue) for cue in cues) or (not addressee_cues and any(_AGENT_CUE.search(cue) for cue in cues)):
        author = roles.author or roles.signer
        if author is not None:
            people.append((author, 0.32, "author/signer"))
    for person, score, role in people:
        name = an.complete_name(person.name) or person.name
        flags = kinds.person_flags(name)  # "Dear Mr. De Luca" with no full name anywhere: a surname alone
        if flags:
            score = min(score, 0.5)
        reading = Reading(name, person.start, person.end, 1.0, flags)
        yield _candidate(spec, reading, "role.v1", score, (f"the document's {role}",), an, fallback=role != "addressee")


def person_role_penalty(an: Analysis, spec: FieldSpec, candidate: Candidate) -> Candidate:
    """Evidence from a cc line is weak; the signer and people copied in are not the
    addressee-type person of a field."""
    from dataclasses import replace

    if spec.hints.kind != "person" or candidate.extractor == "role.v1":
        return candidate
    if any(p.start <= candidate.span.start < p.end + 1 for p in an.roles.copied) and candidate.extractor == "prose.v1":
        return replace(candidate, score=candidate.score * 0.5, evidence=candidate.evidence + ("on a cc line",))
    cues = [norm(cue) for cue in spec.hints.cues]
    if not any(cue in _ADDRESSEE_CUE for cue in cues):
        return candidate
    roles = an.roles
    others = [p.name for p in (roles.signer, roles.principal, *roles.copied) if p is not None]
    if isinstance(candidate.value, str) and any(kinds.same_value(candidate.value, name) for name in others):
        return replace(candidate, score=candidate.score * 0.5, evidence=candidate.evidence + ("is the signer or copied in",))
    return candidate


# --- scan.v1 ------------------------------------------------------------------------------------


def scan_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    vocabulary = an.vocabularies.get(spec.name)
    if vocabulary is None or spec.hints.kind != "choice":
        return
    siblings = [
        other for other in an.schema.fields
        if other.name != spec.name and other.hints.kind == "choice" and set(an.vocabularies[other.name].values) == set(vocabulary.values)
    ]
    for mention in vocabulary.find(an.text, loose=True):
        if mention.ticked is False or mention.negated:
            continue
        if _inside_label(an, mention.start, mention.end):
            continue
        if mention.ticked:
            score = 0.8
            evidence = ("a ticked box",)
        elif siblings:
            continue
        else:
            score = 0.28 if not mention.loose else 0.2
            evidence = ("mentioned in the text, no cue",)
        reading = Reading(mention.value, mention.start, mention.end, 1.0, frozenset({"ticked"}) if mention.ticked else frozenset())
        yield _candidate(spec, reading, "scan.v1", score, evidence + (f"variant {mention.variant!r}",), an, fallback=not mention.ticked)
    if not siblings:
        yield from _near_misses(an, spec, vocabulary)


_CAPITAL_RUN = re.compile(r"(?<![\w.])[A-Z][\w.'’-]*(?:[ \t]+[A-Z][\w.'’-]*){1,3}")


def _near_misses(an: Analysis, spec: FieldSpec, vocabulary: Vocabulary) -> Iterator[Candidate]:
    """Capitalised phrases one or two edits away from a listed value ("Elm Rdge")."""
    exact = {(m.start, m.end) for m in vocabulary.find(an.text, loose=False)}
    for match in _CAPITAL_RUN.finditer(an.text):
        words = match.group().split()
        for size in range(len(words), 1, -1):
            phrase = " ".join(words[:size])
            if len(phrase) < 6 or any(s <= match.start() < e for s, e in exact):
                continue
            misses = vocabulary.near_miss(phrase)
            if misses:
                value, variant, score = misses[0]
                end = match.start() + len(" ".join(an.text[match.start() : match.end()].split()[:size]))
                alternatives = tuple(Alternative(v, s) for v, _, s in misses[1:] if v != value)
                reading = Reading(value, match.start(), end, 1.0, frozenset({"near_miss"}), alternatives=alternatives)
                yield _candidate(spec, reading, "scan.v1", 0.3 * score, (f"near miss of {variant!r}",), an, fallback=True)
                break


# --- transition.v1 ----------------------------------------------------------------------------

_CONNECTOR = re.compile(r"^[^.;\n]{0,60}?(?:\bto\b|→|->|=>|⇒|➔)[^.;\n]{0,30}?$", re.IGNORECASE)


def transition_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    """"from Elm Ridge ... to Tamsin Flats", "CJ → NQ": the two sides of a move.

    Serves a choice field whose cues include ``from`` (it gets the first side) or ``to``
    (it gets the second side).
    """
    cues = {norm(cue) for cue in spec.hints.cues}
    side = 0 if "from" in cues else 1 if "to" in cues else None
    vocabulary = an.vocabularies.get(spec.name)
    if side is None or vocabulary is None:
        return
    mentions = [m for m in vocabulary.find(an.text, loose=False) if not m.negated and not an.excluded(m.start)]
    for first, second in zip(mentions, mentions[1:]):
        if first.value == second.value:
            continue
        between = an.text[first.end : second.start]
        arrow = bool(re.search(r"→|->|=>|⇒|➔", between))
        before = an.text[max(0, first.start - 50) : first.start]
        if not _CONNECTOR.match(between) or not (arrow or re.search(r"\bfrom\b[^.;\n]*$", before, re.IGNORECASE)):
            continue
        chosen = (first, second)[side]
        reading = Reading(chosen.value, chosen.start, chosen.end, 1.0)
        yield _candidate(spec, reading, "transition.v1", 0.86 if arrow else 0.8, ("a move written as from ... to ...",), an)


def title_transition_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    """"promotion from Reefer Technician II to Senior Reefer Technician": the new title."""
    cues = [norm(cue) for cue in spec.hints.cues]
    if not any(cue.split()[0] in ("new", "proposed", "requested") for cue in cues if cue):
        return
    for match in _FROM_TITLE.finditer(an.text):
        if an.excluded(match.start()):
            continue
        first = kinds.title_phrase(an, match.end(), min(len(an.text), match.end() + 80))
        if first is None:
            continue
        link = re.match(r"\s+to\s+(?:the\s+|a\s+|an\s+)?", an.text[first.end : first.end + 12], re.IGNORECASE)
        if not link:
            continue
        second = kinds.title_phrase(an, first.end + link.end(), min(len(an.text), first.end + link.end() + 80))
        if second is not None:
            yield _candidate(spec, second, "title-transition.v1", 0.78, ("a change written as from <title> to <title>",), an)


_FROM_TITLE = re.compile(r"\b(?:promot\w*|mov\w*|transfer\w*|chang\w*|step\w* up|progress\w*)\s+(?:\w+\s+){0,3}?from\s+(?:the\s+|a\s+|an\s+|his\s+|her\s+)?", re.IGNORECASE)


def subject_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    """The person named right next to the document's identifier ("Ana Ruiz (HP40211)") is
    the person the identifier belongs to: evidence for a person field that shares a cue word
    with the identifier field ("employee name" / "employee number")."""
    words = {word for cue in spec.hints.cues for word in norm(cue).split()} - {"name", "of", "the"}
    for other in an.schema.fields:
        if other.hints.kind != "identifier" or not words & {w for cue in other.hints.cues for w in norm(cue).split()}:
            continue
        for reading in kinds.read(an, other, 0, len(an.text)):
            if reading.value is None or an.excluded(reading.start):
                continue
            line = an.line_of(reading.start)
            before = an.text[line.start : reading.start]
            pieces = [(m.start(), m.group()) for m in re.finditer(r"[^|:·,;()\[\]]+", before)]
            for offset, piece in reversed(pieces[-2:]):
                tail = re.split(r"\s[-–—]\s", piece)[-1]
                person = an.person_at(tail, line.start + offset + len(piece) - len(tail))
                if person is None or len(person.name.split()) < 2:
                    continue
                gap = an.text[person.end : reading.start]
                if len(gap) <= 20 and not re.search(r"[.;]", gap):
                    name = Reading(person.name, person.start, person.end, 1.0)
                    yield _candidate(spec, name, "subject.v1", 0.8, (f"named next to the {other.name} {reading.value}",), an)
                break


# --- pattern.v1 ------------------------------------------------------------------------------------


def pattern_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    kind = spec.hints.kind
    if kind not in ("identifier", "email", "phone") or (kind == "email" and an.doc.headers):
        return
    readings = [r for r in kinds.read(an, spec, 0, len(an.text)) if r.value is not None]
    distinct = {str(r.value) for r in readings}
    score = 0.8 if len(distinct) == 1 else 0.35
    for reading in readings:
        yield _candidate(spec, reading, "pattern.v1", score, (f"matches the {kind} pattern", f"{len(distinct)} distinct value(s) in the document"),
                         an, fallback=len(distinct) > 1)


def acting_for_alternatives(an: Analysis, candidate: Candidate) -> Candidate:
    """"Approved: X ... on behalf of Y": keep Y as the alternative a reviewer may pick."""
    from dataclasses import replace

    line = an.line_of(candidate.span.start)
    rest = an.text[candidate.span.end : line.end + 120]
    match = re.search(r"\bon behalf of\s+", rest[:160], re.IGNORECASE)
    if not match:
        return candidate
    found = leading_name(rest[match.end() :], candidate.span.end + match.end())
    if found is None:
        return candidate
    alternative = Alternative(found[2], candidate.score * 0.6, Span(found[0], found[1]))
    return replace(
        candidate,
        flags=candidate.flags | {"acting_for"},
        alternatives=candidate.alternatives + (alternative,),
        evidence=candidate.evidence + (f"acts on behalf of {found[2]}",),
    )
