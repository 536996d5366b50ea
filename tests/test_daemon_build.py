"""Incremental builds: what is re-segmented, what the feed says, what stays on disk."""

from __future__ import annotations

import json
import logging
import os
from pathlib import Path

import pytest

from segment.cli import run_build, run_status
from segment.daemon import OutputBusy, Reconciler, read_status, reconcile, replay
from segment.settings import Settings
from tests.daemon_helpers import (
    assert_feed_matches,
    chunk_files,
    current_ids,
    feed,
    page,
    sections_page,
    tree_of,
    write,
)


@pytest.fixture
def src(tmp_path: Path) -> Path:
    root = tmp_path / "docs"
    tree_of(6, root)
    return root


def test_first_build_writes_one_chunk_file_per_page_and_announces_every_id(src: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    report = reconcile(src, out)
    assert report.parsed == 6 and not report.failed
    assert sorted(chunk_files(out)) == sorted(f"area{i % 3}/page{i}.md.jsonl" for i in range(6))
    # DESIGN.md section 4: `source` is the POSIX path relative to the source root.
    assert set(current_ids(out).values()) == {f"area{i % 3}/page{i}.md" for i in range(6)}
    assert all(e["op"] == "upsert" for e in feed(out))
    assert_feed_matches(out)
    assert (
        os.getpid() not in report.parse_pids
    )  # reliability scenario "parsing off the daemon's threads": parsing runs in other processes


def test_a_second_build_of_an_unchanged_tree_re_segments_nothing_and_says_so(
    src: Path, tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    out = tmp_path / "out"
    assert run_build(src, out, Settings()) == 0
    before, seq = chunk_files(out), read_status(out).last_seq  # type: ignore[union-attr]
    caplog.set_level(logging.INFO, logger="segment.daemon")
    assert run_build(src, out, Settings()) == 0
    assert "re-segmented 0 files" in caplog.text
    assert chunk_files(out) == before
    assert read_status(out).last_seq == seq  # type: ignore[union-attr]


def test_touching_every_file_re_segments_nothing(src: Path, tmp_path: Path) -> None:
    # Idempotence: `touch` every file: 0 re-parses and 0 changed chunks.
    out = tmp_path / "out"
    reconcile(src, out)
    for path in src.rglob("*.md"):
        os.utime(path, ns=(path.stat().st_atime_ns, path.stat().st_mtime_ns + 5_000_000_000))
    report = reconcile(src, out)
    assert report.parsed == 0 and report.added == report.removed == 0


def test_a_same_size_rewrite_with_the_old_mtime_restored_is_caught(src: Path, tmp_path: Path) -> None:
    # reliability scenario "racy same-size rewrite" (git t0010-racy-git.sh, done with os.utime as libgit2/JGit do).
    out = tmp_path / "out"
    target = src / "area0" / "page0.md"
    write(target, page("Spare parts", "Order spare rotors in pairs."))
    reconcile(src, out)
    st = target.stat()
    write(target, page("Spare parts", "Order spare motors in packs."))
    os.utime(target, ns=(st.st_atime_ns, st.st_mtime_ns))
    assert target.stat().st_size == st.st_size and target.stat().st_mtime_ns == st.st_mtime_ns
    report = reconcile(src, out)
    assert report.parsed == 1
    assert b"spare motors in packs" in chunk_files(out)["area0/page0.md.jsonl"]


def test_a_deleted_page_gets_a_delete_per_id_and_loses_its_chunk_file(src: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    reconcile(src, out)
    gone = [i for i, s in current_ids(out).items() if s == "area1/page1.md"]
    (src / "area1" / "page1.md").unlink()
    (src / "area1" / "page4.md").unlink()
    report = reconcile(src, out)
    assert report.deleted == 2
    deletes = [e["id"] for e in feed(out) if e["op"] == "delete" and e["source"] == "area1/page1.md"]
    assert sorted(deletes) == sorted(gone)
    assert not (out / "chunks" / "area1").exists()  # emptied folders go too
    assert_feed_matches(out)


def test_an_edit_announces_only_the_ids_that_changed(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "handbook.md", sections_page(40))
    reconcile(src, out, Settings(max_tokens=64, min_tokens=0))
    old = {i: r for i, r in _records(out, "handbook.md").items()}
    seq = read_status(out).last_seq  # type: ignore[union-attr]
    write(src / "handbook.md", sections_page(40, edited=17))
    reconcile(src, out, Settings(max_tokens=64, min_tokens=0))
    new = _records(out, "handbook.md")
    entries = [e for e in feed(out) if e["seq"] > seq]
    deleted = {e["id"] for e in entries if e["op"] == "delete"}
    upserted = {e["id"] for e in entries if e["op"] == "upsert"}
    assert len(old) >= 40
    # Only chunks holding the edited paragraph change id: DESIGN.md section 4 (id = hash of
    # source, breadcrumb and text, never position).
    assert deleted and deleted == set(old) - set(new)
    assert upserted and upserted == set(new) - set(old)
    assert all("step 17 of" in old[i]["text"] for i in deleted)
    assert all("second signature" in new[i]["text"] for i in upserted)
    assert len(set(old) & set(new)) == len(old) - len(deleted)


def _records(out: Path, source: str) -> dict[str, dict[str, object]]:
    lines = (out / "chunks" / f"{source}.jsonl").read_text(encoding="utf-8").splitlines()
    return {r["id"]: r for r in map(json.loads, lines)}


def test_a_failing_file_keeps_its_last_good_chunks_and_gets_an_error_entry(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    settings = Settings(max_file_bytes=4000)
    write(src / "ok.md", page("Geofences"))
    write(src / "grows.md", page("Flight logs"))
    assert run_build(src, out, settings) == 0
    good = chunk_files(out)["grows.md.jsonl"]
    write(src / "grows.md", page("Flight logs", "Log every flight. " * 400))  # over the byte cap
    assert run_build(src, out, settings) == 1
    assert chunk_files(out)["grows.md.jsonl"] == good
    errors = [e for e in feed(out) if e["op"] == "error"]
    assert [(e["source"], e["error"].split(":")[0]) for e in errors] == [("grows.md", "resource_limit")]
    assert "grows.md: resource_limit" in capsys.readouterr().err
    assert read_status(out).failed[0][:2] == ("grows.md", "resource_limit")  # type: ignore[union-attr]
    assert_feed_matches(out)
    write(src / "grows.md", page("Flight logs", "Log every flight."))
    assert run_build(src, out, settings) == 0
    assert read_status(out).failed == []  # type: ignore[union-attr]


def test_changing_settings_that_shape_chunks_re_segments_every_file(src: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    reconcile(src, out)
    assert reconcile(src, out, Settings(max_tokens=300)).parsed == 6
    assert reconcile(src, out, Settings(max_tokens=300, timeout_s=30)).parsed == 0  # limits don't


def test_full_rebuild_re_segments_everything_but_announces_nothing_new(src: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    reconcile(src, out)
    before = chunk_files(out)
    report = reconcile(src, out, full=True)
    assert report.parsed == 6 and report.added == report.removed == 0
    assert chunk_files(out) == before


def test_scope_excludes_secrets_editor_litter_our_output_and_links_out_of_the_root(tmp_path: Path) -> None:
    src = tmp_path / "docs"
    write(src / "guide.md", page("Pilot roles"))
    write(src / "node_modules" / "pkg" / "readme.md", page("Vendored"))  # Settings.exclude default
    write(src / "drafts" / "wip.md", page("Draft"))
    write(src / ".#guide.md", page("Emacs lock"))
    write(src / "guide.md~", page("Backup"))
    write(tmp_path / "outside" / "secret.md", page("Outside"))
    (src / "link-out.md").symlink_to(tmp_path / "outside" / "secret.md")
    (src / "loop").symlink_to(src)  # a folder symlink loop (reliability scenario "symlink loops and escapes")
    (src / "link-in.md").symlink_to(src / "guide.md")
    out = src / "_out"  # OUT inside SRC is never read back ("output inside the source")
    settings = Settings(exclude=Settings().exclude + ("drafts/",))
    reconcile(src, out, settings)
    assert sorted(chunk_files(out)) == ["guide.md.jsonl", "link-in.md.jsonl"]
    assert reconcile(src, out, settings).scanned == 2


def test_include_patterns_limit_the_tree(src: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    reconcile(src, out, Settings(include=("area1/",)))
    assert sorted(chunk_files(out)) == ["area1/page1.md.jsonl", "area1/page4.md.jsonl"]


def test_a_second_writer_is_refused_with_a_clear_message(
    src: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    with Reconciler(src, out, Settings()):
        with pytest.raises(OutputBusy, match="another docsegment build or watch"):
            Reconciler(src, out, Settings())
        assert run_build(src, out, Settings()) == 1
    assert f"pid {os.getpid()}" in capsys.readouterr().err


def test_a_corrupt_store_is_rebuilt_by_reconcile_and_the_feed_stays_consistent(
    src: Path, tmp_path: Path
) -> None:
    out, fresh = tmp_path / "out", tmp_path / "fresh"
    reconcile(src, out)
    (src / "area2" / "page2.md").unlink()
    write(src / "area0" / "page3.md", page("Firmware updates", "Flash the new image."))
    (out / "state.sqlite3").write_bytes(b"\x00garbage" * 512)
    reconcile(src, out)
    reconcile(src, fresh, full=True)
    assert chunk_files(out) == chunk_files(fresh)
    assert_feed_matches(out)
    assert read_status(out).counters["rebuilt_state"] == 1  # type: ignore[union-attr]


def test_status_prints_counts_failures_and_seq(
    src: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    assert run_status(out) == 1
    assert "no docsegment state" in capsys.readouterr().err
    reconcile(src, out)
    assert run_status(out) == 0
    text = capsys.readouterr().out
    assert "files:     6" in text and f"last seq:  {len(replay(out))}" in text
    assert run_status(out, as_json=True) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["files"] == 6 and data["failed"] == [] and data["degraded"] is None
    assert data["chunks"] == len(current_ids(out))


def test_odd_file_names_round_trip_and_every_feed_line_is_strict_utf8(tmp_path: Path) -> None:
    # reliability scenario "undecodable file names": undecodable bytes, a newline, NFD forms and a 255-byte name.
    src, out = tmp_path / "docs", tmp_path / "out"
    src.mkdir()
    names = [b"bad\xff.md", b"two\nlines.md", "cafe\u0301.md".encode(), b"n" * 252 + b".md"]
    for i, name in enumerate(names):
        with open(os.path.join(os.fsencode(src), name), "w", encoding="utf-8") as fh:
            fh.write(page(f"Odd name {i}"))
    reconcile(src, out)
    assert reconcile(src, out).parsed == 0
    for raw in (out / "changes.jsonl").read_bytes().splitlines():
        json.loads(raw.decode("utf-8", "strict"))
    sources = set(current_ids(out).values())
    assert "bad\ufffd.md" in sources and "two\nlines.md" in sources and "cafe\u0301.md" in sources
    os.unlink(os.path.join(os.fsencode(src), names[0]))
    reconcile(src, out)
    assert "bad\ufffd.md" not in set(current_ids(out).values())
    assert_feed_matches(out)


def test_a_stop_request_commits_what_is_done_and_the_next_pass_does_the_rest(
    src: Path, tmp_path: Path
) -> None:
    out = tmp_path / "out"
    with Reconciler(src, out, Settings()) as reconciler:
        seen: list[int] = []
        reconciler.stop_requested = lambda: len(seen) > 0
        report = reconciler.reconcile(progress=lambda done, total: seen.append(done))
    assert report.interrupted > 0 and report.parsed == 6 - report.interrupted
    assert "left for the next run" in report.line("build")
    assert_feed_matches(out)
    assert reconcile(src, out).parsed == report.interrupted


def test_a_failed_fsync_commits_nothing_keeps_old_chunks_and_the_next_build_converges(
    src: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # reliability scenario "failed fsync": never retry a failed fsync and mark the output committed.
    import errno

    out = tmp_path / "out"
    reconcile(src, out)
    before, seq = chunk_files(out), read_status(out).last_seq  # type: ignore[union-attr]
    write(src / "area0" / "page0.md", page("Battery care", "Rotate packs every month."))
    real_fsync, calls = os.fsync, []

    def failing_fsync(fd: int) -> None:
        calls.append(fd)
        if len(calls) == 1:
            raise OSError(errno.EIO, "Input/output error")
        real_fsync(fd)

    monkeypatch.setattr(os, "fsync", failing_fsync)
    assert run_build(src, out, Settings()) == 1
    assert "Input/output error" in capsys.readouterr().err
    monkeypatch.setattr(os, "fsync", real_fsync)
    assert chunk_files(out) == before  # the old chunk file is intact, no temp file left
    assert not list(out.rglob("*.tmp"))
    assert read_status(out).last_seq == seq  # type: ignore[union-attr]
    assert run_build(src, out, Settings()) == 0
    assert b"Rotate packs" in chunk_files(out)["area0/page0.md.jsonl"]
    assert_feed_matches(out)


def test_a_feed_write_that_fails_halfway_is_undone_without_a_restart(
    src: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "disk full" on the feed: half an append reached the disk, then the disk filled up.
    import errno

    out = tmp_path / "out"
    with Reconciler(src, out, Settings()) as reconciler:
        reconciler.reconcile()
        write(src / "area0" / "page0.md", page("Geofences", "Redraw the zone after each survey."))
        real_write, calls = os.write, []

        def half_then_full(fd: int, data: bytes) -> int:
            if fd != -1 and bytes(data[:8]).startswith(b'{"seq"') and not calls:
                calls.append(fd)
                real_write(fd, bytes(data[: len(data) // 2]))
                raise OSError(errno.ENOSPC, "No space left on device")
            return real_write(fd, data)

        monkeypatch.setattr(os, "write", half_then_full)
        with pytest.raises(OSError, match="No space left"):
            reconciler.reconcile()
        monkeypatch.setattr(os, "write", real_write)
        reconciler.reconcile()  # the same process carries on
    assert_feed_matches(out)
    assert b"Redraw the zone" in chunk_files(out)["area0/page0.md.jsonl"]


def test_a_file_chunked_with_a_note_shows_it_in_status(tmp_path: Path) -> None:
    # Document.warnings reach the store and `segment status`: here bytes that are not UTF-8
    # (reliability scenario "text encodings"), decoded as Windows-1252 and kept.
    from segment.daemon.store import read_status

    src, out = tmp_path / "docs", tmp_path / "out"
    src.mkdir()
    (src / "legacy.md").write_bytes(b"# Legacy\n\nThe pilot\x92s log.\n")
    assert run_build(src, out, Settings()) == 0
    status = read_status(out)
    assert status is not None and status.failed == []
    assert status.noted == [("legacy.md", "not valid UTF-8: decoded as Windows-1252")]


def test_files_no_adapter_reads_are_counted_by_suffix(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A folder of reStructuredText beside the Markdown: nothing is chunked from it, and the build
    # summary and `segment status` say so, so nobody wonders why it produced nothing.
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "guide.md", page("Battery care"))
    write(src / "api" / "queue.adoc", "Queue\n=====\n\nA first-in, first-out queue.\n")
    write(src / "api" / "stack.adoc", "Stack\n=====\n\nLast in, first out.\n")
    write(src / "notes.docx", "plain text\n")
    write(src / "segment.toml", "max_tokens = 256\n")  # our own settings file: not counted
    write(src / "guide.md~", "editor backup\n")  # editor litter: not counted
    report = reconcile(src, out)
    assert report.not_read == {".adoc": 2, ".docx": 1}
    assert report.line("build").endswith("; not read: 2 .adoc, 1 .docx")
    capsys.readouterr()
    assert run_status(out) == 0
    text = capsys.readouterr().out
    assert "not read:  3 (.adoc 2, .docx 1)" in text and "api/queue.adoc" not in text
    assert run_status(out, verbose=True) == 0
    listed = capsys.readouterr().out
    assert "  api/queue.adoc\n  api/stack.adoc\n  notes.docx\n" in listed
    assert run_status(out, as_json=True) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["not_read"] == {".adoc": ["api/queue.adoc", "api/stack.adoc"], ".docx": ["notes.docx"]}


def test_files_go_to_the_workers_largest_first(tmp_path: Path) -> None:
    # Longest-processing-time order (common practice in scheduling): a long parse starts early
    # instead of ending the pass alone on one worker while the others wait.
    from collections.abc import Callable, Generator, Iterable

    from segment.daemon.executor import Executor, local_executor
    from segment.daemon.tasks import Outcome, Task

    src = tmp_path / "docs"
    for name, words in (
        ("small.md", 10),
        ("large.md", 3000),
        ("medium.md", 300),
        ("tie-b.md", 50),
        ("tie-a.md", 50),
    ):
        write(src / name, "# Page\n\n" + "word " * words + "\n")
    order: list[str] = []

    class Recording:
        def __init__(self, inner: Executor) -> None:
            self.inner = inner

        def outcomes(
            self, tasks: Iterable[Task], stop: Callable[[], bool] | None = None
        ) -> Generator[Outcome, None, None]:
            tasks = list(tasks)
            order.extend(task.path for task in tasks)
            yield from self.inner.outcomes(tasks, stop)

        def close(self) -> None:
            self.inner.close()

    with Reconciler(
        src, tmp_path / "out", Settings(), executor=lambda s, j: Recording(local_executor(s, j))
    ) as r:
        r.reconcile()
    assert order == ["large.md", "medium.md", "tie-a.md", "tie-b.md", "small.md"]
