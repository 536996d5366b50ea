"""Worker processes that parse and cut one file per task, under a time and memory limit.

A parser may hang, segfault, abort or eat memory (reliability scenarios: parser crash, hang, bad input, memory growth), so parsing never runs in
the daemon's process. Each worker is a child started by the `forkserver` method (`spawn` where
that is missing; never a plain fork of the threaded daemon), talks over a pipe, and gets:
- `RLIMIT_AS = Settings.memory_mb` (0: no limit), so a runaway allocation raises MemoryError;
- a wall-clock budget `Settings.timeout_s` per file, after which the parent SIGKILLs it.
A worker that dies or is killed is replaced; its file gets `crashed`, `timeout` or
`resource_limit` and the run goes on. Results read while the file changed are reported as
`changed` (the caller retries), judged by re-stating the file after the parse.
"""

from __future__ import annotations

import logging
import multiprocessing
import multiprocessing.connection
import os
import signal
import time
from collections import deque
from collections.abc import Callable, Generator, Iterable
from dataclasses import dataclass
from multiprocessing.connection import Connection
from typing import Any

from segment.daemon.errors import WorkerStartError
from segment.daemon.tasks import HOOKS_ENV, Outcome, Task, run_task
from segment.daemon.vocabulary import FileStatus
from segment.settings import Settings

log = logging.getLogger(__name__)

MAX_TASKS_PER_WORKER = 2000
"""Recycle a worker after this many files, so slow leaks in parsers cannot pile up ("memory growth")."""

MAX_START_FAILURES = 3
"""Workers that die before they are ready this many times in a row stop the run."""

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


@dataclass(slots=True)
class _Worker:
    proc: Any
    conn: Connection
    ready: bool = False
    task: Task | None = None
    deadline: float = 0.0
    done: int = 0


class WorkerPool:
    """The local executor: a fixed number of supervised worker processes (see the module
    docstring); implements `segment.daemon.executor.Executor`."""

    def __init__(self, settings: Settings, jobs: int = 1, *, hooks: bool | None = None) -> None:
        self.settings = settings
        self.jobs = max(1, jobs)
        self.hooks = os.environ.get(HOOKS_ENV) == "1" if hooks is None else hooks
        methods = multiprocessing.get_all_start_methods()
        self._ctx: Any = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
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

    def outcomes(
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
