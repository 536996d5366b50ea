"""The state store: rows round-trip, racy stats are never trusted, a corrupt file is rebuilt."""

from __future__ import annotations

import os
from pathlib import Path

from segment.daemon.store import RACY_WINDOW_NS, FileState, StatSig, Store, read_status

SIG = StatSig(size=10, mtime_ns=1_000_000_000_000, ctime_ns=1_000_000_000_000, ino=7, dev=1)


def row(path: str, **kw: object) -> FileState:
    base = dict(
        path=path,
        source=path,
        sig=SIG,
        hash="h",
        fingerprint="fp",
        ids=["a", "b"],
        recorded_ns=SIG.mtime_ns + 10 * RACY_WINDOW_NS,
    )
    base.update(kw)
    return FileState(**base)  # type: ignore[arg-type]


def test_rows_round_trip_including_undecodable_names(tmp_path: Path) -> None:
    store = Store.open(tmp_path)
    odd = os.fsdecode(
        b"bad\xff.md"
    )  # reliability scenario "undecodable file names": names that are not UTF-8
    with store.transaction():
        store.put(row("docs/a.md"))
        store.put(row(odd, source="bad\ufffd.md"))
    store.close()
    store = Store.open(tmp_path)
    assert store.get("docs/a.md") == row("docs/a.md")
    assert store.get(odd) is not None and store.get(odd).source == "bad\ufffd.md"  # type: ignore[union-attr]
    assert set(store.all()) == {"docs/a.md", odd}
    store.close()


def test_under_selects_a_folder_and_not_its_look_alikes(tmp_path: Path) -> None:
    store = Store.open(tmp_path)
    with store.transaction():
        for p in ("a.md", "a/x.md", "a/b/y.md", "a-b/z.md", "a0.md", "ab.md"):
            store.put(row(p))
    assert set(store.under("a")) == {"a/x.md", "a/b/y.md"}
    assert set(store.under("a/b")) == {"a/b/y.md"}
    assert len(store.under("")) == 6
    store.close()


def test_a_stat_match_is_trusted_only_when_the_mtime_is_older_than_the_record() -> None:
    # git's "racy clean" rule (Documentation/technical/racy-git.txt): an entry whose mtime is not
    # older than the index is compared by content, because a same-size rewrite inside the
    # timestamp granularity keeps size and mtime.
    settled = row("a.md", recorded_ns=SIG.mtime_ns + RACY_WINDOW_NS + 1)
    racy = row("a.md", recorded_ns=SIG.mtime_ns + RACY_WINDOW_NS // 2)
    assert settled.trusts(SIG, "fp")
    assert not racy.trusts(SIG, "fp")
    assert not settled.trusts(SIG, "other-settings")
    moved = StatSig(SIG.size, SIG.mtime_ns, SIG.ctime_ns + 1, SIG.ino, SIG.dev)
    assert not settled.trusts(moved, "fp")  # ctime moves with os.utime, so a restored mtime is caught


def test_counters_and_last_seq_survive_reopen(tmp_path: Path) -> None:
    store = Store.open(tmp_path)
    with store.transaction():
        store.set_meta("last_seq", 41)
        store.bump("overflow_rescans")
    store.close()
    store = Store.open(tmp_path)
    assert store.last_seq == 41
    assert store.meta("overflow_rescans") == "1"
    store.close()


def test_a_corrupt_store_is_moved_aside_and_started_afresh(tmp_path: Path) -> None:
    # reliability scenario "corrupt state database": quick_check at start; the state is re-derivable, so rebuild instead of failing.
    store = Store.open(tmp_path)
    with store.transaction():
        store.put(row("a.md"))
    store.close()
    (tmp_path / "state.sqlite3").write_bytes(b"this is not a database" * 100)
    store = Store.open(tmp_path)
    assert store.rebuilt and store.all() == {}
    assert store.meta("rebuilt_state") == "1"
    store.close()
    assert list(tmp_path.glob("state.sqlite3.corrupt-*"))


def test_status_reads_without_the_writer_and_reports_failures(tmp_path: Path) -> None:
    assert read_status(tmp_path) is None
    store = Store.open(tmp_path)
    with store.transaction():
        store.put(row("a.md"))
        store.put(row("b.md", ids=["c"], status="timeout", error="parse took too long"))
        store.set_meta("last_seq", 3)
    report = read_status(tmp_path)  # while the writer connection is still open
    store.close()
    assert report is not None
    assert (report.files, report.chunks, report.last_seq) == (2, 3, 3)
    assert report.failed == [("b.md", "timeout", "parse took too long")]


def test_a_version_1_store_is_migrated_in_place(tmp_path: Path) -> None:
    # A store written before record digests and the pending table: its rows and counters are
    # kept, the counter once named overflow_recrawls is now overflow_rescans.
    import sqlite3

    conn = sqlite3.connect(tmp_path / "state.sqlite3")
    conn.executescript(
        """
        CREATE TABLE files (path BLOB PRIMARY KEY, source TEXT NOT NULL, size INTEGER NOT NULL,
            mtime_ns INTEGER NOT NULL, ctime_ns INTEGER NOT NULL, ino INTEGER NOT NULL,
            dev INTEGER NOT NULL, hash TEXT NOT NULL, fingerprint TEXT NOT NULL, ids TEXT NOT NULL,
            status TEXT NOT NULL, error TEXT, failures INTEGER NOT NULL DEFAULT 0,
            recorded_ns INTEGER NOT NULL);
        CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
        INSERT INTO meta VALUES ('schema', '1'), ('overflow_recrawls', '3'), ('last_seq', '7');
        INSERT INTO files VALUES (CAST('a.md' AS BLOB), 'a.md', 1, 2, 3, 4, 5, 'h', 'fp', '["x"]',
            'ok', NULL, 0, 6);
        """
    )
    conn.commit()
    conn.close()
    store = Store.open(tmp_path)
    assert not store.rebuilt
    row = store.get("a.md")
    assert row is not None and row.ids == ["x"] and row.digests == []
    assert store.meta("schema") == "2" and store.last_seq == 7
    store.close()
    status = read_status(tmp_path)
    assert status is not None and status.counters.get("overflow_rescans") == 3
    assert "overflow_recrawls" not in status.counters
