"""Worker processes that parse and cut one file per task, under a time and memory limit.

A parser may hang, segfault, abort or eat memory (RELIABILITY P1-P4), so parsing never runs in
the daemon's process. Each worker is a child started by the `forkserver` method (`spawn` where
that is missing; never a plain fork of the threaded daemon), talks over a pipe, and gets:
- `RLIMIT_AS = Settings.memory_mb` (0: no limit), so a runaway allocation raises MemoryError;
- a wall-clock budget `Settings.timeout_s` per file, after which the parent SIGKILLs it.
A worker that dies or is killed is replaced; its file gets `crashed`, `timeout` or
`resource_limit` and the run goes on. Results read while the file changed are reported as
`changed` (the caller retries), judged by re-stating the file after the parse.
"""

from __future__ import annotations

import hashlib
import logging
import multiprocessing
import multiprocessing.connection
import os
import signal
import time
from collections import deque
from collections.abc import Callable, Generator, Iterable
from dataclasses import dataclass, field
from multiprocessing.connection import Connection
from typing import Any

from segment.daemon.errors import WorkerStartError
from segment.daemon.store import StatSig
from segment.daemon.vocabulary import FileStatus
from segment.errors import SegmentError
from segment.settings import Settings
from segment.tree import Document

log = logging.getLogger(__name__)

HOOKS_ENV = "DOCSEGMENT_TEST_HOOKS"
"""Set to 1 to make workers misbehave on purpose for files named *.crash.md, *.segv.md,
*.hang.md and *.oom.md (tests only; read once when a pool starts)."""

MAX_TASKS_PER_WORKER = 2000
"""Recycle a worker after this many files, so slow leaks in parsers cannot pile up (P4)."""

MAX_START_FAILURES = 3
"""Workers that die before they are ready this many times in a row stop the run."""


@dataclass(frozen=True, slots=True)
class Task:
    """One file to parse."""

    path: str
    """Relative path (store key)."""
    abspath: str
    source: str
    """Name written into the chunk records."""
    patient: bool = False
    """Watch mode: a later event will bring the file back, so a young repaired PDF can wait."""


@dataclass(slots=True)
class Outcome:
    """What a worker (or the pool, for a worker that died) says about one task."""

    path: str
    status: str
    """`ok`; `changed` (file moved under the parse) or `missing` (gone); else a failure status."""
    reason: str | None = None
    data: bytes = b""
    """The chunk file's bytes (JSON Lines) when `ok`."""
    ids: list[str] = field(default_factory=list)
    hash: str = ""
    sig: StatSig | None = None
    """Stat of the file before it was read (the state the chunks belong to)."""
    recorded_ns: int = 0
    pid: int = 0
    """The process that parsed the file."""
    ms: float = 0.0
    warnings: list[str] = field(default_factory=list)
    """What the adapter could not keep or had to guess (Document.warnings), when `ok`."""

    @property
    def failed(self) -> bool:
        """True for a failure status (not ok/changed/missing)."""
        return self.status not in (FileStatus.OK, FileStatus.CHANGED, FileStatus.MISSING)


# -- the child side ---------------------------------------------------------------------------


def _worker_main(conn: Connection, settings: Settings, hooks: bool) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent decides when we stop
    if settings.memory_mb > 0:
        import resource

        limit = settings.memory_mb * 1024 * 1024
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    _warm_up(settings)
    conn.send(("ready", os.getpid()))
    while True:
        try:
            task = conn.recv()
        except (EOFError, OSError):
            return
        if task is None:
            return
        conn.send(("done", run_task(task, settings, hooks)))


def _warm_up(settings: Settings) -> None:
    """Import the parsing stack before the first deadline starts (spaCy loads slowly)."""
    try:
        import segment

        doc = segment.parse_bytes(b"# Warm up\n\nOne sentence. Another one.\n", "warm-up.md")
        list(segment.chunk(doc, settings))
    except Exception:
        pass


def run_task(task: Task, settings: Settings, hooks: bool = False) -> Outcome:
    """Parse and cut one file; never raises for problems with the file."""
    import segment

    started = time.monotonic()
    recorded = time.time_ns()
    try:
        st0 = os.stat(task.abspath)
    except FileNotFoundError:
        return Outcome(
            task.path, FileStatus.MISSING, "file vanished before it could be read", pid=os.getpid()
        )
    except OSError as exc:
        return Outcome(
            task.path, FileStatus.UNREADABLE, f"cannot stat: {exc.strerror or exc}", pid=os.getpid()
        )
    sig = StatSig.of(st0)
    out = Outcome(task.path, FileStatus.OK, sig=sig, recorded_ns=recorded, pid=os.getpid())
    try:
        if st0.st_size > settings.max_file_bytes:
            raise segment.TooLarge(
                task.source, f"file is {st0.st_size} bytes, over max_file_bytes={settings.max_file_bytes}"
            )
        with open(task.abspath, "rb") as fh:
            data = fh.read()  # read once: the hash and the parse see the same bytes
        out.hash = content_hash(data)
        if hooks:
            _misbehave(task.path, settings.memory_mb)
        document = segment.parse_bytes(data, task.source, settings)
        out.warnings = list(document.warnings)
        if task.patient and _maybe_incomplete(document, st0.st_mtime_ns):
            # RELIABILITY W6/P3: MuPDF "repairs" a PDF cut mid-copy into partial text. While
            # the file is young, wait for the writer to finish rather than publish a part.
            reason = "PDF needed repair and was modified moments ago (a copy in progress?)"
            return Outcome(task.path, FileStatus.CHANGED, reason, pid=os.getpid())
        chunks = list(segment.chunk(document, settings))
        out.data = b"".join((c.to_json() + "\n").encode("utf-8", "replace") for c in chunks)
        out.ids = [c.id for c in chunks]
    except FileNotFoundError:
        out.status, out.reason = FileStatus.MISSING, "file vanished while it was read"
    except SegmentError as exc:
        out.status, out.reason = exc.status, exc.reason
        if exc.status == FileStatus.MISSING:
            out.reason = "file vanished while it was read"
    except (MemoryError, RecursionError) as exc:
        out.status = FileStatus.RESOURCE_LIMIT
        out.reason = "out of memory" if isinstance(exc, MemoryError) else "nesting too deep"
        out.data, out.ids = b"", []
    except OSError as exc:
        out.status, out.reason = FileStatus.UNREADABLE, f"cannot read: {exc.strerror or exc}"
    except Exception as exc:
        out.status, out.reason = FileStatus.ERROR, f"{type(exc).__name__}: {exc}"
    if out.status == FileStatus.OK:
        try:
            after = StatSig.of(os.stat(task.abspath))
        except OSError:
            after = None
        if after != sig:
            out = Outcome(task.path, FileStatus.CHANGED, "file changed while it was parsed", pid=os.getpid())
    out.ms = (time.monotonic() - started) * 1000
    return out


YOUNG_NS = 5_000_000_000
"""A repaired PDF modified less than this long ago is treated as still being written."""


def _maybe_incomplete(document: Document, mtime_ns: int) -> bool:
    return document.repaired and time.time_ns() - mtime_ns < YOUNG_NS


def content_hash(data: bytes) -> str:
    """The content hash the store keeps (BLAKE2b, 128 bits)."""
    return hashlib.blake2b(data, digest_size=16).hexdigest()


def _misbehave(path: str, memory_mb: int) -> None:
    """Test hooks: crash, hang or exhaust memory on purpose, by file name."""
    if path.endswith(".crash.md"):
        os.abort()
    if path.endswith(".segv.md"):
        import ctypes

        ctypes.string_at(0)
    if path.endswith(".hang.md"):
        while True:
            pass
    if path.endswith(".oom.md"):
        # Twice the address-space limit in one block: refused at once under RLIMIT_AS.
        hoard = bytearray(max(memory_mb, 1 << 20) * 2 * 1024 * 1024)
        del hoard


# -- the parent side --------------------------------------------------------------------------


@dataclass(slots=True)
class _Worker:
    proc: Any
    conn: Connection
    ready: bool = False
    task: Task | None = None
    deadline: float = 0.0
    done: int = 0


class WorkerPool:
    """A fixed number of supervised worker processes; see the module docstring."""

    def __init__(self, settings: Settings, jobs: int = 1, *, hooks: bool | None = None) -> None:
        self.settings = settings
        self.jobs = max(1, jobs)
        self.hooks = os.environ.get(HOOKS_ENV) == "1" if hooks is None else hooks
        methods = multiprocessing.get_all_start_methods()
        self._ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
        if self._ctx.get_start_method() == "forkserver":
            self._ctx.set_forkserver_preload(["segment.daemon.workers"])
        self._workers: list[_Worker] = []
        self._start_failures = 0
        self.replaced = 0
        """Workers replaced after a crash, a kill or a timeout."""

    def __enter__(self) -> WorkerPool:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _spawn(self) -> _Worker:
        parent, child = self._ctx.Pipe(duplex=True)
        proc = self._ctx.Process(
            target=_worker_main,
            args=(child, self.settings, self.hooks),
            daemon=True,
            name="docsegment-worker",
        )
        proc.start()
        child.close()
        worker = _Worker(proc, parent)
        self._workers.append(worker)
        return worker

    def _discard(self, worker: _Worker, kill: bool) -> None:
        if kill and worker.proc.is_alive():
            worker.proc.kill()
        worker.proc.join(5)
        worker.conn.close()
        self._workers.remove(worker)

    def map(
        self,
        tasks: Iterable[Task],
        stop: Callable[[], bool] | None = None,
    ) -> Generator[Outcome, None, None]:
        """Run tasks, yielding one outcome per task as they finish (in no fixed order).

        Once `stop()` is true no new task starts; tasks in progress still finish and the
        tasks never started are simply not reported.
        """
        pending: deque[Task] = deque(tasks)
        if not pending:
            return
        while len(self._workers) < min(self.jobs, len(pending)):
            self._spawn()
        try:
            while pending or any(w.task for w in self._workers):
                if stop is not None and pending and stop():
                    pending.clear()
                    continue
                self._dispatch(pending)
                busy = [w for w in self._workers if w.task is not None]
                deadline = min((w.deadline for w in busy), default=time.monotonic() + 1.0)
                waitables: list[Any] = [w.conn for w in self._workers] + [
                    w.proc.sentinel for w in self._workers
                ]
                ready = multiprocessing.connection.wait(waitables, max(0.0, deadline - time.monotonic()))
                done = []
                for worker in list(self._workers):
                    if worker.conn in ready or worker.proc.sentinel in ready:
                        outcome = self._receive(worker)
                        if outcome is not None:
                            done.append(outcome)
                # Hand out the next tasks before the caller spends time on the results.
                if not (stop is not None and stop()):
                    self._dispatch(pending)
                yield from done
                now = time.monotonic()
                for worker in list(self._workers):
                    if worker.task is not None and now >= worker.deadline:
                        task = worker.task
                        self._discard(worker, kill=True)
                        self.replaced += 1
                        log.warning(
                            "%s: timeout after %g s; worker killed", task.source, self.settings.timeout_s
                        )
                        yield Outcome(
                            task.path,
                            FileStatus.TIMEOUT,
                            f"parse took longer than timeout_s={self.settings.timeout_s:g}; worker killed",
                        )
                busy_now = sum(1 for w in self._workers if w.task is not None)
                while len(self._workers) < min(self.jobs, len(pending) + busy_now):
                    self._spawn()
        finally:
            # Left early (an error in the caller, or a close): a worker still busy with a task
            # of this call would answer into the next call, so it is replaced.
            for worker in list(self._workers):
                if worker.task is not None:
                    self._discard(worker, kill=True)

    def _dispatch(self, pending: deque[Task]) -> None:
        for worker in self._workers:
            if worker.ready and worker.task is None and pending:
                task = pending.popleft()
                try:
                    worker.conn.send(task)
                except OSError:  # died while idle: its sentinel reports it, the task waits
                    pending.appendleft(task)
                    continue
                worker.task = task
                worker.deadline = time.monotonic() + self.settings.timeout_s

    def _receive(self, worker: _Worker) -> Outcome | None:
        try:
            if worker.conn.poll():
                kind, payload = worker.conn.recv()
                if kind == "ready":
                    worker.ready = True
                    self._start_failures = 0
                    return None
                outcome: Outcome = payload
                worker.task = None
                worker.done += 1
                if worker.done >= MAX_TASKS_PER_WORKER:
                    worker.conn.send(None)
                    self._discard(worker, kill=False)
                return outcome
        except (EOFError, OSError):
            worker.proc.join(5)  # the pipe closed: the process is ending
        if worker.proc.is_alive():
            return None
        # The worker died: classify by how it ended, replace it, report its task.
        code = worker.proc.exitcode
        task = worker.task
        self._discard(worker, kill=True)
        self.replaced += 1
        if task is None:
            self._start_failures += 1
            if self._start_failures >= MAX_START_FAILURES:
                raise WorkerStartError(
                    f"worker processes exit at start (exit code {code}; see the error above). "
                    "A script that starts docsegment must guard its entry point with "
                    "`if __name__ == '__main__':` (worker processes re-import it), and "
                    f"memory_mb={self.settings.memory_mb} must leave room to load the parsers"
                )
            return None
        status, reason = classify_exit(code)
        log.warning("%s: %s (%s); worker replaced", task.source, status, reason)
        return Outcome(task.path, status, reason)

    def close(self) -> None:
        """Stop every worker (politely, then by force)."""
        for worker in list(self._workers):
            try:
                if worker.task is None:
                    worker.conn.send(None)
            except OSError:
                pass
        for worker in list(self._workers):
            worker.proc.join(2 if worker.task is None else 0)
            self._discard(worker, kill=True)


def classify_exit(code: int | None) -> tuple[str, str]:
    """Status and reason for a worker that ended without answering."""
    if code is not None and code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = f"signal {-code}"
        if -code == signal.SIGKILL:
            return FileStatus.RESOURCE_LIMIT, "worker killed by SIGKILL (likely out of memory)"
        return FileStatus.CRASHED, f"worker crashed with {name}"
    return FileStatus.CRASHED, f"worker exited with status {code}"
