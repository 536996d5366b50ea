"""docsegment's daemon: keep an output folder of chunks in sync with a source folder.

Python API:
    reconcile(src, out, settings, jobs=1, full=False) -> SyncReport   one incremental pass
    Watcher(src, out, settings, jobs=1, quiet_ms=200)                 context manager; .sync(timeout)
    read_feed(out, after=0), replay(out)                              read OUT/changes.jsonl
    read_status(out) -> StatusReport | None                           what `segment status` shows
"""

from __future__ import annotations

from pathlib import Path

from segment.daemon.feed import read_feed, replay
from segment.daemon.lock import OutputBusy
from segment.daemon.store import StatusReport, read_status
from segment.daemon.sync import SourceMissing, Syncer, SyncReport
from segment.daemon.watch import Watcher
from segment.settings import Settings


def reconcile(
    src: str | Path, out: str | Path, settings: Settings | None = None, *, jobs: int = 1, full: bool = False
) -> SyncReport:
    """Bring OUT up to date with SRC once (`full`: re-segment every file) and report what changed."""
    with Syncer(Path(src), Path(out), settings or Settings(), jobs=jobs) as syncer:
        return syncer.reconcile(full=full)


__all__ = [
    "OutputBusy",
    "SourceMissing",
    "StatusReport",
    "SyncReport",
    "Syncer",
    "Watcher",
    "read_feed",
    "read_status",
    "reconcile",
    "replay",
]
