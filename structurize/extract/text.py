"""Text helpers shared by the extractors: normalising labels, matching cues, names."""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterator
from functools import lru_cache
from itertools import islice

from rapidfuzz.distance import Levenshtein

_DASHES = dict.fromkeys(map(ord, "‐‑‒–—―−"), "-")
_QUOTES = dict.fromkeys(map(ord, "‘’‛′"), "'")
_NON_LABEL = re.compile(r"[^\w&/'+#\- ]+")
_SPACES = re.compile(r"\s+")
WORD = re.compile(r"[^\W_]+(?:['’\-][^\W_]+)*")


@lru_cache(maxsize=65536)
def norm(text: str) -> str:
    """Fold a label or cue for comparison: case, dashes, punctuation and spacing."""
    text = unicodedata.normalize("NFKC", text).translate(_DASHES).translate(_QUOTES).lower()
    text = text.replace("*", " ").replace("_", " ").replace("`", " ")
    text = _NON_LABEL.sub(" ", text)
    return _SPACES.sub(" ", text).strip(" -/")


def fold(text: str) -> str:
    """Normalise free text for comparing values: NFKC, casefold, dashes, spaces."""
    text = unicodedata.normalize("NFKC", text).translate(_DASHES).translate(_QUOTES).casefold()
    return _SPACES.sub(" ", text).strip()


#: Label words that HR forms use for the words cues use (common practice, no source).
LABEL_SYNONYMS = {
    "remuneration": "salary", "compensation": "salary", "wage": "salary", "wages": "salary", "earnings": "salary",
    "basic": "base",
    "hourly": "pay", "commencement": "start", "commencing": "start", "beginning": "start", "begin": "start", "begins": "start",
    "joining": "start", "final": "last",
    "leaver": "employee", "staff": "employee", "worker": "employee", "colleague": "employee",
    "appointee": "candidate", "applicant": "candidate",
    "re-employ": "rehire", "re-employment": "rehire", "re-engage": "rehire", "re-engagement": "rehire", "reemploy": "rehire",
    "re-employed": "rehire", "re-hire": "rehire", "rehired": "rehire",
    "issued": "dated", "written": "dated", "present": "current", "currently": "current", "existing": "current",
    "home": "current", "destination": "new", "receiving": "new", "target": "new", "incoming": "new",
    "future": "new", "after": "new", "post": "role", "position": "role", "job": "role", "title": "role", "designation": "role",
    "authorised": "approved", "authorized": "approved", "signed-off": "approved", "sanctioned": "approved",
    "workplace": "site", "location": "site", "depot": "site", "team": "department", "division": "department",
    "function": "department", "dept": "department", "section": "department", "directorate": "department",
    "area": "department",
    "emp": "employee", "empl": "employee",
    "no": "number", "ref": "number", "#": "number", "nr": "number", "num": "number",
}


#: Whole phrases first (common practice, no source).
LABEL_PHRASES = {
    "reporting line": "reports to", "line manager": "manager", "reports into": "reports to",
    "final shift": "last day", "last shift": "last day", "final working day": "last day",
    "last working day": "last day", "leaving date": "last day", "date of leaving": "last day",
    "employment end date": "last day", "end of employment": "last day", "employment ends": "last day",
    "separation date": "last day", "date of separation": "last day", "exit date": "last day",
    "termination date": "last day", "date of termination": "last day",
    "leaving on": "last day", "leaves on": "last day", "finishing on": "last day",
    "first working day": "first day", "date of joining": "start date", "join date": "start date",
    "reason for resigning": "reason for leaving", "reason for resignation": "reason for leaving",
    "resignation reason": "reason for leaving", "reason for departure": "reason for leaving",
    "departure reason": "reason for leaving", "leaving reason": "reason for leaving", "exit reason": "reason for leaving",
    "principal reason": "main reason", "key reason": "main reason",
    "carried out by": "conducted by",
    "service area": "department", "business unit": "department",
    "place of work": "work location", "base of work": "work location", "work base": "work location",
    "new hire": "candidate",
    "start in new role": "effective date", "date of change": "effective date", "spoke with": "interviewer",
    "staff number": "employee number", "payroll number": "employee number", "personnel number": "employee number",
    "payroll ref": "employee number", "payroll reference": "employee number", "payroll id": "employee id",
    "payroll no": "employee number", "badge number": "employee number", "clock number": "employee number",
    "staff member": "employee", "team member": "employee",
    "based at": "site", "based in": "site", "new base": "new site", "current base": "current site", "home base": "current site",
    "moving to": "transfer to", "move to": "transfer to", "relocating to": "transfer to", "transferring to": "transfer to",
    "signed off by": "approved by", "signed off": "approved", "signed-off by": "approved by",
    "sign-off": "approval", "sign off": "approval", "signoff": "approval",
    "departing employee": "employee", "leaving employee": "employee", "outgoing employee": "employee", "exiting employee": "employee",
    "notes taken by": "interviewed by", "exit interview conducted by": "interview conducted by", "interviewing manager": "interviewer",
    "date of issue": "dated", "issue date": "dated",
}

#: Labels that mean a field only when they stand alone, as a label ("Leaving: <name>" is the
#: person who leaves, "Leaving date" is not; "Destination: <site>" is where someone moves to;
#: "Taken by" on interview notes is the interviewer), with every reading the label may have
#: (common practice, no source).  Running text does not read them (see
#: :func:`synonym_variants`).
LABEL_ALONE = {
    "leaving": ("employee",), "leaver": ("employee",), "departing": ("employee",),
    "destination": ("new site", "transfer to"), "moving to": ("new site", "transfer to"),
    "new base": ("new site", "transfer to"), "transferring to": ("new site", "transfer to"),
    "person leaving": ("employee",), "employee leaving": ("employee",), "who is leaving": ("employee",),
    "notes by": ("interviewed by",), "taken by": ("interviewed by",), "interview by": ("interviewed by",),
    "exit interview by": ("interviewed by",),
}
_LONGEST_FIRST = sorted(LABEL_PHRASES.items(), key=lambda item: -len(item[0]))
#: A label ending in "now" names the present state: "Site now" is the current site.
_NOW_LABEL = re.compile(r"^(?P<rest>.+?) (?:now|at present|currently|today)$")


@lru_cache(maxsize=65536)
def canonical_label(label: str) -> str:
    """A label with HR synonyms mapped to the words cues use ("Remuneration" → "salary")."""
    if label in LABEL_ALONE:
        return LABEL_ALONE[label][0]
    for phrase, replacement in _LONGEST_FIRST:
        if phrase in label:
            label = re.sub(rf"(?<![\w#]){re.escape(phrase)}(?![\w#])", replacement, label)
    now = _NOW_LABEL.match(label)
    if now:
        label = "current " + now.group("rest")
    words = []
    for word in label.split():
        words.extend(LABEL_SYNONYMS.get(word, word).split())
    return " ".join(words)


@lru_cache(maxsize=4096)
def synonym_variants(cue: str) -> tuple[str, ...]:
    """Other wordings the synonym tables read as ``cue`` (already :func:`norm`-ed):
    "start on" → "begin on", "commencing on" ...; "last day" → "final shift", "final day" ...

    Whole phrases of :data:`LABEL_PHRASES` whose reading is the cue, and the cue with one
    word replaced by a word :data:`LABEL_SYNONYMS` maps to it.
    """
    target = canonical_label(cue)
    found = [phrase for phrase in LABEL_PHRASES if canonical_label(phrase) == target]
    words = cue.split()
    for index, word in enumerate(words):
        base = LABEL_SYNONYMS.get(word, word)
        for synonym, meaning in LABEL_SYNONYMS.items():
            if meaning == base and synonym != word:
                variant = " ".join(words[:index] + [synonym] + words[index + 1 :])
                if canonical_label(variant) == target:
                    found.append(variant)
    return tuple(dict.fromkeys(v for v in found if v != cue))


@lru_cache(maxsize=65536)
def cue_match(cue: str, label: str) -> float:
    """How well a field cue names a label, 0..1 (both already :func:`norm`-ed).

    The label is compared as written, then with its words reduced to their stems
    ("Transferring to" / "transfer to"), then with HR synonyms mapped on both sides
    ("Remuneration" / "salary"); the two later forms score 0.95 of a literal match.
    """
    if label in LABEL_PHRASES:
        # a label that is one known phrase is read as that phrase only: "Start in new role" is
        # the date of the change, not the new role
        if cue == label:
            return 1.0
        readings = LABEL_ALONE.get(label, (canonical_label(label),))
        return round(0.95 * max(_cue_match(canonical_label(cue), reading) for reading in readings), 6)
    score = _cue_match(cue, label)
    variants = [(canonical_label(cue), canonical_label(label))]
    variants += [(canonical_label(cue), reading) for reading in LABEL_ALONE.get(label, ())[1:]]
    if " " in cue and " " in label:  # stems only for phrases: "requested" is not "request"
        variants.append((_stems(cue), _stems(label)))
    for variant_cue, variant_label in variants:
        if (variant_cue, variant_label) != (cue, label):
            score = max(score, 0.95 * _cue_match(variant_cue, variant_label))
    return round(score, 6)  # 0.6 + 0.3 is 0.9, not 0.8999999999999999


_AGENT_WORDS = re.compile(r"(?:ed|en|er|or)$")
#: Words ending like a doer ("-er", "-or") or a participle ("-en") that name none (common
#: practice, no source).
_NOT_DOERS = frozenset(
    """after center centre chapter color colour corner december door error factor floor junior labor labour
    later letter major manor matter member minor november number october offer order other over paper
    prior quarter register senior sector september summer tenor transfer under water winter
    garden often open seven ten token kitchen""".split()
)


def agent_cue(cue: str) -> bool:
    """A cue that names who did something: "interviewed by", "approved", "interviewer"
    (not "employee number" or "offer letter": a word ending in -er is not always a doer)."""
    words = cue.split()
    if not words:
        return False
    last = words[-1]
    return last == "by" or (bool(_AGENT_WORDS.search(last)) and last not in GENERIC_LABEL_WORDS and last not in _NOT_DOERS)


def agent_label(label: str) -> bool:
    """A label that names who did something: "Exit interview by", "Request by"."""
    words = label.split()
    return len(words) >= 2 and words[-1] == "by"


#: Words that carry no meaning of their own when a label is compared with a field's words.
_STOP_WORDS = frozenset(
    """a an the of to by on at for from in with as and or is are was were be been being will would shall should
    can could may might must do does did has have had not no nor this that these those it its who whom whose
    which what when where why how he she they we you i me him her them us his hers their our your my any all
    each every other than only also just so such very if then there here into onto out up about over under
    per via one ones new""".split()
)
#: Words that say what sort of value a label holds ("Date", "Name"), not what it is about.
GENERIC_LABEL_WORDS = frozenset(
    """date dated dates day days name names number numbers no id code value values detail details info
    information field fields type kind entry item items full given actual record recorded""".split()
)
#: Words after which a field description says what the field is *not*; such a sentence
#: names the distractors ("Not the notice date"), so its words are left out.
_NEGATION = re.compile(r"\b(?:not|excludes?|excluding|without|never|except|nor|other than|rather than|does not count|do not count)\b", re.IGNORECASE)
_SENTENCES = re.compile(r"(?<=[.!?;])\s+")


@lru_cache(maxsize=65536)
def content_stems(text: str) -> frozenset[str]:
    """The stems of a label's (or a field text's) content words, with HR synonyms added:
    "Date employment ends" → {employ, end}.  Stop words and generic words are left out."""
    words = set()
    for word in norm(text).replace("/", " ").split():
        word = word.removesuffix("'s").strip("'")
        if word in _STOP_WORDS or word in GENERIC_LABEL_WORDS or not any(ch.isalpha() for ch in word):
            continue
        words.add(word)
        synonym = LABEL_SYNONYMS.get(word)
        if synonym and synonym not in GENERIC_LABEL_WORDS:
            words.add(synonym)
    return frozenset(stem(word) for word in words if len(word) > 2)


def stems_meet(a: str, b: str) -> bool:
    """Two stems of one word family: equal, or one is the other with a short ending
    ("leav" / "leaver", "employ" / "employer")."""
    if a == b:
        return True
    short, long = sorted((a, b), key=len)
    return len(short) >= 4 and long.startswith(short) and len(long) - len(short) <= 2


@lru_cache(maxsize=4096)
@lru_cache(maxsize=1024)
def negated_stems(description: str) -> frozenset[str]:
    """The content words of a description's sentences that say what the field is not ("Not
    the preview or rehearsal date" → preview, rehears)."""
    sentences = [sentence for sentence in _SENTENCES.split(description) if _NEGATION.search(sentence)]
    return content_stems(" ".join(sentences)) if sentences else frozenset()


def field_word_stems(title: str, name: str, description: str, cues: tuple[str, ...]) -> tuple[frozenset[str], frozenset[str]]:
    """What a field is about, as word stems: ``(strong, weak)``.

    Strong words come from the field's title and its name split at ``_``; weak ones from
    its description (leaving out sentences that say what the field is not) and its cues.
    """
    strong = content_stems(title) | content_stems(name.replace("_", " "))
    kept = [sentence for sentence in _SENTENCES.split(description or "") if not _NEGATION.search(sentence)]
    weak = content_stems(" ".join(kept))
    for cue in cues:
        weak |= content_stems(cue)
    return strong, weak - strong


def _stems(phrase: str) -> str:
    return " ".join(stem(word) if word.isalpha() and len(word) > 3 else word for word in phrase.split())


def _cue_match(cue: str, label: str) -> float:
    """Exact equality scores 1.  A cue inside the label scores by how much of the label's
    content words it covers; a shortened label that starts the cue, the cue's words in
    another order, or the same distinguishing first word score less.  A small misspelling
    of the whole label (one edit in a short label, two in a long one) still scores well.
    """
    if not cue or not label:
        return 0.0
    if cue == label:
        return 1.0
    label_words = label.split()
    cue_words = cue.split()
    content = [word for word in label_words if word not in _PREPOSITIONS and word not in _QUESTION_WORDS and word not in _QUALIFIERS] or label_words
    score = 0.0
    if _contains_words(label_words, cue_words):
        cue_content = [w for w in cue_words if w not in _PREPOSITIONS]
        # "Reports to" is about reporting, not about "to": a function-word cue covers little
        coverage = min(1.0, len(cue_content) / len(content)) if cue_content else len(cue_words) / len(label_words)
        score = (0.8 + 0.2 * coverage) if len(cue_words) > 1 else (0.6 + 0.3 * coverage)
    elif len(label_words) < len(cue_words) and cue_words[: len(label_words)] == label_words:
        # a shortened label: "Current:" for the cue "current site"; "Start:" for "start date"
        # leaves out only what kind of value it is, which the value itself shows
        score = 0.55 + 0.3 * len(label_words) / len(cue_words)
        if all(word in GENERIC_LABEL_WORDS for word in cue_words[len(label_words) :]):
            score = 0.9
    elif len(cue_words) >= 2 and set(cue_words) <= set(label_words):
        # the cue's words in another order: "Name of employee" for "employee name"
        score = 0.8 + 0.15 * len(cue_words) / len(content)
    elif (
        len(label_words) >= 2 <= len(cue_words)
        and label_words[0] == cue_words[0]
        and label_words[-1] not in _PREPOSITIONS
        and label_words[0] not in _PREPOSITIONS
    ):
        # the same distinguishing first word: "Proposed assignment" for "proposed site"
        score = 0.62
    limit = 1 if len(label) <= 10 else 2
    if abs(len(cue) - len(label)) <= limit and len(label) >= 4:
        distance = Levenshtein.distance(cue, label, score_cutoff=limit)
        if distance <= limit:
            score = max(score, 0.9 - 0.05 * distance)
    return score


_PREPOSITIONS = frozenset("a an the of to by on at for from in with as and or is".split())
#: Words that qualify what a label names without changing it ("Full name of employee").
_QUALIFIERS = frozenset("full complete actual official legal".split())
#: Words that make a label a question ("Would we rehire?"), not what it is about.
_QUESTION_WORDS = frozenset("would will should could can do does did are was were we you they he she i this".split())


def _contains_words(haystack: list[str], needle: list[str]) -> bool:
    size = len(needle)
    return any(haystack[i : i + size] == needle for i in range(len(haystack) - size + 1))


def find_phrase(text: str, phrase: str, *, inflect: bool = False) -> Iterator[tuple[int, int]]:
    """Word-bounded, case-insensitive occurrences of ``phrase`` in ``text``.

    Spaces in the phrase match any run of whitespace; a phrase that is all capitals and at
    most four letters (an abbreviation such as ``NQ`` or ``HR``) matches case-sensitively.
    With ``inflect``, words also match their inflected forms ("start on" finds "starting
    on") and an adverb may sit between two words ("reporting directly to").
    """
    pattern = _phrase_regex(phrase, inflect)
    for match in pattern.finditer(text):
        yield match.start(), match.end()


_SUFFIXES = ("ments", "ment", "ions", "ion", "ings", "ing", "ies", "ied", "ed", "es", "s", "e")


@lru_cache(maxsize=65536)
def stem(word: str) -> str:
    """A crude English stem for matching variants: two passes of suffix stripping."""
    word = word.lower().replace("’", "'")
    for _ in range(2):
        for suffix in _SUFFIXES:
            if word.endswith(suffix) and len(word) - len(suffix) >= 3:
                word = word[: -len(suffix)]
                break
    return word


_PRONOUNS = frozenset("us you me him her them".split())


def _inflected(word: str) -> str:
    if word.lower() in _PRONOUNS:
        return r"\S+(?:\s+\S+){0,7}?"  # "join us as" also finds "join the billing office at Acme Co. as"
    if not word.isalpha() or len(word) < 4:
        return re.escape(word)
    root = stem(word)  # "interviewed" → "interview": also finds "interview by"
    return re.escape(root) + r"(?:e|es|ed|ing|s|er|ers|ion|ions|ment|\w(?:ed|ing))?"


_WORD_RUN = re.compile(r"\w+")


class PhraseSet:
    """Many phrases searched in one pass: one regular expression per case rule.

    ``find(text)`` yields ``(start, end, index)`` for non-overlapping occurrences, leftmost
    first and, where two phrases start at the same place, the longest; ``index`` is the
    phrase's position in the list given.  Matching follows :func:`find_phrase`.
    """

    def __init__(self, phrases: list[str], *, inflect: bool = False) -> None:
        groups: dict[bool, list[str]] = {True: [], False: []}
        order = sorted(range(len(phrases)), key=lambda i: -len(phrases[i]))
        for index in order:
            pattern = _phrase_regex(phrases[index], inflect)
            groups[bool(pattern.flags & re.IGNORECASE)].append(f"(?P<p{index}>{pattern.pattern})")
        self.patterns = [
            re.compile("|".join(parts), re.IGNORECASE if insensitive else 0) for insensitive, parts in groups.items() if parts
        ]
        # A phrase that starts with a letter or digit can only match at the start of a word
        # whose first letters are its own (an inflected word keeps its stem's): the pattern is
        # tried at those words only, not at every position of the text.
        heads: set[str] = set()
        self._scan_all = False
        for phrase in phrases:
            first = phrase.split()[0] if phrase.split() else ""
            word = _WORD_RUN.match(first)
            if word is None or word.start() > 0 or (inflect and first.lower() in _PRONOUNS):
                self._scan_all = True
                continue
            head = stem(first) if inflect and first.isalpha() and len(first) >= 4 else word.group().lower()
            heads.add(head[:3])
        self._heads = frozenset(heads)

    def find(self, text: str, start: int = 0, end: int | None = None) -> list[tuple[int, int, int]]:
        end = len(text) if end is None else end
        found = []
        for pattern in self.patterns:
            for match in self._matches(pattern, text, start, end):
                found.append((match.start(), match.end(), int(match.lastgroup[1:])))  # type: ignore[index]
        if len(self.patterns) > 1:
            found.sort(key=lambda item: (item[0], -(item[1] - item[0])))
            kept: list[tuple[int, int, int]] = []
            for item in found:
                if not kept or item[0] >= kept[-1][1]:
                    kept.append(item)
            found = kept
        return found

    def _matches(self, pattern: re.Pattern[str], text: str, start: int, end: int) -> Iterator[re.Match[str]]:
        """What ``pattern.finditer(text, start, end)`` gives, trying only the words a phrase
        can start at."""
        if self._scan_all:
            yield from pattern.finditer(text, start, end)
            return
        heads, after = self._heads, start
        for word in _WORD_RUN.finditer(text, start, end):
            at = word.start()
            if at < after:
                continue
            lowered = word.group()[:3].lower()
            if lowered not in heads and lowered[:2] not in heads and lowered[:1] not in heads:
                continue
            match = pattern.match(text, at, end)
            if match is not None and match.end() > at:
                after = match.end()
                yield match


@lru_cache(maxsize=8192)
def _phrase_regex(phrase: str, inflect: bool = False) -> re.Pattern[str]:
    if inflect:
        parts = [_inflected(part) for part in phrase.split()]
        body = r"(?:\s+\w+ly)?\s+".join(parts)
    else:
        body = r"\s+".join(re.escape(part) for part in phrase.split())
    left = r"(?<![\w])" if phrase[:1].isalnum() else ""
    right = r"(?![\w])" if phrase[-1:].isalnum() else ""
    letters = re.sub(r"[^A-Za-z]", "", phrase)
    sensitive = letters.isupper() and len(letters) <= 4 and phrase == phrase.upper()
    flags = 0 if sensitive else re.IGNORECASE
    return re.compile(left + body + right, flags)


# --- person names --------------------------------------------------------------------

_PARTICLES = {
    "de", "da", "del", "della", "di", "dos", "das", "du", "van", "von", "der", "den", "la", "le",
    "al", "el", "bin", "ibn", "ter", "ten", "y", "st.",
}
#: Capitalised words that start or continue no personal name in HR letters.
_NOT_NAME = {
    "the", "dear", "hi", "hello", "to", "from", "cc", "re", "subject", "date", "regards", "thanks",
    "sincerely", "best", "warm", "kind", "yours", "team", "hr", "human", "resources", "manager",
    "director", "coordinator", "supervisor", "lead", "officer", "generalist", "recruiter", "partner",
    "analyst", "engineer", "technician", "specialist", "operator", "planner", "controller", "head",
    "department", "dept", "site", "office", "company", "co", "co.", "inc", "inc.", "ltd", "llc",
    "group", "plant", "depot", "terminal", "center", "centre", "street", "road", "avenue", "lane",
    "drive", "court", "suite", "apt", "dc", "mr", "mrs", "ms", "miss", "dr", "mr.", "mrs.", "ms.", "dr.",
    "prof", "prof.", "monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday",
    "january", "february", "march", "april", "june", "july", "august", "september", "october",
    "november", "december", "payroll", "finance", "operations", "regional", "senior", "junior",
    "assistant", "associate", "vice", "president", "chief", "executive", "board", "panel",
    "approved", "pending", "yes", "no", "n/a", "tbd", "none", "employee", "candidate", "name",
    "position", "role", "title", "salary", "pay", "start", "note", "notes", "please", "thank",
    "i", "we", "you", "he", "she", "they", "our", "your", "his", "her", "their", "it", "this",
    "that", "per", "on", "behalf", "for", "and", "or", "with", "by", "at", "in", "of", "a", "an",
    "interviewer", "interview", "exit", "transfer", "request", "offer", "letter", "form",
    "memo", "update", "correction", "revised", "summary", "reason", "primary", "secondary",
    "accepted", "signed", "signature", "email", "phone", "tel", "mobile", "fax", "via",
    "hiring", "reporting", "reports", "business", "talent", "acquisition", "administrator",
    "general", "gm", "program", "project", "service", "services", "customer", "quality",
    "warehouse", "maintenance", "transport", "transportation", "logistics", "management",
    "all", "everyone", "colleagues", "sir", "madam", "confidential", "urgent", "private", "draft",
    "welcome", "congratulations", "important", "notice", "reminder", "attention", "attn", "post", "item",
    "detail", "details",
}
#: Words that end the name of a place or an organisation ("Lantern Bay Plant", "Elm Ridge DC").
_PLACE_WORDS = frozenset(
    """plant depot terminal center centre dc hospital clinic office site yard warehouse store
    street road avenue lane drive court park place square building campus branch unit facility
    co co. company inc inc. ltd llc group services partners team department division""".split()
)
_INVISIBLE = dict.fromkeys([0x061C, *range(0x200B, 0x2010), *range(0x202A, 0x202F), *range(0x2060, 0x2065), *range(0x2066, 0x206A)], " ")
#: A courtesy title written as a word of a name ("Dr", "Mrs.").
TITLES = re.compile(r"^(mr|mrs|ms|miss|mx|dr|prof)\.?$", re.IGNORECASE)
_INITIAL = re.compile(r"^[A-Z]\.$")
_ROMAN = re.compile(r"^(II|III|IV|Jr\.?|Sr\.?)$")
_TOKEN = re.compile(r"[^\s,;:()|/<>\[\]\"*_`]+")


def _name_token(token: str) -> bool:
    core = token.strip("'’.")
    if not core or not core[0].isalpha() or not core[0].isupper():
        return False
    if any(ch.isdigit() for ch in core) or "@" in core:
        return False
    return all(ch.isalpha() or ch in "'’-." for ch in core)


def _capitals(word: str) -> bool:
    """A word written in capitals ("WALSH", "O'NEILL-MCCANN"), at least two letters."""
    letters = [ch for ch in word if ch.isalpha()]
    return len(letters) > 1 and all(ch.isupper() for ch in letters)


def _inverted_name(text: str) -> tuple[int, int] | None:
    """Where ``text`` starts with a surname-first name, ``(start, end)`` of it.

    "WALSH, Eamon", "VAN DER BERG, Anke", "de la Cruz, María José": a surname in capitals,
    or one led by a particle in lower case, then a comma and one to three given names or
    initials.  A surname in mixed case ("Walsh, Eamon", "De Luca, Head of Heritage") is
    left alone: in running text that is as often a list, an address or a job title.
    """
    comma = text.find(",")
    if comma < 0 or "\n" in text[:comma]:
        return None  # no comma on the first line: no surname-first name here
    tokens = [(m.start(), m.end(), m.group()) for m in islice(_TOKEN.finditer(text), 9)]  # 3 particles, 2 surnames, 3 given names
    index = 0
    if not tokens or text[: tokens[0][0]].strip():
        return None
    particles = 0
    while index < len(tokens) and tokens[index][2].lower() in _PARTICLES and particles < 3:
        particles += 1
        index += 1
    core: list[str] = []
    while index < len(tokens) and len(core) < 2:
        word = tokens[index][2]
        if not _name_token(word) or word.lower().strip(".") in _NOT_NAME or _INITIAL.match(word):
            return None
        if index and text[tokens[index - 1][1] : tokens[index][0]].strip():
            return None  # punctuation inside the surname
        core.append(word)
        index += 1
        if index < len(tokens) and "," in text[tokens[index - 1][1] : tokens[index][0]]:
            break
    if not core or index >= len(tokens):
        return None
    comma = text[tokens[index - 1][1] : tokens[index][0]]
    if comma.strip() != "," or "\n" in comma:
        return None
    if not all(_capitals(word) for word in core) and not (particles and tokens[0][2][:1].islower()):
        return None  # "Di Marco, Meter Reader": a surname, then a job title
    given_start = index
    while index < len(tokens) and index - given_start < 3:
        word = tokens[index][2]
        gap = text[tokens[index - 1][1] : tokens[index][0]]
        if index > given_start and (gap.strip() or gap.count(" ") > 1 or "\n" in gap):
            break
        lowered = word.lower().strip(".")
        if _INITIAL.match(word):
            index += 1
            continue
        if not _name_token(word) or _ROMAN.match(word):
            break
        if lowered in TITLE_HEADS or lowered in _PLACE_WORDS:
            return None  # "SMITH, Partners", "FERNHILL, Mill Road": not a person
        if lowered in _NOT_NAME:
            break
        index += 1
    if index == given_start:
        return None
    last = tokens[index - 1]
    return tokens[0][0], last[1] if _INITIAL.match(last[2]) else len(text[: last[1]].rstrip(".,"))


def leading_name(text: str, offset: int = 0, max_tokens: int = 4) -> tuple[int, int, str] | None:
    """The personal name that ``text`` starts with, as ``(start, end, normalised)``.

    Courtesy titles are skipped; the name stops at punctuation, a lower-case word (other
    than a particle such as "de" or "van"), a digit or a dash between spaces.  A surname
    written first ("WALSH, Eamon", "de la Cruz, María José") is read whole and turned
    round ("Eamon Walsh").
    """
    text = text.translate(_INVISIBLE)  # zero-width and bidi controls count as spaces; offsets stay
    inverted = _inverted_name(text)
    if inverted is not None:
        start, end = inverted
        return offset + start, offset + end, normalise_name(text[start:end])
    tokens: list[tuple[int, int, str]] = []
    position = 0
    titled = False
    for match in _TOKEN.finditer(text):
        gap = text[position : match.start()]
        if tokens and (any(ch in gap for ch in ",;:()|/<>[]\"\n") or gap.count(" ") > 3):
            break
        if not tokens and gap.strip():
            break
        word = match.group()
        position = match.end()
        if word in ("-", "–", "—", "&"):
            break
        if not tokens and TITLES.match(word):
            titled = True
            continue
        lowered = word.lower().strip(".")
        if (tokens or titled) and word.lower() in _PARTICLES and len(tokens) < max_tokens:
            tokens.append((match.start(), match.end(), word))  # "Ms. van der Berg" too
            continue
        if _INITIAL.match(word) or _ROMAN.match(word) and tokens:
            tokens.append((match.start(), match.end(), word))
            continue
        if not _name_token(word) or lowered in _NOT_NAME or word.lower() in _NOT_NAME:
            if tokens and (lowered in TITLE_HEADS or lowered in _PLACE_WORDS or word[:1].isdigit()):
                return None  # "Cold Store Operations Manager", "Lantern Bay Plant", "May 27": not a name
            break
        if word.endswith(("'s", "’s")) and len(word) > 3:  # "Chloé Arsenault's team"
            tokens.append((match.start(), match.end() - 2, word[:-2]))
            break
        tokens.append((match.start(), match.end(), word))
        if len(tokens) >= max_tokens or (word.endswith(".") and len(word.rstrip(".")) > 1):
            break  # a full stop after a word ends the sentence, and the name
    while tokens and (tokens[-1][2].lower() in _PARTICLES or _INITIAL.match(tokens[-1][2])):
        tokens.pop()
    if not tokens or _all_title_words([t[2] for t in tokens]):
        return None
    start, end = tokens[0][0], tokens[-1][1]
    raw = text[start:end].rstrip(".,")
    return offset + start, offset + start + len(raw), normalise_name(raw)


#: Words that make up job titles; a "name" made only of them ("Driver Trainer") is a title.
TITLE_HEADS = frozenset(
    """accountant adviser advisor agent analyst apprentice architect assistant associate attendant auditor
    buyer captain cashier chef clerk coach consultant controller cook coordinator counsel courier designer
    developer director dispatcher driver economist editor electrician engineer estimator executive fitter
    foreman generalist handler head hygienist inspector instructor intern janitor lead leader librarian
    loader machinist manager marshal mechanic merchandiser nurse officer operative operator packer painter
    paralegal partner pharmacist picker planner plumber porter president principal programmer receptionist
    recruiter representative researcher scheduler scientist secretary shunter specialist steward supervisor
    surveyor teacher technician technologist tester therapist trainee trainer treasurer underwriter
    veterinarian welder worker writer administrator archivist curator groomer storekeeper
    superintendent expeditor custodian caretaker guard ranger counselor counsellor dentist physician
    surgeon paramedic pilot sailor deckhand navigator""".split()
)
_TITLE_MODIFIERS = frozenset(
    """senior junior chief deputy regional area site shift night day yard store field sales service
    customer quality safety transport fleet warehouse maintenance inventory operations general
    principal staff trainee acting interim relief lead""".split()
)


def _all_title_words(tokens: list[str]) -> bool:
    words = [t.lower().strip(".") for t in tokens]
    return words[-1] in TITLE_HEADS and all(w in TITLE_HEADS or w in _TITLE_MODIFIERS for w in words)


def normalise_name(raw: str) -> str:
    """"SURNAME, Given" → "Given Surname"; ALL-CAPS parts → normal case; spacing folded.

    Words in capitals become "Walsh", "McAllister", "MacDonald", "O'Brien", "Smith-Jones";
    particles in capitals inside a name become lower case ("MARÍA DE LA CRUZ" → "María
    de la Cruz").  Words written in mixed case are kept as written ("De Luca").
    """
    raw = " ".join(raw.replace("\u00a0", " ").split()).strip(" ,;")
    if raw.count(",") == 1:
        left, right = (part.strip() for part in raw.split(","))
        if left and right and _surname_shaped(left) and not _ROMAN.match(right):
            raw = f"{right} {left}"
    parts = []
    for index, part in enumerate(raw.split(" ")):
        if _capitals(part) and not _ROMAN.match(part):
            if index and part.lower() in _PARTICLES:
                part = part.lower()
            else:
                part = "-".join(_case_piece(piece) for piece in part.split("-"))
        parts.append(part)
    return " ".join(parts)


def _surname_shaped(left: str) -> bool:
    """One word, or particles and a word ("de la Cruz"), or words in capitals ("VAN DIJK")."""
    words = left.split()
    if len(words) == 1:
        return True
    core = [word for word in words if word.lower() not in _PARTICLES]
    return len(core) <= 2 and (len(core) < len(words) or all(_capitals(word) for word in core))


def _case_piece(piece: str) -> str:
    """One hyphen-free piece of a name in capitals, in normal case (common practice, no source)."""
    out = re.sub(r"[^'’]+", lambda m: m.group()[:1].upper() + m.group()[1:].lower(), piece)
    lowered = out.lower()
    if lowered.startswith("mc") and len(out) > 3 and out[2].isalpha():
        out = "Mc" + out[2].upper() + out[3:]
    elif lowered.startswith("mac") and len(out) >= 7 and out[3].lower() not in "aeiouhky":
        out = "Mac" + out[3].upper() + out[4:]  # "MACDONALD" → "MacDonald"; "MACHADO" stays "Machado"
    return out


def name_core(name: str) -> list[str]:
    """The words of a name other than courtesy titles and particles ("Mr. De Luca" → ["Luca"])."""
    return [word for word in name.split() if word.lower() not in _PARTICLES and not TITLES.match(word)]


def is_partial_name(name: str) -> bool:
    """A surname or given name alone ("Walsh", "De Luca"), or initials and a surname ("E. Walsh")."""
    core = name_core(name)
    if len(core) < 2:
        return True
    return all(len(word.rstrip(".")) == 1 for word in core[:-1]) or len(core[-1].rstrip(".")) == 1


def name_tokens(name: str) -> list[str]:
    return [token for token in fold(name).replace("-", " - ").split() if token not in ("-",)]


#: Words that name a system, a mailbox or an organisation rather than a person ("Careers
#: Portal", "HR System", "no-reply", "Notifications", "Acme Co.") in a display name
#: (common practice, no source).
SYSTEM_WORDS = frozenset(
    """portal system systems careers career jobs recruiting recruitment talent acquisition hiring noreply no-reply
    donotreply do-not-reply notification notifications alert alerts mailer daemon mailer-daemon postmaster bot robot
    automated automatic auto autoreply workflow scheduler scheduling calendar onboarding benefits payroll hr helpdesk
    help desk support service services admin administrator info information updates update news newsletter mailbox
    inbox team office department dept reception human resources people co inc ltd llc plc gmbh corp corporation
    company group""".split()
)


def system_sender(display: str) -> bool:
    """A display name that names a system, a mailbox or an organisation, not a person:
    made of :data:`SYSTEM_WORDS` and names with no personal name leading it ("Acme Careers
    Portal", "HR System", "no-reply"); "Ana Ruiz (HR)" and "Ana Ruiz via Portal" are people."""
    words = [word.lower().strip("'’.-") for word in re.findall(r"[\w'’.-]+", display)]
    if not any(word in SYSTEM_WORDS or any(part in SYSTEM_WORDS for part in word.split("-")) for word in words):
        return False
    found = leading_name(display)
    if found is not None and not is_partial_name(found[2]):
        if not any(word.lower().strip("'’.-") in SYSTEM_WORDS for word in found[2].split()):
            return False  # a person's name first, then the system or team they write for
    return True
