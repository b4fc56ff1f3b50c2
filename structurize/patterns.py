"""User regular expressions (``constraints.pattern``, ``extract.pattern``), matched with a time limit.

A schema is data, never code, but a regular expression is a small program: a nested
quantifier such as ``(a|aa)+$`` backtracks exponentially on ``"a" * 50 + "!"`` and would
hold a worker until it is killed.  User patterns are therefore compiled with the
`regex <https://pypi.org/project/regex/>`_ module (the same syntax as :mod:`re`) and every
match is given a time limit (:attr:`structurize.options.Limits.regex_seconds`, 0.1 s by
default).  A match that runs out of time raises :class:`PatternTimeout`; callers turn it
into a value status (``invalid: validation_timeout``) or a document warning
(``pattern_timeout``), never a hung worker.

Within one document, a pattern that has run out of time once is not tried again
(:class:`Budget`), so a hostile pattern costs a document at most one time limit per
pattern, however many candidate values the document holds.
"""

from __future__ import annotations

import contextlib
import contextvars
import functools
import weakref
from collections.abc import Iterator
from typing import Any

import regex

#: The warning a document gets when a pattern ran out of time while finding its values.
TIMEOUT_WARNING = "pattern_timeout"
#: The reason code a value gets when its ``constraints.pattern`` check ran out of time.
TIMEOUT_REASON = "validation_timeout"

_SECONDS: contextvars.ContextVar[float | None] = contextvars.ContextVar("structurize_regex_seconds", default=None)
_TIMEOUTS: contextvars.ContextVar[list[str] | None] = contextvars.ContextVar("structurize_regex_timeouts", default=None)


class PatternError(ValueError):
    """The text is not a valid regular expression."""


class PatternTimeout(Exception):
    """A match ran out of time."""

    def __init__(self, pattern: str, seconds: float) -> None:
        self.pattern = pattern
        self.seconds = seconds
        super().__init__(f"pattern took longer than {seconds:g} s")


def default_seconds() -> float:
    """The time limit per match: the one set by :func:`time_limit`, else ``Limits.regex_seconds``."""
    seconds = _SECONDS.get()
    if seconds is not None:
        return seconds
    from .options import Limits  # here, not at import: options imports the extract package

    return Limits.regex_seconds


@contextlib.contextmanager
def time_limit(seconds: float) -> Iterator[None]:
    """Use ``seconds`` per match inside the block (a run's ``options.limits.regex_seconds``)."""
    token = _SECONDS.set(float(seconds))
    try:
        yield
    finally:
        _SECONDS.reset(token)


@contextlib.contextmanager
def collect_timeouts() -> Iterator[list[str]]:
    """Collect the patterns that run out of time inside the block (one document's extraction).

    The list is empty when none did; otherwise the document should carry
    :data:`TIMEOUT_WARNING`.
    """
    found: list[str] = []
    token = _TIMEOUTS.set(found)
    try:
        yield found
    finally:
        _TIMEOUTS.reset(token)


def _record(pattern: str) -> None:
    found = _TIMEOUTS.get()
    if found is not None and pattern not in found:
        found.append(pattern)


class UserPattern:
    """A compiled user pattern whose every match has a time limit.

    ``pattern`` is the source text, as with :class:`re.Pattern`.  Pickles by its source
    (it travels to worker processes inside the schema).
    """

    __slots__ = ("pattern", "_compiled", "__weakref__")

    def __init__(self, pattern: str) -> None:
        self.pattern = pattern
        try:
            self._compiled = regex.compile(pattern, regex.VERSION0)
        except (regex.error, ValueError, TypeError, OverflowError, RecursionError, MemoryError) as exc:
            raise PatternError(str(exc).splitlines()[0] if str(exc) else type(exc).__name__) from None

    def fullmatch(self, text: str, *, seconds: float | None = None) -> bool:
        """Whether the whole of ``text`` matches.  Raises :class:`PatternTimeout`."""
        return self._run("fullmatch", text, seconds) is not None

    def search(self, text: str, *, seconds: float | None = None) -> Any:
        """The first match in ``text``, or None.  Raises :class:`PatternTimeout`."""
        return self._run("search", text, seconds)

    def _run(self, method: str, text: str, seconds: float | None) -> Any:
        limit = default_seconds() if seconds is None else seconds
        try:
            return getattr(self._compiled, method)(text, timeout=limit)
        except TimeoutError:
            _record(self.pattern)
            raise PatternTimeout(self.pattern, limit) from None

    def __reduce__(self) -> tuple[Any, ...]:
        return (compile_pattern, (self.pattern,))

    def __eq__(self, other: object) -> bool:
        return isinstance(other, UserPattern) and other.pattern == self.pattern

    def __hash__(self) -> int:
        return hash(("UserPattern", self.pattern))

    def __repr__(self) -> str:
        return f"UserPattern({self.pattern!r})"


@functools.lru_cache(maxsize=512)
def compile_pattern(pattern: str) -> UserPattern:
    """Compile a user pattern (cached).  Raises :class:`PatternError` when it is not valid."""
    return UserPattern(pattern)


class Budget:
    """Per-document memory of patterns that ran out of time: they are not tried again."""

    __slots__ = ("timed_out",)

    def __init__(self) -> None:
        self.timed_out: set[str] = set()

    def fullmatch(self, pattern: UserPattern, text: str) -> bool:
        """Like :meth:`UserPattern.fullmatch`; raises :class:`PatternTimeout` at once for a known offender."""
        if pattern.pattern in self.timed_out:
            raise PatternTimeout(pattern.pattern, 0.0)
        try:
            return pattern.fullmatch(text)
        except PatternTimeout:
            self.timed_out.add(pattern.pattern)
            raise


_BUDGETS: weakref.WeakKeyDictionary[Any, Budget] = weakref.WeakKeyDictionary()


def budget_for(owner: Any) -> Budget:
    """The :class:`Budget` of one document, kept as long as ``owner`` (its analysis) lives."""
    try:
        budget = _BUDGETS.get(owner)
    except TypeError:  # not weakly referenceable: no memory across calls
        return Budget()
    if budget is None:
        budget = Budget()
        _BUDGETS[owner] = budget
    return budget
