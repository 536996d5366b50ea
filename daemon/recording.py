"""Recording: one file's outcome (or its deletion) as chunk-file writes, feed entries and a row.

Nothing here is durable yet: everything goes into a `PendingCommit` that `Committer` makes so.
"""

from __future__ import annotations

import logging
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from segment.daemon.chunkfiles import ChunkLayout, read_ids
from segment.daemon.commit import PendingCommit
from segment.daemon.durable import crashpoint, write_if_changed
from segment.daemon.feed import FeedEntry, diff_ids, relocated
from segment.daemon.report import PassReport
from segment.daemon.scope import Scope, display_name
from segment.daemon.store import FileState, StatSig
from segment.daemon.tasks import Outcome, content_hash
from segment.daemon.vocabulary import TRANSIENT_STATUSES, FeedOp, FileStatus

log = logging.getLogger(__name__)

RETRY_LIMIT = 3
"""A file that failed with a transient status is retried until it failed this often unchanged."""


class Recorder:
    """Turns outcomes into pending work for one OUT folder."""

    def __init__(
        self, layout: ChunkLayout, scope: Scope, fingerprint: str, writer: ThreadPoolExecutor
    ) -> None:
        self.layout = layout
        self.scope = scope
        self.fingerprint = fingerprint
        self.writer = writer

    def outcome(
        self,
        pending: PendingCommit,
        outcome: Outcome,
        scan_sig: StatSig,
        row: FileState | None,
        report: PassReport,
    ) -> None:
        """Record a finished task: new chunks, or a failure that keeps the last good ones."""
        if outcome.status == FileStatus.OK:
            self._segmented(pending, outcome, row, report)
        else:
            self._failed(pending, outcome, scan_sig, row, report)

    def _known_ids(self, rel: str, row: FileState | None) -> tuple[list[str], bool]:
        """The ids the feed has announced for a file, and whether it has announced them.

        No row: a first sight, or a crash/rebuild left a chunk file the store does not know. Its
        ids may never have reached the feed, so everything kept is re-announced.
        """
        if row is not None:
            return row.ids, True
        return self.layout.ids_of(rel), False

    def _segmented(
        self, pending: PendingCommit, outcome: Outcome, row: FileState | None, report: PassReport
    ) -> None:
        rel = outcome.path
        source = display_name(rel)
        old_ids, announced = self._known_ids(rel, row)
        assert outcome.sig is not None
        path = self.layout.path_of(rel)
        pending.writes.append(self.writer.submit(write_if_changed, path, outcome.data))
        pending.dirs.add(path.parent)
        crashpoint("mid_batch")
        entries = diff_ids(source, old_ids, outcome.ids)
        if not announced:
            entries = [e for e in entries if e.op == FeedOp.DELETE]
            entries += [FeedEntry(FeedOp.UPSERT, source, id=i) for i in dict.fromkeys(outcome.ids)]
        else:
            assert row is not None
            entries += relocated(source, row.ids, row.digests, outcome.ids, outcome.digests)
        pending.entries += entries
        report.parsed += 1
        report.added += sum(1 for e in entries if e.op == FeedOp.UPSERT)
        report.removed += sum(1 for e in entries if e.op == FeedOp.DELETE)
        report.relocated += sum(1 for e in entries if e.op == FeedOp.RELOCATE)
        # Chunks kept, with a note: what the adapter could not keep or had to guess.
        for warning in outcome.warnings:
            log.warning("%s: %s", source, warning)
        pending.rows.append(
            FileState(
                rel,
                source,
                outcome.sig,
                outcome.hash,
                self.fingerprint,
                outcome.ids,
                recorded_ns=outcome.recorded_ns,
                error="; ".join(outcome.warnings) or None,
                digests=outcome.digests,
            )
        )

    def _failed(
        self,
        pending: PendingCommit,
        outcome: Outcome,
        scan_sig: StatSig,
        row: FileState | None,
        report: PassReport,
    ) -> None:
        """A failure keeps the last good chunks; the feed says why."""
        rel = outcome.path
        source = display_name(rel)
        old_ids, announced = self._known_ids(rel, row)
        sig = outcome.sig or scan_sig
        if not outcome.hash:  # the worker died before it could say: hash here, for quarantine
            try:
                with open(self.scope.abs(rel), "rb") as fh:
                    outcome.hash = content_hash(fh.read())
            except OSError:
                pass
        same = row is not None and (row.hash == outcome.hash if outcome.hash else row.sig == sig)
        failures = (row.failures + 1) if (row is not None and same and row.status != FileStatus.OK) else 1
        reason = outcome.reason or outcome.status
        if outcome.status in TRANSIENT_STATUSES and failures >= RETRY_LIMIT:
            reason += f" (failed {failures} times; quarantined until the file changes)"
        log.warning("%s: %s: %s", source, outcome.status, reason)
        report.failed.append((source, outcome.status, reason))
        pending.entries.append(FeedEntry(FeedOp.ERROR, source, error=f"{outcome.status}: {reason}"))
        if not announced:
            pending.entries += [FeedEntry(FeedOp.UPSERT, source, id=i) for i in old_ids]
        pending.rows.append(
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
                digests=list(row.digests) if row is not None else [],
            )
        )

    def deletion(self, pending: PendingCommit, row: FileState, report: PassReport) -> None:
        """A source is gone: its chunk file goes, its ids are deleted, its row dropped."""
        self.unlink(pending, self.layout.path_of(row.path))
        entries = [FeedEntry(FeedOp.DELETE, row.source, id=i) for i in dict.fromkeys(row.ids)]
        pending.entries += entries
        pending.gone.append(row.path)
        report.deleted += 1
        report.removed += len(entries)

    def orphan(self, pending: PendingCommit, path: Path) -> None:
        """A chunk file no row accounts for: remove it and delete the ids it held."""
        ids, source = read_ids(path)
        self.unlink(pending, path)
        pending.entries += [FeedEntry(FeedOp.DELETE, source, id=i) for i in dict.fromkeys(ids)]

    @staticmethod
    def unlink(pending: PendingCommit, path: Path) -> None:
        """Remove a chunk file (its folder is pruned at commit when it became empty)."""
        try:
            path.unlink()
        except FileNotFoundError:
            pass
        pending.emptied.add(path.parent)
