"""docsegment's watcher: keep an output folder of chunks in sync with a source folder.

A library: functions return results and raise `DaemonError` subclasses; nothing here prints or
exits (the `segment` command does that). Python API:
    reconcile(src, out, settings, jobs=1, full=False, progress=None) -> PassReport  one pass
    watch(src, out, settings, stop=..., reload=None) -> PassReport      follow edits until stop()
    Watcher(src, out, settings, jobs=1, quiet_ms=200)                   the same on a thread
    read_feed(out, after=0), replay(out)                                read OUT/changes.jsonl
    read_status(out) -> StatusReport | None                             what `segment status` shows
"""

from __future__ import annotations

import logging
import sqlite3
from collections.abc import Callable
from pathlib import Path

from segment.daemon.errors import (
    DaemonError,
    OutputBusy,
    OutputWriteError,
    SourceEmpty,
    SourceMissing,
    WorkerStartError,
)
from segment.daemon.feed import read_feed, replay
from segment.daemon.reconcile import Progress, Reconciler
from segment.daemon.report import PassReport
from segment.daemon.store import StatusReport, read_status
from segment.daemon.watcher import Watcher, WatchLoop
from segment.settings import Settings

log = logging.getLogger(__name__)


def reconcile(
    src: str | Path,
    out: str | Path,
    settings: Settings | None = None,
    *,
    jobs: int = 1,
    full: bool = False,
    progress: Progress | None = None,
) -> PassReport:
    """Bring OUT up to date with SRC once (`full`: re-segment every file) and report what changed.

    `progress(done, total)` is called after each parsed file. Files that fail are in the report
    and the store, never raised; `DaemonError` stops the pass (nothing past the last commit).
    """
    try:
        with Reconciler(Path(src), Path(out), settings or Settings(), jobs=jobs) as reconciler:
            return reconciler.reconcile(full=full, progress=progress)
    except (OSError, sqlite3.Error) as exc:  # disk full, I/O error: nothing past it was committed
        raise OutputWriteError(
            f"cannot write the output: {exc}; nothing after the last commit was recorded, "
            "so running the build again redoes it"
        ) from exc


def watch(
    src: str | Path,
    out: str | Path,
    settings: Settings | None = None,
    *,
    stop: Callable[[], bool],
    jobs: int = 1,
    quiet_ms: int = 200,
    reload: Callable[[], Settings] | None = None,
) -> PassReport:
    """Reconcile, then follow edits until `stop()` is true; return the counts of every pass.

    `reload()` gives the settings anew when `segment.toml` changes (None: the change is logged
    and the settings given are kept).
    """
    try:
        with Reconciler(Path(src), Path(out), settings or Settings(), jobs=jobs, patient=True) as reconciler:
            reconciler.stop_requested = stop  # a long initial reconcile stops between files
            loop = WatchLoop(reconciler, quiet_s=quiet_ms / 1000, reload=reload)
            try:
                loop.start()
                log.info("watching %s -> %s (quiet period %d ms)", src, out, quiet_ms)
                loop.run(stop)
            finally:
                loop.close()
            return loop.report
    except (OSError, sqlite3.Error) as exc:
        raise OutputWriteError(f"cannot write the output: {exc}") from exc


__all__ = [
    "DaemonError",
    "OutputBusy",
    "OutputWriteError",
    "PassReport",
    "Reconciler",
    "SourceEmpty",
    "SourceMissing",
    "StatusReport",
    "Watcher",
    "WorkerStartError",
    "read_feed",
    "read_status",
    "reconcile",
    "replay",
    "watch",
]
