"""Watching a real folder: editor saves, folder operations, watcher faults, signals.

Every test waits on the `Watcher.catch_up()` cookie barrier (reliability scenario "catch-up barrier") or on a subprocess's
output with a deadline, never on a fixed sleep.
"""

from __future__ import annotations

import logging
import os
import shutil
import signal
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

from segment.daemon import Watcher, read_status, reconcile
from segment.daemon.events import EnqueueHandler
from segment.settings import Settings, load_settings
from tests.daemon_helpers import (
    assert_feed_matches,
    chunk_files,
    feed,
    page,
    sections_page,
    tree_of,
    wait_for,
    write,
)

QUIET_MS = 50


@pytest.fixture
def docs(tmp_path: Path) -> Path:
    root = tmp_path / "docs"
    tree_of(6, root)
    return root


@pytest.fixture
def watcher(docs: Path, tmp_path: Path) -> Iterator[Watcher]:
    with Watcher(docs, tmp_path / "out", Settings(), quiet_ms=QUIET_MS) as w:
        yield w


def assert_matches_fresh_build(src: Path, out: Path, tmp_path: Path) -> None:
    fresh = tmp_path / f"fresh-{time.monotonic_ns()}"
    reconcile(src, fresh, full=True)
    assert chunk_files(out) == chunk_files(fresh)
    assert_feed_matches(out)


def test_sync_reflects_every_write_made_before_it(watcher: Watcher, docs: Path, tmp_path: Path) -> None:
    # reliability scenario "catch-up barrier" meta-test: 100 writes, one catch_up(), all reflected, no sleep.
    for i in range(100):
        write(docs / "bulk" / f"note{i}.md", page(f"Pilot roles {i}"))
    watcher.catch_up(30)
    assert sum(1 for name in chunk_files(tmp_path / "out") if name.startswith("bulk/")) == 100


@pytest.mark.parametrize(
    "temp", ["doc.md.tmp123", ".doc.md.swp", ".goutputstream-AB12", "doc.md~", ".#doc.md"]
)
def test_an_atomic_save_through_a_temp_file_is_one_parse_of_the_page(
    watcher: Watcher, docs: Path, tmp_path: Path, temp: str
) -> None:
    # reliability scenario "editor saves by rename": the only event for the page is moved(src=temp, dest=page).
    write(docs / "doc.md", page("Battery care", "Charge to 60 percent for storage."))
    watcher.catch_up(10)
    parsed = watcher.report.parsed
    write(docs / temp, page("Battery care", "Charge to 40 percent for storage."))
    os.replace(docs / temp, docs / "doc.md")
    watcher.catch_up(10)
    assert b"40 percent" in chunk_files(tmp_path / "out")["doc.md.jsonl"]
    assert watcher.report.parsed == parsed + 1
    assert not any(name.startswith((".", "doc.md~")) for name in chunk_files(tmp_path / "out"))


def test_a_vim_style_save_of_unchanged_text_announces_nothing(
    watcher: Watcher, docs: Path, tmp_path: Path
) -> None:
    # reliability scenario "vim's save sequence": 4913 probe, rename to a backup, new file, backup removed.
    text = page("Flight logs", "Export the log after each flight.")
    write(docs / "doc.md", text)
    watcher.catch_up(10)
    seq = feed(tmp_path / "out")[-1]["seq"]
    write(docs / "4913", "")
    (docs / "4913").unlink()
    os.rename(docs / "doc.md", docs / "doc.md~")
    write(docs / "doc.md", text)
    (docs / "doc.md~").unlink()
    watcher.catch_up(10)
    assert [e for e in feed(tmp_path / "out") if e["seq"] > seq] == []
    assert "doc.md.jsonl" in chunk_files(tmp_path / "out")


def test_repeated_saves_are_coalesced_and_identical_bytes_parse_nothing(
    watcher: Watcher, docs: Path, tmp_path: Path
) -> None:
    # reliability scenario "duplicate events": identical rewrites: no new chunk ids; rapid versions: the last one wins.
    target = docs / "area0" / "page0.md"
    before = chunk_files(tmp_path / "out")
    parsed = watcher.report.parsed
    data = target.read_bytes()
    for _ in range(50):
        target.write_bytes(data)
    watcher.catch_up(10)
    assert chunk_files(tmp_path / "out") == before
    assert watcher.report.parsed - parsed <= 1
    for i in range(50):
        write(target, page("Firmware updates", f"Version {i} of the flashing guide."))
    watcher.catch_up(10)
    assert b"Version 49 of" in chunk_files(tmp_path / "out")["area0/page0.md.jsonl"]
    assert watcher.report.parsed - parsed < 25


def test_folder_trees_made_copied_moved_and_removed_converge(
    watcher: Watcher, docs: Path, tmp_path: Path
) -> None:
    # reliability scenario "folder trees moved in and out": mkdir -p + files, copytree, move in from outside, move within, move out.
    deep = docs / "a" / "b" / "c" / "d"
    deep.mkdir(parents=True)
    for i in range(50):
        write(deep / f"f{i}.md", page(f"Spare parts {i}"))
    shutil.copytree(docs / "a", docs / "copy")
    outside = tmp_path / "incoming"
    tree_of(5, outside)
    os.rename(outside, docs / "moved-in")
    write(docs / "moved-in" / "area0" / "late.md", page("Late page"))
    os.rename(docs / "area1", docs / "a" / "renamed")
    os.rename(docs / "area2", tmp_path / "moved-out")
    shutil.rmtree(docs / "copy" / "b" / "c")
    watcher.catch_up(30)
    assert_matches_fresh_build(docs, tmp_path / "out", tmp_path)


def test_a_dead_observer_thread_is_restarted_and_nothing_is_missed(
    watcher: Watcher, docs: Path, tmp_path: Path
) -> None:
    # reliability scenario "watcher thread died": detected by the supervisor, restarted, then a full reconcile.
    assert watcher.loop is not None
    watcher.loop.observer.stop()
    watcher.loop.observer.join(5)
    write(docs / "while-deaf.md", page("Geofences", "Draw the no-fly zone first."))
    watcher.catch_up(10)  # the supervisor's full reconcile releases the barrier
    assert "while-deaf.md.jsonl" in chunk_files(tmp_path / "out")
    assert watcher.loop.observer_restarts == 1
    write(docs / "after.md", page("Pilot roles"))
    watcher.catch_up(10)
    assert "after.md.jsonl" in chunk_files(tmp_path / "out")
    assert read_status(tmp_path / "out").counters["observer_restarts"] == 1  # type: ignore[union-attr]


def test_a_queue_overflow_leads_to_a_full_reconcile(watcher: Watcher, docs: Path, tmp_path: Path) -> None:
    # reliability scenario "inotify queue overflow": watchdog only logs the overflow (then rebuilds its watches). Events are
    # lost here by unscheduling the watch; the log line has to bring the output back.
    assert watcher.loop is not None
    watcher.loop.observer.unschedule_all()
    write(docs / "lost.md", page("Battery care", "This event never arrives."))
    (docs / "area0" / "page0.md").unlink()
    logging.getLogger("watchdog.observers.inotify_c").warning(
        "Inotify queue overflowed; filesystem events were lost"
    )
    watcher.loop.observer.schedule(EnqueueHandler(watcher.loop.events), str(docs), recursive=True)
    watcher.catch_up(10)
    assert "lost.md.jsonl" in chunk_files(tmp_path / "out")
    assert "area0/page0.md.jsonl" not in chunk_files(tmp_path / "out")
    watcher.catch_up(10)
    assert read_status(tmp_path / "out").counters["overflow_rescans"] == 1  # type: ignore[union-attr]


def test_output_inside_the_watched_folder_causes_no_feedback_loop(docs: Path, tmp_path: Path) -> None:
    # reliability scenario "output inside the source": our own writes under SRC must not trigger more work.
    with Watcher(docs, docs / "_out", Settings(), quiet_ms=QUIET_MS) as w:
        write(docs / "new.md", page("Geofences"))
        w.catch_up(10)
        parsed, scanned = w.report.parsed, w.report.scanned
        w.catch_up(10)
        w.catch_up(10)
        assert (w.report.parsed, w.report.scanned) == (parsed, scanned)
    assert not any(name.startswith("_out") for name in chunk_files(docs / "_out"))


# -- the `segment watch` process ---------------------------------------------------------------


def start_watch(src: Path, out: Path, **env: str) -> subprocess.Popen[str]:
    environ = {k: v for k, v in os.environ.items() if not k.startswith("DOCSEGMENT_")}
    environ.update(env)
    return subprocess.Popen(
        [sys.executable, "-m", "segment", "watch", str(src), "-o", str(out), "--quiet-ms", "50"],
        env=environ,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )


def wait_for_line(proc: subprocess.Popen[str], needle: str, timeout: float = 30.0) -> str:
    assert proc.stderr is not None
    deadline = time.monotonic() + timeout
    seen = []
    while time.monotonic() < deadline:
        line = proc.stderr.readline()
        if not line:
            break
        seen.append(line)
        if needle in line:
            return line
    proc.kill()
    raise AssertionError(f"{needle!r} not seen in: {''.join(seen)}")


def test_sigint_finishes_the_batch_and_exits_0_and_a_second_watcher_is_refused(
    docs: Path, tmp_path: Path
) -> None:
    out = tmp_path / "out"
    proc = start_watch(docs, out)
    try:
        wait_for_line(proc, "watching")
        write(docs / "fresh.md", page("Firmware updates"))
        wait_for(lambda: (out / "chunks" / "fresh.md.jsonl").exists())
        # reliability scenario "two writers": a second daemon on the same output exits at once with a clear error.
        second = start_watch(docs, out)
        _, err = second.communicate(timeout=20)
        assert second.returncode == 1 and "another docsegment build or watch" in err
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=30)
        assert proc.returncode == 0, err
    finally:
        if proc.poll() is None:
            proc.kill()


def test_a_second_ctrl_c_aborts_a_stuck_batch_with_130(docs: Path, tmp_path: Path) -> None:
    (docs / "segment.toml").write_text("timeout_s = 60\n")
    out = tmp_path / "out"
    proc = start_watch(docs, out, DOCSEGMENT_TEST_HOOKS="1")
    try:
        wait_for_line(proc, "watching")
        write(docs / "stuck.hang.md", page("Never parsed"))
        time_limit = time.monotonic() + 20
        # wait until the batch with the hanging parse has started (its worker is busy)
        wait_for(lambda: _children_busy(proc.pid) or time.monotonic() > time_limit)
        proc.send_signal(signal.SIGINT)
        wait_for_line(proc, "stopping after the current batch")
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=30)
        assert proc.returncode == 130, err
    finally:
        if proc.poll() is None:
            proc.kill()


def _children_busy(pid: int) -> bool:
    """True when some descendant of `pid` is running (a worker spinning on the hang file)."""
    kids: dict[int, list[tuple[str, int]]] = {}
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            text = stat.read_text()
        except OSError:
            continue
        fields = text[text.rindex(")") + 2 :].split()  # state, ppid, ... after "pid (comm)"
        kids.setdefault(int(fields[1]), []).append((fields[0], int(stat.parent.name)))
    stack, running = [pid], False
    while stack:
        for state, child in kids.get(stack.pop(), []):
            running |= state == "R"
            stack.append(child)
    return running


def test_a_vanished_source_folder_pauses_the_watcher_and_keeps_the_output(docs: Path, tmp_path: Path) -> None:
    # reliability scenario "source root gone or empty": a missing root is not "every file was deleted".
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        before = chunk_files(out)
        os.rename(docs, tmp_path / "away")
        assert w.loop is not None
        wait_for(lambda: w.loop.degraded == "root_missing")  # type: ignore[union-attr]
        assert read_status(out).degraded == "root_missing"  # type: ignore[union-attr]
        assert chunk_files(out) == before
        os.rename(tmp_path / "away", docs)
        write(docs / "after-return.md", page("Pilot roles"))
        wait_for(lambda: w.loop.degraded == "")  # type: ignore[union-attr]
        w.catch_up(10)
    assert_matches_fresh_build(docs, out, tmp_path)


def test_a_write_error_while_watching_is_retried_by_a_full_reconcile(
    watcher: Watcher, docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "disk full": ENOSPC while writing: old output kept, state `write_error`, then recovery.
    import errno

    import segment.daemon.recording
    import segment.daemon.watcher

    monkeypatch.setattr(segment.daemon.watcher, "WRITE_RETRY_S", 0.2)
    real, calls = segment.daemon.recording.write_if_changed, []

    def disk_full(path: Path, data: bytes) -> None:
        calls.append(path)
        if len(calls) == 1:
            raise OSError(errno.ENOSPC, "No space left on device")
        real(path, data)

    monkeypatch.setattr(segment.daemon.recording, "write_if_changed", disk_full)
    write(docs / "area0" / "page0.md", page("Spare parts", "Keep four spare rotors."))
    watcher.catch_up(20)  # released by the retry's full reconcile
    assert b"four spare rotors" in chunk_files(tmp_path / "out")["area0/page0.md.jsonl"]
    assert watcher.loop is not None and watcher.loop.degraded == ""
    assert_feed_matches(tmp_path / "out")


def test_too_many_folders_for_inotify_fall_back_to_polling_and_say_so(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "watch limit reached", portable variant: the watch budget check says "too many folders".
    import segment.daemon.watcher

    monkeypatch.setattr(segment.daemon.watcher, "watch_limit_exceeded", lambda src: True)
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        assert read_status(out).degraded == "watch_limit"  # type: ignore[union-attr]
        write(docs / "polled.md", page("Geofences", "Seen by polling."))
        w.catch_up(20)
        assert "polled.md.jsonl" in chunk_files(out)


def test_a_network_file_system_is_watched_by_polling(
    docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "network file system": inotify does not see other hosts' writes on NFS/CIFS; poll instead.
    from watchdog.observers.polling import PollingObserver

    import segment.daemon.events

    assert segment.daemon.events.fs_type(tmp_path) != ""  # read from /proc/self/mountinfo
    monkeypatch.setattr(segment.daemon.events, "fs_type", lambda path: "nfs4")
    out = tmp_path / "out"
    with Watcher(docs, out, Settings(), quiet_ms=QUIET_MS) as w:
        assert isinstance(w.loop.observer, PollingObserver)  # type: ignore[union-attr]
        assert read_status(out).degraded == "network_fs"  # type: ignore[union-attr]
        tmp = docs / ".page.md.tmp9"
        write(tmp, page("Flight logs", "Saved over the network."))
        os.replace(tmp, docs / "area0" / "page0.md")
        w.catch_up(20)
        assert b"over the network" in chunk_files(out)["area0/page0.md.jsonl"]


def test_a_dead_emitter_thread_is_noticed_too(watcher: Watcher, docs: Path, tmp_path: Path) -> None:
    # reliability scenario "watcher thread died": the dispatcher can live on while the thread reading inotify is gone.
    assert watcher.loop is not None
    emitter = next(iter(watcher.loop.observer.emitters))
    emitter.stop()
    emitter.join(5)
    write(docs / "unheard.md", page("Spare parts", "Written while nobody listened."))
    watcher.catch_up(10)
    assert "unheard.md.jsonl" in chunk_files(tmp_path / "out")
    assert watcher.loop.observer_restarts == 1


def test_an_edited_segment_toml_re_segments_what_it_affects(tmp_path: Path) -> None:
    # The settings file changes while watching: chunks follow the new budget (as a fresh build
    # with that file gives), and a newly excluded folder leaves the output.
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "handbook.md", sections_page(12))
    write(src / "drafts" / "idea.md", page("Geofences", "A draft about geofences."))
    write(src / "segment.toml", "max_tokens = 512\n")
    with Watcher(src, out, load_settings(src), quiet_ms=50, reload=lambda: load_settings(src)) as w:
        before = chunk_files(out)["handbook.md.jsonl"]
        write(src / "segment.toml", 'max_tokens = 64\nmin_tokens = 0\nexclude = ["drafts/"]\n')
        w.catch_up(60)
        assert chunk_files(out)["handbook.md.jsonl"] != before
    fresh = tmp_path / "fresh"
    reconcile(src, fresh, load_settings(src))
    assert chunk_files(out) == chunk_files(fresh)
    assert "drafts/idea.md.jsonl" not in chunk_files(out)
    assert_feed_matches(out)


def test_an_edited_segment_toml_without_a_way_to_reload_is_logged(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "guide.md", page("Battery care"))
    with Watcher(src, out, Settings(), quiet_ms=50) as w:
        caplog.clear()
        with caplog.at_level(logging.WARNING, logger="segment.daemon"):
            write(src / "segment.toml", "max_tokens = 64\n")
            w.catch_up(60)
    assert any(
        "segment.toml changed" in r.getMessage() and "restart" in r.getMessage() for r in caplog.records
    )


def test_a_bad_segment_toml_keeps_the_previous_settings(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "guide.md", page("Battery care"))
    with Watcher(src, out, Settings(), quiet_ms=50, reload=lambda: load_settings(src)) as w:
        before = chunk_files(out)
        with caplog.at_level(logging.ERROR, logger="segment.daemon"):
            write(src / "segment.toml", "max_tokens = 'many'\n")
            w.catch_up(60)
        assert chunk_files(out) == before
    assert any("keeping the previous settings" in r.getMessage() for r in caplog.records)
