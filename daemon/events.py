"""From watchdog's events to path hints, and the checks that pick the kind of observer.

The observer's handler only enqueues raw events (an exception in a handler kills watchdog's
dispatch thread, reliability scenario "watcher thread died"); `changes_of` turns them into hints in the consumer thread,
routing every event by both its source and its destination path ("editor saves by rename").
"""

from __future__ import annotations

import logging
import os
import queue
from collections.abc import Sequence
from pathlib import Path

from watchdog.events import FileSystemEvent, FileSystemEventHandler

from segment.daemon.batching import FULL, Change
from segment.daemon.scope import COOKIE_PREFIX, Scope, is_litter
from segment.daemon.vocabulary import ChangeKind
from segment.settings import CONFIG_NAME

log = logging.getLogger(__name__)

OVERFLOW_LOGGER = "watchdog.observers.inotify_c"
_IGNORED_TYPES = frozenset({"opened", "closed_no_write"})


class EnqueueHandler(FileSystemEventHandler):
    """The observer's only handler: put the raw event on a queue; never raise."""

    def __init__(self, events: queue.Queue[FileSystemEvent | Change]) -> None:
        self.events = events

    def dispatch(self, event: FileSystemEvent) -> None:
        try:
            self.events.put_nowait(event)
        except Exception:
            pass


class OverflowAlarm(logging.Handler):
    """Turns watchdog's 'queue overflowed' log line into a full-reconcile request ("inotify queue overflow")."""

    def __init__(self, events: queue.Queue[FileSystemEvent | Change]) -> None:
        super().__init__(logging.WARNING)
        self.events = events
        self.count = 0

    def emit(self, record: logging.LogRecord) -> None:
        if "overflow" in record.getMessage().lower():
            self.count += 1
            self.events.put_nowait(FULL)


def changes_of(event: FileSystemEvent, scope: Scope) -> list[Change]:
    """Path hints of one watchdog event (routed by both src_path and dest_path)."""
    if event.event_type in _IGNORED_TYPES:
        return []
    out: list[Change] = []
    for raw in (event.src_path, getattr(event, "dest_path", "")):
        if not raw:
            continue
        rel = scope.rel(raw)
        if not rel or scope.in_out(rel):
            continue
        name = rel.rsplit("/", 1)[-1]
        if "/" not in rel and name.startswith(COOKIE_PREFIX):
            out.append(Change(ChangeKind.COOKIE, name[len(COOKIE_PREFIX) :]))
        elif rel == CONFIG_NAME:
            out.append(Change(ChangeKind.CONFIG, rel))
        elif event.is_directory:
            if event.event_type != "modified" and event.event_type != "attrib":
                out.append(Change(ChangeKind.FOLDER, rel))
        elif not is_litter(name) and scope.file_wanted(rel):
            out.append(Change(ChangeKind.FILE, rel))
    return out


class QueueSource:
    """The live event source for `batches()`."""

    def __init__(self, events: queue.Queue[FileSystemEvent | Change], scope: Scope) -> None:
        self.events = events
        self.scope = scope

    def get(self, timeout: float) -> Sequence[Change] | None:
        try:
            item = self.events.get(timeout=timeout)
        except queue.Empty:
            return None
        if isinstance(item, Change):
            return [item]
        try:
            return changes_of(item, self.scope)
        except Exception:
            log.exception("could not read a file-system event; running a full reconcile")
            return [FULL]


def watch_limit_exceeded(src: Path) -> bool:
    """True when SRC has more folders than inotify may watch ("watch limit reached"; watchdog is silent then)."""
    try:
        limit = int(Path("/proc/sys/fs/inotify/max_user_watches").read_text().strip())
    except (OSError, ValueError):
        return False
    folders = 0
    stack = [str(src)]
    while stack:
        folder = stack.pop()
        folders += 1
        if folders > limit * 0.9:
            return True
        try:
            stack += [e.path for e in os.scandir(folder) if e.is_dir(follow_symlinks=False)]
        except OSError:
            continue
    return False


NETWORK_FS = ("nfs", "nfs4", "cifs", "smb3", "smbfs", "9p", "afs", "ceph", "glusterfs", "lustre")


def fs_type(path: Path) -> str:
    """File system type of the mount holding `path` (from /proc/self/mountinfo; "" if unknown)."""
    try:
        lines = Path("/proc/self/mountinfo").read_text().splitlines()
    except OSError:
        return ""
    target = os.path.realpath(path)
    best, kind = "", ""
    for line in lines:
        left, _, right = line.partition(" - ")
        fields = left.split()
        if len(fields) < 5 or not right:
            continue
        mount = fields[4].replace("\\040", " ")
        inside = target == mount or target.startswith(mount.rstrip("/") + "/")
        if inside and len(mount) >= len(best):
            best, kind = mount, right.split()[0]
    return kind


def needs_polling(path: Path) -> bool:
    """True on file systems where inotify misses other hosts' writes (reliability scenario "network file system")."""
    kind = fs_type(path)
    return kind in NETWORK_FS or kind.startswith("fuse.")
