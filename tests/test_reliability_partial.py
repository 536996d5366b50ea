"""Half-written files (reliability scenario "file still being written") and an emptied source root ("source root gone or empty").

"file still being written": a PDF arrives in 10 pieces through one open file, as a slow copy or download would write it.
A PDF cut short often opens "fine" after MuPDF repairs it, with part of its text ("bad or truncated PDF"), so a
parse of a half-written copy must never reach the output. A spy thread reads the PDF's chunk
file throughout the copy and records every version it sees.

"source root gone or empty": a root that is emptied at once (an unmounted share leaves an empty mount point) must not
read as "every document was deleted".
"""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path

import pytest

from segment.cli import run_build
from segment.daemon import Watcher, read_status, reconcile
from segment.settings import Settings
from tests import hostile
from tests.daemon_helpers import chunk_files, feed, tree_of, wait_for

PIECES = 10


def copy_slowly(path: Path, data: bytes, pause_s: float) -> None:
    """Write `data` in PIECES parts through one file descriptor, `pause_s` apart (the workload:
    a slow copy; not a wait for the system under test)."""
    step = len(data) // PIECES + 1
    pause = threading.Event()
    with open(path, "wb") as fh:
        for k in range(0, len(data), step):
            fh.write(data[k : k + step])
            fh.flush()
            pause.wait(pause_s)


def spy(path: Path, stop: threading.Event, seen: list[bytes]) -> None:
    while not stop.is_set():
        try:
            data = path.read_bytes()
        except OSError:
            data = b""
        if data and (not seen or seen[-1] != data):
            seen.append(data)
        stop.wait(0.005)


def run_copy(tmp_path: Path, quiet_ms: int, pause_s: float) -> tuple[list[bytes], bytes]:
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(3, src)
    data = hostile.good_pdf()
    target = out / "chunks" / "incoming.pdf.jsonl"
    with Watcher(src, out, Settings(), quiet_ms=quiet_ms) as w:
        stop, seen = threading.Event(), []  # type: ignore[var-annotated]
        watcher = threading.Thread(target=spy, args=(target, stop, seen))
        watcher.start()
        try:
            copy_slowly(src / "incoming.pdf", data, pause_s)
            w.catch_up(60)
            # The spy must outlive the last write of the chunk file (a barrier released a moment
            # before the writer thread's replace would otherwise end the spy too early).
            deadline = time.monotonic() + 30
            while not target.exists() and time.monotonic() < deadline:
                stop.wait(0.01)
            stop.wait(0.05)
        finally:
            stop.set()
            watcher.join(10)
    oracle = tmp_path / "oracle"
    reconcile(src, oracle)
    return seen, chunk_files(oracle)["incoming.pdf.jsonl"]


@pytest.mark.timeout(120)
def test_a_copy_faster_than_the_quiet_period_is_parsed_once_whole(tmp_path: Path) -> None:
    # Pieces 50 ms apart under a 500 ms quiet period (the "file still being written" recipe: 100 ms under 200 ms; the
    # wider margin keeps a loaded CI machine from stretching a pause past the quiet period).
    seen, final = run_copy(tmp_path, quiet_ms=500, pause_s=0.05)
    assert seen and seen[-1] == final
    assert all(version == final for version in seen), f"{len(seen)} versions seen, partial ones emitted"


@pytest.mark.timeout(120)
def test_a_copy_slower_than_the_quiet_period_never_emits_a_partial_version(tmp_path: Path) -> None:
    seen, final = run_copy(tmp_path, quiet_ms=50, pause_s=0.3)
    assert seen and seen[-1] == final
    assert all(version == final for version in seen), f"{len(seen)} versions seen, partial ones emitted"


@pytest.mark.timeout(120)
def test_a_half_written_pdf_is_pending_in_status_and_retried_within_seconds(tmp_path: Path) -> None:
    # A copy that stopped part way: MuPDF repairs the cut PDF, so it parses, but while it is
    # young the watcher holds it back. It is listed as pending with the reason, and retried by
    # itself within seconds once it stops changing (no further event, no ten-minute rescan).
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(2, src)
    data = hostile.good_pdf()
    with Watcher(src, out, Settings(), quiet_ms=50) as w:
        (src / "incoming.pdf").write_bytes(data[: len(data) * 7 // 10])
        w.catch_up(60)
        status = read_status(out)
        assert status is not None
        assert [(s, "copy in progress" in r) for s, r, _ in status.pending] == [("incoming.pdf", True)]
        assert "incoming.pdf.jsonl" not in chunk_files(out)
        assert ("incoming.pdf", status.pending[0][1]) in w.report.held
        wait_for(lambda: "incoming.pdf.jsonl" in chunk_files(out), timeout=60)
        wait_for(lambda: read_status(out).pending == [], timeout=10)  # type: ignore[union-attr]


@pytest.mark.timeout(60)
def test_an_emptied_root_does_not_delete_every_chunk(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # reliability scenario "source root gone or empty": "more than X % of files vanish in one pass" -> keep the outputs. Here all of
    # them: a build of an empty root refuses to delete, and `--full` confirms the deletion.
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(12, src)
    assert run_build(src, out, Settings()) == 0
    before = chunk_files(out)
    for path in sorted(src.rglob("*.md")):
        path.unlink()
    assert run_build(src, out, Settings()) == 1
    assert "nothing was deleted" in capsys.readouterr().err
    assert chunk_files(out) == before
    assert not [e for e in feed(out) if e["op"] == "delete"]
    assert run_build(src, out, Settings(), full=True) == 0  # the user confirms: all documents are gone
    assert chunk_files(out) == {}
    assert len([e for e in feed(out) if e["op"] == "delete"]) == 12


@pytest.mark.timeout(90)
def test_a_root_swapped_for_an_empty_folder_pauses_the_watcher_until_the_files_are_back(
    tmp_path: Path,
) -> None:
    # An unmount leaves an empty mount point: no delete events arrive, the periodic full
    # reconcile finds nothing. The outputs stay, the state says so, and the files coming back
    # (remount) resume the watcher.
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(6, src)
    with Watcher(src, out, Settings(), quiet_ms=50, rescan_s=0.3) as w:
        assert w.loop is not None
        before = chunk_files(out)
        os.rename(src, tmp_path / "unmounted")
        src.mkdir()
        wait_for(lambda: read_status(out).degraded == "root_empty")  # type: ignore[union-attr]
        assert chunk_files(out) == before
        src.rmdir()
        os.rename(tmp_path / "unmounted", src)
        wait_for(lambda: read_status(out).degraded == "")  # type: ignore[union-attr]
        w.catch_up(20)
    assert chunk_files(out) == before
    assert not [e for e in feed(out) if e["op"] == "delete"]
