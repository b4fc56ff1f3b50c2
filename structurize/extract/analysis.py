"""Everything the extractors need to know about one document, computed once and lazily.

An :class:`Analysis` wraps a :class:`~structurize.types.Document` with its label/value
pairs, its dates (read in the document's own date order, years and relative dates taken
from the document's own date), money amounts, people and their roles (addressee, signer,
author, someone copied in, someone another person signs for), and where each field's cues
occur.  It holds no state that outlives the document.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass
from typing import Any
from functools import cached_property, lru_cache

from ..schema.model import FieldSpec, TargetSchema
from ..types import Document, Span
from . import dates as datelib
from .layout import LabelPair, find_pairs
from .money import MoneyMention, find_money
from .ner import Entity
from .text import TITLES, PhraseSet, fold, is_partial_name, leading_name, name_core, norm, normalise_name, system_sender
from .vocab import Vocabulary, vocabulary_for

EXCLUDED_REGIONS = ("quoted", "forwarded", "attachment")

_CLOSING = re.compile(
    r"^\s*(?:sincerely|yours sincerely|yours truly|yours faithfully|regards|best regards|kind regards|"
    r"warm regards|warmest regards|best wishes|best|many thanks|thanks|thank you|cheers|respectfully|"
    r"with thanks|all the best|thanks again|with best wishes)\s*[,.!]?\s*$",
    re.IGNORECASE,
)
_ON_BEHALF = re.compile(r"\b(?:on behalf of|for and on behalf of|p\.?p\.?|signing for|for)\s+", re.IGNORECASE)
_DEAR = re.compile(r"^\s*(?:dear|hi|hello|good morning|good afternoon)\s+", re.IGNORECASE)
#: A greeting with no "Dear": a name alone on its line, then a comma ("Aurelio,").
_BARE_GREETING = re.compile(r"^[ \t]*([A-Z][\w'’-]+(?:[ \t]+[A-Z][\w'’-]+){0,2})[ \t]*,[ \t]*$")
_CC = re.compile(r"^\s*(?:cc|copy to|copies to)\s*:\s*", re.IGNORECASE)
_ANCHOR_LABEL_WORDS = {
    "letter", "memo", "note", "notes", "conversation", "interview", "meeting", "request", "submitted",
    "report", "offer", "document", "form", "issue", "issued", "written", "record",
}
_REVISED_BEFORE = re.compile(
    r"(?:\b(?:now|changed to|moved to|revised to|updated to|increased to|decreased to|reduced to|"
    r"rescheduled to|pushed (?:back )?to|brought forward to|amended to|corrected to|new(?: start| last| effective)? date(?: is)?)"
    r"\b[^.;\n]{0,25})$",
    re.IGNORECASE,
)
_SUPERSEDED_BEFORE = re.compile(
    r"(?:\b(?:was|were|originally|previously|formerly|instead of|replaces|replaced|superseded|supersedes|"
    r"original(?:ly)?|old|from|per resignation letter|per (?:the |his |her )?(?:resignation )?letter|initially)\b[^.;\n]{0,30})$",
    re.IGNORECASE,
)
_REVISION_SECTION = re.compile(r"^\W*(?:update[ds]?|correction|corrected|revised|revision|amendment|amended|change)\b", re.IGNORECASE)
_SENTENCE_BREAK = re.compile(r"(?<=[.!?])\s+(?=[A-Z\"“(])|\n\s*\n|\n(?=\s*[-*•]\s)")
#: Words whose full stop does not end a sentence ("Dr. Amara ...").
_ABBREVIATIONS = frozenset("dr mr mrs ms mx st co inc ltd no jr sr vs mt ft dept prof etc approx".split())
#: A capitalised word followed, on the same line, by another: where a full name may start.
#: The second word is only looked at, so that a name on the line after a code or a heading
#: ("REF-047" / "Ana Ruiz") is still found.
_CAPITALISED = re.compile(r"(?<![\w'’-])[A-Z][\w'’-]+(?=[ \t\u00a0]+[A-Z])")
_WRITTEN_BY = re.compile(
    r"\b(?:written|prepared|recorded|compiled|completed|drafted|notes taken|minuted|filled in)\s+by\s*:?\s*|\bauthor\s*:\s*",
    re.IGNORECASE,
)
_MEMO_LABELS = frozenset({"from", "to", "cc", "bcc", "date", "re", "subject", "sent", "attn", "attention", "memo", "memorandum", "ref"})
_MEMO_PARTIES = frozenset({"from", "to", "cc", "bcc", "attn", "attention"})
_FIRST_PERSON = re.compile(r"^(?:i|me|myself|i am|i'm|i've|i will)$", re.IGNORECASE)


@dataclass(frozen=True, slots=True)
class DateRead:
    start: int
    end: int
    value: dt.date | None
    flags: frozenset[str]


@dataclass(frozen=True, slots=True)
class Person:
    start: int
    end: int
    name: str
    source: str  #: ``ner``, ``role`` or ``label``


@dataclass(frozen=True, slots=True)
class CueHit:
    cue: str
    start: int
    end: int


@dataclass(frozen=True)
class Roles:
    addressee: tuple[Person, ...] = ()
    signer: Person | None = None
    principal: Person | None = None  #: someone the signer signs for ("on behalf of X")
    author: Person | None = None  #: a memo's or message's From person
    copied: tuple[Person, ...] = ()


@lru_cache(maxsize=64)
def _schema_cues(fields: tuple[tuple[str, tuple[str, ...]], ...]) -> tuple[list[str], list[list[str]], PhraseSet]:
    """Every distinct cue of a schema, the fields that use it, and one matcher for them all.

    Occurrences do not overlap: where a longer cue (of any field) covers a shorter one, only
    the longer one counts.
    """
    cues: list[str] = []
    owners: list[list[str]] = []
    for name, field_cues in fields:
        for cue in field_cues:
            if cue in cues:
                owners[cues.index(cue)].append(name)
            else:
                cues.append(cue)
                owners.append([name])
    return cues, owners, PhraseSet(cues, inflect=True)


def _anchor_rank(label: str) -> int | None:
    """0 for a label that is just "Date", 1 for "Date of letter" and the like."""
    if label in ("date", "dated"):
        return 0
    words = set(label.split())
    if words & {"date", "dated"} and words & _ANCHOR_LABEL_WORDS:
        return 1
    return None


class Analysis:
    """Lazy, per-document facts for the extractors."""

    def __init__(self, doc: Document, schema: TargetSchema, entities: tuple[Entity, ...] = ()) -> None:
        self.doc = doc
        self.schema = schema
        self.text = doc.text
        self.entities = entities
        #: Facts an extractor works out once per document and reuses (see ``extractors.memo``).
        self.memo: dict[Any, Any] = {}

    @cached_property
    def ocr(self) -> bool:
        """The text (or part of it) was read by OCR, so every value is less certain."""
        return bool({"ocr", "ocr_text_layer"} & set(self.doc.warnings))

    # --- regions and sentences -------------------------------------------------------

    def excluded(self, start: int) -> str | None:
        """The kind of quoted/forwarded region ``start`` lies in, if any."""
        for region in self.doc.regions:
            if region.kind in EXCLUDED_REGIONS and region.span.start <= start < region.span.end:
                return region.kind
        return None

    @cached_property
    def _sentence_starts(self) -> list[int]:
        starts = [0]
        for match in _SENTENCE_BREAK.finditer(self.text):
            before = self.text[max(0, match.start() - 6) : match.start()]
            word = re.split(r"[\s(]", before)[-1].rstrip(".!?").lower()
            if self.text[match.start() - 1 : match.start()] == "." and (word in _ABBREVIATIONS or len(word) == 1):
                continue
            starts.append(match.end())
        previous = None
        for line in self.doc.lines:
            # a line starts a sentence unless it continues a long line cut mid-sentence
            # (PDF text and hard-wrapped mail): "... interviewed by" / "Tomasz Wierzbicki on ..."
            if previous is None or not self._wrapped(previous, line):
                starts.append(line.start)
            previous = line
        return sorted(set(starts))

    def _wrapped(self, previous: Span, line: Span) -> bool:
        before = self.text[previous.start : previous.end].rstrip()
        after = self.text[line.start : line.end].lstrip()
        return (
            len(before) >= 45
            and bool(after)
            and before[-1:].isalnum() | (before[-1:] in ",;-–(")
            and not re.match(r"[-*•·▪◦>#|]|\d+[.)]\s|[\w ]{1,30}:", after)
        )

    def sentence(self, offset: int) -> tuple[int, int]:
        """Bounds of the sentence (or line, for short lines) around ``offset``."""
        import bisect

        starts = self._sentence_starts
        index = bisect.bisect_right(starts, offset) - 1
        start = starts[max(0, index)]
        end = starts[index + 1] if index + 1 < len(starts) else len(self.text)
        return start, end

    def line_of(self, offset: int) -> Span:
        import bisect

        lines = self.doc.lines
        index = bisect.bisect_right([line.start for line in lines], offset) - 1
        return lines[max(0, index)] if lines else Span(0, len(self.text))

    # --- layout ----------------------------------------------------------------------

    @cached_property
    def pairs(self) -> list[LabelPair]:
        return find_pairs(self.doc)

    @cached_property
    def label_spans(self) -> list[Span]:
        return [pair.label_span for pair in self.pairs]

    def pair_with_value(self, start: int) -> LabelPair | None:
        """The label/value pair (not an email header) whose value starts at ``start``."""
        return self._pairs_by_value.get(start)

    @cached_property
    def _pairs_by_value(self) -> dict[int, LabelPair]:
        out: dict[int, LabelPair] = {}
        for pair in self.pairs:
            if pair.source != "header":
                out.setdefault(pair.value_span.start, pair)
        return out

    @cached_property
    def memo_header_values(self) -> list[Span]:
        """The values of a memo's own From/To/Cc lines: a run of three or more header-like
        label lines ("From:", "To:", "Date:", "Re:" ...) holding a From or a To line.  They
        name people and mailboxes, not the places or departments a record is about.  A From
        and a To line alone count too: their values are read as sites only when they are
        nothing but a listed value (:func:`kinds.read_vocab`)."""
        lines = [pair for pair in self.pairs if pair.source in ("line", "gap") and pair.label in _MEMO_LABELS]
        out: list[Span] = []
        run: list[LabelPair] = []

        def close() -> None:
            labels = {pair.label for pair in run}
            if (len(run) >= 3 and labels & {"from", "to"}) or {"from", "to"} <= labels:
                out.extend(pair.value_span for pair in run if pair.label in _MEMO_PARTIES)

        for pair in lines:
            if run and self.text.count("\n", run[-1].value_span.end, pair.label_span.start) > 2:
                close()
                run = []
            run.append(pair)
        close()
        return out

    def memo_header_value(self, offset: int) -> Span | None:
        """The memo From/To/Cc value ``offset`` lies in, if any."""
        return next((span for span in self.memo_header_values if span.start <= offset < max(span.end, span.start + 1)), None)

    # --- dates -------------------------------------------------------------------------

    @cached_property
    def date_mentions(self) -> list[datelib.DateMention]:
        return datelib.find_dates(self.text)

    @cached_property
    def date_order(self) -> tuple[str, bool, str]:
        return datelib.document_order(self.text, self.date_mentions, self.schema.date_order)

    @cached_property
    def anchor(self) -> tuple[dt.date | None, str]:
        """The document's own date and where it came from."""
        header = self.doc.header("Date")
        if header is not None and header.date is not None:
            return header.date.date(), "date header"
        order, known, _ = self.date_order
        best: tuple[int, dt.date] | None = None
        for pair in self.pairs:
            rank = _anchor_rank(pair.label)
            if rank is None:
                continue
            span = pair.value_span
            mention = next((m for m in self.date_mentions if span.start <= m.start < span.end), None)
            if mention is None:
                continue
            value, _ = datelib.resolve(mention, self.text, order, None, known)
            if value is not None and (best is None or rank < best[0]):
                best = (rank, value)
        if best is not None:
            return best[1], "date label"
        dateline = self.dateline
        if dateline is not None and dateline.value is not None:
            return dateline.value, "dateline"
        first = self._first_full_date()
        if first is not None:
            return first, "first date"
        years = [m.parts[2] if m.parts else m.value.year for m in self.date_mentions if (m.value or (m.parts and m.parts[2]))]
        if years:
            year = max(set(years), key=years.count)
            return dt.date(year, 6, 30), "common year"
        return None, ""

    def _first_full_date(self) -> dt.date | None:
        """The first date with a year in the first third of the document (notes of a meeting
        usually open with the meeting's date)."""
        order, known, _ = self.date_order
        limit = max(200, len(self.text) // 3)
        for mention in self.date_mentions:
            if mention.start > limit:
                break
            if mention.kind == "relative" or (mention.parts and not mention.parts[2]):
                continue
            if self.excluded(mention.start):
                continue
            value, _ = datelib.resolve(mention, self.text, order, None, known)
            if value is not None:
                return value
        return None

    @cached_property
    def dateline(self) -> DateRead | None:
        """A line near the top that holds only a date (the date of a letter)."""
        order, known, _ = self.date_order
        for line in self.doc.lines[:15]:
            raw = self.text[line.start : line.end].strip(" *_#")
            if not raw:
                continue
            for mention in self.date_mentions:
                if line.start <= mention.start < line.end:
                    covered = self.text[mention.start : mention.end]
                    if len(covered) >= len(raw) - 2:
                        value, flags = datelib.resolve(mention, self.text, order, None, known)
                        if value is not None:
                            return DateRead(mention.start, mention.end, value, flags)
                    break
        return None

    @cached_property
    def dates(self) -> list[DateRead]:
        order, known, _ = self.date_order
        anchor, source = self.anchor
        weak = source in ("common year", "first date")
        out = []
        for mention in self.date_mentions:
            value, flags = datelib.resolve(mention, self.text, order, anchor, known)
            if weak and ("relative" in flags or "year_inferred" in flags):
                flags = flags | {"weak_anchor"}
            out.append(DateRead(mention.start, mention.end, value, flags))
        return out

    # --- money -------------------------------------------------------------------------

    @cached_property
    def money(self) -> list[MoneyMention]:
        return find_money(self.text)

    # --- people ------------------------------------------------------------------------

    @cached_property
    def ner_people(self) -> list[Person]:
        out = []
        for entity in self.entities:
            if entity.label != "PERSON":
                continue
            raw = entity.text
            if raw.endswith(("'s", "’s")):
                raw = raw[:-2]
            found = leading_name(raw, entity.start)
            if found is not None:
                out.append(Person(found[0], found[1], found[2], "ner"))
        return out

    def ner_overlaps(self, start: int, end: int, label: str = "PERSON") -> bool:
        return any(e.label == label and e.start < end and start < e.end for e in self.entities)

    def person_at(self, raw: str, offset: int) -> Person | None:
        """The personal name ``raw`` starts with (``offset`` is where ``raw`` starts), if any."""
        stripped = raw.lstrip(" \t*_")
        start = offset + len(raw) - len(stripped)
        initials = re.match(r"[A-Z]{2,3}\b(?!['’\w-])", stripped)
        if initials:  # "Recorded by AO": initials of someone named in full elsewhere
            full = self.complete_name(initials.group())
            return Person(start, start + initials.end(), full, "role") if full else None
        found = leading_name(stripped, start)
        if found is None or self.is_listed_value(found[2]):
            return None
        return Person(found[0], found[1], found[2], "role")

    def is_listed_value(self, phrase: str) -> bool:
        """True when ``phrase`` is a value of one of the schema's choice fields (a site...)."""
        return any(v.find(phrase, loose=False) for v in self.vocabularies.values() if v.kind == "choice")

    @cached_property
    def roles(self) -> Roles:
        text = self.text
        table_rows = {row[0].start for table in self.doc.tables for row in table.rows if row}
        lines = [
            line for line in self.doc.lines
            if not self.excluded(line.start) and not any(line.start <= s <= line.end for s in table_rows)
        ]
        addressee: list[Person] = []
        copied: list[Person] = []
        signer = principal = author = None
        for index, line in enumerate(lines):
            raw = text[line.start : line.end]
            dear = _DEAR.match(raw)
            if dear and not addressee:
                person = self.person_at(raw[dear.end() :].rstrip(",:;"), line.start + dear.end())
                if person:
                    addressee.append(person)
            cc = _CC.match(raw)
            if cc:
                for piece in re.finditer(r"[^;,]+", raw[cc.end() :]):
                    person = self.person_at(piece.group(), line.start + cc.end() + piece.start())
                    if person:
                        copied.append(person)
            if _CLOSING.match(raw):
                for follow in lines[index + 1 : index + 4]:
                    if not text[follow.start : follow.end].strip():
                        continue
                    person = self.person_at(text[follow.start : follow.end], follow.start)
                    if person:
                        signer = person
                        principal = self._principal(lines, lines.index(follow)) or principal
                        break
        if not addressee:
            addressee.extend(self._bare_salutation(lines))
        if signer is None:
            signer = self._signature_guess(lines)
            if signer is not None:
                principal = self._principal(lines, next(i for i, l in enumerate(lines) if l.start <= signer.start < l.end + 1))
        for header_name in ("From",):
            header = self.doc.header(header_name)
            if header is not None and header.addresses and header.addresses[0].name and not system_sender(header.addresses[0].name):
                address = header.addresses[0]
                span = address.name_span or header.span
                author = Person(span.start, span.end, normalise_name(address.name), "role")
        if author is None:
            for match in _WRITTEN_BY.finditer(text):
                if not self.excluded(match.start()):
                    author = self.person_at(text[match.end() : match.end() + 80], match.end())
                    if author:
                        break
        if author is None:
            for pair in self.pairs:
                if pair.label == "from" and pair.source in ("line", "gap"):
                    author = self.person_at(text[pair.value_span.start : pair.value_span.end], pair.value_span.start)
                    if author:
                        break
        if not addressee:
            for pair in self.pairs:
                if pair.label == "to" and pair.source in ("line", "gap", "header"):
                    person = self.person_at(text[pair.value_span.start : pair.value_span.end], pair.value_span.start)
                    if person:
                        addressee.append(person)
                        break
        return Roles(tuple(addressee), signer, principal, author, tuple(copied))

    def _bare_salutation(self, lines: list) -> list[Person]:
        """A greeting with no "Dear": a line holding only a name and a comma ("Aurelio,")
        that opens the body, i.e. comes before the closing and is followed by running text."""
        filled = [line for line in lines if self.text[line.start : line.end].strip()]
        for index, line in enumerate(filled[:-1]):
            raw = self.text[line.start : line.end]
            if _CLOSING.match(raw):
                return []  # the body has ended: a name after it signs, it does not greet
            match = _BARE_GREETING.match(raw)
            if not match:
                continue
            after = self.text[filled[index + 1].start : filled[index + 1].end].strip()
            if len(after.split()) < 4 or not after[:1].isalpha():
                continue  # a name line in an address block or a signature, not a greeting
            person = self.person_at(match.group(1), line.start + match.start(1))
            if person is not None:
                return [person]
        return []

    def _principal(self, lines: list, index: int) -> Person | None:
        for follow in lines[index : index + 3]:
            raw = self.text[follow.start : follow.end]
            match = _ON_BEHALF.search(raw)
            if match and ("behalf" in match.group().lower() or match.start() > 0 and raw[: match.start()].rstrip().endswith(",")):
                person = self.person_at(raw[match.end() :], follow.start + match.end())
                if person:
                    return person
        return None

    def _signature_guess(self, lines: list) -> Person | None:
        """With no closing line, a name alone on one of the last lines is the signer."""
        tail = [line for line in lines if self.text[line.start : line.end].strip()][-4:]
        for line in reversed(tail):
            raw = self.text[line.start : line.end]
            person = self.person_at(raw, line.start)
            head = raw.strip().split("|")[0].split(",")[0].strip()
            if person and len(person.name.split()) >= 2 and (person.end - person.start) >= len(head) - 1:
                return person
        return None

    @cached_property
    def known_names(self) -> list[str]:
        """Full names (a given name and a surname) seen anywhere: NER, labelled values, capitalised runs."""
        names = [p.name for p in self.ner_people]
        for pair in self.pairs:
            found = leading_name(self.text[pair.value_span.start : pair.value_span.end])
            if found:
                names.append(found[2])
        covered = 0
        for match in _CAPITALISED.finditer(self.text):
            if match.start() < covered:
                continue  # a later word of a name already read ("Osei" in "Kwabena Osei")
            found = leading_name(self.text[match.start() : match.start() + 80], match.start())
            if found and len(found[2].split()) >= 2:
                names.append(found[2])
                covered = found[1]
        return [name for name in dict.fromkeys(names) if not is_partial_name(name) and not self.is_listed_value(name)]

    def full_name(self, name: str) -> str:
        """``name`` completed to the document's full name when one fits (else as it is)."""
        return self.complete_name(name) or name

    def complete_name(self, name: str) -> str | None:
        """Expand a short name ("Carlos", "Ms. Rahman", "F. MacAllister", "De Luca") to the
        full one, when exactly one full name in the document fits it."""
        name = " ".join(word for word in name.split() if not TITLES.match(word))
        if not name:
            return None
        if not is_partial_name(name):
            return name
        tokens = fold(name).split()
        core = name_core(fold(name))
        initials = name.strip(".").upper() if re.fullmatch(r"[A-Z]{2,3}\.?", name.strip()) else None
        matches = []
        for full in self.known_names:
            full_tokens = fold(full).split()
            if initials and "".join(t[0] for t in full.split() if t[:1].isupper()).upper() == initials:
                matches.append(full)
            elif len(tokens) == 1 and tokens[0] in (full_tokens[0], full_tokens[-1]):
                matches.append(full)
            elif len(core) == 1 and len(tokens) > 1 and full_tokens[-len(tokens) :] == tokens and len(full_tokens) > len(tokens):
                matches.append(full)  # a surname with its particles: "De Luca" in "Stefano De Luca"
            elif len(tokens) >= 2 and tokens[-1] == full_tokens[-1] and full_tokens[0].startswith(tokens[0].rstrip(".")):
                matches.append(full)
        unique = list(dict.fromkeys(matches))
        if len(unique) == 1:
            return unique[0]
        return None

    def first_person(self, phrase: str) -> bool:
        return bool(_FIRST_PERSON.match(phrase.strip()))

    # --- cues ----------------------------------------------------------------------------

    @cached_property
    def cue_hits(self) -> dict[str, list[CueHit]]:
        """Where each field's cues occur; a hit inside a longer cue of another field is dropped."""
        cues, owners, phrases = _schema_cues(tuple((spec.name, spec.hints.cues) for spec in self.schema.fields))
        out: dict[str, list[CueHit]] = {spec.name: [] for spec in self.schema.fields}
        for start, end, index in phrases.find(self.text):
            for name in owners[index]:
                out[name].append(CueHit(cues[index], start, end))
        return out

    @cached_property
    def vocabularies(self) -> dict[str, Vocabulary]:
        return {spec.name: vocabulary_for(spec.hints) for spec in self.schema.fields if spec.hints.kind in ("choice", "flag")}

    # --- revisions -------------------------------------------------------------------------

    @cached_property
    def _revision_sections(self) -> list[tuple[int, int]]:
        out = []
        for line in self.doc.lines:
            raw = self.text[line.start : line.end]
            if _REVISION_SECTION.match(raw.lstrip("*#>-• ")):
                start, end = self.sentence(line.start)
                out.append((line.start, max(end, line.end)))
        return out

    def revision(self, start: int, *, kind: str) -> str | None:
        """``revised`` / ``superseded`` when the words before a value say so."""
        line = self.line_of(start)
        clause_start = max(line.start, start - 60)
        before = self.text[clause_start:start]
        before = re.split(r"[.;!?]\s|--|\s[–—]\s", before)[-1] if before else before
        superseded = _SUPERSEDED_BEFORE.search(before) if kind in ("date", "money") else None
        revised = _REVISED_BEFORE.search(before)
        if superseded and revised:  # "was 08/04/2025, now 08/18/2025": the nearer word decides
            return "revised" if revised.start() > superseded.start() else "superseded"
        if superseded:
            return "superseded"
        if revised:
            return "revised"
        if any(s <= start < e for s, e in self._revision_sections):
            return "revised"
        return None

    def field(self, name: str) -> FieldSpec:
        return self.schema.field(name)

    def value_text(self, span: Span) -> str:
        return self.text[span.start : span.end]

    def label_norm(self, span: Span) -> str:
        return norm(self.text[span.start : span.end])
