"""Committing: the work of a group of files made durable, in the one order a crash allows.

Chunk files are written (atomically) first, their folders fsynced, then the feed is appended and
fsynced, and the store commits last. A crash anywhere leaves the store describing an older state,
so the next pass redoes the group (idempotently) and `recover_feed` undoes feed lines that ran
ahead of the store.
"""

from __future__ import annotations

import logging
import os
import sqlite3
import time
from concurrent.futures import Future
from dataclasses import dataclass, field
from pathlib import Path

from segment.daemon.chunkfiles import ChunkLayout
from segment.daemon.durable import crashpoint, fsync_dir
from segment.daemon.feed import Feed, FeedEntry, compensation, repair_tail
from segment.daemon.store import FileState, Store

log = logging.getLogger(__name__)

GROUP_FILES = int(os.environ.get("DOCSEGMENT_GROUP_FILES", "200"))
"""Files per store transaction during a long pass (bounds the work a crash redoes)."""
GROUP_SECONDS = 2.0
"""A group is committed at least this often while a pass runs."""


@dataclass(slots=True)
class PendingCommit:
    """Work of one store transaction, not yet durable."""

    entries: list[FeedEntry] = field(default_factory=list)
    rows: list[FileState] = field(default_factory=list)
    gone: list[str] = field(default_factory=list)
    """Relative paths whose rows are dropped."""
    dirs: set[Path] = field(default_factory=set)
    """Folders to fsync before the feed is appended."""
    emptied: set[Path] = field(default_factory=set)
    """Folders that lost a chunk file (pruned when empty)."""
    writes: list[Future[None]] = field(default_factory=list)
    """Chunk files being written by the writer threads."""
    held: dict[str, tuple[str, str]] = field(default_factory=dict)
    """Files held back as still changing: relative path -> (source, reason)."""
    released: set[str] = field(default_factory=set)
    """Files no longer held back."""
    started: float = field(default_factory=time.monotonic)

    def empty(self) -> bool:
        """True when there is nothing to commit."""
        return not (
            self.entries
            or self.rows
            or self.gone
            or self.writes
            or self.emptied
            or self.held
            or self.released
        )

    def due(self) -> bool:
        """True when the group is large or old enough to commit now."""
        size = len(self.rows) + len(self.gone)
        return size >= GROUP_FILES or (size > 0 and time.monotonic() - self.started >= GROUP_SECONDS)


class Committer:
    """Makes pending work durable in OUT: chunk folders, then the feed, then the store."""

    def __init__(self, layout: ChunkLayout, store: Store, feed: Feed) -> None:
        self.layout = layout
        self.store = store
        self.feed = feed

    def commit(self, pending: PendingCommit) -> int | None:
        """Commit the group; return the feed's last seq, or None when there was nothing to do."""
        if pending.empty():
            return None
        for future in pending.writes:
            future.result()  # a failed write or fsync aborts the group: nothing is committed
        self._prune(pending.emptied, pending.dirs)
        for folder in sorted(pending.dirs):
            if folder.is_dir():
                fsync_dir(folder)
        crashpoint("before_feed")
        try:
            last = self.feed.append(pending.entries)
            crashpoint("before_commit")
            with self.store.transaction():
                for row in pending.rows:
                    self.store.put(row)
                for rel in pending.gone:
                    self.store.delete(rel)
                for rel in pending.released:
                    self.store.release(rel)
                for rel, (source, reason) in pending.held.items():
                    self.store.hold(rel, source, reason)
                self.store.set_meta("last_seq", last)
        except (OSError, sqlite3.Error) as exc:
            # Feed lines may be on disk without their commit: undo them now, as a restart would.
            self.feed.last_seq = max(self.feed.last_seq, repair_tail(self.feed.path))
            try:
                self.recover_feed()
            except (OSError, sqlite3.Error) as again:
                log.error("cannot repair the feed now (%s); the next start will", again)
            if isinstance(exc, sqlite3.Error):
                raise OSError(f"cannot commit the state database: {exc}") from exc
            raise
        crashpoint("after_commit")
        return last

    def recover_feed(self) -> None:
        """Undo feed entries a crash left past the last store commit (see `compensation`)."""
        committed_seq = self.store.last_seq
        if self.feed.last_seq <= committed_seq:
            return
        committed = {row.source: row.ids for row in self.store.all().values()}
        entries = compensation(self.feed.path.parent, committed_seq, committed)
        last = self.feed.append(entries)
        with self.store.transaction():
            self.store.set_meta("last_seq", last)
        log.warning(
            "the feed held entries past the last commit (interrupted run); appended %d entries to undo them",
            len(entries),
        )

    def _prune(self, folders: set[Path], dirs: set[Path]) -> None:
        """Drop folders that deletions emptied, so OUT/chunks mirrors the current tree."""
        root = self.layout.root
        for start in sorted(folders, key=lambda p: len(p.parts), reverse=True):
            folder = start
            while folder != root and folder.is_relative_to(root):
                try:
                    folder.rmdir()
                except OSError:
                    break
                folder = folder.parent
            dirs.add(folder)
