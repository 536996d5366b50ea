"""Helpers for the daemon tests: invented docs written at test time, and output snapshots."""

from __future__ import annotations

import json
import os
import sqlite3
import time
from collections.abc import Callable
from pathlib import Path

from segment.daemon.feed import read_feed, replay

TOPICS = ["Battery care", "Flight logs", "Firmware updates", "Geofences", "Pilot roles", "Spare parts"]


def page(title: str, *paragraphs: str) -> str:
    """A small Markdown page of the invented Corvane Fleet docs."""
    body = "\n\n".join(paragraphs or (f"{title} keeps the fleet flying. Check it every morning.",))
    return f"# {title}\n\n{body}\n"


def sections_page(n: int, edited: int | None = None) -> str:
    """A page with `n` sections of a few sentences each; section `edited` gets a changed line."""
    out = ["# Fleet handbook", ""]
    for i in range(n):
        out += [f"## Procedure {i}", ""]
        text = (
            f"Procedure {i} covers step {i} of the hangar routine. The crew signs the sheet "
            f"after step {i}. Nothing leaves the hangar before the check of step {i}."
        )
        if i == edited:
            text += " A second signature is now required."
        out += [text, ""]
    return "\n".join(out)


def write(path: Path, text: str) -> Path:
    """Write a file, creating its folders."""
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def chunk_files(out: Path) -> dict[str, bytes]:
    """OUT/chunks as {relative path: bytes}."""
    root = out / "chunks"
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()}


def current_ids(out: Path) -> dict[str, str]:
    """Every chunk id in OUT/chunks with its source."""
    ids: dict[str, str] = {}
    for data in chunk_files(out).values():
        for line in data.splitlines():
            record = json.loads(line)
            assert record["id"] not in ids, f"duplicate chunk id {record['id']}"
            ids[record["id"]] = record["source"]
    return ids


def current_records(out: Path) -> dict[str, dict[str, object]]:
    """Every chunk record in OUT/chunks, by id."""
    records: dict[str, dict[str, object]] = {}
    for data in chunk_files(out).values():
        for line in data.splitlines():
            record = json.loads(line)
            records[record["id"]] = record
    return records


class FeedIndexer:
    """An indexer that follows the feed as a user's would: at each `apply()` it reads the entries
    it has not seen and, for upsert and relocate, the record as it is in OUT/chunks right then."""

    def __init__(self, out: Path) -> None:
        self.out = out
        self.seen = 0
        self.records: dict[str, dict[str, object]] = {}

    def apply(self) -> None:
        """Apply the entries newer than the last one seen."""
        for entry in read_feed(self.out, after=self.seen):
            self.seen = entry["seq"]
            if entry["op"] == "delete":
                self.records.pop(entry["id"], None)
            elif entry["op"] in ("upsert", "relocate"):
                record = self._record(entry["source"], entry["id"])
                if record is not None:
                    self.records[entry["id"]] = record

    def _record(self, source: str, chunk_id: str) -> dict[str, object] | None:
        for data in chunk_files(self.out).values():
            for line in data.splitlines():
                record = json.loads(line)
                if record["id"] == chunk_id and record["source"] == source:
                    return dict(record)
        return None


def assert_feed_matches(out: Path) -> None:
    """Replaying the feed from 0 gives exactly the ids in OUT/chunks, with strictly rising seq."""
    seqs = [json.loads(line)["seq"] for line in (out / "changes.jsonl").read_text().splitlines()]
    assert seqs == sorted(set(seqs)), "feed seq must strictly increase"
    assert replay(out) == current_ids(out)


def temp_files(out: Path) -> list[str]:
    """Leftover temp files anywhere under OUT."""
    return [p.name for p in out.rglob("*.tmp")]


def quick_check(out: Path) -> str:
    """PRAGMA quick_check of the store."""
    conn = sqlite3.connect(out / "state.sqlite3")
    try:
        return str(conn.execute("PRAGMA quick_check").fetchone()[0])
    finally:
        conn.close()


def feed(out: Path) -> list[dict[str, object]]:
    """All feed entries."""
    path = out / "changes.jsonl"
    if not path.exists():
        return []
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]


def tree_of(n_files: int, root: Path) -> None:
    """`n_files` pages in a few folders."""
    for i in range(n_files):
        topic = TOPICS[i % len(TOPICS)]
        write(root / f"area{i % 3}" / f"page{i}.md", page(f"{topic} {i}"))


def env_without(*names: str) -> dict[str, str]:
    """os.environ minus some variables (for subprocess runs)."""
    return {k: v for k, v in os.environ.items() if k not in names}


def wait_for(predicate: Callable[[], object], timeout: float = 30.0) -> None:
    """Poll a condition until it holds or the deadline passes (never a fixed wait)."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if predicate():
            return
        time.sleep(0.02)
    raise AssertionError("condition not met in time")
