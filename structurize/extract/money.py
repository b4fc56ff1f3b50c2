"""Find amounts of money: symbols and codes, "k" shorthand, amounts in words, pay periods.

Separators.  ``41.000,00``, ``41,000.00``, ``41 000,00`` (a no-break or thin space) and
``41'000.00`` are all forty-one thousand: where two different marks occur the last is the
decimal mark; a mark written twice ("1.234.567") groups thousands; an apostrophe or a
no-break space always groups; one mark followed by one, two or more than three digits is
the decimal mark.  One mark followed by exactly three digits ("4.200", "1,234") is
ambiguous and is decided, in this order, by

1. a leading zero ("0.125" is a fraction);
2. a currency without minor units (JPY, KRW ...): the mark groups;
3. the document's other amounts: when they show which mark is the decimal mark, the other
   mark groups; the same mark is still taken to group (three decimal places are unusual in
   pay), but the amount is flagged ``ambiguous_separator``;
4. the currency's custom: a comma groups thousands in English-language documents whatever
   the currency, except for currencies whose custom is a decimal comma (SEK, NOK, DKK,
   PLN ...); a dot groups thousands for the euro and those currencies; otherwise ("$4.200",
   or no currency at all) the dot is read as grouping and the amount is flagged
   ``ambiguous_separator`` (common practice, no source).

A number with no currency is money only as the whole value under a label that names pay
("Hourly rate: 19.75", a table cell next to "Salary"); it carries no currency, so it counts
less (``kinds.read_money``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation

_SYMBOLS = r"US\$|CA?\$|AU?\$|NZ\$|HK\$|S\$|R\$|\$|€|£|¥|₹"
_CODE_LIST = r"USD|EUR|GBP|CAD|AUD|NZD|CHF|JPY|CNY|RMB|INR|SEK|NOK|DKK|PLN|CZK|HUF|ZAR|SGD|HKD|MXN|BRL|KRW|ISK"
_WORDS = r"dollars|euros?|pounds|yen|francs|rupees"
#: Digits with any of the marks that separate groups or decimals (a plain space only between
#: groups of three: "41 000,00 €"); :func:`parse_number` decides what each mark means and
#: rejects shapes that are not amounts.
_NUMBER = r"(?P<num>\d{1,3}(?: \d{3}){1,4}(?:[.,]\d{1,2})?(?!\d|[.,'’ ]\d)|\d++(?:[,.'’\u00a0\u202f\u2009]\d++)*+)"
_SUFFIX = r"(?P<suffix>\s?[kK](?![a-zA-Z])|\s(?:thousand|million)\b)?"

MONEY = re.compile(
    r"(?<![\w.,'’\u00a0\u202f\u2009])(?:(?P<cur>" + _SYMBOLS + "|" + _CODE_LIST + r")\s?" + _NUMBER + _SUFFIX
    + r"(?:\s?(?P<cur2>" + _CODE_LIST + "|" + _WORDS + r")\b)?"
    + r"|" + _NUMBER.replace("num", "num_b") + r"(?P<suffix_b>\s?[kK](?![a-zA-Z])|\s(?:thousand|million)\b)"
    + r"(?:\s?(?P<cur3>" + _CODE_LIST + "|" + _WORDS + r")\b)?"
    + r"|" + _NUMBER.replace("num", "num_c") + r"\s?(?:(?P<cur4>" + _CODE_LIST + "|" + _WORDS + r")\b|(?P<cur5>[€£¥₹]|\$(?!\d))))",
)

_PERIOD_AFTER = re.compile(
    # a restated amount in brackets or the closing bracket of one: "(£38,500) a year"
    r"^(?:\s*\([^()\n]{1,30}\)|\s*\))?"
    r"(?:\s*,?\s*(?:gross|net|base|before\s+tax|pre-tax))?"
    r"(?:\s*(?:/\s*|per\s+|an?\s+|each\s+|every\s+)?(?:calendar\s+)?(?P<unit>hour|hr|h|year|yr|annum|month|mo|week|wk|day)s?\b"
    r"|\s*,?\s*(?P<adverb>hourly|annually|yearly|monthly|weekly|daily|per\s+annum|p\.?a\.?|p\.h\.?|ph\.|p/h|p\.?c\.?m\.?)(?![\w/]))",
    re.IGNORECASE,
)
_PERIOD_WORD = re.compile(r"\b(?P<adverb>hourly|annual(?:ly)?|yearly|per annum|monthly|weekly|daily)\b", re.IGNORECASE)
_UNIT = {
    "hour": "hour", "hr": "hour", "h": "hour", "hourly": "hour", "ph": "hour", "p/h": "hour",
    "year": "year", "yr": "year", "annum": "year", "annually": "year", "annual": "year",
    "yearly": "year", "per annum": "year", "pa": "year",
    "month": "month", "mo": "month", "monthly": "month", "pcm": "month",
    "week": "week", "wk": "week", "weekly": "week", "day": "day", "daily": "day",
}
_CODES = {
    "$": "USD", "US$": "USD", "€": "EUR", "£": "GBP", "¥": "JPY", "₹": "INR", "C$": "CAD", "CA$": "CAD", "A$": "AUD",
    "AU$": "AUD", "NZ$": "NZD", "HK$": "HKD", "S$": "SGD", "R$": "BRL", "RMB": "CNY",
    "dollars": "USD", "euros": "EUR", "euro": "EUR", "pounds": "GBP", "yen": "JPY", "francs": "CHF", "rupees": "INR",
}
#: Currencies written without minor units: a mark before three digits always groups.
_NO_MINOR_UNITS = frozenset({"JPY", "KRW", "ISK"})
#: Currencies whose custom is a decimal comma and a dot (or space) grouping thousands.
_DECIMAL_COMMA = frozenset({"SEK", "NOK", "DKK", "PLN", "CZK", "HUF", "BRL"})
#: ... and the euro, written both ways: a dot before three digits groups there too.
_DOT_GROUPS = _DECIMAL_COMMA | {"EUR"}

_MARKS = re.compile(r"[,.'’ \u00a0\u202f\u2009]")

_WORD_VALUES = {
    "zero": 0, "one": 1, "two": 2, "three": 3, "four": 4, "five": 5, "six": 6, "seven": 7, "eight": 8,
    "nine": 9, "ten": 10, "eleven": 11, "twelve": 12, "thirteen": 13, "fourteen": 14, "fifteen": 15,
    "sixteen": 16, "seventeen": 17, "eighteen": 18, "nineteen": 19, "twenty": 20, "thirty": 30,
    "forty": 40, "fifty": 50, "sixty": 60, "seventy": 70, "eighty": 80, "ninety": 90,
}
_SCALES = {"hundred": 100, "thousand": 1000, "million": 1_000_000}
WORD_AMOUNT = re.compile(
    r"(?<![\w-])((?:(?:" + "|".join(list(_WORD_VALUES) + list(_SCALES)) + r")(?:[\s-]+(?:and\s+)?)?)+)"
    r"(?P<unit>dollars|euros|pounds)\b",
    re.IGNORECASE,
)

#: A number that is the whole value of a label naming pay ("Hourly rate: 19.75",
#: "| Salary | 41,000 |", "Pay rate      19.75"), at the start of a line or of a table cell.
_LABELLED = re.compile(
    r"(?:^|(?<=\|))[ \t>*_#-]*(?P<label>[A-Za-z][A-Za-z &/()'’.,-]{0,48}?)[ \t*_]*(?::|=|\||\t|[ \t]{2,})[ \t*_]*"
    + _NUMBER + r"(?P<suffix>[ \t]?[kK](?![a-zA-Z]))?",
    re.MULTILINE,
)
_PAY_LABEL = re.compile(
    r"\b(?:salary|salaries|pay|wages?|compensation|remuneration|earnings|stipend"
    r"|(?:hourly|daily|day|base|basic|pay|starting|weekly|monthly|annual|overtime|shift|contract)\s+rate|rate\s+(?:of\s+pay|per))\b",
    re.IGNORECASE,
)
#: Labels that name pay but hold another kind of number: a grade, a count, a share, a date.
_NOT_AN_AMOUNT = re.compile(
    r"\b(?:grade|band|level|scale|step|point|spine|code|no|number|id|ref|reference|period|periods|frequency|date|days"
    r"|increase|rise|raise|review|ratio|percent|percentage|currency|type|method|basis|cycle|count|multiplier|factor"
    r"|leave|holiday|vacation|sick|hours?)\b|%|#",
    re.IGNORECASE,
)
_BARE_UNIT = re.compile(r"\s*(?:hours?|hrs?|h|years?|yrs?|months?|mo|weeks?|wks?|days?)\b", re.IGNORECASE)
_VALUE_END = re.compile(r"[ \t*_]*(?:$|\|)", re.MULTILINE)


@dataclass(frozen=True, slots=True)
class MoneyMention:
    start: int
    end: int
    amount: Decimal
    currency: str | None
    period: str | None  #: hour, year, month, week or day, when written next to the amount
    in_words: bool = False
    #: ``ambiguous_separator`` (see the module docstring), ``no_currency`` (a labelled number)
    flags: frozenset[str] = frozenset()
    notes: tuple[str, ...] = ()


def find_money(text: str) -> list[MoneyMention]:
    matches = list(MONEY.finditer(text))
    decimal_mark = _document_decimal_mark(matches)
    found: list[MoneyMention] = []
    for match in matches:
        number = match["num"] or match["num_b"] or match["num_c"]
        suffix = (match["suffix"] or match["suffix_b"] or "").strip().lower()
        currency_text = match["cur"] or match["cur2"] or match["cur3"] or match["cur4"] or match["cur5"]
        currency = _CODES.get(currency_text or "", currency_text)
        parsed = parse_number(number, currency, decimal_mark)
        if parsed is None:
            continue
        amount, ambiguous = parsed
        amount *= {"k": 1000, "thousand": 1000, "million": 1_000_000}.get(suffix, 1)
        end = match.end()
        period, period_end = _period_after(text, end)
        flags, notes = _ambiguity(ambiguous, number)
        found.append(MoneyMention(match.start(), max(end, period_end), _plain(amount), currency, period, False, flags, notes))
    for match in WORD_AMOUNT.finditer(text):
        value = words_to_number(match.group(1))
        if value is None:
            continue
        period, period_end = _period_after(text, match.end())
        found.append(
            MoneyMention(match.start(), max(match.end(), period_end), Decimal(value), _CODES.get(match["unit"].lower()), period, True)
        )
    found.extend(_labelled_amounts(text, found, decimal_mark))
    found.sort(key=lambda m: m.start)
    return found


def _ambiguity(ambiguous: bool, number: str) -> tuple[frozenset[str], tuple[str, ...]]:
    if not ambiguous:
        return frozenset(), ()
    return frozenset({"ambiguous_separator"}), (f"{number!r}: the separator may be a decimal mark or group thousands",)


def _labelled_amounts(text: str, found: list[MoneyMention], decimal_mark: str | None) -> list[MoneyMention]:
    """Numbers with no currency that are the whole value under a pay label."""
    if not _PAY_LABEL.search(text):
        return []
    covered = bytearray(len(text))  # 1 where an amount with a currency was found
    for mention in found:
        covered[mention.start : mention.end] = b"\x01" * (mention.end - mention.start)
    out = []
    for match in _LABELLED.finditer(text):
        label = match["label"]
        if not _PAY_LABEL.search(label) or _NOT_AN_AMOUNT.search(label):
            continue
        start, end = match.start("num"), match.end()
        if covered.find(1, start, end) != -1:
            continue
        period, period_end = _period_after(text, end)
        if period and _BARE_UNIT.match(text, end):
            continue  # "Sick pay: 5 days": a count, not an amount
        if not _VALUE_END.match(text, max(end, period_end)):
            continue  # "Pay rate: 19.75 hours" or "Fee: 3 instalments": more than an amount
        parsed = parse_number(match["num"], None, decimal_mark)
        if parsed is None:
            continue
        amount, ambiguous = parsed
        if match["suffix"]:
            amount *= 1000
        flags, notes = _ambiguity(ambiguous, match["num"])
        notes += ("no currency written: a number under a pay label",)
        out.append(MoneyMention(start, max(end, period_end), _plain(amount), None, period, False, flags | {"no_currency"}, notes))
    return out


def _document_decimal_mark(matches: list[re.Match[str]]) -> str | None:
    """The decimal mark the document's unambiguous amounts use, if they agree on one."""
    seen = set()
    for match in matches:
        number = match["num"] or match["num_b"] or match["num_c"]
        marks = [c for c in number if c in ".,"]
        if not marks:
            continue
        if len(set(marks)) == 2:
            seen.add(marks[-1])
        elif len(marks) > 1:
            seen.add("." if marks[0] == "," else ",")
        elif len(number.rsplit(marks[0], 1)[1]) != 3:
            seen.add(marks[0])
    return seen.pop() if len(seen) == 1 else None


def parse_number(number: str, currency: str | None = None, decimal_mark: str | None = None) -> tuple[Decimal, bool] | None:
    """``(amount, ambiguous)`` for a written number, or None when its marks make no amount
    ("1.2.3", "12,34,5"). The rules are in the module docstring."""
    marks = _MARKS.findall(number)
    digits = _MARKS.split(number)
    if not marks:
        return Decimal(number), False
    points = [m for m in marks if m in ".,"]
    decimal: str | None = None
    ambiguous = False
    if len(set(points)) == 2:
        decimal = points[-1]
        if points.count(decimal) > 1 or marks[-1] != decimal:
            return None
    elif len(points) == 1 and marks[-1] == points[0]:
        mark = points[0]
        after = digits[-1]
        if len(marks) > 1 or len(after) != 3:
            decimal = mark  # "5'500.50", "19.75", "4,5"
        elif digits[0] == "0":
            decimal = mark  # "0.125"
        elif currency in _NO_MINOR_UNITS:
            decimal = None
        elif decimal_mark is not None:
            ambiguous = decimal_mark == mark
        elif mark == ",":
            ambiguous = currency in _DECIMAL_COMMA
        else:
            ambiguous = currency not in _DOT_GROUPS
    elif len(points) == 1:
        return None  # "1.234'567": a decimal mark before a group mark
    whole = digits[:-1] if decimal else digits
    if len(whole) > 1 and not _valid_groups(whole, currency):
        return None
    text = "".join(whole) + ("." + digits[-1] if decimal else "")
    try:
        return Decimal(text), ambiguous
    except InvalidOperation:
        return None


def _valid_groups(groups: list[str], currency: str | None) -> bool:
    """Thousands groups: 1–3 digits, then threes; Indian grouping (lakh, crore) for INR."""
    if not 1 <= len(groups[0]) <= 3 or len(groups[-1]) != 3:
        return False
    middle = groups[1:-1]
    return all(len(g) == 3 for g in middle) or (currency == "INR" and all(len(g) == 2 for g in middle))


def _period_after(text: str, end: int) -> tuple[str | None, int]:
    window = text[end : end + 50]
    match = _PERIOD_AFTER.match(window)
    if not match:
        return None, end
    return period_unit(match["unit"] or match["adverb"] or ""), end + match.end()


def period_in(text: str) -> str | None:
    """A pay period named anywhere in ``text`` ("Annual base salary" → year)."""
    match = _PERIOD_WORD.search(text)
    return _UNIT.get(match["adverb"].lower()) if match else None


def _plain(amount: Decimal) -> Decimal:
    """Drop trailing zeros: 24.60 → 24.6, 61800.00 → 61800."""
    normalised = amount.normalize()
    return normalised.quantize(Decimal(1)) if normalised == normalised.to_integral() else normalised


def words_to_number(phrase: str) -> int | None:
    """"sixty-one thousand eight hundred" → 61800; None if it is not a number in words."""
    total = current = 0
    seen = False
    for word in re.split(r"[\s-]+", phrase.lower()):
        if not word or word == "and":
            continue
        if word in _WORD_VALUES:
            current += _WORD_VALUES[word]
            seen = True
        elif word == "hundred":
            current = max(current, 1) * 100
            seen = True
        elif word in ("thousand", "million"):
            total += max(current, 1) * _SCALES[word]
            current = 0
            seen = True
        else:
            return None
    return total + current if seen else None


def periods_in(text: str) -> set[str]:
    """Every pay period named in ``text`` ("annual salary or hourly rate" → {year, hour})."""
    return {_UNIT[match["adverb"].lower()] for match in _PERIOD_WORD.finditer(text)}


def period_unit(word: str) -> str | None:
    """The period a word or phrase names ("per annum", "Hourly", "year") or None."""
    folded = re.sub(r"^(?:(?:per|an?|each|every)\s+|/\s*)", "", " ".join(word.lower().split()))
    bare = folded.replace(".", "")
    return next((_UNIT[probe] for probe in (folded, bare, bare.rstrip("s")) if probe in _UNIT), None)


#: How many of each period make a year, as a range (common practice, no source): 12
#: months, 52 weeks, 220–366 working or calendar days, 1,500–2,600 working hours.
_PER_YEAR = {"year": (1, 1), "month": (12, 12), "week": (52, 52), "day": (220, 366), "hour": (1500, 2600)}
_SAME_PAY_TOLERANCE = Decimal("0.05")


def same_pay(first: Decimal, first_period: str, second: Decimal, second_period: str) -> bool:
    """Whether two amounts in two periods can be the same pay ("5,600 per month" and
    "67,200 per annum"): their yearly ranges meet, within 5 %."""
    if first_period not in _PER_YEAR or second_period not in _PER_YEAR or first <= 0 or second <= 0:
        return False
    low_a, high_a = (first * n for n in _PER_YEAR[first_period])
    low_b, high_b = (second * n for n in _PER_YEAR[second_period])
    slack = 1 + _SAME_PAY_TOLERANCE
    return low_a <= high_b * slack and low_b <= high_a * slack


#: The words between two amounts that state the same pay twice: "5,600 per month, i.e.
#: 67,200 per annum", "$20 an hour, or about $41,600 a year", "(that is $41,600 a year)",
#: "equivalent to", "= ...", a restatement in brackets.
RESTATEMENT = re.compile(
    r"^[\s,;:(\[]*(?:(?:i\.?\s?e\.?|that\s+is|that's|which\s+is|which\s+comes\s+to|(?:which\s+)?works?\s+out\s+(?:at|to)|"
    r"equivalent\s+to|the\s+equivalent\s+of|equal\s+to|equating\s+to|amounting\s+to|in\s+other\s+words|or|=|being|so)"
    r"(?![\w])[\s,:]*)*(?:(?:approximately|approx\.?|about|around|roughly|some|circa|c\.|nearly|almost|just\s+over|just\s+under)\s*)?$",
    re.IGNORECASE,
)


def restatement_between(text: str) -> bool:
    """``text`` (what lies between two amounts) says the second restates the first."""
    return len(text) <= 45 and "\n\n" not in text and bool(RESTATEMENT.match(text))
