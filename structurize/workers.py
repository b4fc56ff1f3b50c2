"""Worker processes: every document is read and extracted in a process that can be killed.

A long C call (zlib, lxml, pdfminer's layout) cannot be interrupted by a signal handler or
a thread, so the only reliable bound on time is to kill the process doing it.  Each worker
caps its own address space (``RLIMIT_AS``) when it starts, loads the NER pipeline once,
then takes one document at a time.  The parent keeps a deadline per document:

* past the deadline the worker is killed: the document is ``failed: timeout``;
* a worker that dies (a crash, the kernel's OOM killer) fails only its document:
  ``failed: worker_crash`` (or ``memory_limit`` when it ran out of memory);
* a fresh worker takes its place and the batch goes on.

Results come back in the order documents finish; :func:`run_documents` yields them so
that the caller can write progress (and, later, its store) as it goes.
"""

from __future__ import annotations

import contextlib
import fnmatch
import multiprocessing
import os
import signal
import sys
import time
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any

from .errors import ModelMissing, StructurizeError
from .options import ExtractOptions, default_workers
from .schema import TargetSchema
from .resolve import unread_values
from .types import DocStatus, DocumentResult

Task = tuple[Path, str]
#: Seconds a worker may take to start (import and load the NER pipeline).
START_SECONDS = 120.0


def _context() -> multiprocessing.context.BaseContext:
    methods = multiprocessing.get_all_start_methods()
    if "forkserver" in methods:
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(["structurize.api"])
        return context
    return multiprocessing.get_context("spawn")


@contextlib.contextmanager
def _main_module_hidden() -> Iterator[None]:
    """Start workers without re-running the caller's script in them.

    ``spawn`` and ``forkserver`` re-import the ``__main__`` module in each child unless it
    has no file; workers need nothing from it (tasks hold only structurize types), and a
    script without an ``if __name__ == "__main__"`` guard would otherwise start its work
    again in every worker.
    """
    main = sys.modules.get("__main__")
    if main is None:
        yield
        return
    had_file = hasattr(main, "__file__")
    saved_file = getattr(main, "__file__", None)
    saved_spec = getattr(main, "__spec__", None)
    try:
        if had_file:
            del main.__file__
        main.__spec__ = None
        yield
    finally:
        if had_file:
            main.__file__ = saved_file
        main.__spec__ = saved_spec


def failed_result(schema: TargetSchema, source: str, reason: str, note: str, seconds: float = 0.0,
                  path: Path | None = None) -> DocumentResult:
    """The result for a document whose worker did not come back (with its ``path``, the
    row still names the file's reader and the hash of its bytes)."""
    values = unread_values(schema, reason)
    reader, sha256 = "", ""
    if path is not None:
        from .readers import file_sha256, reader_for

        reader, sha256 = reader_for(path) or "", file_sha256(path)
    return DocumentResult(source=source, sha256=sha256, status=DocStatus.FAILED, reason=reason, note=note, reader=reader,
                          seconds=seconds, values=values)


def _limit_memory(megabytes: int) -> None:
    try:
        import resource
    except ImportError:  # not POSIX: no address-space limit (documented)
        return
    limit = megabytes * 1024 * 1024
    try:
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ValueError, OSError):
        pass


def _test_fault(source: str) -> None:
    """Test-only fault injection, active only when STRUCTURIZE_FAULT_INJECTION=1.

    ``STRUCTURIZE_FAULT=<kind>:<document>`` with kind ``hang``, ``crash`` (SIGSEGV),
    ``exit``, ``memory``, ``raise`` (an unexpected exception) or ``slow`` (sleep
    ``STRUCTURIZE_FAULT_SECONDS`` each time the document's turn comes: once to be read, once
    to be extracted); ``<document>`` may be a shell-style pattern (``*_letter.docx``).
    """
    if os.environ.get("STRUCTURIZE_FAULT_INJECTION") != "1":
        return
    kind, _, target = os.environ.get("STRUCTURIZE_FAULT", "").partition(":")
    if not fnmatch.fnmatchcase(source, target):
        return
    if kind == "hang":
        time.sleep(3600)
    elif kind == "crash":
        os.kill(os.getpid(), signal.SIGSEGV)
    elif kind == "exit":
        os._exit(7)
    elif kind == "memory":
        hog = [bytearray(64 * 1024 * 1024) for _ in range(10_000)]
        del hog
    elif kind == "raise":
        raise RuntimeError("injected fault")
    elif kind == "slow":
        time.sleep(float(os.environ.get("STRUCTURIZE_FAULT_SECONDS", "1")))


def peak_rss_kb() -> int:
    """This process's peak resident memory in kB: Linux's ``VmHWM``, which (unlike
    ``ru_maxrss``) does not carry over a parent's peak across ``exec``; elsewhere
    ``ru_maxrss``."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
    except (OSError, ValueError, IndexError):
        pass
    try:
        import resource
    except ImportError:
        return 0
    return int(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)


def _worker_main(conn: Connection, schema: TargetSchema, options: ExtractOptions) -> None:
    """Runs in the worker process: limits, one model load, then documents until told to stop."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent decides when workers stop
    os.environ.setdefault("OMP_THREAD_LIMIT", "1")  # one thread per worker (Tesseract, BLAS)
    _limit_memory(options.limits.memory_mb)
    from . import api

    try:
        ner = api.ner_for(options)
    except ModelMissing as exc:
        conn.send(("fatal", str(exc)))
        return
    conn.send(("ready", None))
    while True:
        try:
            message = conn.recv()
        except EOFError:
            return
        if message is None:
            conn.send(("bye", peak_rss_kb()))
            return
        chunk: list[Task] = message

        def step(source: str | None) -> None:
            conn.send(("step", source))
            if source is not None:
                _test_fault(source)

        try:
            results = api.extract_documents(chunk, schema, options=options, ner=ner, on_step=step)
        except MemoryError:
            if len(chunk) > 1:
                os._exit(MEMORY_EXIT)  # the parent retries each document of the chunk alone
            results = [failed_result(schema, chunk[0][1], "memory_limit", "the document needs more memory than the limit", path=chunk[0][0])]
        except Exception as exc:  # noqa: BLE001 - never a traceback (it may quote a document)
            if len(chunk) > 1:
                os._exit(RETRY_EXIT)  # the parent retries each document of the chunk alone
            results = [failed_result(schema, chunk[0][1], "extract_error", f"extraction failed ({type(exc).__name__})", path=chunk[0][0])]
        conn.send(("done", results))


@dataclass
class _Worker:
    process: Any
    conn: Connection
    task: list[Task] | None = None
    current: str | None = None  #: the document it said it is working on (None: the whole chunk)
    started: float = 0.0  #: when it started, or last said what it is working on
    ready: bool = False
    broken: bool = False
    spent: dict[str, float] = field(default_factory=dict)  #: seconds each document of the chunk has had

    def step(self, source: str | None, now: float) -> None:
        """The worker moved on to ``source`` (None: NER over the whole chunk)."""
        owner = self.owner()
        if owner is not None:
            self.spent[owner] = self.spent.get(owner, 0.0) + now - self.started
        self.current, self.started = source, now

    def owner(self) -> str | None:
        """The document the current step counts against: the one named, or a chunk's only one."""
        if self.current is not None:
            return self.current
        return self.task[0][1] if self.task is not None and len(self.task) == 1 else None

    def allowed(self, limit: float) -> float:
        """Seconds the current step may take: to start; what is left of the document's time
        limit; or, for NER over a chunk of several, the limit itself (if that runs out, each
        document is run again alone and gets its whole limit)."""
        if not self.ready:
            return START_SECONDS
        owner = self.owner()
        return limit - self.spent.get(owner, 0.0) if owner is not None else limit


class WorkerError(StructurizeError):
    """A worker could not start (the NER pipeline is missing, for example)."""


class _Pool:
    def __init__(self, schema: TargetSchema, options: ExtractOptions, size: int) -> None:
        self.schema = schema
        self.options = options
        self.size = size
        self.context = _context()
        self.workers: list[_Worker] = []
        self.peak_rss_kb = 0

    def start(self) -> _Worker:
        parent, child = self.context.Pipe()
        process = self.context.Process(target=_worker_main, args=(child, self.schema, self.options), daemon=True)
        with _main_module_hidden():
            process.start()
        child.close()
        worker = _Worker(process, parent, started=time.monotonic())
        self.workers.append(worker)
        return worker

    def retire(self, worker: _Worker, *, kill: bool) -> None:
        if kill and worker.process.is_alive():
            worker.process.kill()
        worker.process.join(timeout=5)
        worker.conn.close()
        self.workers.remove(worker)

    def close(self) -> None:
        for worker in list(self.workers):
            try:
                worker.conn.send(None)
            except (OSError, BrokenPipeError):
                pass
        deadline = time.monotonic() + 5
        for worker in list(self.workers):
            try:
                while worker.conn.poll(max(0.05, deadline - time.monotonic())):
                    kind, payload = worker.conn.recv()
                    if kind == "bye":
                        self.peak_rss_kb = max(self.peak_rss_kb, int(payload))
                        break
            except (EOFError, OSError):
                pass
            worker.process.join(timeout=max(0.1, deadline - time.monotonic()))
            self.retire(worker, kill=True)


#: Documents sent to a worker at once, so that NER can batch them (``nlp.pipe``).
MAX_CHUNK = 8
#: Exit status of a worker that ran out of memory on a chunk of several documents.
MEMORY_EXIT = 86
#: Exit status of a worker whose chunk of several documents raised: each is run again alone.
RETRY_EXIT = 87


class _TaskQueue:
    """The documents still to do: first those put back to run alone, then the input, read
    only a little ahead, so that a large folder is never held as one list."""

    def __init__(self, tasks: Iterable[Task], workers: int) -> None:
        self._source = iter(tasks)
        self._items: deque[tuple[Task, bool]] = deque()  # (task, must run alone)
        self._exhausted = False
        self._lookahead = 2 * workers * MAX_CHUNK + 1

    def _fill(self, count: int) -> None:
        while not self._exhausted and len(self._items) < count:
            try:
                self._items.append((next(self._source), False))
            except StopIteration:
                self._exhausted = True

    def __bool__(self) -> bool:
        self._fill(1)
        return bool(self._items)

    def known(self, count: int) -> int:
        """How many tasks wait, counting at most ``count``."""
        self._fill(count)
        return min(count, len(self._items))

    def put_back(self, tasks: list[Task]) -> None:
        """Run these again, each alone, before anything else."""
        self._items.extendleft((task, True) for task in reversed(tasks))

    def next_chunk(self, workers: int) -> list[Task]:
        """A chunk for an idle worker: small near the end of the input, so the last
        documents spread over all workers; one document when it has to run alone."""
        self._fill(self._lookahead)
        task, alone = self._items.popleft()
        chunk = [task]
        if alone:
            return chunk
        size = max(1, min(MAX_CHUNK, (len(self._items) + 1) // (2 * workers)))
        while len(chunk) < size and self._items and not self._items[0][1]:
            chunk.append(self._items.popleft()[0])
        return chunk


def _crash_reason(exitcode: int | None) -> tuple[str, str]:
    if exitcode == MEMORY_EXIT:
        return "memory_limit", "the document needs more memory than the limit"
    if exitcode is not None and exitcode < 0:
        name = signal.Signals(-exitcode).name if -exitcode in signal.valid_signals() else str(-exitcode)
        if -exitcode == signal.SIGKILL:
            return "memory_limit", "the worker was killed (out of memory?)"
        return "worker_crash", f"the worker crashed ({name})"
    return "worker_crash", f"the worker exited ({exitcode})"


def run_documents(
    tasks: Iterable[Task],
    schema: TargetSchema,
    options: ExtractOptions,
    *,
    on_result: Callable[[DocumentResult], None] | None = None,
    stats: dict[str, int] | None = None,
) -> Iterator[DocumentResult]:
    """Extract every task in worker processes; yield each result as it finishes.

    ``stats`` (optional) receives ``worker_peak_rss_kb``: the largest peak RSS a worker
    reported when it stopped.
    """
    wanted = options.workers or default_workers()
    queue = _TaskQueue(tasks, wanted)
    if not queue:
        return
    size = queue.known(wanted)
    pool = _Pool(schema, options, size)
    limit = options.limits.seconds
    startup_failures = 0
    try:
        for _ in range(size):
            pool.start()
        while queue or any(w.task is not None for w in pool.workers):
            now = time.monotonic()
            for worker in pool.workers:
                if worker.ready and worker.task is None and queue:
                    worker.task = queue.next_chunk(len(pool.workers))
                    worker.current, worker.started, worker.spent = None, now, {}
                    worker.conn.send(worker.task)
            waiting = {w.conn: w for w in pool.workers}
            sentinels = {w.process.sentinel: w for w in pool.workers}
            deadlines = [w.started + w.allowed(limit) for w in pool.workers if w.task is not None or not w.ready]
            timeout = max(0.0, min(deadlines) - now) if deadlines else None
            ready = wait([*waiting, *sentinels], timeout=timeout)
            finished: list[DocumentResult] = []
            for item in ready:
                if item in waiting:
                    worker = waiting[item]
                    try:
                        kind, payload = worker.conn.recv()
                    except (EOFError, OSError):
                        worker.broken = True  # it died; its exit code tells how
                        worker.process.join(timeout=2)
                        continue
                    if kind == "fatal":
                        raise ModelMissing(payload)
                    if kind == "ready":
                        worker.ready = True
                    elif kind == "step":
                        worker.step(payload, time.monotonic())
                    elif kind == "done":
                        worker.task = None
                        finished.extend(payload)
            for result in finished:
                if on_result:
                    on_result(result)
                yield result
            now = time.monotonic()
            for worker in list(pool.workers):
                dead = worker.broken or not worker.process.is_alive()
                late = worker.task is not None and now - worker.started > worker.allowed(limit)
                stuck = not worker.ready and now - worker.started > START_SECONDS
                if not (dead or late or stuck):
                    continue
                chunk = worker.task
                exitcode = worker.process.exitcode
                was_ready = worker.ready
                pool.retire(worker, kill=True)
                if not was_ready:
                    startup_failures += 1
                    if startup_failures >= 3:
                        raise WorkerError("worker processes cannot start (is the memory limit too low?)")
                blamed = chunk[0] if chunk is not None and len(chunk) == 1 else None
                if chunk is not None and late and not dead and worker.owner() is not None:
                    blamed = next((task for task in chunk if task[1] == worker.owner()), blamed)
                if chunk is not None:
                    # run the others again, each alone, so that only the culprit fails
                    queue.put_back([task for task in chunk if task is not blamed])
                if blamed is not None:
                    path, source = blamed
                    if late and not dead:
                        reason, note = "timeout", f"reading and extraction took longer than {limit:g} s"
                    else:
                        reason, note = _crash_reason(exitcode)
                    seconds = worker.spent.get(source, 0.0) + now - worker.started
                    result = failed_result(schema, source, reason, note, seconds=seconds, path=path)
                    if on_result:
                        on_result(result)
                    yield result
                if queue:
                    pool.start()
    finally:
        pool.close()
        if stats is not None:
            stats["worker_peak_rss_kb"] = max(stats.get("worker_peak_rss_kb", 0), pool.peak_rss_kb)
