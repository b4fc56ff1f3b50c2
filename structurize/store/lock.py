"""The writer's lock on a store: ``fcntl.flock`` on ``<store>.lock``.

The lock file holds the holder's pid, run start and host so that a refused second run can
say who holds the store.  ``flock`` locks are released by the kernel when their process
dies, so a lock file left behind by a crashed run is simply taken over (with a message).
"""

from __future__ import annotations

import json
import os
import socket
from pathlib import Path

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None  # type: ignore[assignment]


class StoreLock:
    def __init__(self, store_path: Path) -> None:
        self.path = store_path.with_name(store_path.name + ".lock")
        self.handle: int | None = None

    def acquire(self) -> str | None:
        """Lock, or raise :class:`~structurize.store.StoreBusy`; a message if a stale lock was taken over."""
        from . import StoreBusy, StoreError, now

        try:
            handle = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o600)
        except OSError as exc:
            raise StoreError(f"store lock {self.path}: cannot be created ({exc.strerror or exc})") from None
        previous = _read(handle)
        if fcntl is not None:
            try:
                fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                os.close(handle)
                holder = ", ".join(f"{key} {previous[key]}" for key in ("pid", "started", "host") if key in previous)
                raise StoreBusy(f"store busy: another run holds {self.path.name} ({holder or 'holder unknown'})") from None
        self.handle = handle
        os.ftruncate(handle, 0)
        os.lseek(handle, 0, os.SEEK_SET)
        os.write(handle, json.dumps({"pid": os.getpid(), "started": now(), "host": socket.gethostname()}).encode())
        os.fsync(handle)
        if previous.get("pid") and previous.get("pid") != os.getpid():
            return f"took over a stale lock left by pid {previous['pid']} (started {previous.get('started', '?')})"
        return None

    def release(self) -> None:
        if self.handle is None:
            return
        try:
            os.ftruncate(self.handle, 0)
        except OSError:
            pass
        os.close(self.handle)  # closing the descriptor releases the flock
        self.handle = None


def _read(handle: int) -> dict[str, object]:
    try:
        data = os.read(handle, 4096)
        return json.loads(data) if data.strip() else {}
    except (OSError, ValueError):
        return {}
