"""Match a field's vocabulary (choice aliases, flag variants) in text.

Matching ignores case (except for short all-capital abbreviations such as ``NQ``), is
word-bounded, prefers the longest variant, and reports negated mentions ("pay was not the
issue") so that they count against a value, not for it.  A value string that matches no
variant exactly is compared by edit distance (rapidfuzz Levenshtein); a close match is a
*near miss*: it is proposed, with its alternatives, and always sent to review.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cached_property, lru_cache

from rapidfuzz import fuzz, process
from rapidfuzz.distance import Levenshtein

from ..schema.model import FieldHints
from .text import PhraseSet, fold, stem

_NEGATION_BEFORE = re.compile(
    r"(?:\b(?:not|no|never|nothing to do with|nothing about|isn't|wasn't|aren't|weren't|without|rather than|instead of|"
    r"not about|not because of|other than)\b[^.;:\n]{0,25})$",
    re.IGNORECASE,
)
_NEGATION_AFTER = re.compile(
    r"^[^.;\n]{0,40}?\b(?:(?:was|is|were|are)(?:n't|n’t| not)|wasn't|isn't)\s+(?:the|a|an)?\s*"
    r"(?:(?:main|primary|real|only|chief|biggest|big|major|deciding|key|whole)\s+)?(?:issue|problem|driver|reason|factor|concern)\b",
    re.IGNORECASE,
)
_UNTICKED = re.compile(r"(?:\[\s\]|☐|\(\s\))\s*$")
_TICKED = re.compile(r"(?:\[[xX✓✔]\]|☒|☑|\([xX]\))\s*$")
_BOX_TEXT = r"(?:\[[\sxX✓✔]\]|☐|☒|☑|\([\sxX]\))"
#: A check box, ticked or not ("[ ]", "[x]", "☐", "☒", "(x)").
BOX = re.compile(_BOX_TEXT)
_BOX_FIRST = re.compile(r"\s*" + _BOX_TEXT)
_BOX_LAST = re.compile(_BOX_TEXT + r"\s*$")
_TICKED_NEXT = re.compile(r"\s*(?:\[[xX✓✔]\]|☒|☑|\([xX]\))")
_UNTICKED_NEXT = re.compile(r"\s*(?:\[\s\]|☐|\(\s\))")


@dataclass(frozen=True, slots=True)
class VocabMention:
    start: int
    end: int
    value: str  #: canonical value (choice) or "true"/"false" (flag)
    variant: str
    negated: bool = False
    ticked: bool | None = None  #: True/False when the mention follows a check box
    loose: bool = False  #: words of a multi-word variant found with small gaps


_WORDS = re.compile(r"[^\W_]+(?:['’][^\W_]+)?")
class Vocabulary:
    """The variants of one field, ready to search."""

    def __init__(self, hints: FieldHints) -> None:
        pairs: list[tuple[str, str]] = []
        if hints.kind == "flag" or hints.true_variants or hints.false_variants:
            pairs += [(variant, "true") for variant in hints.true_variants]
            pairs += [(variant, "false") for variant in hints.false_variants]
        else:
            for canonical, variants in hints.aliases:
                pairs.append((canonical, canonical))
                pairs += [(variant, canonical) for variant in variants]
        seen: set[str] = set()
        unique = []
        for variant, value in sorted(pairs, key=lambda p: -len(p[0])):
            key = variant if _is_abbreviation(variant) else variant.lower()
            if key not in seen:
                seen.add(key)
                unique.append((variant, value))
        self.pairs = tuple(unique)
        self.fuzzy_distance = hints.fuzzy_distance
        self.kind = hints.kind
        self._phrases = PhraseSet([variant for variant, _ in self.pairs])
        self._folded = {index: fold(variant) for index, (variant, _) in enumerate(self.pairs)}
        self._stems = [[stem(word) for word in _WORDS.findall(variant)] for variant, _ in self.pairs]
        self._recent: dict[bool, tuple[str, list[VocabMention]]] = {}

    @cached_property
    def values(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(value for _, value in self.pairs))

    def find(self, text: str, start: int = 0, end: int | None = None, *, loose: bool = True) -> list[VocabMention]:
        """Mentions in ``text[start:end]`` (offsets into ``text``), in text order.

        A document's text is searched once; later windows of the same text are answered
        from that search.
        """
        end = len(text) if end is None else end
        if len(text) < 200:
            return self._search(text, start, end, loose)
        recent = self._recent.get(loose)
        if recent is None or recent[0] is not text:
            recent = (text, self._search(text, 0, len(text), loose))
            self._recent[loose] = recent
        return [m for m in recent[1] if start <= m.start and m.end <= end]

    def _search(self, text: str, start: int, end: int, loose: bool) -> list[VocabMention]:
        window = text[start:end]
        taken: list[tuple[int, int]] = []
        found: list[VocabMention] = []
        for s, e, index in self._phrases.find(window):
            variant, value = self.pairs[index]
            taken.append((s, e))
            found.append(self._mention(text, start + s, start + e, value, variant, False))
        if loose:
            found.extend(self._loose(text, start, window, taken))
        found.sort(key=lambda m: m.start)
        return found

    def _loose(self, text: str, start: int, window: str, taken: list[tuple[int, int]]) -> list[VocabMention]:
        """Variants matched on word stems, with up to three other words in between
        ("caring for" finds "to care for"; "relationship with supervisor" finds
        "relationship with the night supervisor")."""
        tokens = [(m.start(), m.end(), stem(m.group())) for m in _WORDS.finditer(window)]
        first_stems = {token[2] for token in tokens}
        out = []
        for (variant, value), stems in zip(self.pairs, self._stems):
            if not stems or stems[0] not in first_stems:
                continue
            if not stems or (len(stems) == 1 and len(stems[0]) < 4):
                continue
            for index, (s, _, first) in enumerate(tokens):
                if first != stems[0]:
                    continue
                position, gaps, end = index, 0, tokens[index][1]
                for wanted in stems[1:]:
                    position += 1
                    while position < len(tokens) and tokens[position][2] != wanted and gaps < 3:
                        if re.search(r"[.;!?\n]", window[tokens[position - 1][1] : tokens[position][0]]):
                            break
                        position += 1
                        gaps += 1
                    if position >= len(tokens) or tokens[position][2] != wanted:
                        break
                    end = tokens[position][1]
                else:
                    if any(s < te and ts < end for ts, te in taken):
                        continue
                    taken.append((s, end))
                    out.append(self._mention(text, start + s, start + end, value, variant, True))
        return out

    def _mention(self, text: str, s: int, e: int, value: str, variant: str, loose: bool) -> VocabMention:
        before = text[max(0, s - 60) : s]
        line_before = before.rsplit("\n", 1)[-1]
        after = text[e : e + 60]
        line_after = after.split("\n", 1)[0]
        # A check box belongs to the option it stands before ("[x] Yes [ ] No"), or, when the
        # options' boxes follow them ("Yes [ ] No [x]": the line's answers end in a box and do
        # not start with one), to the option it stands after.
        answers = (line_before.rsplit(":", 1)[-1] + text[s:e] + line_after).strip()
        box_after = not _BOX_FIRST.match(answers) and bool(_BOX_LAST.search(answers))
        ticked: bool | None = None
        if box_after:
            if _TICKED_NEXT.match(line_after):
                ticked = True
            elif _UNTICKED_NEXT.match(line_after):
                ticked = False
        elif _TICKED.search(line_before):
            ticked = True
        elif _UNTICKED.search(line_before):
            ticked = False
        negated = bool(_NEGATION_BEFORE.search(line_before)) or bool(_NEGATION_AFTER.match(after))
        return VocabMention(s, e, value, variant, negated, ticked, loose)

    @cached_property
    def _generic_words(self) -> frozenset[str]:
        """Words of the canonical values that do not tell them apart: the last word two or
        more values share ("Branch" in "Hilltop Branch" and "Riverdale Branch", "Services")
        and words that name a kind of place or unit (common practice, no source).  A shared
        first word ("Hilltop" of "Hilltop Branch" and "Hilltop Depot") still tells a value
        apart from the others, if not from each other."""
        counts: dict[str, int] = {}
        last_only: dict[str, bool] = {}
        for value in self.values:
            words = _WORDS.findall(fold(value))
            for word in dict.fromkeys(words):
                counts[word] = counts.get(word, 0) + 1
                last_only[word] = last_only.get(word, True) and word == words[-1] and len(words) > 1
        return frozenset(word for word, count in counts.items() if count > 1 and last_only[word]) | GENERIC_WORDS

    def _strip_generic(self, phrase: str) -> str:
        return " ".join(word for word in _WORDS.findall(fold(phrase)) if word not in self._generic_words)

    @cached_property
    def distinctive_parts(self) -> dict[str, tuple[str, ...]]:
        """Folded distinctive part → the canonical values it belongs to ("hilltop" →
        ("Hilltop Branch",)).  Only for choices, only where the part differs from the value
        and keeps at least three letters."""
        if self.kind != "choice":
            return {}
        out: dict[str, tuple[str, ...]] = {}
        for value in self.values:
            part = self._strip_generic(value)
            if len(part.replace(" ", "")) >= 3 and part != " ".join(_WORDS.findall(fold(value))):
                out[part] = out.get(part, ()) + (value,)
        return out

    def by_distinctive_part(self, phrase: str) -> tuple[str, ...]:
        """The canonical values whose distinctive part ``phrase`` is ("Hilltop", "Hilltop site")."""
        part = self._strip_generic(phrase)
        return self.distinctive_parts.get(part, ()) if part else ()

    def near_miss(self, phrase: str) -> list[tuple[str, str, float]]:
        """Listed values near ``phrase``: ``(value, variant, similarity)``, best first, one
        entry per value, every value within reach.

        A value is near when one of its variants, or its distinctive part (see
        :attr:`distinctive_parts`), is at most ``fuzzy_distance`` edits away (rapidfuzz
        Levenshtein distance, after case and dash folding) and at least 60 % similar
        (``fuzz.ratio``), so that two edits never turn a four-letter word into another.
        """
        target = fold(phrase)
        if not target or self.fuzzy_distance <= 0:
            return []
        choices = self._near_choices
        best: dict[str, tuple[str, str, float]] = {}
        for folded, score, index in process.extract(target, self._near_strings, scorer=fuzz.ratio, limit=None, score_cutoff=60):
            if Levenshtein.distance(target, folded, score_cutoff=self.fuzzy_distance) > self.fuzzy_distance:
                continue
            _, variant, value = choices[index]
            if value not in best or score / 100 > best[value][2]:
                best[value] = (value, variant, score / 100)
        return sorted(best.values(), key=lambda item: -item[2])

    @cached_property
    def _near_strings(self) -> list[str]:
        return [choice[0] for choice in self._near_choices]

    @cached_property
    def _near_choices(self) -> list[tuple[str, str, str]]:
        """``(folded text, variant, value)`` for every variant and distinctive part."""
        choices = [(folded, *self.pairs[index]) for index, folded in self._folded.items()]
        return choices + [(part, part, value) for part, values in self.distinctive_parts.items() for value in values]


#: Words naming a kind of place or unit; left out of a listed value's distinctive part
#: ("Hilltop" of "Hilltop Branch") (common practice, no source).
GENERIC_WORDS = frozenset(
    """branch site depot center centre office library clinic hospital store plant yard campus warehouse
    building facility unit location station works hub terminal""".split()
)


def _is_abbreviation(variant: str) -> bool:
    letters = re.sub(r"[^A-Za-z]", "", variant)
    return bool(letters) and letters.isupper() and len(letters) <= 4


@lru_cache(maxsize=256)
def vocabulary_for(hints: FieldHints) -> Vocabulary:
    """The (shared) vocabulary of a field's hints."""
    return Vocabulary(hints)
