"""Find and normalise dates in text.

A regular-expression pass finds date-shaped strings (numeric, ISO and year-first numeric,
written-out months in any order with spaces, commas, ``-``, ``/`` or ``.`` between the parts,
days as numbers, ordinals or ordinal words, two-digit years after a month name or an
apostrophe, weekday prefixes, dates without a year, and a few relative phrases) and turns
them into ``datetime.date`` directly; where two readings overlap the longer one wins. Only
relative phrases the fast path does not know go to dateparser, always with
``languages=['en']`` and a ``RELATIVE_BASE`` taken from the document's own date, never from
the clock.

Ambiguity is reported as flags, never resolved silently:

* ``ambiguous_order``: a numeric date whose day and month could be swapped (both ≤ 12);
* ``year_inferred``: the year was not written and was taken from the document's date;
* ``century_inferred``: only two digits of the year were written (:func:`century_near`);
* ``weekday_mismatch``: the weekday written next to the date does not fit it;
* ``relative``: resolved against the document's date.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass
from functools import lru_cache

MONTHS = {
    "january": 1, "jan": 1, "february": 2, "feb": 2, "march": 3, "mar": 3, "april": 4, "apr": 4,
    "may": 5, "june": 6, "jun": 6, "july": 7, "jul": 7, "august": 8, "aug": 8, "september": 9,
    "sep": 9, "sept": 9, "october": 10, "oct": 10, "november": 11, "nov": 11, "december": 12, "dec": 12,
}
WEEKDAYS = {
    "monday": 0, "mon": 0, "tuesday": 1, "tue": 1, "tues": 1, "wednesday": 2, "wed": 2,
    "thursday": 3, "thu": 3, "thur": 3, "thurs": 3, "friday": 4, "fri": 4, "saturday": 5,
    "sat": 5, "sunday": 6, "sun": 6,
}
_NUMBER_WORDS = {
    "a": 1, "an": 1, "one": 1, "two": 2, "three": 3, "four": 4, "five": 5, "six": 6, "seven": 7,
    "eight": 8, "nine": 9, "ten": 10, "eleven": 11, "twelve": 12, "fourteen": 14, "thirty": 30,
}

#: The English month names and their abbreviations, as a regex alternation.
MONTH_NAMES = r"jan(?:uary)?|feb(?:ruary)?|mar(?:ch)?|apr(?:il)?|may|june?|july?|aug(?:ust)?|sept?(?:ember)?|oct(?:ober)?|nov(?:ember)?|dec(?:ember)?"
_MONTH = rf"(?P<month>{MONTH_NAMES})(?:\.(?!\d))?"
_WEEKDAY = r"(?:(?P<weekday>mon(?:day)?|tue(?:s(?:day)?)?|wed(?:nesday)?|thu(?:r(?:s(?:day)?)?)?|fri(?:day)?|sat(?:urday)?|sun(?:day)?)\.?,?\s+(?:the\s+)?)?"
_DAY = r"(?P<day>[0-3]?\d)(?:st|nd|rd|th)?"
_ORDINAL_UNITS = ("first", "second", "third", "fourth", "fifth", "sixth", "seventh", "eighth", "ninth")
ORDINAL_DAYS = {
    **{word: index for index, word in enumerate(_ORDINAL_UNITS, 1)},
    **{word: index for index, word in enumerate(
        ("tenth", "eleventh", "twelfth", "thirteenth", "fourteenth", "fifteenth", "sixteenth", "seventeenth",
         "eighteenth", "nineteenth", "twentieth"), 10)},
    **{f"twenty-{word}": 20 + index for index, word in enumerate(_ORDINAL_UNITS, 1)},
    "thirtieth": 30, "thirty-first": 31,
}
#: A day written as an ordinal word ("fourteenth", "thirty-first", "twenty first").
_DAY_WORD = (
    r"(?P<dayword>(?:twenty|thirty)[-\s]?(?:" + "|".join(_ORDINAL_UNITS) + r")|"
    + "|".join(sorted((w for w in ORDINAL_DAYS if "-" not in w), key=len, reverse=True)) + r")(?![\w-])"
)
_APOSTROPHE = r"['’‘`]"
#: A year after the day and month: four digits, an apostrophe and two digits ("'25"), or
#: two bare digits ("31 Dec 25") when nothing after them makes them a count or a time.
_YEAR_TAIL = (
    r"(?:(?P<ysep>\s*[,/.-]\s*|\s+)(?P<year>(?:19|20)\d\d)(?!\d)"
    r"|,?\s*" + _APOSTROPHE + r"(?P<yy>\d\d)(?![\d'’])"
    r"|(?P<ysep2>[/.-]|\s+)(?P<yy2>\d\d)(?!\d|[:.,/-]\d|\s*(?:%|percent\b|[ap]\.?m\b|h\b|hrs?\b|hours?\b|min(?:ute)?s?\b|days?\b"
    r"|weeks?\b|months?\b|years?\b|people\b|persons?\b|staff\b|employees?\b|members?\b|times\b|per\b|[-–]\s*\d)))?"
)

#: What may follow two bare digits read as a year after a space ("31 Dec 25"): the end of
#: the line, punctuation, a capital or a small word; "5 June 25 dancers" is a count.
_YEAR_FOLLOWER = re.compile(
    r"[ \t]*(?:\r?\n|$|[,.;:!?()\[\]\"'’–—-]|[A-Z]|(?i:at|and|or|to|until|till|through|from|for|in|on|by|with|is|was|will|has|had|as"
    r"|when|the|we|i|he|she|they|it|onwards?|inclusive|only|then)\b)"
)

_PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    # ISO 8601 calendar dates (2025-04-14) and the same order with slashes or dots (2025/04/14)
    ("iso", re.compile(r"(?<![\d/.-])(?P<y>(?:19|20)\d\d)(?P<sep>[-/.])(?P<m>[01]?\d)(?P=sep)(?P<d>[0-3]?\d)(?!\d|(?P=sep)\d|-)")),
    (
        "numeric",
        re.compile(
            r"(?<![\w/.-])" + _WEEKDAY.replace("(?:the\\s+)?", "")
            + r"(?P<a>[0-3]?\d)(?P<sep>[/.-])(?P<b>[0-3]?\d)(?P=sep)(?P<y>(?:19|20)?\d\d)(?![\d/-]|\.\d)",
            re.IGNORECASE,
        ),
    ),
    (
        "month_day",  # "March 3, 2025", "Dec-31-2025", "April 14th '25", "April fourteenth, 2025"
        re.compile(
            r"(?<![\w'’])" + _WEEKDAY + _MONTH + r"(?P<msep>\s+(?:the\s+)?|\s*[-/.]\s*)"
            + r"(?:" + _DAY + r"(?![\d:])|" + _DAY_WORD + r")" + _YEAR_TAIL,
            re.IGNORECASE,
        ),
    ),
    (
        "day_month",  # "3 March 2025", "31-Dec-25", "31st Dec '25", "the fourteenth day of April, 2025"
        re.compile(
            r"(?<![\w'’])" + _WEEKDAY + r"(?:the\s+)?(?:" + _DAY + r"|" + _DAY_WORD + r")"
            + r"(?P<dsep>\s+(?:day\s+)?of\s+|\s*[-/.]\s*|\s+)" + _MONTH + r"(?![a-z])" + _YEAR_TAIL,
            re.IGNORECASE,
        ),
    ),
    (
        "year_month_day",  # "2025-Dec-31", "2025/Apr/14"
        re.compile(r"(?<![\w/.-])(?P<year>(?:19|20)\d\d)(?P<ysep>[-/.])" + _MONTH + r"(?P=ysep)" + _DAY + r"(?![\d:])", re.IGNORECASE),
    ),
    (
        "short_numeric",  # "Tue 9/2", "Friday 9/5": month/day without a year, only after a weekday
        re.compile(
            r"(?<![\w/])(?P<weekday>mon|tue|tues|wed|thu|thur|thurs|fri|sat|sun|monday|tuesday|wednesday|thursday|friday|saturday|sunday)\.?,?\s+"
            r"(?P<a>[01]?\d)/(?P<b>[0-3]?\d)(?![\d/])",
            re.IGNORECASE,
        ),
    ),
    (
        "relative",
        re.compile(
            r"(?<![\w])(?P<rel>today|tomorrow|yesterday|"
            r"(?:(?P<in>in\s+)?(?P<n>\d{1,2}|a|an|one|two|three|four|five|six|seven|eight|nine|ten|eleven|twelve|fourteen|thirty)\s+"
            r"(?P<unit>days?|weeks?|months?)(?:\s+(?:from\s+(?:today|now|the\s+date\s+of\s+this\s+(?:letter|email|note))|later|time|after\s+today|ago))?)|"
            r"(?:next|last|this\s+coming)\s+(?P<next>monday|tuesday|wednesday|thursday|friday|saturday|sunday|week))(?![\w])",
            re.IGNORECASE,
        ),
    ),
)


@dataclass(frozen=True, slots=True)
class DateMention:
    """A date found in text: offsets, the normalised date and what was uncertain."""

    start: int
    end: int
    value: dt.date | None  #: None when the mention needs the document's date to resolve
    flags: frozenset[str]
    kind: str
    weekday: int | None = None
    parts: tuple[int, int, int] | None = None  #: numeric dates: (first, second, year)


def find_dates(text: str) -> list[DateMention]:
    """All date-shaped mentions in ``text`` (unresolved: no anchor, no order applied).

    Where two readings overlap the longer one wins ("31 Dec 25" is one date, not "Dec 25"
    after a stray 31); on equal length the earlier pattern in ``_PATTERNS`` does.
    """
    matches = [
        (match.start() - match.end(), rank, kind, match)
        for rank, (kind, pattern) in enumerate(_PATTERNS)
        for match in pattern.finditer(text)
    ]
    matches.sort(key=lambda item: (item[0], item[1], item[3].start()))
    found: list[DateMention] = []
    taken = bytearray(len(text))  # 1 where a date already found covers the character
    for _, _, kind, match in matches:
        start, end = match.span()
        if taken.find(1, start, end) != -1:
            continue
        mention = _mention(kind, match)
        if mention is not None:
            found.append(mention)
            taken[mention.start : mention.end] = b"\x01" * (mention.end - mention.start)
    found.sort(key=lambda m: m.start)
    return found


def _weekday(match: re.Match[str]) -> int | None:
    name = (match.groupdict().get("weekday") or "").lower().rstrip(".,")
    return WEEKDAYS.get(name)


def _mention(kind: str, match: re.Match[str]) -> DateMention | None:
    start, end = match.span()
    if kind == "relative" and match["unit"] and not match["in"] and not re.search(r"(?:from|later|time|after|ago)\s*\w*$", match.group(), re.IGNORECASE):
        return None  # "two weeks" alone is a duration (a notice period), not a date
    weekday = _weekday(match)
    if kind == "iso":
        if match["sep"] == "." and (len(match["m"]) != 2 or len(match["d"]) != 2):
            return None  # "2020.3.1" is a version number, not a date
        value = _safe_date(int(match["y"]), int(match["m"]), int(match["d"]))
        return DateMention(start, end, value, frozenset(), kind) if value else None
    if kind in ("numeric", "short_numeric"):
        a, b = int(match["a"]), int(match["b"])
        year = int(match["y"]) if kind == "numeric" else 0
        flags: frozenset[str] = frozenset()
        if kind == "numeric" and len(match["y"]) == 2:
            year, flags = two_digit_year(year), frozenset({"century_inferred"})
        if not (1 <= a <= 31 and 1 <= b <= 31) or (a > 12 and b > 12):
            return None
        if kind == "numeric" and match["sep"] == "." and flags:
            return None  # "3.4.25" is more often a version or a section number than a date
        return DateMention(start, end, None, flags, kind, weekday, (a, b, year))
    if kind in ("month_day", "day_month", "year_month_day"):
        return _named(kind, match, weekday)
    if kind == "relative":
        return DateMention(start, end, None, frozenset({"relative"}), kind)
    return None


def _named(kind: str, match: re.Match[str], weekday: int | None) -> DateMention | None:
    """A date with its month written as a name, in any of the three orders."""
    start, end = match.span()
    if kind == "month_day" and not match["weekday"] and re.search(r"(?<![\d,.:/-])\b[0-3]?\d(?:st|nd|rd|th)?[ \t]$", match.string[max(0, start - 8) : start]):
        return None  # "5 June 25 staff": the day is the number before the month
    groups = match.groupdict()
    month = MONTHS[match["month"].lower().rstrip(".")]
    word = groups.get("dayword")
    day = ORDINAL_DAYS.get(re.sub(r"[-\s]+", "-", word.lower())) if word else int(match["day"])
    if day is None or not 1 <= day <= 31:
        return None
    between = (groups.get("msep") if kind == "month_day" else groups.get("dsep")) or ""
    year, century_inferred = 0, False
    if groups.get("year"):
        year = int(match["year"])
    elif groups.get("yy"):
        year, century_inferred = two_digit_year(int(match["yy"])), True
    elif groups.get("yy2"):
        blank = not match["ysep2"].strip()
        if _same_separator(between, match["ysep2"]) and (not blank or _YEAR_FOLLOWER.match(match.string, match.end())):
            year, century_inferred = two_digit_year(int(match["yy2"])), True
        else:  # "March 3-20": a range of days, not a year
            end = match.start("ysep2")
    if not year:
        if between.strip() in ("-", "/", ".") and (kind == "month_day" or re.match(r"[-/.]\w", match.string[end : end + 2])):
            return None  # "Apr-25" is a month and a year, not a day; "4-Mar-B" is a code
        if word and "of" not in between.split() and not (kind == "month_day" and "the" in between.lower().split()):
            return None  # "the first April meeting": an ordinal word needs "of", "the" or a year
        return DateMention(start, end, None, frozenset({"year_inferred"}), kind, weekday, (month, day, 0))
    if century_inferred:
        if _safe_date(year, month, day) is None:
            return None
        return DateMention(start, end, None, frozenset({"century_inferred"}), kind, weekday, (month, day, year))
    value = _safe_date(year, month, day)
    if value is None:
        return None
    return DateMention(start, end, value, frozenset(), kind, weekday, (month, day, year))


def _same_separator(first: str, second: str) -> bool:
    """Both blank, or the same one of ``-``, ``/`` and ``.`` ("31-Dec-25", "31 Dec 25")."""
    first, second = first.strip(), second.strip()
    return first == second and first in ("", "-", "/", ".")


def two_digit_year(year: int) -> int:
    """A two-digit year with no document date to go by: RFC 5322 §4.3 (00–49 → 2000–2049,
    50–99 → 1950–1999)."""
    return 2000 + year if year < 50 else 1900 + year


def century_near(year: int, anchor: dt.date | None) -> int:
    """A two-digit year (read first by :func:`two_digit_year`) placed in the hundred years from
    80 years before to 20 years after the document's own date, so that a birth date of '51
    and a contract end of '40 both land right. This is the window of Java's
    ``SimpleDateFormat`` and ICU, counted from the document's date instead of the clock
    (common practice). Without a document date the RFC 5322 reading stands."""
    if anchor is None:
        return year
    low = anchor.year - 80
    value = low - low % 100 + year % 100
    return value + 100 if value <= low else value


def _safe_date(year: int, month: int, day: int) -> dt.date | None:
    try:
        return dt.date(year, month, day)
    except ValueError:
        return None


# --- resolution against a document -------------------------------------------------


def resolve(mention: DateMention, text: str, order: str, anchor: dt.date | None, order_declared: bool) -> tuple[dt.date | None, frozenset[str]]:
    """Turn a mention into a date using the document's date order and its own date."""
    flags = set(mention.flags)
    if mention.value is not None:
        return _check_weekday(mention.value, mention.weekday, flags)
    if mention.kind == "relative":
        if anchor is None:
            return None, frozenset(flags | {"no_anchor"})
        value = _relative(text[mention.start : mention.end], anchor)
        return value, frozenset(flags)
    assert mention.parts is not None
    if mention.kind in ("month_day", "day_month", "year_month_day"):
        month, day, year = mention.parts
        if not year:
            return _infer_year(month, day, mention.weekday, anchor, flags)
        value = _safe_date(century_near(year, anchor), month, day) or _safe_date(year, month, day)
        return _check_weekday(value, mention.weekday, flags) if value else (None, frozenset(flags))
    a, b, year = mention.parts
    if year and "century_inferred" in mention.flags:
        year = century_near(year, anchor)
    readings = []
    for reading in ("MDY", "DMY"):
        month, day = (a, b) if reading == "MDY" else (b, a)
        if 1 <= month <= 12 and 1 <= day <= 31:
            readings.append((reading, month, day))
    if not readings:
        return None, frozenset(flags)
    preferred = "DMY" if order == "DMY" else "MDY"
    if len(readings) == 2 and a != b:
        if mention.weekday is not None:
            fitting = [r for r in readings if _fits_weekday(year, r[1], r[2], mention.weekday, anchor)]
            if len(fitting) == 1:
                readings = fitting
        if len(readings) == 2:
            readings = [r for r in readings if r[0] == preferred]
            flags.add("ambiguous_order" if order_declared else "ambiguous_order_unconfigured")
    elif len(readings) == 1 and readings[0][0] != preferred and a != b:
        flags.add("order_swapped")
    _, month, day = readings[0]
    if not year:
        return _infer_year(month, day, mention.weekday, anchor, flags)
    value = _safe_date(year, month, day)
    if value is None:
        return None, frozenset(flags)
    return _check_weekday(value, mention.weekday, flags)


def _fits_weekday(year: int, month: int, day: int, weekday: int, anchor: dt.date | None) -> bool:
    if year:
        value = _safe_date(year, month, day)
    else:
        value, flags = _infer_year(month, day, weekday, anchor, set())
        if "weekday_mismatch" in flags:
            return False
    return value is not None and value.weekday() == weekday


def _check_weekday(value: dt.date, weekday: int | None, flags: set[str]) -> tuple[dt.date, frozenset[str]]:
    if weekday is not None and value.weekday() != weekday:
        flags.add("weekday_mismatch")
    return value, frozenset(flags)


def _infer_year(month: int, day: int, weekday: int | None, anchor: dt.date | None, flags: set[str]) -> tuple[dt.date | None, frozenset[str]]:
    flags.add("year_inferred")
    if anchor is None:
        flags.add("no_anchor")
        return None, frozenset(flags)
    options = [d for y in (anchor.year - 1, anchor.year, anchor.year + 1) if (d := _safe_date(y, month, day))]
    if not options:
        return None, frozenset(flags)
    if weekday is not None:
        fitting = [d for d in options if d.weekday() == weekday]
        if fitting:
            options = fitting
        else:
            flags.add("weekday_mismatch")
    value = min(options, key=lambda d: abs((d - anchor).days))
    return value, frozenset(flags)


def _relative(phrase: str, anchor: dt.date) -> dt.date | None:
    words = phrase.lower().split()
    if words == ["today"]:
        return anchor
    if words == ["tomorrow"]:
        return anchor + dt.timedelta(days=1)
    if words == ["yesterday"]:
        return anchor - dt.timedelta(days=1)
    if words[0] in ("next", "this") and words[-1] in WEEKDAYS:
        ahead = (WEEKDAYS[words[-1]] - anchor.weekday()) % 7 or 7
        return anchor + dt.timedelta(days=ahead)
    if words[0] == "last" and words[1] in WEEKDAYS:
        back = (anchor.weekday() - WEEKDAYS[words[1]]) % 7 or 7
        return anchor - dt.timedelta(days=back)
    if words[-1] == "ago":
        later = _relative(" ".join(words[:-1]) + " later", anchor)
        return anchor - (later - anchor) if later else None
    match = re.search(r"(\d{1,2}|[a-z]+)\s+(day|week|month)", phrase.lower())
    if match:
        count = int(match[1]) if match[1].isdigit() else _NUMBER_WORDS.get(match[1])
        if count is None:
            return None
        unit = match[2]
        if unit == "day":
            return anchor + dt.timedelta(days=count)
        if unit == "week":
            return anchor + dt.timedelta(weeks=count)
        month_index = anchor.month - 1 + count
        year, month = anchor.year + month_index // 12, month_index % 12 + 1
        return _safe_date(year, month, min(anchor.day, 28)) if anchor.day > 28 else _safe_date(year, month, anchor.day)
    return _dateparser_relative(phrase, anchor)


@lru_cache(maxsize=4096)
def _dateparser_relative(phrase: str, anchor: dt.date) -> dt.date | None:
    import dateparser  # slow import, rarely needed

    parsed = dateparser.parse(
        phrase,
        languages=["en"],
        settings={
            "RELATIVE_BASE": dt.datetime(anchor.year, anchor.month, anchor.day, 12, 0),
            "PREFER_DAY_OF_MONTH": "first",
            "PREFER_DATES_FROM": "future",
        },
    )
    return parsed.date() if parsed else None


def parse_date_text(text: str, order: str = "MDY", anchor: dt.date | None = None) -> dt.date | None:
    """The first date in ``text``, resolved; a convenience for tests and for casting."""
    for mention in find_dates(text):
        value, _ = resolve(mention, text, order, anchor, order_declared=True)
        if value is not None:
            return value
    return None


_DECLARED_DMY = re.compile(r"\b(dd/mm/yy(?:yy)?|dd\.mm\.yy(?:yy)?|day[- ]first|d/m/y)\b", re.IGNORECASE)
_DECLARED_MDY = re.compile(r"\b(mm/dd/yy(?:yy)?|month[- ]first|m/d/y)\b", re.IGNORECASE)


def document_order(text: str, mentions: list[DateMention], schema_order: str | None) -> tuple[str, bool, str]:
    """The date order for one document: ``(order, known, why)``.

    A document that declares its order ("dates are DD/MM/YYYY") wins; then numeric dates
    that can only be read one way (27/06/2025); then the schema's ``date_order``.
    """
    declared_dmy = bool(_DECLARED_DMY.search(text))
    declared_mdy = bool(_DECLARED_MDY.search(text))
    if declared_dmy != declared_mdy:
        return ("DMY" if declared_dmy else "MDY"), True, "declared in the document"
    day_first = month_first = 0
    for mention in mentions:
        if mention.kind == "numeric" and mention.parts:
            a, b, _ = mention.parts
            day_first += a > 12
            month_first += b > 12
    if day_first and not month_first:
        return "DMY", True, "a day-first date in the document"
    if month_first and not day_first and schema_order is None:
        return "MDY", True, "a month-first date in the document"
    if schema_order in ("MDY", "DMY"):
        return schema_order, True, "schema date_order"
    if schema_order == "YMD":
        return "MDY", False, "schema date_order YMD (numeric day/month still ambiguous)"
    return "MDY", False, "no date order known"
