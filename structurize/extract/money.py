"""Find amounts of money: symbols and codes, "k" shorthand, amounts in words, pay periods."""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation

_CURRENCY = r"(?P<cur>US\$|USD|CAD|C\$|AUD|A\$|NZD|EUR|GBP|CHF|\$|€|£)"
_NUMBER = r"(?P<num>\d{1,3}(?:,\d{3})+(?:\.\d+)?|\d+(?:\.\d+)?)"
_SUFFIX = r"(?P<suffix>\s?[kK](?![a-zA-Z])|\s(?:thousand|million)\b)?"
_CODE_AFTER = r"(?:\s?(?P<cur2>USD|EUR|GBP|CAD|AUD|dollars|euros|pounds)\b)?"

MONEY = re.compile(
    r"(?<![\w.,])(?:" + _CURRENCY + r"\s?" + _NUMBER + _SUFFIX + _CODE_AFTER
    + r"|" + _NUMBER.replace("num", "num_b") + r"(?P<suffix_b>\s?[kK](?![a-zA-Z])|\s(?:thousand|million)\b)"
    + r"(?:\s?(?P<cur3>USD|EUR|GBP|dollars|euros|pounds)\b)?"
    + r"|" + _NUMBER.replace("num", "num_c") + r"\s?(?P<cur4>USD|EUR|GBP|CAD|AUD|dollars|euros|pounds)\b)",
)

_PERIOD_AFTER = re.compile(
    r"^\s*(?:/\s*|per\s+|an?\s+|each\s+|every\s+)?"
    r"(?P<unit>hour|hr|h|year|yr|annum|month|mo|week|wk|day)s?\b"
    r"|^\s*,?\s*(?P<adverb>hourly|annually|yearly|monthly|weekly|daily|per annum|p\.?a\.?)\b",
    re.IGNORECASE,
)
_PERIOD_WORD = re.compile(r"\b(?P<adverb>hourly|annual(?:ly)?|yearly|per annum|monthly|weekly|daily)\b", re.IGNORECASE)
_UNIT = {
    "hour": "hour", "hr": "hour", "h": "hour", "hourly": "hour",
    "year": "year", "yr": "year", "annum": "year", "annually": "year", "annual": "year",
    "yearly": "year", "per annum": "year", "pa": "year", "p.a.": "year", "p.a": "year",
    "month": "month", "mo": "month", "monthly": "month",
    "week": "week", "wk": "week", "weekly": "week", "day": "day", "daily": "day",
}
_CODES = {"$": "USD", "US$": "USD", "€": "EUR", "£": "GBP", "C$": "CAD", "A$": "AUD", "dollars": "USD", "euros": "EUR", "pounds": "GBP"}

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


@dataclass(frozen=True, slots=True)
class MoneyMention:
    start: int
    end: int
    amount: Decimal
    currency: str | None
    period: str | None  #: hour, year, month, week or day, when written next to the amount
    in_words: bool = False


def find_money(text: str) -> list[MoneyMention]:
    found: list[MoneyMention] = []
    for match in MONEY.finditer(text):
        number = match["num"] or match["num_b"] or match["num_c"]
        suffix = (match["suffix"] or match["suffix_b"] or "").strip().lower()
        currency = match["cur"] or match["cur2"] or match["cur3"] or match["cur4"]
        try:
            amount = Decimal(number.replace(",", ""))
        except InvalidOperation:
            continue
        amount *= {"k": 1000, "thousand": 1000, "million": 1_000_000}.get(suffix, 1)
        end = match.end()
        period, period_end = _period_after(text, end)
        found.append(
            MoneyMention(match.start(), max(end, period_end), _plain(amount), _CODES.get(currency or "", currency), period)
        )
    for match in WORD_AMOUNT.finditer(text):
        value = words_to_number(match.group(1))
        if value is None:
            continue
        period, period_end = _period_after(text, match.end())
        found.append(
            MoneyMention(match.start(), max(match.end(), period_end), Decimal(value), _CODES.get(match["unit"].lower()), period, True)
        )
    found.sort(key=lambda m: m.start)
    return found


def _period_after(text: str, end: int) -> tuple[str | None, int]:
    window = text[end : end + 30]
    match = _PERIOD_AFTER.match(window)
    if not match:
        return None, end
    word = (match["unit"] or match["adverb"] or "").lower().replace(" ", " ")
    return _UNIT.get(word.rstrip("s") if word not in _UNIT else word), end + match.end()


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
