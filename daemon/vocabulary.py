"""The words the watcher writes and reads: file statuses, change kinds, feed ops, watcher states.

Each vocabulary is a `StrEnum`, so a member compares equal to its string and is written as it.
The string under each member is its meaning; docs/vocabulary.md holds the same tables (a test
keeps them equal).
"""

from __future__ import annotations

from enum import StrEnum


class FileStatus(StrEnum):
    """What became of one file's last attempt (the store's `status`, `segment status`, the feed)."""

    OK = "ok"
    """Segmented; its chunks are current."""
    CORRUPT = "corrupt"
    """The bytes are damaged or not of the format their name says."""
    EMPTY = "empty"
    """The file holds no text to segment."""
    ENCRYPTED = "encrypted"
    """A PDF locked with a user password."""
    NO_TEXT = "no_text"
    """A PDF without a text layer on any page (no OCR is done)."""
    UNSUPPORTED = "unsupported"
    """No adapter reads this kind of file."""
    RESOURCE_LIMIT = "resource_limit"
    """Over a size, page, memory or nesting limit."""
    UNREADABLE = "unreadable"
    """The file could not be opened or read (permissions, I/O error)."""
    ERROR = "error"
    """An unexpected error in a parser (a bug to report)."""
    TIMEOUT = "timeout"
    """Parsing took longer than `timeout_s`; the worker was killed."""
    CRASHED = "crashed"
    """The worker process died while parsing the file."""
    CHANGED = "changed"
    """The file changed while it was read (a task outcome, retried; never stored)."""
    MISSING = "missing"
    """The file vanished before or while it was read (a task outcome; never stored)."""
    STILL_WRITING = "still_writing"
    """The file looks half-written (a young repaired PDF): held back, retried soon (never stored)."""

    @property
    def failed(self) -> bool:
        """True for a failure status (the file keeps its last good chunks)."""
        return self not in (FileStatus.OK, FileStatus.CHANGED, FileStatus.MISSING, FileStatus.STILL_WRITING)


TRANSIENT_STATUSES = frozenset(
    {
        FileStatus.TIMEOUT,
        FileStatus.CRASHED,
        FileStatus.RESOURCE_LIMIT,
        FileStatus.ERROR,
        FileStatus.UNREADABLE,
    }
)
"""Failures that may pass on a retry; after a few with the same bytes the file is quarantined."""


class ChangeKind(StrEnum):
    """Kinds of hint the file watcher gives the batch loop."""

    FILE = "file"
    """Look at this one path."""
    FOLDER = "folder"
    """Rescan everything below this folder."""
    FULL = "full"
    """Rescan the whole source tree."""
    COOKIE = "cookie"
    """A barrier file of `Watcher.catch_up()` appeared; its path holds the token."""
    CONFIG = "config"
    """The settings file `segment.toml` at the root changed: read it again."""


class FeedOp(StrEnum):
    """Operations in the change feed OUT/changes.jsonl."""

    UPSERT = "upsert"
    """A chunk id appeared: read its record from the chunk file and index it."""
    DELETE = "delete"
    """A chunk id disappeared: drop it from the index."""
    ERROR = "error"
    """A file failed; its last good chunks stay and the entry says why."""
    RELOCATE = "relocate"
    """Same text (same id), other fields changed (lines, seq, pages...): refresh, no re-embedding."""


class WatcherState(StrEnum):
    """Why the watcher's output may lag the source tree (`degraded` in `segment status`)."""

    HEALTHY = ""
    """Nothing is wrong: edits are seen at once."""
    NETWORK_FS = "network_fs"
    """The source is on a network file system: watched by polling."""
    WATCH_LIMIT = "watch_limit"
    """More folders than inotify may watch: watched by polling."""
    WATCH_FAILED = "watch_failed"
    """The file watcher could not be restarted; the periodic rescan still runs."""
    ROOT_MISSING = "root_missing"
    """The source folder is gone; paused until it is back, output kept."""
    ROOT_EMPTY = "root_empty"
    """The source folder is empty (an unmounted share?); paused, output kept."""
    WRITE_ERROR = "write_error"
    """The output could not be written (disk full?); retried by a full rescan."""
