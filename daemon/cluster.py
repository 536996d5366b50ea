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
from collections.abc import Callable, Generator, Iterable
from typing import Any

from segment.daemon.isolated import IsolatedParser, ParseResult
from segment.daemon.store import StatSig
from segment.daemon.tasks import YOUNG_NS, Outcome, Task, content_hash
from segment.daemon.vocabulary import FileStatus
from segment.errors import SettingsError
from segment.settings import Settings

log = logging.getLogger(__name__)

IN_FLIGHT_PER_THREAD = 4
"""Tasks kept submitted per worker thread: enough to keep workers busy, few enough that a large
tree's bytes never pile up in the scheduler's memory."""

_local = threading.local()


def _parser(settings: Settings) -> IsolatedParser:
    """This worker thread's isolated child for these settings (started on first use)."""
    parsers: dict[Settings, IsolatedParser] = getattr(_local, "parsers", None) or {}
    _local.parsers = parsers
    if settings not in parsers:
        parsers[settings] = IsolatedParser(settings)
    return parsers[settings]


def parse_on_worker(payload: bytes | str, source: str, settings: Settings) -> ParseResult:
    """The task a worker runs: the file's bytes (or its path on a shared file system) in, a result out."""
    if isinstance(payload, str):
        try:
            with open(payload, "rb") as fh:
                payload = fh.read()
        except FileNotFoundError:
            return ParseResult("missing", "file vanished before it could be read")
        except OSError as exc:
            return ParseResult("unreadable", f"cannot read on the worker: {exc.strerror or exc}")
    return _parser(settings).parse(payload, source)


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

    def _capacity(self) -> int:
        threads = sum(self.client.nthreads().values()) or 1
        return max(2, threads * IN_FLIGHT_PER_THREAD)

    def _submit(self, task: Task) -> tuple[Any, tuple[Task, StatSig, str, int]] | Outcome:
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
        future = self.client.submit(
            parse_on_worker,
            payload,
            task.source,
            self.settings,
            key=f"docsegment-parse-{uuid.uuid4().hex}",
            pure=False,
        )
        return future, (task, StatSig.of(st0), digest, recorded)

    def _outcome(self, result: ParseResult, task: Task, sig: StatSig, digest: str, recorded: int) -> Outcome:
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
        """Run tasks on the cluster, yielding one outcome per task as they finish."""
        from distributed import as_completed

        pending = iter(tasks)
        meta: dict[str, tuple[Task, StatSig, str, int]] = {}
        capacity = self._capacity()
        running = as_completed([], loop=self.client.loop, with_results=False)  # not the default client

        def fill() -> Generator[Outcome, None, None]:
            while len(meta) < capacity and not (stop is not None and stop()):
                task = next(pending, None)
                if task is None:
                    return
                submitted = self._submit(task)
                if isinstance(submitted, Outcome):
                    yield submitted
                    continue
                future, info = submitted
                meta[future.key] = info
                running.add(future)

        try:
            yield from fill()
            while meta:
                future = next(running)
                task, sig, digest, recorded = meta.pop(future.key)
                try:
                    result: ParseResult = future.result()
                except Exception as exc:  # the scheduler gave up on the task (workers kept dying)
                    log.warning("%s: cluster task failed: %s", task.source, exc)
                    result = ParseResult(
                        FileStatus.CRASHED, f"cluster task failed: {type(exc).__name__}: {exc}"
                    )
                yield self._outcome(result, task, sig, digest, recorded)
                yield from fill()
        finally:
            meta.clear()  # left early: tasks never reported are released, and so cancelled
            running.clear()

    def close(self) -> None:
        """Disconnect from the scheduler (a client made here is closed; a given one is left open)."""
        if self._own_client:
            self.client.close()
