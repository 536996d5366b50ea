"""Errors the watcher library raises. Each says what failed and where; none is about one file
(a file's failure is a status in the store and the feed, and the run goes on)."""

from __future__ import annotations


class DaemonError(RuntimeError):
    """Base of the errors that stop a build or a watch before or while it runs."""


class OutputBusy(DaemonError):
    """Another docsegment process already writes this output folder."""


class SourceMissing(DaemonError):
    """SRC is gone or not a folder: nothing is deleted from OUT."""


class SourceEmpty(SourceMissing):
    """SRC holds none of the files OUT has (an empty mount point): nothing is deleted."""


class WorkerStartError(DaemonError):
    """Worker processes die before they can take work (e.g. memory_mb too small to start)."""


class OutputWriteError(DaemonError):
    """The output folder cannot be written (disk full, I/O error): nothing after the last commit
    was recorded, so running again redoes it."""
