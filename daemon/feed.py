"""The change feed OUT/changes.jsonl (DESIGN.md section 5).

One JSON object a line, appended only:
    {"seq": n, "op": "upsert" | "delete" | "relocate", "id": ..., "source": ...}
    {"seq": n, "op": "error", "source": ..., "error": ...}
`relocate` names a chunk whose text (so id) is unchanged but whose record changed in another
field (lines, seq, pages): an indexer refreshes the stored record without re-embedding it.
`seq` starts at 1 and strictly increases across restarts. Entries are written and fsynced before
the store commits, so after a crash the feed may repeat entries of the interrupted batch (with
new numbers); replaying upserts and deletes as set operations is idempotent, so an indexer that
applies them in order always ends with the current id set.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from segment.daemon.durable import crashpoint
from segment.daemon.vocabulary import FeedOp

FEED_NAME = "changes.jsonl"


@dataclass(frozen=True, slots=True)
class FeedEntry:
    """One line of the feed before it is numbered."""

    op: FeedOp
    source: str
    id: str | None = None
    error: str | None = None

    def to_dict(self, seq: int) -> dict[str, Any]:
        """The JSON form, keys in the documented order."""
        if self.op == FeedOp.ERROR:
            return {"seq": seq, "op": str(self.op), "source": self.source, "error": self.error}
        return {"seq": seq, "op": str(self.op), "id": self.id, "source": self.source}


def relocated(
    source: str, old_ids: list[str], old_digests: list[str], new_ids: list[str], new_digests: list[str]
) -> list[FeedEntry]:
    """Relocate entries for ids kept from `old` to `new` whose record digest changed.

    When the old digests are unknown (a store written before they were kept), every kept id is
    relocated: refreshing a record that did not move is harmless, missing one that did is not.
    """
    known = len(old_digests) == len(old_ids)
    before: dict[str, set[str]] = {}
    for i, chunk_id in enumerate(old_ids):
        before.setdefault(chunk_id, set()).add(old_digests[i] if known else "")
    after: dict[str, set[str]] = {}
    for chunk_id, digest in zip(new_ids, new_digests, strict=True):
        after.setdefault(chunk_id, set()).add(digest)
    return [
        FeedEntry(FeedOp.RELOCATE, source, id=chunk_id)
        for chunk_id, digests in after.items()
        if chunk_id in before and before[chunk_id] != digests
    ]


def diff_ids(source: str, old: list[str], new: list[str]) -> list[FeedEntry]:
    """Entries for one file: delete ids that disappeared, then upsert ids that appeared."""
    old_set, new_set = set(old), set(new)
    out = [FeedEntry(FeedOp.DELETE, source, id=i) for i in dict.fromkeys(old) if i not in new_set]
    out += [FeedEntry(FeedOp.UPSERT, source, id=i) for i in dict.fromkeys(new) if i not in old_set]
    return out


class Feed:
    """Appender for OUT/changes.jsonl that numbers entries and survives torn writes."""

    def __init__(self, out: Path, last_committed: int = 0) -> None:
        self.path = out / FEED_NAME
        self.last_seq = max(last_committed, repair_tail(self.path))
        """Sequence number of the last entry on disk."""

    def append(self, entries: Iterable[FeedEntry]) -> int:
        """Append entries, fsync, and return the last sequence number used."""
        lines = []
        seq = self.last_seq
        for entry in entries:
            seq += 1
            lines.append(json.dumps(entry.to_dict(seq), ensure_ascii=False, separators=(",", ":")))
        if not lines:
            return self.last_seq
        data = ("\n".join(lines) + "\n").encode("utf-8")
        fd = os.open(self.path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o644)
        try:
            half = len(data) // 2
            os.write(fd, data[:half])
            crashpoint("mid_feed_write")
            view = memoryview(data)[half:]
            while view:
                view = view[os.write(fd, view) :]
            os.fsync(fd)
        finally:
            os.close(fd)
        self.last_seq = seq
        return seq


def compensation(out: Path, committed_seq: int, committed: dict[str, list[str]]) -> list[FeedEntry]:
    """Entries that undo feed lines written after the store's last commit (a crash between the
    feed append and the commit), so the feed's view of every source equals the store's again.

    `committed` maps each source to its committed ids (sources without a row have none).
    Invariant kept by every commit: replaying the feed up to the store's last seq gives exactly
    the ids of the store's rows.
    """
    views: dict[str, dict[str, None]] = {}
    for entry in read_feed(out, after=committed_seq):
        source = entry["source"]
        view = views.setdefault(source, dict.fromkeys(committed.get(source, [])))
        if entry["op"] == FeedOp.UPSERT:
            view[entry["id"]] = None
        elif entry["op"] == FeedOp.DELETE:
            view.pop(entry["id"], None)
    out_entries: list[FeedEntry] = []
    for source, view in views.items():
        out_entries += diff_ids(source, list(view), committed.get(source, []))
    return out_entries


def repair_tail(path: Path) -> int:
    """Cut a torn last line off the feed and return the last complete entry's seq (0 if none)."""
    try:
        fd = os.open(path, os.O_RDWR)
    except FileNotFoundError:
        return 0
    try:
        size = os.fstat(fd).st_size
        block = 1 << 16
        end = size
        tail = b""
        # Walk back until the tail holds a full line (entries are short, one block is typical).
        while end > 0:
            start = max(0, end - block)
            tail = os.pread(fd, end - start, start) + tail
            end = start
            if tail.count(b"\n") >= 2 or end == 0:
                break
        base = size - len(tail)
        cut = tail.rfind(b"\n") + 1  # keep everything through the last newline
        if base + cut != size:
            os.ftruncate(fd, base + cut)
            os.fsync(fd)
        complete = tail[:cut].splitlines()
        for line in reversed(complete):
            try:
                return int(json.loads(line)["seq"])
            except (ValueError, KeyError, TypeError):
                continue
        return 0
    finally:
        os.close(fd)


def read_feed(out: Path, after: int = 0) -> Iterator[dict[str, Any]]:
    """Entries with seq > `after`, in order; a torn last line is skipped."""
    path = out / FEED_NAME
    if not path.exists():
        return
    with open(path, "rb") as fh:
        for raw in fh:
            if not raw.endswith(b"\n"):
                break
            entry = json.loads(raw)
            if entry["seq"] > after:
                yield entry


def replay(out: Path) -> dict[str, str]:
    """Apply the whole feed as set operations: the current id -> source map it implies."""
    ids: dict[str, str] = {}
    for entry in read_feed(out):
        if entry["op"] == FeedOp.UPSERT:
            ids[entry["id"]] = entry["source"]
        elif entry["op"] == FeedOp.DELETE:
            ids.pop(entry["id"], None)
    return ids
