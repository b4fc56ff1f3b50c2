"""Library exceptions.  The CLI turns them into one stderr line and an exit code.

Data problems in a document are *results* (statuses and reasons on the outputs), not
exceptions.  Only problems that stop a whole run raise, plus :class:`ReadFailure`, which a
reader raises and the document boundary turns into a document status.
"""

from __future__ import annotations

from collections.abc import Sequence


class StructurizeError(Exception):
    """Base class: a problem that stops the run.  ``exit_code`` is what the CLI returns."""

    exit_code = 1


class SchemaError(StructurizeError):
    """The schema file is unreadable or does not follow the contract."""

    exit_code = 2

    def __init__(self, source: str, where: str, message: str) -> None:
        self.source = source
        self.where = where
        self.message = message
        place = f"{source}: {where}: " if where else f"{source}: "
        super().__init__(f"schema error: {place}{message}")
        #: Every problem found in the file, in file order; ``source``, ``where`` and
        #: ``message`` are the first one's.  A single problem is the error itself.
        self.problems: tuple[SchemaError, ...] = (self,)

    @classmethod
    def several(cls, problems: Sequence[SchemaError]) -> SchemaError:
        """One error for all ``problems`` (at least one): ``str()`` gives one line per problem."""
        if len(problems) == 1:
            return problems[0]
        first = problems[0]
        error = cls(first.source, first.where, first.message)
        error.problems = tuple(problem for item in problems for problem in item.problems)
        error.args = ("\n".join(error.lines),)
        return error

    @property
    def lines(self) -> tuple[str, ...]:
        """One ``schema error: <file>: <where>: <what>`` line per problem."""
        return tuple(problem.args[0] for problem in self.problems)


class UsageError(StructurizeError):
    """Bad arguments: a missing input folder, an unwritable output folder, ..."""

    exit_code = 2


class ModelMissing(StructurizeError):
    """The NER pipeline package is not installed."""

    exit_code = 1


class ReadFailure(Exception):
    """Raised by a reader when a document cannot be read.

    ``status`` is a :class:`~structurize.types.DocStatus` value and ``code`` a stable reason
    code (``not_utf8``, ``bad_zip``, ``encrypted`` ...).  ``detail`` must never contain
    document content: it names the condition only.
    """

    def __init__(self, status: str, code: str, detail: str = "") -> None:
        self.status = status
        self.code = code
        self.detail = detail
        super().__init__(f"{code}: {detail}" if detail else code)
