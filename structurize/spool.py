"""A run's results kept on disk, so that a run's memory does not grow with its folder.

Workers hand back one :class:`~structurize.types.DocumentResult` at a time; the parent
adds each to a :class:`ResultSpool` and keeps only counts (:class:`TableChecks`).  Reading
the spool gives the results in path order, with the table-wide checks applied, a few
hundred at a time; the writers stream them into the output files.

The spool is a private temporary SQLite database (``sqlite3.connect("")``): SQLite
creates it in the temporary folder (``SQLITE_TMPDIR``, else ``TMPDIR``, else ``/var/tmp``
or ``/tmp``) with owner-only permissions (0600), removes its name at once, keeps a small
page cache in memory, and the space is freed when the spool is closed or the process ends,
a crash included.  It holds extracted personal data while the run lasts, on the same
machine as the inputs.
"""

from __future__ import annotations

import pickle
import sqlite3
from collections.abc import Iterable, Iterator, Sequence
from typing import overload

from .schema.model import TargetSchema
from .types import DocumentResult
from .validate import TableChecks

#: Results read from the spool at once.
READ_CHUNK = 256


class ResultSpool(Sequence[DocumentResult]):
    """Results in path order, from disk, with the table-wide checks applied."""

    def __init__(self, schema: TargetSchema, results: Iterable[DocumentResult] = ()) -> None:
        self.schema = schema
        self.checks = TableChecks(schema)
        # handed from the thread that extracts to the one that writes; used by one at a time
        self._db = sqlite3.connect("", check_same_thread=False)
        self._db.execute("CREATE TABLE results (source TEXT PRIMARY KEY, data BLOB NOT NULL)")
        self._count = 0
        for result in results:
            self.add(result)

    def add(self, result: DocumentResult) -> None:
        """Keep one result (its source must be new to the spool)."""
        try:
            self._db.execute("INSERT INTO results VALUES (?, ?)", (result.source, pickle.dumps(result, pickle.HIGHEST_PROTOCOL)))
        except sqlite3.IntegrityError:
            raise ValueError("a result for this source is already in the spool") from None
        self.checks.add(result)
        self._count += 1

    def __len__(self) -> int:
        return self._count

    def __iter__(self) -> Iterator[DocumentResult]:
        cursor = self._db.execute("SELECT data FROM results ORDER BY source")
        while rows := cursor.fetchmany(READ_CHUNK):
            for (data,) in rows:
                yield self.checks.apply(pickle.loads(data))

    @overload
    def __getitem__(self, index: int) -> DocumentResult: ...
    @overload
    def __getitem__(self, index: slice) -> list[DocumentResult]: ...
    def __getitem__(self, index: int | slice) -> DocumentResult | list[DocumentResult]:
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(self._count))]
        if index < 0:
            index += self._count
        if not 0 <= index < self._count:
            raise IndexError("spool index out of range")
        (data,) = self._db.execute("SELECT data FROM results ORDER BY source LIMIT 1 OFFSET ?", (index,)).fetchone()
        return self.checks.apply(pickle.loads(data))

    def close(self) -> None:
        self._db.close()

    def __repr__(self) -> str:
        return f"<ResultSpool {self.schema.name!r}: {self._count} documents>"
