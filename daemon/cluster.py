"""Per-file parse-and-chunk tasks on a Dask cluster: an executor beside the local worker pool.

`segment build SRC -o OUT --cluster ADDRESS` keeps everything else on the driver (this process):
the scan, hashing, the store, atomic chunk files, the feed, incremental rebuilds and statuses. Only
the parse-and-chunk step of each file runs on the cluster's workers:

- by default the driver reads the file and its bytes travel with the task (the workers need no
  access to SRC); with `cluster_reads_files` the task carries the path and the workers read it
  from a shared file system mounted at the same path;
- on a worker, the file is parsed by a supervised child process (segment.daemon.isolated), so
  `timeout_s` and `memory_mb` hold there as they do locally: an overrun gets its status and the
  run goes on;
- a worker that dies mid-task is Dask's to handle: the scheduler runs the task again elsewhere
  (up to its `allowed-failures`), and the driver writes each file's outcome once, whichever
  attempt delivered it, so a file's chunks are never lost or doubled.

Needs the `cluster` extra (dask, distributed).
"""

from __future__ import annotations

import logging
import os
import threading
import time
import uuid
from collections.abc import Callable, Generator, Iterable, Sized
from typing import Any, NamedTuple

from segment.daemon.isolated import IsolatedParser, ParseResult
from segment.daemon.store import StatSig
from segment.daemon.tasks import YOUNG_NS, Outcome, Task, content_hash
from segment.daemon.vocabulary import FileStatus
from segment.errors import SettingsError
from segment.settings import Settings

log = logging.getLogger(__name__)

IN_FLIGHT_PER_THREAD = 2
"""Batches kept submitted per worker thread: one running and one waiting, so a worker never idles
while its next batch travels, and a large tree's bytes never pile up in the scheduler's memory."""

BATCHES_PER_THREAD = 4
"""Each batch takes at most this share of what is left per worker thread (guided scheduling):
batches are large while much is left and shrink to single files at the end, so the workers
finish together and the driver has little left to write after the last result."""

MAX_BATCH_FILES = 64
MAX_BATCH_BYTES = 4 * 1024 * 1024
"""A batch closes at this many files or source bytes, whichever comes first."""


def batch_size(files: int, threads: int) -> int:
    """Files in the next batch when `files` files are left for `threads` worker threads.

    Each Dask task costs the driver, the scheduler and the worker a few milliseconds whatever it
    carries, about what parsing a small page costs; so files travel in batches, guided as
    BATCHES_PER_THREAD says, and none grows past MAX_BATCH_FILES (results stream back as
    batches finish).
    """
    return max(1, min(MAX_BATCH_FILES, -(-files // max(1, threads * BATCHES_PER_THREAD))))


_local = threading.local()


def _parser(settings: Settings) -> IsolatedParser:
    """This worker thread's isolated child for these settings (started on first use)."""
    parsers: dict[Settings, IsolatedParser] = getattr(_local, "parsers", None) or {}
    _local.parsers = parsers
    if settings not in parsers:
        parsers[settings] = IsolatedParser(settings)
    return parsers[settings]


def parse_batch_on_worker(items: list[tuple[bytes | str, str]], settings: Settings) -> list[ParseResult]:
    """The task a worker runs: (payload, source) pairs in, one result each out, in order.

    A payload is the file's bytes, or its path on a shared file system (read here). The bytes
    go to this thread's isolated child as one list, so it parses file after file without
    waiting for this process in between."""
    results: list[ParseResult | None] = []
    readable: list[tuple[bytes, str]] = []
    for payload, source in items:
        data = _read_on_worker(payload) if isinstance(payload, str) else payload
        if isinstance(data, ParseResult):
            results.append(data)
        else:
            results.append(None)
            readable.append((data, source))
    parsed = iter(_parser(settings).parse_many(readable) if readable else [])
    return [result if result is not None else next(parsed) for result in results]


def _read_on_worker(path: str) -> bytes | ParseResult:
    try:
        with open(path, "rb") as fh:
            return fh.read()
    except FileNotFoundError:
        return ParseResult("missing", "file vanished before it could be read")
    except OSError as exc:
        return ParseResult("unreadable", f"cannot read on the worker: {exc.strerror or exc}")


class Sent(NamedTuple):
    """What the driver keeps of a file it sent: to check the file did not change under the parse."""

    task: Task
    sig: StatSig
    digest: str
    """The content hash of the bytes sent; empty when the workers read the file themselves."""
    recorded: int


class ClusterPool:
    """Runs tasks on a Dask cluster: an executor (see segment.daemon.executor)."""

    def __init__(
        self,
        settings: Settings,
        address: str,
        *,
        workers_read_files: bool = False,
        client: Any = None,
    ) -> None:
        self.settings = settings
        self.workers_read_files = workers_read_files
        self.replaced = 0
        if client is None:
            try:
                from distributed import Client
            except ImportError as exc:
                raise SettingsError(
                    "--cluster needs the cluster extra: pip install 'docsegment[cluster]'"
                ) from exc
            try:
                client = Client(address, set_as_default=False, timeout="20s")
            except OSError as exc:
                raise SettingsError(f"cannot reach the Dask scheduler at {address}: {exc}") from exc
            self._own_client = True
        else:
            self._own_client = False
        self.client = client

    def __enter__(self) -> ClusterPool:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _prepare(self, task: Task) -> tuple[bytes | str, Sent] | Outcome:
        """Stat (and by default read and hash) one file for a batch, or say why it cannot go."""
        recorded = time.time_ns()
        try:
            st0 = os.stat(task.abspath)
            payload: bytes | str = task.abspath
            digest = ""
            if not self.workers_read_files:
                with open(task.abspath, "rb") as fh:
                    payload = fh.read()
                digest = content_hash(payload)
        except FileNotFoundError:
            return Outcome(task.path, FileStatus.MISSING, "file vanished before it could be read")
        except OSError as exc:
            return Outcome(task.path, FileStatus.UNREADABLE, f"cannot read: {exc.strerror or exc}")
        return payload, Sent(task, StatSig.of(st0), digest, recorded)

    def _submit(self, items: list[tuple[bytes | str, Sent]]) -> Any:
        return self.client.submit(
            parse_batch_on_worker,
            [(payload, sent.task.source) for payload, sent in items],
            self.settings,
            key=f"docsegment-parse-{uuid.uuid4().hex}",
            pure=False,
        )

    def _outcome(self, result: ParseResult, sent: Sent) -> Outcome:
        task, sig, digest, recorded = sent
        if result.status != FileStatus.OK:
            return Outcome(task.path, result.status, result.reason, pid=result.pid, ms=result.ms)
        if task.patient and result.repaired and time.time_ns() - sig.mtime_ns < YOUNG_NS:
            reason = "PDF needed repair and was modified moments ago (a copy in progress?)"
            return Outcome(task.path, FileStatus.STILL_WRITING, reason)
        try:
            after = StatSig.of(os.stat(task.abspath))
        except OSError:
            after = None
        if after != sig:
            return Outcome(task.path, FileStatus.CHANGED, "file changed while it was parsed")
        if not digest:  # the worker read the file: hash what the chunks were cut from
            with open(task.abspath, "rb") as fh:
                digest = content_hash(fh.read())
        return Outcome(
            task.path,
            FileStatus.OK,
            data=result.data,
            ids=result.ids,
            digests=result.digests,
            hash=digest,
            sig=sig,
            recorded_ns=recorded,
            pid=result.pid,
            ms=result.ms,
            warnings=result.warnings,
        )

    def outcomes(
        self, tasks: Iterable[Task], stop: Callable[[], bool] | None = None
    ) -> Generator[Outcome, None, None]:
        """Run tasks on the cluster in batches, yielding one outcome per task as batches finish.

        A batch the scheduler gives up on (its workers kept dying) is sent again one file a task,
        so only the file that kills workers is reported `crashed`.
        """
        from distributed import as_completed

        pending = iter(tasks)
        threads = sum(self.client.nthreads().values()) or 1
        remaining = len(tasks) if isinstance(tasks, Sized) else 0
        capacity = max(2, threads * IN_FLIGHT_PER_THREAD)
        in_flight: dict[str, list[tuple[bytes | str, Sent]]] = {}
        retry_singly: list[tuple[bytes | str, Sent]] = []
        # Results are gathered on the client's event loop as tasks finish, not one round trip at a
        # time from this thread; a failed task is told apart by its future's status.
        running = as_completed([], loop=self.client.loop, with_results=True, raise_errors=False)

        def send(items: list[tuple[bytes | str, Sent]]) -> None:
            future = self._submit(items)
            in_flight[future.key] = items
            running.add(future)

        def fill() -> Generator[Outcome, None, None]:
            nonlocal remaining
            while len(in_flight) < capacity and not (stop is not None and stop()):
                if retry_singly:
                    send([retry_singly.pop()])
                    continue
                batch: list[tuple[bytes | str, Sent]] = []
                size = 0
                per_batch = batch_size(remaining, threads)
                while len(batch) < per_batch and size < MAX_BATCH_BYTES:
                    task = next(pending, None)
                    if task is None:
                        break
                    remaining = max(0, remaining - 1)
                    prepared = self._prepare(task)
                    if isinstance(prepared, Outcome):
                        yield prepared
                        continue
                    batch.append(prepared)
                    size += len(prepared[0])
                if not batch:
                    return
                send(batch)

        try:
            yield from fill()
            while in_flight:
                future, results = next(running)
                items = in_flight.pop(future.key)
                if future.status == "error":  # the task raised, or the scheduler gave up on it
                    error = future.exception()
                    if len(items) > 1:
                        retry_singly.extend(items)
                    else:
                        source = items[0][1].task.source
                        log.warning("%s: cluster task failed: %s", source, error)
                        reason = f"cluster task failed: {type(error).__name__}: {error}"
                        yield self._outcome(ParseResult(FileStatus.CRASHED, reason), items[0][1])
                else:
                    for (_, sent), result in zip(items, results, strict=True):
                        yield self._outcome(result, sent)
                yield from fill()
        finally:
            in_flight.clear()  # left early: tasks never reported are released, and so cancelled
            running.clear()

    def close(self) -> None:
        """Disconnect from the scheduler (a client made here is closed; a given one is left open)."""
        if self._own_client:
            self.client.close()
