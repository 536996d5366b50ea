"""The reconciler: one pass makes OUT match SRC. The disk is the truth; events only say where to look.

For a set of candidate paths (the whole tree, a folder, or the paths of a watch batch):
1. stat each on disk (through `Scope`) and read its store row;
2. unchanged when the store trusts the stat (`FileState.trusts`); else hash the file, and a
   matching hash only refreshes the row (a `touch` parses nothing);
3. parse the rest through the executor; a file that changed during its parse is retried;
4. record each outcome (`recording`) and commit in groups (`commit`).
"""

from __future__ import annotations

import contextlib
import json
import logging
import os
import time
from collections.abc import Callable, Generator, Iterable, Iterator
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from segment.daemon.chunkfiles import ChunkLayout
from segment.daemon.commit import Committer, PendingCommit
from segment.daemon.durable import remove_temps
from segment.daemon.errors import SourceEmpty, SourceMissing
from segment.daemon.executor import Executor, ExecutorFactory, local_executor
from segment.daemon.feed import Feed
from segment.daemon.lock import OutputLock
from segment.daemon.recording import RETRY_LIMIT, Recorder
from segment.daemon.report import PassReport
from segment.daemon.scope import Scope, display_name
from segment.daemon.store import FileState, StatSig, Store
from segment.daemon.tasks import Outcome, Task, content_hash
from segment.daemon.vocabulary import TRANSIENT_STATUSES, FileStatus
from segment.settings import Settings

log = logging.getLogger(__name__)

WRITER_THREADS = 4
RETRIES_ON_CHANGE = 3
"""Attempts for a file that keeps changing while it is parsed, before waiting for a later pass."""

Progress = Callable[[int, int], None]
"""Called with (files done, files to parse) while a pass parses."""


class Reconciler:
    """Owns one OUT folder (lock, store, feed, executor) and brings it up to date with SRC."""

    def __init__(
        self,
        src: Path,
        out: Path,
        settings: Settings,
        *,
        jobs: int = 1,
        patient: bool = False,
        executor: ExecutorFactory = local_executor,
    ) -> None:
        self.src = Path(os.path.abspath(src))
        self.out = Path(os.path.abspath(out))
        self.settings = settings
        self.jobs = jobs
        self.patient = patient
        """Watch mode: edits keep coming, so a young repaired PDF (likely a copy still being
        written) waits for a later event instead of being published half-read."""
        self.fingerprint = settings.fingerprint()
        self.make_executor = executor
        self.lock = OutputLock(self.out)
        try:
            self.layout = ChunkLayout(self.out)
            self.layout.root.mkdir(exist_ok=True)
            removed = remove_temps(self.out)
            if removed:
                log.info("removed %d temp files left by an interrupted run", removed)
            self.store = Store.open(self.out)
            self.feed = Feed(self.out, self.store.last_seq)
            self.committer = Committer(self.layout, self.store, self.feed)
            self.committer.recover_feed()
            self.held: dict[str, str] = self.store.held()
            """Files held back as still changing (relative path -> reason), retried soon."""
            self.scope = Scope(self.src, self.out, settings)
            self.executor: Executor = executor(settings, jobs)
            # fsync waits on the disk: a few threads keep workers fed and let ext4 batch commits.
            self._writer = ThreadPoolExecutor(WRITER_THREADS, thread_name_prefix="docsegment-write")
            self.recorder = Recorder(self.layout, self.scope, self.fingerprint, self._writer)
        except BaseException:
            self.lock.release()
            raise
        self._pending = PendingCommit()
        self.stop_requested: Callable[[], bool] = lambda: False
        """Checked between files: once true, a pass commits what it has and returns early."""

    def apply_settings(self, settings: Settings) -> bool:
        """Use new settings from the next pass on; True when they differ (a full pass is due).

        The fingerprint moves when a setting that shapes chunks changed, so every file is
        re-segmented; include/exclude apply to the next scan; the executor is restarted, since
        workers hold the settings they were started with.
        """
        if settings == self.settings:
            return False
        self.settings = settings
        self.fingerprint = settings.fingerprint()
        self.scope = Scope(self.src, self.out, settings)
        self.recorder.scope, self.recorder.fingerprint = self.scope, self.fingerprint
        self.executor.close()
        self.executor = self.make_executor(settings, self.jobs)
        return True

    def close(self) -> None:
        """Stop the executor, close the store, release the lock."""
        try:
            self._writer.shutdown(wait=True)
            self.executor.close()
            self.store.close()
        finally:
            self.lock.release()

    def __enter__(self) -> Reconciler:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- entry points ----------------------------------------------------------------------

    def reconcile(self, *, full: bool = False, progress: Progress | None = None) -> PassReport:
        """Bring all of OUT up to date with all of SRC (`full`: re-segment every file)."""
        self._check_root()
        on_disk = self.scope.scan()
        rows = self.store.all()
        built_with = self.store.meta("fingerprint")
        if rows and built_with and built_with != self.fingerprint:
            log.info(
                "settings that shape the chunks changed since the last build (or docsegment was "
                "upgraded): every file is segmented again, once (%d files)",
                len(rows),
            )
        if rows and not on_disk and not full:
            why = (
                "the include patterns match none of them" if self.settings.include else "an unmounted share?"
            )
            raise SourceEmpty(
                f"{self.src}: source folder holds none of the {len(rows)} files in the output "
                f"({why}); nothing was deleted. A full build (--full) accepts that they are gone"
            )
        gone_held = set(self.held) - set(on_disk)
        report = self._pass(on_disk, rows, force=full, progress=progress, gone_held=gone_held)
        report.deleted += self._remove_orphans(set(self.store.all()) | set(on_disk))
        report.not_read = {suffix: len(paths) for suffix, paths in self.scope.unread.items()}
        with self.store.transaction():
            self.store.set_meta("not_read", json.dumps(self.scope.unread, sort_keys=True))
            self.store.bump("full_reconciles")
            self.store.set_meta("fingerprint", self.fingerprint)
            self.store.set_meta("src", str(self.src))
        return report

    def reconcile_paths(self, paths: Iterable[str], folders: Iterable[str] = ()) -> PassReport:
        """Bring the given relative paths (files, and folders with everything below) up to date."""
        self._check_root()
        paths = list(paths)
        on_disk: dict[str, StatSig] = {}
        rows: dict[str, FileState] = {}
        for rel in paths:
            sig = self.scope.stat_file(rel)
            if sig is not None:
                on_disk[rel] = sig
            row = self.store.get(rel)
            if row is not None:
                rows[rel] = row
        gone_held = {rel for rel in self.held if rel not in on_disk and rel in set(paths)}
        for folder in folders:
            on_disk.update(self.scope.scan(folder))
            rows.update(self.store.under(folder))
            inside = {rel for rel in self.held if rel == folder or rel.startswith(folder + "/") or not folder}
            gone_held |= inside - set(on_disk)
        return self._pass(on_disk, rows, force=False, progress=None, gone_held=gone_held)

    def _check_root(self) -> None:
        if not self.src.is_dir():
            raise SourceMissing(
                f"{self.src}: source folder is missing or not a folder; nothing was changed in the output"
            )

    # -- the pass --------------------------------------------------------------------------

    def _pass(
        self,
        on_disk: dict[str, StatSig],
        rows: dict[str, FileState],
        *,
        force: bool,
        progress: Progress | None,
        gone_held: set[str] | None = None,
    ) -> PassReport:
        started = time.monotonic()
        report = PassReport(scanned=len(set(on_disk) | set(rows)))
        self._pending = PendingCommit()
        candidates = set(on_disk) | set(rows)
        # A held file gets its verdict in this pass (or is held again), and one gone is forgotten.
        for rel in (candidates | (gone_held or set())) & self.held.keys():
            self._pending.released.add(rel)
            del self.held[rel]
        to_parse: dict[str, StatSig] = {}
        for rel in sorted(candidates):
            sig, row = on_disk.get(rel), rows.get(rel)
            if sig is None:
                assert row is not None
                self.recorder.deletion(self._pending, row, report)
            elif row is None or force:
                to_parse[rel] = sig
            elif self._unchanged(rel, sig, row):
                report.unchanged += 1
            else:
                to_parse[rel] = sig
        self._parse(to_parse, rows, report, progress)
        self._commit(report)
        report.ms = (time.monotonic() - started) * 1000
        report.last_seq = self.feed.last_seq
        return report

    def _unchanged(self, rel: str, sig: StatSig, row: FileState) -> bool:
        """True when the file needs no parse; refreshes the row when only its stat moved."""
        retry = row.status in TRANSIENT_STATUSES and row.failures < RETRY_LIMIT
        if row.trusts(sig, self.fingerprint):
            return not retry
        if row.fingerprint != self.fingerprint or not row.hash:
            return False
        try:
            with open(self.scope.abs(rel), "rb") as fh:
                digest = content_hash(fh.read())
            after = self.scope.stat_file(rel)
        except OSError:
            return False
        if digest != row.hash or after != sig:
            return False
        # Same bytes: remember the new stat so the next pass trusts it (no parse, no feed).
        row.sig, row.recorded_ns = sig, time.time_ns()
        self._pending.rows.append(row)
        return not retry

    def _parse(
        self,
        to_parse: dict[str, StatSig],
        rows: dict[str, FileState],
        report: PassReport,
        progress: Progress | None,
    ) -> None:
        total = len(to_parse)
        done = 0
        attempts: dict[str, int] = {}
        while to_parse:
            # Largest files first: a long parse starts while short ones fill the other workers,
            # instead of holding up the end of the pass alone (longest-processing-time order).
            order = sorted(to_parse, key=lambda rel: (-to_parse[rel].size, rel))
            tasks = [Task(rel, str(self.scope.abs(rel)), display_name(rel), self.patient) for rel in order]
            again: dict[str, StatSig] = {}
            outcomes = self.executor.outcomes(tasks, stop=self.stop_requested)
            for outcome in closing_iter(outcomes):
                rel = outcome.path
                if outcome.pid:
                    report.parse_pids.add(outcome.pid)
                if outcome.status == FileStatus.CHANGED:
                    attempts[rel] = attempts.get(rel, 0) + 1
                    if attempts[rel] < RETRIES_ON_CHANGE:
                        again[rel] = to_parse[rel]
                        continue
                    self._hold(rel, f"kept changing while it was read ({attempts[rel]} tries)", report)
                elif outcome.status == FileStatus.STILL_WRITING:
                    self._hold(rel, outcome.reason or "still being written", report)
                elif outcome.status == FileStatus.MISSING:
                    sig = self.scope.stat_file(rel)
                    if sig is not None and attempts.get(rel, 0) < RETRIES_ON_CHANGE:
                        attempts[rel] = attempts.get(rel, 0) + 1
                        again[rel] = sig
                        continue
                    if rel in rows:
                        self.recorder.deletion(self._pending, rows[rel], report)
                else:
                    self.recorder.outcome(self._pending, outcome, to_parse[rel], rows.get(rel), report)
                done += 1
                if progress is not None:
                    progress(done, total)
                if self._pending.due():
                    self._commit(report)
            to_parse = {} if self.stop_requested() else again
        if done < total:
            report.interrupted = total - done

    def _hold(self, rel: str, reason: str, report: PassReport) -> None:
        """Leave a file for a retry soon; `segment status` lists it as pending with the reason."""
        source = display_name(rel)
        self._pending.held[rel] = (source, reason)
        self._pending.released.discard(rel)
        self.held[rel] = reason
        report.held.append((source, reason))
        log.info("%s: held back: %s", source, reason)

    def _remove_orphans(self, known: set[str]) -> int:
        """Delete chunk files no store row accounts for (left by a crash or a lost store)."""
        expected = {self.layout.path_of(rel) for rel in known}
        orphans = [path for path in self.layout.files() if path not in expected]
        if not orphans:
            return 0
        self._pending = PendingCommit()
        for path in sorted(orphans):
            self.recorder.orphan(self._pending, path)
        self._commit(PassReport())
        log.info("removed %d chunk files whose sources are gone", len(orphans))
        return len(orphans)

    def _commit(self, report: PassReport) -> None:
        pending, self._pending = self._pending, PendingCommit()
        last = self.committer.commit(pending)
        if last is not None:
            report.last_seq = last


def closing_iter(gen: Generator[Outcome, None, None]) -> Iterator[Outcome]:
    """Iterate and always close the generator, so its cleanup runs before an error escapes."""
    with contextlib.closing(gen):
        yield from gen
