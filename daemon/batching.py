"""From file-system events to settled, coalesced batches of paths. No threads, no clock of its own.

Events are only hints of where to look (reliability principle "events are only hints"): a batch is a set of relative
file paths, folders to rescan, and maybe a request for a full reconcile. `batches()` takes its
event source and clock as parameters, so tests script both and never sleep.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Protocol

from segment.daemon.vocabulary import ChangeKind


@dataclass(frozen=True, slots=True)
class Change:
    """One hint from the watcher."""

    kind: ChangeKind
    path: str = ""


FULL = Change(ChangeKind.FULL)


class EventSource(Protocol):
    """Where changes come from: the watchdog queue, or a script in tests."""

    def get(self, timeout: float) -> Sequence[Change] | None:
        """Changes of the next event (maybe empty), or None when `timeout` s passed with none."""
        ...


@dataclass(slots=True)
class Batch:
    """Work for one pass of the reconciler."""

    files: list[str] = field(default_factory=list)
    folders: list[str] = field(default_factory=list)
    full: bool = False
    cookies: list[str] = field(default_factory=list)
    config: bool = False
    """The settings file changed: read it before the paths are looked at."""

    def __bool__(self) -> bool:
        return bool(self.files or self.folders or self.full or self.cookies or self.config)


MAX_PATHS = 5000
"""More distinct paths than this in one batch become one full reconcile (a scan is cheaper
than a storm of hints, and memory stays bounded; syncthing does the same above 512 events)."""


class Coalescer:
    """Collects changes and says when they have settled.

    A batch is due once no change arrived for `quiet_s`, or `max_wait_s` after its first change
    (so a file that never stops changing is still processed, as syncthing does).
    """

    def __init__(self, quiet_s: float, max_wait_s: float) -> None:
        self.quiet_s = quiet_s
        self.max_wait_s = max(max_wait_s, quiet_s)
        self._files: dict[str, None] = {}
        self._folders: dict[str, None] = {}
        self._cookies: dict[str, None] = {}
        self._full = False
        self._config = False
        self._first = 0.0
        self._last = 0.0

    def empty(self) -> bool:
        """True when nothing is pending."""
        return not (self._files or self._folders or self._cookies or self._full or self._config)

    def add(self, change: Change, now: float) -> None:
        """Record one change seen at `now`."""
        if self.empty():
            self._first = now
        self._last = now
        if change.kind == ChangeKind.FILE:
            self._files[change.path] = None
        elif change.kind == ChangeKind.FOLDER:
            self._folders[change.path] = None
        elif change.kind == ChangeKind.COOKIE:
            self._cookies[change.path] = None
        elif change.kind == ChangeKind.FULL:
            self._full = True
        elif change.kind == ChangeKind.CONFIG:
            self._config = True
        if self._full or len(self._files) + len(self._folders) > MAX_PATHS:
            self._full = True
            self._files.clear()
            self._folders.clear()

    def due_in(self, now: float) -> float | None:
        """Seconds until the pending batch is due (0 when due now); None when nothing is pending."""
        if self.empty():
            return None
        return max(0.0, min(self._last + self.quiet_s, self._first + self.max_wait_s) - now)

    def take(self) -> Batch:
        """The pending batch (paths in first-seen order); resets the collector."""
        folders = list(self._folders)
        # A file below a folder being rescanned is covered by that rescan.
        files = [f for f in self._files if not any(f.startswith(d + "/") for d in folders if d)]
        if "" in self._folders:
            files, folders = [], [""]
        batch = Batch(files, folders, self._full, list(self._cookies), self._config)
        self._files, self._folders, self._cookies, self._full, self._config = {}, {}, {}, False, False
        return batch


def batches(
    source: EventSource,
    clock: Callable[[], float],
    *,
    quiet_s: float,
    max_wait_s: float,
    stop: Callable[[], bool],
    idle: Callable[[], Sequence[Change]] = lambda: (),
    idle_s: float = 0.5,
) -> Iterator[Batch]:
    """Yield settled batches until `stop()` is true; pending changes are flushed at stop.

    `idle()` runs whenever a wait for events times out (supervision); the changes it returns
    join the pending batch (e.g. a full reconcile after the observer died).
    """
    pending = Coalescer(quiet_s, max_wait_s)
    while True:
        now = clock()
        wait = pending.due_in(now)
        if wait == 0.0 or (stop() and wait is not None):
            yield pending.take()
            continue
        if stop():
            return
        changes = source.get(idle_s if wait is None else min(wait, idle_s))
        if changes is None:
            for change in idle():
                pending.add(change, clock())
            continue
        now = clock()
        for change in changes:
            pending.add(change, now)
