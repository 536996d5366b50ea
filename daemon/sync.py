"""Reconcile: make OUT match SRC. The disk is the truth; events only say where to look.

For a set of candidate paths (the whole tree, a folder, or the paths of a watch batch):
1. stat each on disk (through `Scope`) and read its store row;
2. unchanged when the store trusts the stat (`FileState.trusts`); else hash the file, and a
   matching hash only refreshes the row (a `touch` parses nothing);
3. parse the rest in worker processes; a file that changed during its parse is retried;
4. per group of results: write chunk files atomically, unlink chunk files of deleted sources,
   fsync their folders, append the feed, and commit the store last. A crash anywhere leaves the
   store describing an older state, so the next reconcile redoes the group (idempotently).
"""

from __future__ import annotations

import contextlib
import logging
import os
import sqlite3
import time
from collections.abc import Callable, Generator, Iterable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from segment.daemon.chunkfiles import CHUNKS_DIR, chunk_name, read_ids
from segment.daemon.durable import crashpoint, fsync_dir, remove_temps, walk_files, write_if_changed
from segment.daemon.feed import Feed, FeedEntry, compensation, diff_ids, repair_tail
from segment.daemon.lock import OutputLock
from segment.daemon.report import SyncReport
from segment.daemon.scope import Scope, display_name
from segment.daemon.store import FileState, StatSig, Store
from segment.daemon.workers import Outcome, Task, WorkerPool, content_hash

if TYPE_CHECKING:
    from segment.daemon.cluster import ClusterPool
from segment.settings import Settings

log = logging.getLogger(__name__)

GROUP_FILES = int(os.environ.get("DOCSEGMENT_GROUP_FILES", "200"))
"""Results per store transaction during a long reconcile (bounds the work a crash redoes)."""
GROUP_SECONDS = 2.0
WRITER_THREADS = 4
RETRIES_ON_CHANGE = 3
"""Attempts for a file that keeps changing while it is parsed, before waiting for a later pass."""
RETRY_LIMIT = 3
"""A file that failed with a transient status is retried until it failed this often unchanged."""
TRANSIENT = frozenset({"timeout", "crashed", "resource_limit", "error", "unreadable"})

Progress = Callable[[int, int], None]
"""Called with (files done, files to parse) while a reconcile parses."""


def _executor(settings: Settings, jobs: int, patient: bool) -> WorkerPool | ClusterPool:
    """Local worker processes, or the Dask cluster named by the `cluster` setting."""
    if settings.cluster:
        from segment.daemon.cluster import ClusterPool

        return ClusterPool(
            settings, settings.cluster, workers_read_files=settings.cluster_reads_files, patient=patient
        )
    return WorkerPool(settings, jobs)


class Syncer:
    """Owns one OUT folder (lock, store, feed, workers) and reconciles it with SRC."""

    def __init__(
        self, src: Path, out: Path, settings: Settings, *, jobs: int = 1, patient: bool = False
    ) -> None:
        self.src = Path(os.path.abspath(src))
        self.out = Path(os.path.abspath(out))
        self.settings = settings
        self.patient = patient
        """Watch mode: edits keep coming, so a young repaired PDF (likely a copy still being
        written) waits for a later event instead of being published half-read."""
        self.fingerprint = settings.fingerprint()
        self.lock = OutputLock(self.out)
        try:
            self.chunks = self.out / CHUNKS_DIR
            self.chunks.mkdir(exist_ok=True)
            removed = remove_temps(self.out)
            if removed:
                log.info("removed %d temp files left by an interrupted run", removed)
            self.store = Store.open(self.out)
            self.feed = Feed(self.out, self.store.last_seq)
            self._recover_feed()
            self.scope = Scope(self.src, self.out, settings)
            self.pool = _executor(settings, jobs, patient)
            # fsync waits on the disk: a few threads keep workers fed and let ext4 batch commits.
            self._writer = ThreadPoolExecutor(WRITER_THREADS, thread_name_prefix="docsegment-write")
        except BaseException:
            self.lock.release()
            raise
        self._group: _Group = _Group()
        self.stop_requested: Callable[[], bool] = lambda: False
        """Checked between files: once true, a pass commits what it has and returns early."""

    def _recover_feed(self) -> None:
        """Undo feed entries a crash left past the last store commit (see `compensation`)."""
        committed_seq = self.store.last_seq
        if self.feed.last_seq <= committed_seq:
            return
        committed = {row.source: row.ids for row in self.store.all().values()}
        entries = compensation(self.out, committed_seq, committed)
        last = self.feed.append(entries)
        with self.store.transaction():
            self.store.set_meta("last_seq", last)
        log.warning(
            "the feed held entries past the last commit (interrupted run); appended %d entries to undo them",
            len(entries),
        )

    def close(self) -> None:
        """Stop the workers, close the store, release the lock."""
        try:
            self._writer.shutdown(wait=True)
            self.pool.close()
            self.store.close()
        finally:
            self.lock.release()

    def __enter__(self) -> Syncer:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- entry points ----------------------------------------------------------------------

    def reconcile(self, *, full: bool = False, progress: Progress | None = None) -> SyncReport:
        """Bring all of OUT up to date with all of SRC (`full`: re-segment every file)."""
        self._check_root()
        on_disk = self.scope.scan()
        rows = self.store.all()
        if rows and not on_disk and not full:
            raise SourceEmpty(
                f"{self.src}: source folder holds none of the {len(rows)} files in the output "
                "(an unmounted share?); nothing was deleted. A full build (--full) accepts "
                "that they are gone"
            )
        report = self._sync(on_disk, rows, force=full, progress=progress)
        report.deleted += self._remove_orphans(set(self.store.all()) | set(on_disk))
        with self.store.transaction():
            self.store.bump("full_reconciles")
            self.store.set_meta("fingerprint", self.fingerprint)
            self.store.set_meta("src", str(self.src))
        return report

    def sync_paths(self, paths: Iterable[str], folders: Iterable[str] = ()) -> SyncReport:
        """Bring the given relative paths (files, and folders with everything below) up to date."""
        self._check_root()
        on_disk: dict[str, StatSig] = {}
        rows: dict[str, FileState] = {}
        for rel in paths:
            sig = self.scope.stat_file(rel)
            if sig is not None:
                on_disk[rel] = sig
            row = self.store.get(rel)
            if row is not None:
                rows[rel] = row
        for folder in folders:
            on_disk.update(self.scope.scan(folder))
            rows.update(self.store.under(folder))
        return self._sync(on_disk, rows, force=False, progress=None)

    def _check_root(self) -> None:
        if not self.src.is_dir():
            raise SourceMissing(
                f"{self.src}: source folder is missing or not a folder; nothing was changed in the output"
            )

    # -- the pass --------------------------------------------------------------------------

    def _sync(
        self,
        on_disk: dict[str, StatSig],
        rows: dict[str, FileState],
        *,
        force: bool,
        progress: Progress | None,
    ) -> SyncReport:
        started = time.monotonic()
        report = SyncReport(scanned=len(set(on_disk) | set(rows)))
        self._group = _Group()
        to_parse: dict[str, StatSig] = {}
        for rel in sorted(set(on_disk) | set(rows)):
            sig, row = on_disk.get(rel), rows.get(rel)
            if sig is None:
                assert row is not None
                self._delete(row, report)
            elif row is None or force:
                to_parse[rel] = sig
            elif self._unchanged(rel, sig, row):
                report.unchanged += 1
            else:
                to_parse[rel] = sig
        self._parse(to_parse, rows, report, progress)
        self._flush(report)
        report.ms = (time.monotonic() - started) * 1000
        report.last_seq = self.feed.last_seq
        return report

    def _unchanged(self, rel: str, sig: StatSig, row: FileState) -> bool:
        """True when the file needs no parse; refreshes the row when only its stat moved."""
        retry = row.status in TRANSIENT and row.failures < RETRY_LIMIT
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
        self._group.rows.append(row)
        return not retry

    def _parse(
        self,
        to_parse: dict[str, StatSig],
        rows: dict[str, FileState],
        report: SyncReport,
        progress: Progress | None,
    ) -> None:
        total = len(to_parse)
        done = 0
        attempts: dict[str, int] = {}
        while to_parse:
            tasks = [Task(rel, str(self.scope.abs(rel)), display_name(rel), self.patient) for rel in to_parse]
            again: dict[str, StatSig] = {}
            outcomes = self.pool.map(tasks, stop=self.stop_requested)
            for outcome in closing_iter(outcomes):
                rel = outcome.path
                if outcome.pid:
                    report.parse_pids.add(outcome.pid)
                if outcome.status == "changed":
                    attempts[rel] = attempts.get(rel, 0) + 1
                    if attempts[rel] < RETRIES_ON_CHANGE:
                        again[rel] = to_parse[rel]
                        continue
                    report.skipped.append(display_name(rel))
                elif outcome.status == "missing":
                    sig = self.scope.stat_file(rel)
                    if sig is not None and attempts.get(rel, 0) < RETRIES_ON_CHANGE:
                        attempts[rel] = attempts.get(rel, 0) + 1
                        again[rel] = sig
                        continue
                    if rel in rows:
                        self._delete(rows[rel], report)
                else:
                    self._record(outcome, to_parse[rel], rows.get(rel), report)
                done += 1
                if progress is not None:
                    progress(done, total)
                if self._group.due():
                    self._flush(report)
            to_parse = {} if self.stop_requested() else again
        if done < total:
            report.interrupted = total - done

    # -- one file's result -----------------------------------------------------------------

    def _record(self, outcome: Outcome, scan_sig: StatSig, row: FileState | None, report: SyncReport) -> None:
        rel = outcome.path
        source = display_name(rel)
        if row is not None:
            old_ids, announced = row.ids, True
        else:
            # No row: a first sight, or a crash/rebuild left a chunk file the store does not
            # know. Its ids may never have reached the feed, so everything kept is re-announced.
            old_ids, announced = self._ids_in_chunk_file(rel), False
        group = self._group
        if outcome.status == "ok":
            assert outcome.sig is not None
            path = self.chunk_path(rel)
            group.writes.append(self._writer.submit(write_if_changed, path, outcome.data))
            group.dirs.add(path.parent)
            crashpoint("mid_batch")
            entries = diff_ids(source, old_ids, outcome.ids)
            if not announced:
                entries = [e for e in entries if e.op == "delete"]
                entries += [FeedEntry("upsert", source, id=i) for i in dict.fromkeys(outcome.ids)]
            group.entries += entries
            report.parsed += 1
            report.added += sum(1 for e in entries if e.op == "upsert")
            report.removed += sum(1 for e in entries if e.op == "delete")
            # Chunks kept, with a note: what the adapter could not keep or had to guess.
            for warning in outcome.warnings:
                log.warning("%s: %s", source, warning)
            group.rows.append(
                FileState(
                    rel,
                    source,
                    outcome.sig,
                    outcome.hash,
                    self.fingerprint,
                    outcome.ids,
                    recorded_ns=outcome.recorded_ns,
                    error="; ".join(outcome.warnings) or None,
                )
            )
            return
        # A failure keeps the last good chunks; the feed says why.
        sig = outcome.sig or scan_sig
        if not outcome.hash:  # the worker died before it could say: hash here, for quarantine
            try:
                with open(self.scope.abs(rel), "rb") as fh:
                    outcome.hash = content_hash(fh.read())
            except OSError:
                pass
        same = row is not None and (row.hash == outcome.hash if outcome.hash else row.sig == sig)
        failures = (row.failures + 1) if (row is not None and same and row.status != "ok") else 1
        reason = outcome.reason or outcome.status
        if outcome.status in TRANSIENT and failures >= RETRY_LIMIT:
            reason += f" (failed {failures} times; quarantined until the file changes)"
        log.warning("%s: %s: %s", source, outcome.status, reason)
        report.failed.append((source, outcome.status, reason))
        group.entries.append(FeedEntry("error", source, error=f"{outcome.status}: {reason}"))
        if not announced:
            group.entries += [FeedEntry("upsert", source, id=i) for i in old_ids]
        group.rows.append(
            FileState(
                rel,
                source,
                sig,
                outcome.hash or (row.hash if row and same else ""),
                self.fingerprint,
                list(old_ids),
                status=outcome.status,
                error=reason,
                failures=failures,
                recorded_ns=outcome.recorded_ns or time.time_ns(),
            )
        )

    def _delete(self, row: FileState, report: SyncReport) -> None:
        path = self.chunk_path(row.path)
        self._unlink_chunk_file(path)
        entries = [FeedEntry("delete", row.source, id=i) for i in dict.fromkeys(row.ids)]
        self._group.entries += entries
        self._group.gone.append(row.path)
        report.deleted += 1
        report.removed += len(entries)

    def _unlink_chunk_file(self, path: Path) -> None:
        try:
            path.unlink()
        except FileNotFoundError:
            pass
        self._group.emptied.add(path.parent)

    def _prune(self, folders: set[Path], dirs: set[Path]) -> None:
        """Drop folders that deletions emptied, so OUT/chunks mirrors the current tree."""
        for start in sorted(folders, key=lambda p: len(p.parts), reverse=True):
            folder = start
            while folder != self.chunks and folder.is_relative_to(self.chunks):
                try:
                    folder.rmdir()
                except OSError:
                    break
                folder = folder.parent
            dirs.add(folder)

    def _remove_orphans(self, known: set[str]) -> int:
        """Delete chunk files no store row accounts for (left by a crash or a lost store)."""
        expected = {self.chunk_path(rel) for rel in known}
        orphans = [
            Path(e.path)
            for e in walk_files(self.chunks)
            if e.name.endswith(".jsonl") and Path(e.path) not in expected
        ]
        if not orphans:
            return 0
        report = SyncReport()
        self._group = _Group()
        for path in sorted(orphans):
            ids, source = read_ids(path)
            self._unlink_chunk_file(path)
            self._group.entries += [FeedEntry("delete", source, id=i) for i in dict.fromkeys(ids)]
        self._group.gone.clear()  # no rows to drop
        self._flush(report)
        log.info("removed %d chunk files whose sources are gone", len(orphans))
        return len(orphans)

    # -- commit ----------------------------------------------------------------------------

    def _flush(self, report: SyncReport) -> None:
        """Make the group durable: folders fsynced, feed appended, store committed last."""
        group, self._group = self._group, _Group()
        if group.empty():
            return
        for future in group.writes:
            future.result()  # a failed write or fsync aborts the group: nothing is committed
        self._prune(group.emptied, group.dirs)
        for folder in sorted(group.dirs):
            if folder.is_dir():
                fsync_dir(folder)
        crashpoint("before_feed")
        try:
            last = self.feed.append(group.entries)
            crashpoint("before_commit")
            with self.store.transaction():
                for row in group.rows:
                    self.store.put(row)
                for rel in group.gone:
                    self.store.delete(rel)
                self.store.set_meta("last_seq", last)
        except (OSError, sqlite3.Error) as exc:
            # Feed lines may be on disk without their commit: undo them now, as a restart would.
            self.feed.last_seq = max(self.feed.last_seq, repair_tail(self.feed.path))
            try:
                self._recover_feed()
            except (OSError, sqlite3.Error) as again:
                log.error("cannot repair the feed now (%s); the next start will", again)
            if isinstance(exc, sqlite3.Error):
                raise OSError(f"cannot commit the state database: {exc}") from exc
            raise
        crashpoint("after_commit")
        report.last_seq = last

    # -- chunk files -----------------------------------------------------------------------

    def chunk_path(self, rel: str) -> Path:
        """OUT/chunks/<relpath>.jsonl (see `chunk_name` for names too long for that)."""
        folder, _, name = rel.rpartition("/")
        return self.chunks / folder / chunk_name(name) if folder else self.chunks / chunk_name(name)

    def _ids_in_chunk_file(self, rel: str) -> list[str]:
        return read_ids(self.chunk_path(rel))[0]


def closing_iter(gen: Generator[Outcome, None, None]) -> Iterator[Outcome]:
    """Iterate and always close the generator, so its cleanup runs before an error escapes."""
    with contextlib.closing(gen):
        yield from gen


class SourceMissing(RuntimeError):
    """SRC is gone or not a folder: nothing is deleted from OUT (RELIABILITY W9)."""


class SourceEmpty(SourceMissing):
    """SRC holds none of the files OUT has (an empty mount point): nothing is deleted (W9)."""


@dataclass(slots=True)
class _Group:
    """Work of one store transaction, not yet durable."""

    entries: list[FeedEntry] = field(default_factory=list)
    rows: list[FileState] = field(default_factory=list)
    gone: list[str] = field(default_factory=list)
    dirs: set[Path] = field(default_factory=set)
    """Folders to fsync before the feed is appended."""
    emptied: set[Path] = field(default_factory=set)
    """Folders that lost a chunk file (pruned when empty)."""
    writes: list[Future[None]] = field(default_factory=list)
    """Chunk files being written by the writer threads."""
    started: float = field(default_factory=time.monotonic)

    def empty(self) -> bool:
        return not (self.entries or self.rows or self.gone or self.writes or self.emptied)

    def due(self) -> bool:
        size = len(self.rows) + len(self.gone)
        return size >= GROUP_FILES or (size > 0 and time.monotonic() - self.started >= GROUP_SECONDS)
