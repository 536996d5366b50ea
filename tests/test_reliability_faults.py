"""Watcher faults and durability faults the existing daemon tests do not reach.

Reliability scenarios: "watch limit reached" (watch limit: the inotify watch cannot be added), "network file system" (network file
systems: watched by polling), "failed fsync" (fsync returns EIO), "disk full" (ENOSPC while writing output). Faults
are injected with monkeypatch in this process (the writes happen in the daemon's own process;
workers only parse). Every wait is on a condition with a deadline, never a fixed sleep.
"""

from __future__ import annotations

import errno
import os
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from watchdog.observers import Observer
from watchdog.observers.polling import PollingObserver

import segment.daemon.events as events
import segment.daemon.watcher as watch
from segment.cli import run_build
from segment.daemon import Watcher, read_status, reconcile
from segment.settings import Settings
from tests.daemon_helpers import (
    assert_feed_matches,
    chunk_files,
    page,
    quick_check,
    temp_files,
    tree_of,
    wait_for,
    write,
)

QUIET_MS = 50


def fresh_equal(src: Path, out: Path, tmp_path: Path) -> None:
    oracle = tmp_path / f"oracle-{time.monotonic_ns()}"
    reconcile(src, oracle, full=True)
    assert chunk_files(out) == chunk_files(oracle)
    assert temp_files(out) == [] and quick_check(out) == "ok"
    assert_feed_matches(out)


@pytest.fixture
def docs(tmp_path: Path) -> Path:
    root = tmp_path / "docs"
    tree_of(6, root)
    return root


# -- "watch limit reached": the watch limit -----------------------------------------------------------------------


class _NoWatchesLeft(Observer):  # type: ignore[misc, valid-type]
    """An inotify observer whose watches cannot be added (max_user_watches exhausted)."""

    def start(self) -> None:
        raise OSError(errno.ENOSPC, "inotify watch limit reached")


@pytest.mark.timeout(60)
def test_an_exhausted_watch_limit_falls_back_to_polling_and_says_degraded(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "watch limit reached", portable variant: the watch-adding call raises OSError(ENOSPC).
    monkeypatch.setattr(watch, "Observer", _NoWatchesLeft)
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        assert w.loop is not None and isinstance(w.loop.observer, PollingObserver)
        assert read_status(out).degraded == "watch_limit"  # type: ignore[union-attr]
        write(docs / "seen-by-polling.md", page("Geofences", "Polling still sees new pages."))
        w.catch_up(20)
        assert "seen-by-polling.md.jsonl" in chunk_files(out)
    fresh_equal(docs, out, tmp_path)


def test_more_folders_than_watches_is_detected_before_watching(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # watchdog 7.1 is silent when sub-folder watches fail (reliability scenario "watch limit reached"), so we count first.
    for i in range(30):
        (tmp_path / f"d{i}").mkdir()
    real = Path.read_text

    def limit(self: Path, *args: object, **kwargs: object) -> str:
        if str(self) == "/proc/sys/fs/inotify/max_user_watches":
            return "20\n"
        return real(self, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(Path, "read_text", limit)
    assert watch.watch_limit_exceeded(tmp_path)
    assert not watch.watch_limit_exceeded(tmp_path / "d0")


# -- "network file system": network file systems -------------------------------------------------------------------

MOUNTINFO = """\
22 1 0:21 / / rw,relatime shared:1 - ext4 /dev/sda1 rw
40 22 0:35 / /srv/docs rw,relatime shared:20 - nfs4 files:/export/docs rw,vers=4.2
41 40 0:36 / /srv/docs/local rw,relatime shared:21 - tmpfs tmpfs rw
42 22 0:37 / /mnt/share\\040drive rw,relatime shared:22 - cifs //nas/share rw
43 22 0:38 / /home/me/remote rw,relatime shared:23 - fuse.sshfs me@host:/ rw
"""


def test_the_file_system_type_is_read_from_mountinfo(monkeypatch: pytest.MonkeyPatch) -> None:
    # /proc/self/mountinfo format: proc(5); the type follows the " - " separator, and spaces in
    # mount points are written as the octal escape \040.
    real = Path.read_text

    def fake(self: Path, *args: object, **kwargs: object) -> str:
        if str(self) == "/proc/self/mountinfo":
            return MOUNTINFO
        return real(self, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(Path, "read_text", fake)
    assert events.fs_type(Path("/srv/docs/guides")) == "nfs4"
    assert events.fs_type(Path("/srv/docs/local/x")) == "tmpfs"  # the longest mount wins
    assert events.fs_type(Path("/mnt/share drive/a")) == "cifs"  # octal escape decoded
    assert events.fs_type(Path("/home/me/remote")) == "fuse.sshfs"
    assert events.fs_type(Path("/srv/docsx")) == "ext4"  # a mount point is not a name prefix
    assert events.needs_polling(Path("/srv/docs/guides")) and events.needs_polling(Path("/mnt/share drive"))
    assert events.needs_polling(Path("/home/me/remote"))
    assert not events.needs_polling(Path("/srv/docs/local/x")) and not events.needs_polling(Path("/etc"))


@pytest.mark.timeout(60)
def test_a_network_file_system_is_watched_by_polling_and_still_converges(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "network file system": inotify does not see changes made by other hosts; poll instead.
    monkeypatch.setattr(watch, "needs_polling", lambda path: True)
    monkeypatch.setattr(watch, "fs_type", lambda path: "nfs4")
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        assert w.loop is not None and isinstance(w.loop.observer, PollingObserver)
        assert read_status(out).degraded == "network_fs"  # type: ignore[union-attr]
        # "editor saves by rename" under polling: an atomic save through a temp file.
        tmp = docs / ".page0.md.swp"
        write(tmp, page("Battery care 0", "Saved atomically over a network share."))
        os.replace(tmp, docs / "area0" / "page0.md")
        # "duplicate events" under polling: many quick rewrites, the last one wins.
        for i in range(20):
            write(docs / "area1" / "page1.md", page("Flight logs", f"Revision {i}."))
        w.catch_up(20)
    texts = chunk_files(out)
    assert b"Saved atomically" in texts["area0/page0.md.jsonl"]
    assert b"Revision 19." in texts["area1/page1.md.jsonl"]
    fresh_equal(docs, out, tmp_path)


# -- "failed fsync" / "disk full": failed fsync, full disk --------------------------------------------------------------


def _is_output_temp(fd: object) -> bool:
    try:
        return os.readlink(f"/proc/self/fd/{fd}").endswith(".tmp")
    except OSError:
        return False


def failing(monkeypatch: pytest.MonkeyPatch, name: str, code: int, times: int = 1) -> dict[str, int]:
    """Make os.<name> raise OSError(code) for its next `times` calls on a chunk temp file."""
    real = getattr(os, name)
    left = {"n": times}

    def fake(*args: object) -> object:
        if left["n"] > 0 and _is_output_temp(args[0]):
            left["n"] -= 1
            if name == "write":  # a short write first: part of the data reaches the temp file
                real(args[0], bytes(memoryview(args[1])[:7]))  # type: ignore[arg-type]
            raise OSError(code, os.strerror(code))
        return real(*args)

    monkeypatch.setattr(os, name, fake)
    return left


@pytest.mark.timeout(60)
@pytest.mark.parametrize(("call", "code"), [("fsync", errno.EIO), ("write", errno.ENOSPC)])
def test_a_failed_fsync_or_a_full_disk_commits_nothing_and_the_next_build_converges(
    docs: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
    call: str,
    code: int,
) -> None:
    # reliability scenario "failed fsync" (never retry a failed fsync and call the data safe) and "disk full" (ENOSPC).
    out = tmp_path / "out"
    assert run_build(docs, out, Settings()) == 0
    before, seq = chunk_files(out), read_status(out).last_seq  # type: ignore[union-attr]
    write(docs / "area0" / "page0.md", page("Battery care", "A new paragraph that must not be half-written."))
    failing(monkeypatch, call, code)
    assert run_build(docs, out, Settings()) == 1
    err = capsys.readouterr().err
    assert os.strerror(code) in err and "Traceback" not in err
    assert chunk_files(out) == before, "the old chunk file must survive intact"
    assert temp_files(out) == []
    assert read_status(out).last_seq == seq  # type: ignore[union-attr]  # the store claims nothing new
    monkeypatch.undo()
    assert run_build(docs, out, Settings()) == 0
    fresh_equal(docs, out, tmp_path)


def recorded_degraded(out: Path) -> str:
    """The degraded state `segment status` would show ("" when healthy or unreadable)."""
    status = read_status(out)
    return status.degraded if status is not None else ""


@pytest.fixture
def quick_retry(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    for name in ("WRITE_RETRY_S", "RETRY_S"):
        if hasattr(watch, name):
            monkeypatch.setattr(watch, name, 1.0)
    yield


@pytest.mark.timeout(90)
def test_a_write_error_while_watching_keeps_the_watcher_alive_and_is_retried(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, quick_retry: None
) -> None:
    # reliability scenario "failed fsync / disk full" under watch: the batch is not committed, the state says so, a retry
    # converges, and the watcher thread survives.
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        assert w.loop is not None
        before = chunk_files(out)
        left = failing(monkeypatch, "fsync", errno.ENOSPC, times=1)
        write(docs / "area2" / "page2.md", page("Spare parts", "Written while the disk was full."))
        # The state on disk, not the watcher's own field: the store is written just after it.
        wait_for(lambda: left["n"] == 0 and recorded_degraded(out) in ("write_error", "disk_full"))
        assert chunk_files(out) == before and temp_files(out) == []
        w.catch_up(30)  # released once the retry has converged
        wait_for(lambda: w.loop.degraded == "")  # type: ignore[union-attr]
        assert b"disk was full" in chunk_files(out)["area2/page2.md.jsonl"]
        assert w._thread is not None and w._thread.is_alive()
    fresh_equal(docs, out, tmp_path)


# -- "power loss": the order of durable writes ---------------------------------------------------------------


def test_each_chunk_file_is_fsynced_before_its_rename_and_its_folder_after(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "power loss" (pytest cannot cut power): spy on the calls. POSIX atomic replace practice:
    # write the temp file, fsync it, rename over the target, fsync the folder.
    out = tmp_path / "out"
    calls: list[tuple[str, str]] = []
    lock = threading.Lock()
    real_fsync, real_replace = os.fsync, os.replace

    def where(fd: int) -> str:
        try:
            return os.readlink(f"/proc/self/fd/{fd}")
        except OSError:
            return "?"

    def spy_fsync(fd: int) -> None:
        with lock:
            calls.append(("fsync", where(fd)))
        real_fsync(fd)

    def spy_replace(a: object, b: object) -> None:
        with lock:
            calls.append(("replace", f"{os.fsdecode(a)} -> {os.fsdecode(b)}"))  # type: ignore[arg-type]
        real_replace(a, b)  # type: ignore[arg-type]

    monkeypatch.setattr(os, "fsync", spy_fsync)
    monkeypatch.setattr(os, "replace", spy_replace)
    assert run_build(docs, out, Settings()) == 0
    monkeypatch.undo()
    renames = [(i, c[1]) for i, c in enumerate(calls) if c[0] == "replace" and "/chunks/" in c[1]]
    assert len(renames) == 6
    for i, what in renames:
        tmp, dst = what.split(" -> ")
        assert ("fsync", tmp) in calls[:i], f"{dst}: renamed before its temp file was fsynced"
        folder = os.path.dirname(dst)
        assert ("fsync", folder) in calls[i + 1 :], f"{dst}: folder not fsynced after the rename"
    feed_sync = max(i for i, c in enumerate(calls) if c == ("fsync", str(out / "changes.jsonl")))
    assert feed_sync > max(i for i, _ in renames)  # chunk files are durable before the feed names them


# -- "two writers": readers while the writer churns; "corrupt state database": a store cut in half -----------------------------------


@pytest.mark.timeout(90)
def test_status_readers_never_see_a_locked_database_while_the_watcher_writes(
    docs: Path, tmp_path: Path
) -> None:
    # reliability scenario "two writers": one writer; readers are read-only with a busy timeout.
    out = tmp_path / "out"
    errors: list[BaseException] = []
    reads = {"n": 0}
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        stop = threading.Event()

        def reader() -> None:
            while not stop.is_set() and reads["n"] < 200:
                try:
                    assert read_status(out) is not None
                    reads["n"] += 1
                except BaseException as exc:
                    errors.append(exc)
                    return

        thread = threading.Thread(target=reader)
        thread.start()
        for i in range(60):
            write(docs / "churn" / f"n{i % 15}.md", page(f"Pilot roles {i}"))
            if i % 10 == 9:
                w.catch_up(30)
        w.catch_up(30)
        wait_for(lambda: reads["n"] >= 200 or errors, timeout=60)
        stop.set()
        thread.join(10)
    assert not errors, errors[0]
    assert reads["n"] >= 200
    fresh_equal(docs, out, tmp_path)


@pytest.mark.timeout(60)
def test_a_store_cut_to_half_its_size_is_rebuilt_by_reconcile(docs: Path, tmp_path: Path) -> None:
    # reliability scenario "corrupt state database", the truncation variant (garbage is covered in test_daemon_build).
    out = tmp_path / "out"
    reconcile(docs, out)
    store = out / "state.sqlite3"
    for side in ("-wal", "-shm"):
        Path(str(store) + side).unlink(missing_ok=True)
    data = store.read_bytes()
    store.write_bytes(data[: len(data) // 2])
    write(docs / "area1" / "page1.md", page("Flight logs", "Edited while the store was damaged."))
    assert run_build(docs, out, Settings()) == 0
    fresh_equal(docs, out, tmp_path)
    assert read_status(out).counters.get("rebuilt_state") == 1  # type: ignore[union-attr]
