"""Small named registries for the pluggable parts: readers and extractors.

Built-in components register themselves in :mod:`structurize.builtins` (one place, no
import-time side effects elsewhere).  Third-party packages add components through the
entry-point groups ``structurize.readers`` and ``structurize.extractors``; an entry point
names a callable that receives the registry and registers into it.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from importlib.metadata import entry_points
from typing import Generic, TypeVar

T = TypeVar("T")


class Registry(Generic[T]):
    """A name → component table.  Names are versioned (``reader.pdf.v1``)."""

    def __init__(self, kind: str, entry_point_group: str) -> None:
        self.kind = kind
        self.group = entry_point_group
        self._items: dict[str, T] = {}
        self._populated = False

    def register(self, name: str, item: T) -> T:
        if name in self._items:
            raise ValueError(f"{self.kind} {name!r} is already registered")
        self._items[name] = item
        return item

    def get(self, name: str) -> T:
        self.ensure_populated()
        try:
            return self._items[name]
        except KeyError:
            raise KeyError(f"no {self.kind} named {name!r}") from None

    def names(self) -> list[str]:
        self.ensure_populated()
        return sorted(self._items)

    def items(self) -> Iterator[tuple[str, T]]:
        self.ensure_populated()
        yield from self._items.items()

    def ensure_populated(self) -> None:
        """Register the built-ins, then any plug-ins, once."""
        if self._populated:
            return
        self._populated = True
        from . import builtins

        builtins.register_all()
        for point in entry_points(group=self.group):
            hook: Callable[[Registry[T]], None] = point.load()
            hook(self)
