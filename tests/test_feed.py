"""The change feed (DESIGN.md section 5): per-file id diffs, rising seq, torn tails repaired."""

from __future__ import annotations

import json
from pathlib import Path

from segment.daemon.feed import Feed, FeedEntry, diff_ids, read_feed, replay
from segment.daemon.vocabulary import FeedOp


def test_a_file_diff_deletes_vanished_ids_upserts_new_ones_and_skips_kept_ones() -> None:
    entries = diff_ids("a.md", ["x", "y", "z"], ["y", "w"])
    assert [(e.op, e.id) for e in entries] == [("delete", "x"), ("delete", "z"), ("upsert", "w")]


def test_entries_have_exactly_the_documented_keys_in_order(tmp_path: Path) -> None:
    feed = Feed(tmp_path)
    feed.append(
        [
            FeedEntry(FeedOp.UPSERT, "a.md", id="x"),
            FeedEntry(FeedOp.DELETE, "a.md", id="y"),
            FeedEntry(FeedOp.ERROR, "b.md", error="timeout: parse took too long"),
        ]
    )
    lines = (tmp_path / "changes.jsonl").read_text().splitlines()
    assert [list(json.loads(line)) for line in lines] == [
        ["seq", "op", "id", "source"],
        ["seq", "op", "id", "source"],
        ["seq", "op", "source", "error"],
    ]
    assert [json.loads(line)["seq"] for line in lines] == [1, 2, 3]


def test_seq_keeps_rising_across_restarts_and_after_a_lost_commit(tmp_path: Path) -> None:
    Feed(tmp_path).append([FeedEntry(FeedOp.UPSERT, "a.md", id="x")])
    # The store committed only up to seq 0 (crash after the feed write): the feed's tail wins.
    again = Feed(tmp_path, last_committed=0)
    assert again.append([FeedEntry(FeedOp.UPSERT, "a.md", id="y")]) == 2
    # The feed file was removed by hand: the store's number wins.
    (tmp_path / "changes.jsonl").unlink()
    assert Feed(tmp_path, last_committed=2).append([FeedEntry(FeedOp.DELETE, "a.md", id="y")]) == 3


def test_a_torn_last_line_is_cut_off_at_open(tmp_path: Path) -> None:
    Feed(tmp_path).append([FeedEntry(FeedOp.UPSERT, "a.md", id="x")])
    with open(tmp_path / "changes.jsonl", "ab") as fh:
        fh.write(b'{"seq":2,"op":"ups')
    feed = Feed(tmp_path)
    assert feed.last_seq == 1
    assert (tmp_path / "changes.jsonl").read_bytes().endswith(b"}\n")
    feed.append([FeedEntry(FeedOp.UPSERT, "b.md", id="y")])
    assert [e["seq"] for e in read_feed(tmp_path)] == [1, 2]


def test_replay_applies_upserts_and_deletes_as_set_operations(tmp_path: Path) -> None:
    Feed(tmp_path).append(
        [
            FeedEntry(FeedOp.UPSERT, "a.md", id="x"),
            FeedEntry(FeedOp.UPSERT, "a.md", id="y"),
            FeedEntry(FeedOp.DELETE, "a.md", id="x"),
            FeedEntry(FeedOp.ERROR, "a.md", error="corrupt: bad"),
            FeedEntry(FeedOp.UPSERT, "a.md", id="y"),  # a repeat after a crash changes nothing
        ]
    )
    assert replay(tmp_path) == {"y": "a.md"}
    assert [e["seq"] for e in read_feed(tmp_path, after=3)] == [4, 5]


def test_entries_written_past_the_last_commit_are_undone_at_restart(tmp_path: Path) -> None:
    from segment.daemon.feed import compensation

    feed = Feed(tmp_path)
    feed.append([FeedEntry(FeedOp.UPSERT, "a.md", id="old")])  # committed: store says a.md -> [old]
    # A crash between the feed append and the store commit left an edit's entries behind:
    feed.append(
        [
            FeedEntry(FeedOp.DELETE, "a.md", id="old"),
            FeedEntry(FeedOp.UPSERT, "a.md", id="new"),
            FeedEntry(FeedOp.UPSERT, "b.md", id="b1"),
        ]
    )
    undo = compensation(tmp_path, committed_seq=1, committed={"a.md": ["old"]})
    assert sorted((e.op, e.source, e.id) for e in undo) == [
        ("delete", "a.md", "new"),
        ("delete", "b.md", "b1"),
        ("upsert", "a.md", "old"),
    ]
    feed.append(undo)
    assert replay(tmp_path) == {"old": "a.md"}  # the feed's view equals the store's again


def test_relocate_names_kept_ids_whose_record_changed() -> None:
    from segment.daemon.feed import relocated

    old_ids, old_digests = ["a", "b", "c"], ["1", "2", "3"]
    new_ids, new_digests = ["a", "b", "d"], ["1", "9", "4"]
    entries = relocated("x.md", old_ids, old_digests, new_ids, new_digests)
    assert [(e.op, e.id) for e in entries] == [(FeedOp.RELOCATE, "b")]  # c deleted, d new: not relocated
    # Digests unknown (a store from before they were kept): every kept id is refreshed.
    assert [e.id for e in relocated("x.md", old_ids, [], new_ids, new_digests)] == ["a", "b"]
    entry = FeedEntry(FeedOp.RELOCATE, "x.md", id="b").to_dict(7)
    assert entry == {"seq": 7, "op": "relocate", "id": "b", "source": "x.md"}
