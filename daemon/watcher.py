"""Follow edits: watchdog observer -> queue -> settled batches -> `Reconciler.reconcile_paths`.

- The watchdog handler only puts raw events on a queue (nothing in it can raise), and events
  are turned into path hints in the consumer: a move counts for both its source and its
  destination, so editors' save-by-rename and moves onto a tracked path are seen ("editor saves by rename").
- A queue overflow (watchdog logs it; it gives the handler no event) and a dead observer
  thread both lead to a full reconcile, never to silently missed edits ("inotify queue overflow", "watcher thread died").
- Decisions are made from a re-stat when the batch runs, after the quiet period, so vim's
  rename-to-backup dance or a delete-then-create is not seen as a deletion ("vim's save sequence").
- `catch_up(timeout)` is a cookie barrier ("catch-up barrier"): it creates a file at the root and waits until the
  batch holding that file's event has been processed, so every earlier write is reflected.
"""

from __future__ import annotations

import logging
import os
import queue
import sqlite3
import threading
import time
import uuid
from collections.abc import Callable, Sequence
from dataclasses import fields
from pathlib import Path
from typing import Any

from watchdog.events import FileSystemEvent
from watchdog.observers import Observer
from watchdog.observers.polling import PollingObserver

from segment.daemon.batching import FULL, Batch, Change, batches
from segment.daemon.errors import SourceEmpty, SourceMissing
from segment.daemon.events import (
    OVERFLOW_LOGGER,
    EnqueueHandler,
    OverflowAlarm,
    QueueSource,
    fs_type,
    needs_polling,
    watch_limit_exceeded,
)
from segment.daemon.reconcile import Reconciler
from segment.daemon.report import PassReport
from segment.daemon.scope import COOKIE_PREFIX
from segment.daemon.vocabulary import ChangeKind, WatcherState
from segment.settings import CONFIG_NAME, Settings

log = logging.getLogger(__name__)

RESCAN_S = 600.0
"""A full reconcile runs this often while watching, as a net under any missed event."""
PENDING_RETRY_S = 2.0
"""Files held back as still changing (a copy in progress) are looked at again this often."""
WRITE_RETRY_S = 5.0
"""After a failed write (disk full, I/O error), the next full reconcile runs this much later."""


class WatchLoop:
    """Runs the observer and the batch loop around one `Reconciler` (made with `patient=True`)."""

    def __init__(
        self,
        reconciler: Reconciler,
        *,
        quiet_s: float = 0.2,
        rescan_s: float = RESCAN_S,
        clock: Callable[[], float] = time.monotonic,
        reload: Callable[[], Settings] | None = None,
    ) -> None:
        self.reconciler = reconciler
        self.reload = reload
        """Gives the settings anew when segment.toml changes (None: logged, settings kept)."""
        self.quiet_s = quiet_s
        self.rescan_s = rescan_s
        self.clock = clock
        self.events: queue.Queue[FileSystemEvent | Change] = queue.Queue()
        self.alarm = OverflowAlarm(self.events)
        self.observer: Any = None
        self.degraded = WatcherState.HEALTHY
        self.report = PassReport()
        """Counts summed over every pass since start."""
        self.observer_restarts = 0
        self._waiters: dict[str, threading.Event] = {}
        self._waiters_lock = threading.Lock()
        self._last_full = 0.0
        self._last_held_retry = 0.0
        self._source: QueueSource | None = None
        self._config_sig = _config_sig(self.reconciler.src)

    # -- lifecycle -------------------------------------------------------------------------

    def start(self) -> PassReport:
        """Start watching, then run the initial reconcile (edits made meanwhile are queued)."""
        logging.getLogger(OVERFLOW_LOGGER).addHandler(self.alarm)
        self._start_observer()
        return self._full("initial reconcile")

    def close(self) -> None:
        """Stop the observer and detach the overflow alarm."""
        logging.getLogger(OVERFLOW_LOGGER).removeHandler(self.alarm)
        if self.observer is not None:
            self.observer.stop()
            if self.observer.is_alive():
                self.observer.join(5)
            self.observer = None
        self._set_degraded(WatcherState.HEALTHY)

    def _start_observer(self) -> None:
        src = str(self.reconciler.src)
        reason = (
            WatcherState.NETWORK_FS
            if needs_polling(self.reconciler.src)
            else WatcherState.WATCH_LIMIT
            if watch_limit_exceeded(self.reconciler.src)
            else WatcherState.HEALTHY
        )
        polling = bool(reason)
        observer: Any = PollingObserver(timeout=1.0) if polling else Observer()
        try:
            observer.schedule(EnqueueHandler(self.events), src, recursive=True)
            observer.start()
        except OSError as exc:
            log.warning("cannot watch %s with inotify (%s); falling back to polling", src, exc)
            polling, reason = True, WatcherState.WATCH_LIMIT
            observer = PollingObserver(timeout=1.0)
            observer.schedule(EnqueueHandler(self.events), src, recursive=True)
            observer.start()
        if reason == WatcherState.NETWORK_FS:
            log.warning(
                "%s is on a network file system (%s): watching by polling", src, fs_type(self.reconciler.src)
            )
        elif polling:
            log.warning(
                "watching %s by polling: raise fs.inotify.max_user_watches (sysctl) to get instant updates",
                src,
            )
        self.observer = observer
        self._set_degraded(reason, force=True)

    # -- the loop --------------------------------------------------------------------------

    def run(self, stop: Callable[[], bool]) -> None:
        """Process batches until `stop()` is true; the batch in progress is always finished."""
        source = self._source = QueueSource(self.events, self.reconciler.scope)
        max_wait = max(10 * self.quiet_s, 1.0)
        for batch in batches(
            source, self.clock, quiet_s=self.quiet_s, max_wait_s=max_wait, stop=stop, idle=self._supervise
        ):
            self.process(batch)

    def process(self, batch: Batch) -> None:
        """Run one batch through the reconciler and release the barriers it carries."""
        try:
            if (batch.config or batch.full) and self._settings_file_changed():
                batch.full = self._reload_settings() or batch.full
            if batch.full:
                self._full("full reconcile")
            elif batch.files or batch.folders:
                report = self.reconciler.reconcile_paths(batch.files, batch.folders)
                self.report.merge(report)
                log.info("%s", report.line("batch"))
        except SourceEmpty as exc:
            if self.degraded != WatcherState.ROOT_EMPTY:
                log.error("%s; paused until files are back", exc)
            self._set_degraded(WatcherState.ROOT_EMPTY)
            self._last_full = self.clock() - self.rescan_s + min(WRITE_RETRY_S, self.rescan_s)
        except SourceMissing as exc:
            if self.degraded != WatcherState.ROOT_MISSING:
                log.error("%s; paused until it is back", exc)
            self._set_degraded(WatcherState.ROOT_MISSING)
        except (OSError, sqlite3.Error) as exc:
            # Disk full or an I/O error: nothing past the last commit was recorded. Retry the
            # whole tree in a few seconds (never trust a failed fsync: reliability scenario "failed fsync").
            log.error("cannot write the output: %s; retrying with a full reconcile", exc)
            self._set_degraded(WatcherState.WRITE_ERROR)
            self._last_full = self.clock() - self.rescan_s + WRITE_RETRY_S
            return  # the barriers wait for the retry
        else:
            if self.degraded in (WatcherState.WRITE_ERROR, WatcherState.ROOT_EMPTY) and batch.full:
                self._set_degraded(WatcherState.HEALTHY)
        self._release(batch.cookies)

    def _settings_file_changed(self) -> bool:
        """True when SRC/segment.toml differs from when the settings were last read."""
        sig = _config_sig(self.reconciler.src)
        if sig == self._config_sig:
            return False
        self._config_sig = sig
        return True

    def _reload_settings(self) -> bool:
        """Read the settings again after segment.toml changed; True when a full pass is due."""
        if self.reload is None:
            log.warning(
                "%s changed, but this watcher was given its settings: restart it to apply the file",
                CONFIG_NAME,
            )
            return False
        try:
            settings = self.reload()
        except Exception as exc:  # a bad file or value: say so, keep going as before
            log.error("%s: %s; keeping the previous settings", CONFIG_NAME, exc)
            return False
        old = self.reconciler.settings
        changed = [f.name for f in fields(Settings) if getattr(settings, f.name) != getattr(old, f.name)]
        if not self.reconciler.apply_settings(settings):
            log.info("%s changed; no setting differs", CONFIG_NAME)
            return False
        if self._source is not None:
            self._source.scope = self.reconciler.scope
        log.warning(
            "%s changed (%s); applying it: %s",
            CONFIG_NAME,
            ", ".join(changed),
            "re-segmenting every file"
            if settings.fingerprint() != old.fingerprint()
            else "rescanning the tree",
        )
        return True

    def _full(self, what: str) -> PassReport:
        cookies = self._cookies_on_disk()
        self._last_full = self.clock()
        report = self.reconciler.reconcile()
        self.report.merge(report)
        log.info("%s", report.line(what))
        self._release(cookies)
        return report

    def _supervise(self) -> Sequence[Change]:
        """Idle-time checks: vanished or returning root, dead observer, periodic rescan."""
        if not self.reconciler.src.is_dir():
            if self.degraded != WatcherState.ROOT_MISSING:
                log.error(
                    "%s: source folder is missing; paused until it is back (output kept)", self.reconciler.src
                )
                self._set_degraded(WatcherState.ROOT_MISSING)
            return ()
        if self.degraded == WatcherState.ROOT_MISSING:
            log.warning("%s is back; resuming", self.reconciler.src)
            self._restart_observer()
            return [FULL]
        if self.observer is None or not _observer_alive(self.observer):
            log.error("the file watcher thread died; restarting it and rescanning everything")
            self.observer_restarts += 1
            self._bump("observer_restarts")
            self._restart_observer()
            return [FULL]
        if self.alarm.count:
            log.warning("inotify queue overflowed: events were lost; rescanning everything")
            for _ in range(self.alarm.count):
                self._bump("overflow_rescans")
            self.alarm.count = 0
        if self.clock() - self._last_full >= self.rescan_s:
            return [FULL]
        if self.reconciler.held and self.clock() - self._last_held_retry >= PENDING_RETRY_S:
            self._last_held_retry = self.clock()
            return [Change(ChangeKind.FILE, rel) for rel in sorted(self.reconciler.held)]
        return ()

    def _restart_observer(self) -> None:
        try:
            if self.observer is not None:
                self.observer.stop()
        except Exception:
            pass
        try:
            self._start_observer()
        except OSError as exc:  # e.g. the root vanished again: the next idle check retries
            log.error("cannot restart the file watcher on %s: %s", self.reconciler.src, exc)
            self.observer = None
            self._set_degraded(
                WatcherState.ROOT_MISSING if not self.reconciler.src.is_dir() else WatcherState.WATCH_FAILED
            )

    # -- barrier ---------------------------------------------------------------------------

    def catch_up(self, timeout: float = 30.0) -> None:
        """Return once every file operation made before this call is reflected in OUT."""
        token = uuid.uuid4().hex
        done = threading.Event()
        with self._waiters_lock:
            self._waiters[token] = done
        cookie = self.reconciler.src / f"{COOKIE_PREFIX}{token}"
        try:
            cookie.touch()
            if not done.wait(timeout):
                raise TimeoutError(f"watcher did not catch up within {timeout} s")
        finally:
            with self._waiters_lock:
                self._waiters.pop(token, None)
            try:
                cookie.unlink()
            except OSError:
                pass

    def _cookies_on_disk(self) -> list[str]:
        try:
            names = os.listdir(self.reconciler.src)
        except OSError:
            return []
        return [n[len(COOKIE_PREFIX) :] for n in names if n.startswith(COOKIE_PREFIX)]

    def _release(self, tokens: list[str]) -> None:
        with self._waiters_lock:
            for token in tokens:
                waiter = self._waiters.get(token)
                if waiter is not None:
                    waiter.set()

    # -- counters in the store (read by `segment status`) -----------------------------------

    def _bump(self, key: str) -> None:
        with self.reconciler.store.transaction():
            self.reconciler.store.bump(key)

    def _set_degraded(self, value: WatcherState, force: bool = False) -> None:
        """Record why the output may lag (shown by `segment status`); written only on change."""
        if value == self.degraded and not force:
            return
        self.degraded = value
        try:
            with self.reconciler.store.transaction():
                self.reconciler.store.set_meta("degraded", value)
        except (OSError, sqlite3.Error) as exc:
            log.error("cannot record the degraded state %r: %s", value, exc)


def _config_sig(src: Path) -> tuple[int, int, int] | None:
    """(size, mtime_ns, inode) of SRC/segment.toml, or None when there is none."""
    try:
        st = os.stat(src / CONFIG_NAME)
    except OSError:
        return None
    return (st.st_size, st.st_mtime_ns, st.st_ino)


def _observer_alive(observer: Any) -> bool:
    """The dispatch thread and every emitter thread are running (either can die alone, "watcher thread died")."""
    return bool(observer.is_alive()) and all(e.is_alive() for e in getattr(observer, "emitters", ()))


class Watcher:
    """Watch SRC into OUT on a background thread (for tests and embedding).

    `with Watcher(src, out, settings) as w:` runs the initial reconcile on entry, then follows
    edits; `w.catch_up(timeout)` waits until earlier edits are reflected; leaving the block finishes
    the current batch and stops.
    """

    def __init__(
        self,
        src: Path,
        out: Path,
        settings: Settings | None = None,
        *,
        jobs: int = 1,
        quiet_ms: int = 200,
        rescan_s: float = RESCAN_S,
        reload: Callable[[], Settings] | None = None,
    ) -> None:
        self.src, self.out = Path(src), Path(out)
        self.reload = reload
        """Gives the settings anew when segment.toml changes (None: logged, settings kept)."""
        self.settings = settings or Settings()
        self.jobs = jobs
        self.quiet_s = quiet_ms / 1000
        self.rescan_s = rescan_s
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._error: BaseException | None = None
        self.reconciler: Reconciler | None = None
        self.loop: WatchLoop | None = None

    def __enter__(self) -> Watcher:
        self.reconciler = Reconciler(self.src, self.out, self.settings, jobs=self.jobs, patient=True)
        self.reconciler.stop_requested = self._stop.is_set
        try:
            self.loop = WatchLoop(
                self.reconciler, quiet_s=self.quiet_s, rescan_s=self.rescan_s, reload=self.reload
            )
            self.loop.start()
        except BaseException:
            if self.loop is not None:
                self.loop.close()
            self.reconciler.close()
            raise
        self._thread = threading.Thread(target=self._run, name="docsegment-watch", daemon=True)
        self._thread.start()
        return self

    def _run(self) -> None:
        assert self.loop is not None
        try:
            self.loop.run(self._stop.is_set)
        except BaseException as exc:
            self._error = exc
            log.exception("watch loop stopped")

    def catch_up(self, timeout: float = 30.0) -> None:
        """Barrier: every file operation made before this call is reflected in OUT on return."""
        assert self.loop is not None
        if self._error is not None:
            raise RuntimeError("watch loop stopped") from self._error
        self.loop.catch_up(timeout)
        if self._error is not None:
            raise RuntimeError("watch loop stopped") from self._error

    @property
    def report(self) -> PassReport:
        """Counts summed over every pass since the watcher started."""
        assert self.loop is not None
        return self.loop.report

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(60)
        try:
            if self.loop is not None:
                self.loop.close()
        finally:
            if self.reconciler is not None:
                self.reconciler.close()
        if self._error is not None and exc[0] is None:
            raise RuntimeError("watch loop stopped") from self._error
