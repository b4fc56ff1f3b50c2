"""The built-in extractors.  Each one looks in one kind of place and yields candidates.

========================  ============================================================
``label.v1``              ``Label: value`` lines, table rows and form layouts whose label
                          matches a cue of the field
``prose.v1``              a value close to a cue in running text ("report to ...", "your
                          first day will be ...")
``header.v1``             email headers (From, To, Date, Subject ...)
``dateline.v1``           the date line of a letter, for a field cued as the document's "date"
``role.v1``               people by their role: addressee, signer, author, someone signed for
``scan.v1``               vocabulary mentions and ticked boxes anywhere (weak evidence)
``pattern.v1``            identifiers, email addresses and phone numbers anywhere (weak)
``unclaimed-label.v1``    a label no field's cues name, whose value reads as the field's kind
                          and whose words are the field's own (title, name, description,
                          cues): weak, to review
``prose-synonym.v1``      running text wording a cue through the synonym tables ("begin on"
                          for "start on", "final shift" for "last day")
``prose-title.v1``        a word of the field's title in running text (weak, to review)
``unread.v1``             no value: signs that one is there but was not read (a label or cue
                          of the field with nothing readable), so the gap goes to review
========================  ============================================================

Scores are the strength of one piece of evidence alone; :mod:`structurize.resolve`
combines them.  How each score is built is documented in DEVELOPERS.md ("Confidence").
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from dataclasses import replace
from functools import lru_cache
from typing import Any, TypeVar

from ..readers.builder import UNICODE_CONTROLS
from ..schema.model import FieldSpec
from ..types import Alternative, Candidate, Span
from . import kinds
from .analysis import Analysis, CueHit, Person
from .dates import MONTH_NAMES
from .kinds import Reading
from .layout import KIND_HEADINGS, LabelPair
from .vocab import BOX, Vocabulary
from .text import (GENERIC_LABEL_WORDS, PhraseSet, agent_cue, agent_label, content_stems, cue_match, field_word_stems, is_partial_name, leading_name, negated_stems,
                   norm, stem, stems_meet, synonym_variants, system_sender)

#: Below this cue/label match a label is not taken as naming the field.
MIN_LABEL_MATCH = 0.6
LABEL_WEIGHT = 0.92
#: A label matching a cue at least this well names the field (the cue itself, a synonym, the
#: cue with a word more or in another order): the match counts fully; weaker matches (a
#: shared first word, a shortened label) count in proportion.
CLEAR_MATCH = 0.9
#: ... and a layout at least this sure to be a label and its value (a ``Label: value`` line,
#: a table row, a question and its answer) makes the value one a form states (flag
#: ``clear_label``), which evidence from running text contests less (resolve.py).
CLEAR_LAYOUT = 0.9
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
    if spec.title and norm(spec.title) == label:
        best = (1.0, spec.title)  # the field's own title as a label: "Approver", "Employee ID"
    for cue in spec.hints.cues:
        score = cue_match(norm(cue), label)
        if score > best[0]:
            best = (score, cue)
    return best


def _field_match(an: Analysis, spec: FieldSpec, label: str) -> tuple[float, str]:
    """:func:`_best_cue`, less a "… by" label that names the doer of what the cue names
    when another field's cue names that doer ("Exit interview by" is the interviewer's)."""
    match, cue = _best_cue(spec, label)
    if match and agent_label(label) and not agent_cue(norm(cue)) and _agent_claims(an, spec, label):
        return 0.0, cue
    return match, cue


#: A label whose words in brackets are left out ("Approved by (receiving site)") names what
#: the rest names, at this share of the match.
ASIDE_FACTOR = 0.95
_ASIDE = re.compile(r"\s*\([^()]*\)\s*")


def _without_aside(label: str) -> str:
    """A label less its words in brackets, normalised ("" when it has none)."""
    if "(" not in label:
        return ""
    return norm(_ASIDE.sub(" ", label))


def _owner_margin(an: Analysis, spec: FieldSpec, label: str, score: float) -> float:
    """How much another field's cues claim this label more strongly (0 when none does)."""
    margin = 0.0
    for other in an.schema.fields:
        if other.name == spec.name:
            continue
        other_score, _ = _field_match(an, other, label)
        margin = max(margin, other_score - score)
    return margin


def _agent_claims(an: Analysis, spec: FieldSpec, label: str) -> bool:
    """Another field's cue names the doer of a "… by" label ("interviewed by" for "Exit
    interview by")."""
    return bool(memo(an, ("agents", label), lambda: _agent_fields(an, label)) - {spec.name})


def _agent_fields(an: Analysis, label: str) -> frozenset[str]:
    """The fields one of whose cues names the doer that ``label`` names."""
    return frozenset(
        other.name for other in an.schema.fields
        if any(agent_cue(norm(cue)) and cue_match(norm(cue), label) >= MIN_LABEL_MATCH for cue in other.hints.cues)
    )


def _resolve_first_person(an: Analysis, spec: FieldSpec, reading: Reading) -> Reading | None:
    """"reporting to me", "I approve": the person is the document's author or signer."""
    roles = an.roles
    person = roles.author or roles.signer
    if person is None:
        return None
    name = an.full_name(person.name)
    return Reading(name, person.start, person.end, 0.85 * reading.quality, reading.flags | {"first_person"},
                   evidence=("first person: the author or signer",))


def _ordered(readings: list[Reading]) -> list[Reading]:
    """Revised values first, superseded ones last, otherwise text order."""
    def rank(reading: Reading) -> int:
        return 0 if "revised" in reading.flags else 2 if "superseded" in reading.flags else 1

    return sorted(readings, key=rank)


# --- label.v1 ------------------------------------------------------------------------------


T = TypeVar("T")


def memo(an: Analysis, key: Any, compute: Callable[[], T]) -> T:
    """``compute()`` once per document and ``key``; later calls get the same result."""
    if key not in an.memo:
        an.memo[key] = compute()
    return an.memo[key]


def _label_matches(an: Analysis, spec: FieldSpec) -> list[tuple[LabelPair, str, float, str, float]]:
    """The label/value pairs whose label names ``spec`` (label.v1 and unread.v1 both read them)."""
    return memo(an, ("label_matches", spec.name), lambda: list(_find_label_matches(an, spec)))


def _find_label_matches(an: Analysis, spec: FieldSpec) -> Iterator[tuple[LabelPair, str, float, str, float]]:
    """Label/value pairs whose label names ``spec``: ``(pair, label, match, cue, ownership)``."""
    for pair in an.pairs:
        if pair.source == "header":
            continue
        if pair.source == "column" and pair.rows > 1 and pair.label in KIND_HEADINGS:
            continue  # "Name" over several rows says what each value is, not which field it fills
        label = pair.label
        match, cue = _best_cue(spec, label)
        bare = _without_aside(an.text[pair.label_span.start : pair.label_span.end])
        if bare and bare != label:
            # "Approved by (receiving site)": the label without its aside names the field
            bare_match, bare_cue = _best_cue(spec, bare)
            if ASIDE_FACTOR * bare_match > match:
                match, cue = ASIDE_FACTOR * bare_match, bare_cue
        if pair.column and pair.column not in KIND_HEADINGS:
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
        if agent_label(label) and not agent_cue(norm(cue)) and _agent_claims(an, spec, label):
            continue  # "Exit interview by": the interviewer, not the person interviewed
        margin = _owner_margin(an, spec, label, match)
        if margin >= 0.25 or (margin > 0.2 and match + margin >= 0.95):
            continue  # another field's cues name this label clearly better
        ownership = 1.0 if margin <= 0.02 else max(0.3, 1.0 - 2 * margin)
        yield pair, label, match, cue, ownership


def label_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    for pair, label, match, cue, ownership in _label_matches(an, spec):
        if pair.source == "question":
            # a question that names the cue asks for this very value, whatever else it says
            # ("Would the depot rehire him? No"): as clear as a label of the cue itself
            match = max(match, CLEAR_MATCH)
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
            score = LABEL_WEIGHT * pair.strength * min(1.0, match / CLEAR_MATCH) * ownership * reading.quality * weight
            if match >= CLEAR_MATCH and pair.strength >= CLEAR_LAYOUT and ownership == 1.0:
                reading = replace(reading, flags=reading.flags | {"clear_label"})
            yield _candidate(spec, reading, "label.v1", score, evidence, an)


# --- prose.v1 ------------------------------------------------------------------------------


def _inside_label(an: Analysis, start: int, end: int) -> bool:
    return any(span.start <= start and end <= span.end for span in an.label_spans)


def _skip_fillers(text: str, position: int, limit: int) -> tuple[int, str | None]:
    """Move past filler words; return the new position and a first-person word if met."""
    for _ in range(6):
        match = re.match(r"[\s,:–—*_-]*([^\W_][\w'’-]*)", text[position:limit])  # emphasis marks (** __ *) are skipped
        if not match:
            return position, None
        word = match.group(1)
        if word.lower() in ("me", "myself", "i"):
            return position + match.start(1), word
        if word.lower() not in _FILLERS:
            return position + match.start(1), None
        position += match.end()
    return position, None


#: "I have approved", "I've now formally approved", "we have reviewed and approved": the
#: writer is the subject of the verb the cue names.
_FIRST_PERSON_SUBJECT = re.compile(
    r"(?:^|[\s(,;:—–-])(?:I|we)(?:['’](?:ve|d|ll|m)|\s+(?:have|had|has|do|did|will|would|shall|am|can|hereby|now|also|"
    r"formally|fully|today|just|already|happily|gladly|officially|confirm(?: that)?\s+I))*(?:\s+\w+ed\s+(?:and|&))?\s+$",
    re.IGNORECASE,
)


#: Only a colon (and emphasis marks) between a cue and its value.
_INLINE_LABEL = re.compile(r"[ \t]*[*_]*[ \t]*:[ \t]*[*_]*[ \t]*$")


def _first_person_agent(an: Analysis, hit: CueHit, sentence_start: int) -> bool:
    """The cue is a verb ("approved", "signed off") whose subject is "I" or "we"."""
    words = hit.cue.split()
    if not words or words[-1].lower() in ("by", "to", "of", "for", "from", "with") or _AUTHOR_CUE.search(hit.cue):
        return False
    if not re.fullmatch(r"[a-z]+(?:ed|e|en)", an.text[hit.start : hit.end].split()[0].lower()):
        return False  # a verb form, not a noun cue such as "approver" or "manager"
    before = an.text[max(sentence_start, hit.start - 50) : hit.start]
    return bool(_FIRST_PERSON_SUBJECT.search(before))


def prose_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    hits = [(hit, f"cue {hit.cue!r} in running text") for hit in an.cue_hits.get(spec.name, ())]
    yield from _prose_candidates(an, spec, hits, "prose.v1", 1.0)


def _prose_candidates(
    an: Analysis, spec: FieldSpec, hits: list[tuple[CueHit, str]], name: str, factor: float
) -> Iterator[Candidate]:
    """Values after (or just before) each cue hit in running text; ``factor`` scales the scores."""
    kind = spec.hints.kind
    for hit, note in hits:
        if norm(hit.cue) in _LABEL_ONLY_CUES or _inside_label(an, hit.start, hit.end):
            continue
        sentence_start, sentence_end = an.sentence(hit.start)
        limit = min(len(an.text), hit.end + PROSE_REACH, max(sentence_end, hit.end + 1))
        weight = factor * PROSE_WEIGHT * (1.0 if len(hit.cue.split()) > 1 else 0.85)
        evidence = (note,)
        if kind == "person" and not an.excluded(hit.start):
            # "I have approved Ana's request", "I approve the transfer": whoever wrote it
            if _first_person_agent(an, hit, sentence_start):
                why = "the writer is the subject of the cue"
            elif _AUTHOR_CUE.search(hit.cue):
                why = "first-person cue"
            else:
                why = ""
            if why:
                resolved = _resolve_first_person(an, spec, Reading(None, hit.start, hit.end, 1.0))
                if resolved is not None:
                    yield _candidate(spec, resolved, name, weight, evidence + (why,), an)
                continue
        if kind == "choice":
            ranked = _ranked_choice(an, spec, hit, sentence_start, limit)
            if ranked is not None:
                for reading, strength, note_ in ranked:
                    yield _candidate(spec, reading, name, weight * strength * reading.quality, evidence + (note_,), an)
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
            strength = weight
            if "answer" in reading.flags:
                strength = factor * PROSE_WEIGHT  # a question and its answer: as strong as a label and its value
            elif reading.start >= hit.end and _INLINE_LABEL.match(an.text, hit.end, reading.start):
                strength = factor * LABEL_WEIGHT  # "A: Rehire: yes." — the cue is a label inside the line
            yield _candidate(spec, reading, name, strength * decay * reading.quality, evidence, an)
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
                yield _candidate(spec, resolved, name, weight * 0.8, evidence + ("first-person clause",), an)
            continue
        readings = [
            r for r in kinds.read(an, spec, before_start, hit.start)
            if r.quality > 0 and r.value is not None and not (kind == "person" and "partial_name" in r.flags)
        ]
        if readings:
            reading = readings[-1]
            yield _candidate(spec, reading, name, weight * 0.7 * reading.quality, evidence + ("value before the cue",), an)


_ANSWER_LEAD = re.compile(r"[\s*_>]*(?:(?:a|answer|ans)\s*[:.)–—-]\s*)?[\s*_]*", re.IGNORECASE)
_ANSWER_END = re.compile(r"[,.;:!?()\n]|\s[-–—]|[–—]")


def _answer_reading(an: Analysis, spec: FieldSpec, start: int) -> Reading | None:
    """A yes/no answer opening the sentence at ``start`` (after an optional "A:")."""
    text = an.text
    lead = _ANSWER_LEAD.match(text, start, min(len(text), start + 40))
    begin = lead.end() if lead else start
    if BOX.search(text, begin, an.line_of(begin).end + 1):
        return None  # "Yes [ ] No [x]": check boxes, read as ticked boxes elsewhere
    stop = _ANSWER_END.search(text, begin, min(len(text), begin + 40))
    end = stop.start() if stop else min(len(text), begin + 40)
    for reading in kinds.read(an, spec, begin, end):
        if reading.quality <= 0 or reading.value is None:
            continue
        if reading.start > begin:
            break  # only the answer's first word: "Yes", "No", "Not eligible"
        return replace(reading, flags=reading.flags | {"answer"}, evidence=reading.evidence + ("the answer to a question naming the cue",))
    return None


# Several listed values of one choice in the sentence of its cue ("We recorded pay as the
# primary reason and workload as a secondary one"): the words next to each value rank it.
# Each value owns the words up to the nearest clause break on either side (a comma, a
# semicolon, a dash, "and", "but", "although" ...); a rank word there says which value the
# sentence puts first (common practice, no source).
_PRIMARY_WORDS = re.compile(
    r"\b(?:primary|primarily|main|mainly|chief|chiefly|principal|principally|most important|biggest|deciding|decisive|"
    r"overriding|foremost|above all|predominantly|mostly|largely|number one|real reason|top reason)\b",
    re.IGNORECASE,
)
_SECONDARY_WORDS = re.compile(
    r"\b(?:secondary|second|also|minor|another|lesser|smaller|contributing|contributory|additional|too|as well|partly|"
    r"in part|side issue|to a lesser extent)\b",
    re.IGNORECASE,
)
_RANK_NEGATED = re.compile(r"\b(?:not|n't|never|rather than|instead of|no longer)\b[^,;]{0,20}$", re.IGNORECASE)
_CLAUSE_BREAK = re.compile(
    r"[,;]|\s[-–—]{1,2}\s|[–—]|\b(?:and|but|while|whilst|whereas|although|though|yet|however|plus|with)\b", re.IGNORECASE
)
#: A value word used as a determiner ("other points", "another reason") names no value.
_DETERMINER_VALUE = re.compile(r"^(?:other|others)$", re.IGNORECASE)
RANK_PRIMARY, RANK_CUE, RANK_PLAIN, RANK_SECONDARY = 3, 2, 1, 0


def _rank_of(text: str) -> int | None:
    """RANK_PRIMARY or RANK_SECONDARY when ``text`` (the words a value owns) ranks it."""
    primary = _PRIMARY_WORDS.search(text)
    if primary and not _RANK_NEGATED.search(text[: primary.start()]):
        return RANK_PRIMARY
    if _SECONDARY_WORDS.search(text):
        return RANK_SECONDARY
    return None


#: Values listed together ("pay and the shift pattern", "pay, hours or both").
_COORDINATED = re.compile(
    r"\s*(?:,|/|&|\band\b|\bor\b|\bplus\b|\bas well as\b)(?:\s*(?:,|and|or))?\s*(?:(?:the|a|an|his|her|their|its|our)\s+)?$",
    re.IGNORECASE,
)
#: A value tied to the cue that follows it: "pay was the main reason", "pay as the reason".
_LINKED_BEFORE = re.compile(
    r"^\s*(?:(?:was|is|were|are|as|being|remains?)\s+)?(?:(?:the|a|an|his|her|their|its|our)\s+)?(?:\w+\s+)?$", re.IGNORECASE
)


def _attached(text: str, readings: list[Reading], hit: CueHit) -> set[int]:
    """Indices of the values the cue governs: the first one after it with those listed
    together with it, or else the one just before it linked to it ("pay was the main
    reason") with those listed together with that one."""
    after = next((i for i, r in enumerate(readings) if r.start >= hit.end), None)
    if after is not None:
        out = {after}
        for i in range(after + 1, len(readings)):
            if not _COORDINATED.match(text[readings[i - 1].end : readings[i].start]):
                break
            out.add(i)
        return out
    before = max((i for i, r in enumerate(readings) if r.end <= hit.start), default=None)
    if before is None or not _LINKED_BEFORE.match(text[readings[before].end : hit.start]):
        return set()
    out = {before}
    for i in range(before - 1, -1, -1):
        if not _COORDINATED.match(text[readings[i].end : readings[i + 1].start]):
            break
        out.add(i)
    return out


def _ranked_choice(an: Analysis, spec: FieldSpec, hit: CueHit, sentence_start: int, limit: int) -> list[tuple[Reading, float, str]] | None:
    """The value a sentence ranks first when it names several values of the choice near its
    cue; several unranked values all come back (so that they compete and the field goes to
    review).  None when the sentence names at most one value: the plain prose rule applies."""
    text = an.text
    window_start = max(sentence_start, hit.start - 120)
    readings = []
    for reading in kinds.read(an, spec, window_start, limit):
        if reading.value is None or reading.quality <= 0 or "near_miss" in reading.flags:
            continue
        if reading.start < hit.end and hit.start < reading.end:
            continue  # the cue's own words
        if _DETERMINER_VALUE.match(text[reading.start : reading.end]) and re.match(r"\s+[a-z]", text[reading.end : reading.end + 3]):
            continue
        readings.append(reading)
    if len({reading.value for reading in readings}) < 2:
        return None
    readings.sort(key=lambda r: r.start)
    attached = _attached(text, readings, hit)
    ranks: list[int] = []
    for index, reading in enumerate(readings):
        left_end = readings[index - 1].end if index else window_start
        right_end = readings[index + 1].start if index + 1 < len(readings) else limit
        left = text[left_end : reading.start]
        right = text[reading.end : right_end]
        breaks = list(_CLAUSE_BREAK.finditer(left))
        own = (left[breaks[-1].end() :] if breaks else left) + " " + _CLAUSE_BREAK.split(right, maxsplit=1)[0]
        rank = _rank_of(own)
        if rank is None:
            rank = RANK_CUE if index in attached else RANK_PLAIN
        ranks.append(rank)
    top = max(ranks)
    leaders: dict[object, Reading] = {}
    for reading, rank in zip(readings, ranks):
        if rank == top and reading.value not in leaders:
            leaders[reading.value] = reading
    others = sorted({str(r.value) for r in readings} - {str(v) for v in leaders})
    out = []
    for reading in leaders.values():
        if len(leaders) > 1:
            out.append((reading, 0.9, f"one of {len(leaders)} values the sentence names with no rank between them"))
            continue
        if reading.start >= hit.end:
            strength = max(0.45, 1.0 - max(0, reading.start - hit.end - 30) / 250)
        else:
            strength = 0.9 if top == RANK_PRIMARY else 0.7
        why = {RANK_PRIMARY: "ranked first in its sentence", RANK_CUE: "the value the cue governs"}.get(
            top, "the value its sentence does not call secondary"
        )
        out.append((reading, strength, f"{why} (also named: {', '.join(others)})"))
    return out


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
        before = re.search(r"((?:[A-Z][\w'’&()-]*\s+){0,5}[A-Z][\w'’&()-]*?)_*\**\s+$", text[max(0, start - 60) : start])
        if before and re.match(r"(?:position|role|job|post)\b", text[start:end], re.IGNORECASE):
            phrase_start = max(0, start - 60) + before.start(1)
            reading = kinds.title_phrase(an, phrase_start, start)
            if reading is not None:
                yield reading, 0
        return
    if kind == "flag":
        window_start, window_end = an.sentence(start)
        if text[start:window_end].rstrip().endswith("?"):
            # "Would we rehire? Yes, without hesitation": the question only names the flag;
            # the answer that follows it holds the value
            answer = _answer_reading(an, spec, window_end)
            if answer is not None:
                yield answer, 0
            return
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
            if address.name and "@" not in address.name and system_sender(address.name):
                yield from _system_sender(an, spec, address, span, evidence)
            elif address.name and "@" not in address.name:
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


#: How sure a person field is empty when the From display name names a system or an
#: organisation ("Careers Portal", "HR System") and the body is signed by no person.
SYSTEM_SENDER = 0.85


def _system_sender(an: Analysis, spec: FieldSpec, address, span: Span, evidence: tuple[str, ...]) -> Iterator[Candidate]:
    """A From display name made of system or organisation words names no person: the field
    is empty, with the display name as the alternative a reviewer may pick; a person signing
    the body competes with that (the message may be a person's, sent through a system)."""
    at = address.name_span or span
    note = evidence + (f"display name {address.name!r} names a system or an organisation, not a person",)
    yield Candidate(spec.name, None, address.name, at, "header.v1", SYSTEM_SENDER, note, frozenset({"stated_missing", "system_sender"}),
                    alternatives=(Alternative(address.name, 0.3, at),))
    signer = an.roles.signer
    name = an.full_name(signer.name) if signer is not None else ""
    if signer is not None and not is_partial_name(name):
        yield Candidate(spec.name, name, an.text[signer.start : signer.end], Span(signer.start, signer.end), "header.v1", 0.6,
                        evidence + ("display name names no person: the body's signer",))


def _signature_for_address(an: Analysis, spec: FieldSpec, address: str, evidence: tuple[str, ...]) -> Iterator[Candidate]:
    """A From header with no display name: the body's signer, if it is a person."""
    signer = an.roles.signer
    if signer is None:
        yield Candidate(spec.name, None, address, Span(0, 0), "header.v1", 0.6, evidence + ("no display name and no signature",), frozenset({"stated_missing"}))
        return
    name = an.full_name(signer.name)
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
        name = an.full_name(person.name)
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
    sign = False
    for mention in vocabulary.find(an.text, loose=True):
        if mention.ticked is False or mention.negated:
            continue
        if _inside_label(an, mention.start, mention.end):
            continue
        if mention.ticked:
            score = 0.8
            evidence = ("a ticked box",)
        elif siblings:
            if not sign and not an.excluded(mention.start):
                # "Site now | Hilltop" under a label no cue names: the value is likely here,
                # but which of the fields sharing the list it belongs to is not said
                sign = True
                yield Candidate(spec.name, None, "", Span(mention.start, mention.end), "scan.v1", UNREAD_SHARED,
                                (f"{an.text[mention.start:mention.end]!r}, a listed value it shares with {siblings[0].name}, "
                                 "is mentioned with no cue of this field",), frozenset({"unread_value", "fallback"}))
            continue
        else:
            score = 0.28 if not mention.loose else 0.2
            evidence = ("mentioned in the text, no cue",)
        reading = Reading(mention.value, mention.start, mention.end, 1.0, frozenset({"ticked"}) if mention.ticked else frozenset())
        yield _candidate(spec, reading, "scan.v1", score, evidence + (f"variant {mention.variant!r}",), an, fallback=not mention.ticked)
    if not siblings:
        yield from _near_misses(an, spec, vocabulary)


#: How sure a gap is right when a value of a list the field shares with another field is
#: mentioned with no cue of either (unread.v1's scale).
UNREAD_SHARED = 0.5
_CAPITAL_RUN = re.compile(r"(?<![\w.])[A-Z][\w.'’-]*(?:[ \t]+[A-Z][\w.'’-]*){1,3}")


def _near_misses(an: Analysis, spec: FieldSpec, vocabulary: Vocabulary) -> Iterator[Candidate]:
    """Capitalised phrases one or two edits away from a listed value ("Elm Rdge")."""
    exact = {(m.start, m.end) for m in vocabulary.find(an.text, loose=False)}
    for match in _CAPITAL_RUN.finditer(an.text):
        if any(s <= match.start() < e for s, e in exact):
            continue
        words = match.group().split()
        for size in range(len(words), 1, -1):
            phrase = " ".join(words[:size])
            if len(phrase) < 6:
                continue
            misses = vocabulary.near_miss(phrase)
            if misses:
                value, variant, score = misses[0]
                end = match.start() + len(" ".join(an.text[match.start() : match.end()].split()[:size]))
                alternatives = tuple(Alternative(v, s) for v, _, s in misses[1:])  # one entry per value
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
        sentence_start, sentence_end = an.sentence(first.start)
        if second.start >= sentence_end:
            continue  # a move is stated in one sentence (a hard-wrapped one included), not across lines of a header
        between = _unwrapped(an.text[first.end : second.start])
        arrow = bool(re.search(r"→|->|=>|⇒|➔", between))
        before = _unwrapped(an.text[max(sentence_start, first.start - 50) : first.start])
        if not _CONNECTOR.match(between) or not (arrow or re.search(r"\bfrom\b[^.;\n]*$", before, re.IGNORECASE)):
            continue
        chosen = (first, second)[side]
        reading = Reading(chosen.value, chosen.start, chosen.end, 1.0)
        yield _candidate(spec, reading, "transition.v1", 0.86 if arrow else 0.8, ("a move written as from ... to ...",), an)


def _unwrapped(text: str) -> str:
    """Running text with single line breaks (a hard-wrapped paragraph) read as spaces; a
    blank line still ends it."""
    return re.sub(r"(?<!\n)\n(?![ \t]*\n)", " ", text)


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


# --- unclaimed-label.v1 ------------------------------------------------------------------------
#
# A label no field's cues name ("Date employment ends", "Leaving on") whose value reads as
# a field's kind and whose words are the field's own words (its title, its name split at
# "_", its description or its cues, compared by stem) is weak evidence for that field:
# enough to fill a gap for a reviewer, never enough to stand alone (resolve.py keeps it
# under ``review_below`` unless other evidence agrees) or to displace cued evidence.

#: Kinds whose reading says something by itself; free text would fit any label.
UNCLAIMED_KINDS = frozenset("person date money identifier email phone choice flag job_title number".split())
#: Score of a value under an unclaimed label sharing the field's title or name words ...
UNCLAIMED_STRONG = 0.6
#: ... or only words of its description or cues.
UNCLAIMED_WEAK = 0.5
#: Several fields of the value's kind share the label's words equally: each gets this share.
UNCLAIMED_TIED = 0.8


def _field_words(spec: FieldSpec) -> tuple[frozenset[str], frozenset[str]]:
    return field_word_stems(spec.title, spec.name, spec.description, spec.hints.cues)


#: A label that no field's cues name at least this well is open to the fields whose words it
#: shares ("Site before move", named only by a first word shared with "site after change").
CLEAR_CLAIM = 0.7


def _claims(an: Analysis, pair: LabelPair) -> tuple[bool, frozenset[str]]:
    """Whether some field's cues name a pair's label clearly, and the fields that name it at all."""
    return memo(an, ("claims", pair), lambda: _find_claims(an, pair))


def _find_claims(an: Analysis, pair: LabelPair) -> tuple[bool, frozenset[str]]:
    labels = [pair.label] + ([pair.column, f"{pair.column} {pair.label}", f"{pair.label} {pair.column}"] if pair.column else [])
    best = 0.0
    claimers = set()
    for other in an.schema.fields:
        match = max(_best_cue(other, label)[0] for label in labels)
        if match >= MIN_LABEL_MATCH:
            claimers.add(other.name)
            best = max(best, match)
    return best >= CLEAR_CLAIM, frozenset(claimers)


def _shared_words(spec: FieldSpec, label_stems: frozenset[str]) -> tuple[int, tuple[str, ...]]:
    """How well a label's words are the field's words: 2 title/name, 1 description/cues, 0 none."""
    return _shared_stems(*_field_words(spec), label_stems)


@lru_cache(maxsize=16384)
def _shared_stems(strong: frozenset[str], weak: frozenset[str], label_stems: frozenset[str]) -> tuple[int, tuple[str, ...]]:
    for level, stems in ((2, strong), (1, weak)):
        shared = tuple(sorted(word for word in label_stems if any(stems_meet(word, other) for other in stems)))
        if shared:
            return level, shared
    return 0, ()


def _unclaimed_kind_ok(spec: FieldSpec) -> bool:
    kind = spec.hints.kind
    if kind not in UNCLAIMED_KINDS:
        return False
    return kind != "identifier" or (spec.hints.pattern or spec.pattern) is not None


def _kind_reading(an: Analysis, spec: FieldSpec, span: Span) -> Reading | None:
    """The first reading of ``spec``'s kind that stands by itself (no near miss, no guess)."""
    for reading in _ordered(kinds.read(an, spec, span.start, span.end)):
        if reading.value is None or reading.quality <= 0 or "near_miss" in reading.flags:
            continue
        if spec.hints.kind == "job_title" and reading.quality < 0.9:
            continue  # a title needs a recognised head word here ("Library Assistant")
        if spec.hints.kind == "person" and "partial_name" in reading.flags:
            continue
        return reading
    return None


def _unclaimed_pairs(an: Analysis, spec: FieldSpec | None = None) -> list[tuple[LabelPair, frozenset[str]]]:
    """Label/value pairs (table rows and columns included) whose label no field's cues name
    clearly, with the label's word stems (computed once per document); with ``spec``, less
    those whose label ``spec``'s own cues name (label.v1 reads them)."""
    found = memo(an, "unclaimed_pairs", lambda: list(_find_unclaimed_pairs(an)))
    return [(pair, stems) for pair, stems, claimers in found if spec is None or spec.name not in claimers]


def _find_unclaimed_pairs(an: Analysis) -> Iterator[tuple[LabelPair, frozenset[str], frozenset[str]]]:
    for pair in an.pairs:
        if pair.source == "header" or not len(pair.value_span):
            continue
        stems = content_stems(an.text[pair.label_span.start : pair.label_span.end])
        if not stems:
            continue
        clear, claimers = _claims(an, pair)
        if not clear:
            yield pair, stems, claimers


def unclaimed_label_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    if not _unclaimed_kind_ok(spec):
        return
    for pair, stems in _unclaimed_pairs(an, spec):
        level, shared = _shared_words(spec, stems)
        if not level or (spec.hints.kind == "number" and level < 2):
            continue
        reading = _kind_reading(an, spec, pair.value_span)
        if reading is None:
            continue
        tied = False
        for other in an.schema.fields:
            if other.name == spec.name or not _unclaimed_kind_ok(other):
                continue
            other_level, _ = _shared_words(other, stems)
            if other_level < level or _kind_reading(an, other, pair.value_span) is None:
                continue
            if other_level > level:
                break  # the label is another field's more than this one's
            tied = True
        else:
            score = (UNCLAIMED_STRONG if level == 2 else UNCLAIMED_WEAK) * pair.strength * reading.quality
            if tied:
                score *= UNCLAIMED_TIED
            label = an.text[pair.label_span.start : pair.label_span.end]
            where = "title or name" if level == 2 else "description or cues"
            evidence = (
                f"label {label!r} matches no field's cue; it shares {', '.join(shared)!r} with this field's {where}",
                f"layout {pair.source}",
            ) + (("other fields share its words too",) if tied else ())
            reading = Reading(reading.value, reading.start, reading.end, 1.0, reading.flags | {"unclaimed_label", "indirect", "uncued"},
                              reading.facets, reading.alternatives, reading.evidence)
            yield _candidate(spec, reading, "unclaimed-label.v1", score, evidence, an, fallback=True)


# --- unread.v1 ------------------------------------------------------------------------------
#
# Signs that a field's value is in the document but was not read: a label that names the
# field (or an unclaimed label with the field's title words) holds text that does not read
# as the field's kind, or one of its cues occurs in running text.  The candidate has no
# value; resolve.py uses it only when nothing else was found, and then sends the gap to
# review instead of calling it missing.

#: How sure the gap is right when a label for the field holds something unreadable ...
UNREAD_LABEL = 0.4
#: ... when an unclaimed label with the field's title words does ...
UNREAD_UNCLAIMED = 0.55
#: ... when one of its cues occurs in running text with nothing readable near it.
UNREAD_PROSE = 0.6


def _has_content(text: str) -> bool:
    return bool(re.search(r"[^\W_]", text))


def _unread(spec: FieldSpec, start: int, end: int, score: float, evidence: str) -> Candidate:
    return Candidate(spec.name, None, "", Span(start, end), "unread.v1", score, (evidence,), frozenset({"unread_value", "fallback"}))


def unread_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    kind = spec.hints.kind
    for pair, label, match, cue, ownership in _label_matches(an, spec):
        if an.excluded(pair.value_span.start):
            continue
        raw = an.text[pair.value_span.start : pair.value_span.end]
        if not _has_content(raw) or any(r.quality > 0 for r in kinds.read(an, spec, pair.value_span.start, pair.value_span.end)):
            continue
        shown = " ".join(raw.split())[:40]
        yield _unread(spec, pair.value_span.start, pair.value_span.end, UNREAD_LABEL,
                      f"label {an.text[pair.label_span.start:pair.label_span.end]!r} (cue {cue!r}) holds {shown!r}, which does not read as a {kind}")
        return
    if _unclaimed_kind_ok(spec):
        for pair, stems in _unclaimed_pairs(an, spec):
            level, shared = _shared_words(spec, stems)
            if level < 2 or an.excluded(pair.value_span.start) or not _has_content(an.text[pair.value_span.start : pair.value_span.end]):
                continue
            if any(_shared_words(other, stems)[0] >= level for other in an.schema.fields if other.name != spec.name):
                continue
            if _kind_reading(an, spec, pair.value_span) is not None:
                continue
            label = an.text[pair.label_span.start : pair.label_span.end]
            yield _unread(spec, pair.value_span.start, pair.value_span.end, UNREAD_UNCLAIMED,
                          f"label {label!r} shares {', '.join(shared)!r} with this field's title; its value does not read as a {kind}")
            return
    for hit in an.cue_hits.get(spec.name, ()):
        if {norm(hit.cue), norm(an.text[hit.start : hit.end])} & _LABEL_ONLY_CUES:
            continue  # "dated" also finds the word "date", which running text uses for anything
        if _inside_label(an, hit.start, hit.end) or an.excluded(hit.start):
            continue
        yield _unread(spec, hit.start, hit.end, UNREAD_PROSE, f"cue {hit.cue!r} occurs in running text with no {kind} read near it")
        return
    if kind == "date" and {norm(cue) for cue in spec.hints.cues} & {"date", "dated"} and not an.doc.headers and an.dateline is None:
        line = _unread_dateline(an)
        if line is not None:
            shown = " ".join(an.text[line.start : line.end].split())[:40]
            yield _unread(spec, line.start, line.end, UNREAD_PROSE, f"the line {shown!r} near the top names a month and a year but was not read as a date")


#: How sure a gap is right when, after every field is resolved, the document still holds a
#: value of the field's kind that no field took (a date no date field took, an amount no
#: money field took that is not another payment, a job title under a label no field claims).
UNREAD_UNTAKEN = 0.5
#: Kinds whose untaken mentions are a sign: each reads as itself with no cue around it.
UNTAKEN_KINDS = ("date", "money", "job_title")


def untaken_mentions(an: Analysis, spec: FieldSpec, taken: dict[str, tuple[object, Span | None]]) -> list[Reading]:
    """Values of ``spec``'s kind in the document that no field of that kind took, labelled
    ones first.  ``taken`` holds every field's resolved value and span."""
    kind = spec.hints.kind
    if kind not in UNTAKEN_KINDS:
        return []
    same = [taken[other.name] for other in an.schema.fields if other.hints.kind == kind and other.name in taken]
    values = [value for value, _ in same if value is not None]
    spans = [span for value, span in same if value is not None and span is not None]
    if kind == "date":
        readings = [Reading(d.value, d.start, d.end, 1.0, d.flags) for d in an.dates if d.value is not None]
    elif kind == "money":
        readings = [r for r in kinds.read_money(an, spec, 0, len(an.text)) if r.value is not None and "other_payment" not in r.flags]
    else:
        readings = [r for pair in _open_title_pairs(an) if (r := _kind_reading(an, spec, pair.value_span)) is not None]
    own = _own_date_spans(an) if kind == "date" else []
    distractors = negated_stems(spec.description or "")
    out = []
    for reading in readings:
        if an.excluded(reading.start) or "superseded" in reading.flags:
            continue
        if any(kinds.same_value(reading.value, value) for value in values) or any(s.start <= reading.start < s.end for s in spans):
            continue  # the value another field of this kind holds (the letter's date as the offer date)
        if any(s.start <= reading.start < s.end for s in own):
            continue  # the document's own date: when it was written, not a date it is about
        if distractors and _named_before(an, reading.start) & distractors:
            continue  # "Preview: 2 May" for a field whose description says "not the preview date"
        out.append(reading)
    labelled = [pair.value_span for pair in an.pairs if pair.source != "header"]
    out.sort(key=lambda r: (not any(s.start <= r.start < s.end for s in labelled), r.start))
    return out


#: Words of a label that names the document's own date ("Date", "Date of letter", "Date
#: recorded"): besides "date" itself, only these.
_OWN_DATE_WORDS = frozenset(
    "date dated of the this on letter memo note notes form record recorded document issue issued written prepared report".split()
)


def _own_date_spans(an: Analysis) -> list[Span]:
    """Where the document states its own date: the Date header, the date line of a letter,
    the value of a label that names the document's date."""
    spans = [header.span for header in an.doc.headers if header.date is not None]
    if an.dateline is not None:
        spans.append(Span(an.dateline.start, an.dateline.end))
    for pair in an.pairs:
        words = set(pair.label.split())
        if words & {"date", "dated"} and words <= _OWN_DATE_WORDS:
            spans.append(pair.value_span)
    return spans


def _named_before(an: Analysis, start: int) -> frozenset[str]:
    """The content words before a value on its line (its label, or the words leading to it)."""
    line = an.line_of(start)
    return content_stems(an.text[max(line.start, start - 60) : start])


def _open_title_pairs(an: Analysis) -> list[LabelPair]:
    """Label/value pairs that may hold a job title no field took: no job-title field's cues
    name the label, and no field of another kind whose cues name it can read the value
    ("Step up to: Night Shift Lead" is no site, whatever the cue "to" says).  A label that
    is a person's name is a signature or an address block, not a label."""
    out = []
    rows = {row[0].start for table in an.doc.tables for row in table.rows if row}
    for pair in an.pairs:
        if pair.source == "header" or not len(pair.value_span):
            continue
        if pair.source == "next_line" and any(pair.value_span.start <= start < pair.value_span.end for start in rows):
            continue  # a heading over a table: the row is read as its own label and value
        label = an.text[pair.label_span.start : pair.label_span.end]
        found = leading_name(label.strip(" *_#"))
        if found is not None and not is_partial_name(found[2]) and len(found[2]) >= len(label.strip(" *_#:")) - 1:
            continue
        _, claimers = _claims(an, pair)
        owners = [an.schema.field(name) for name in claimers]
        if any(owner.hints.kind == "job_title" for owner in owners):
            continue  # a title field's own label: label.v1 reads it
        if any(
            r.value is not None and r.quality > 0 for owner in owners for r in kinds.read(an, owner, pair.value_span.start, pair.value_span.end)
        ):
            continue  # the value is the claiming field's
        out.append(pair)
    return out


_MONTH = rf"(?:{MONTH_NAMES})\.?"
_MONTH_AND_YEAR = re.compile(rf"\b{_MONTH}(?!\w).*\b(?:1[89]|20)\d\d\b|\b(?:1[89]|20)\d\d\b.*\b{_MONTH}(?!\w)", re.IGNORECASE)


def _unread_dateline(an: Analysis) -> Span | None:
    """A short line near the top naming a month and a year with no date read on it
    ("Fourteenth of April, 2025"): the letter's date, written in a form not read."""
    for line in an.doc.lines[:15]:
        raw = an.text[line.start : line.end].strip(" *_#")
        if not raw or len(raw.split()) > 6 or not _MONTH_AND_YEAR.search(raw):
            continue
        if any(line.start <= d.start < line.end and d.value is not None for d in an.dates):
            continue
        return line
    return None


# --- prose-synonym.v1, prose-title.v1 --------------------------------------------------------
#
# Running text that words a cue differently: a wording the synonym tables read as one of the
# field's cues ("begin on" for "start on", "final shift" for "last day"), or a word of the
# field's own title ("pays" for a field titled "Base pay").  Both are weaker than the cue
# itself and never displace evidence found through the field's cues (flag ``indirect``);
# title words also stay under ``review_below`` when nothing else agrees (flag ``uncued``).

#: Scores of prose evidence through a synonym of a cue, against the cue itself (as for
#: labels read through the synonym tables) ...
PROSE_SYNONYM_FACTOR = 0.95
#: ... and through a word of the field's title.
PROSE_TITLE_FACTOR = 0.6


@lru_cache(maxsize=64)
def _variant_matcher(fields: tuple[tuple[str, tuple[str, ...]], ...]) -> tuple[list[str], list[list[tuple[str, str]]], PhraseSet | None]:
    cues = {norm(cue) for _, field_cues in fields for cue in field_cues}
    variants: list[str] = []
    owners: list[list[tuple[str, str]]] = []
    for name, field_cues in fields:
        for cue in field_cues:
            normed = norm(cue)
            if normed in _LABEL_ONLY_CUES:
                continue
            for variant in synonym_variants(normed):
                if variant in cues:
                    continue
                if variant not in variants:
                    variants.append(variant)
                    owners.append([])
                owners[variants.index(variant)].append((name, cue))
    # the tables list the inflected forms they mean; inflecting them again finds too much
    return variants, owners, PhraseSet(variants) if variants else None


def _variant_hits(an: Analysis) -> dict[str, list[tuple[CueHit, str]]]:
    return memo(an, "variant_hits", lambda: _find_variant_hits(an))


def _cue_spans(an: Analysis) -> list[tuple[int, int]]:
    """Where the fields' cues occur in the document."""
    return memo(an, "cue_spans", lambda: [(hit.start, hit.end) for hits in an.cue_hits.values() for hit in hits])


def _find_variant_hits(an: Analysis) -> dict[str, list[tuple[CueHit, str]]]:
    out: dict[str, list[tuple[CueHit, str]]] = {}
    variants, owners, matcher = _variant_matcher(tuple((spec.name, spec.hints.cues) for spec in an.schema.fields))
    if matcher is not None:
        taken = _cue_spans(an)
        for start, end, index in matcher.find(an.text):
            if _cue_covers(taken, start, end):
                continue  # a cue is here
            for name, cue in dict.fromkeys(owners[index]):
                if any(hit.start == start for hit, _ in out.get(name, ())):
                    continue
                note = f"{an.text[start:end]!r} in running text reads as the cue {cue!r}"
                out.setdefault(name, []).append((CueHit(variants[index], start, end), note))
    return out


def _cue_covers(taken: list[tuple[int, int]], start: int, end: int) -> bool:
    """A cue occurrence overlaps ``start:end`` and is at least as long (the longer wording wins)."""
    return any(s < end and start < e and e - s >= end - start for s, e in taken)


def _flagged(candidates: Iterator[Candidate], flags: frozenset[str]) -> Iterator[Candidate]:
    for candidate in candidates:
        yield replace(candidate, flags=candidate.flags | flags)


def prose_synonym_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    hits = _variant_hits(an).get(spec.name, [])
    yield from _flagged(_prose_candidates(an, spec, hits, "prose-synonym.v1", PROSE_SYNONYM_FACTOR), frozenset({"indirect", "fallback"}))


@lru_cache(maxsize=1024)
def _title_pattern(title: str, name: str) -> re.Pattern[str] | None:
    """The content words of the field's title and name, inflected ("pay" finds "pays")."""
    words = [w for w in dict.fromkeys(norm(f"{title} {name.replace('_', ' ')}").split())
             if w.isalpha() and len(w) >= 3 and w not in GENERIC_LABEL_WORDS and w not in _LABEL_ONLY_CUES and w not in _FILLERS]
    if not words:
        return None
    parts = "|".join(re.escape(stem(w)) + r"(?:e|es|ed|ing|s|er|ers|\w(?:ed|ing))?" for w in words)
    return re.compile(rf"(?<![\w-])(?:{parts})(?![\w-])", re.IGNORECASE)


def prose_title_extractor(an: Analysis, spec: FieldSpec) -> Iterator[Candidate]:
    if not _unclaimed_kind_ok(spec):
        return
    pattern = _title_pattern(spec.title, spec.name)
    if pattern is None:
        return
    taken = _cue_spans(an)
    hits = []
    for match in pattern.finditer(an.text):
        if _cue_covers(taken, match.start(), match.end()):
            continue
        hits.append((CueHit(match.group().lower(), match.start(), match.end()), f"{match.group()!r} is a word of the field's title"))
    yield from _flagged(_prose_candidates(an, spec, hits, "prose-title.v1", PROSE_TITLE_FACTOR), frozenset({"indirect", "uncued", "fallback"}))
