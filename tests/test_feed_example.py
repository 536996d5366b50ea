"""The README's indexer example, run as a test: keep a SQLite table in sync with the feed."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

from segment.daemon import reconcile
from tests.daemon_helpers import current_ids, page, write


# --- README example (keep <= 30 lines) -------------------------------------------------------
def apply_feed(db: sqlite3.Connection, out: Path) -> int:
    """Apply feed entries newer than the last seq seen to a `chunk` table; return that seq."""
    db.execute("CREATE TABLE IF NOT EXISTS chunk (id TEXT PRIMARY KEY, source TEXT, text TEXT)")
    db.execute("CREATE TABLE IF NOT EXISTS seen (seq INTEGER)")
    last = db.execute("SELECT coalesce(max(seq), 0) FROM seen").fetchone()[0]
    texts: dict[str, dict[str, str]] = {}  # source -> {id: text}, read from OUT/chunks
    for line in (out / "changes.jsonl").read_bytes().splitlines(keepends=True):
        entry = json.loads(line) if line.endswith(b"\n") else None  # skip a half-written line
        if entry is None or entry["seq"] <= last:
            continue
        if entry["op"] == "delete":
            db.execute("DELETE FROM chunk WHERE id = ?", (entry["id"],))
        elif entry["op"] == "upsert":
            src = entry["source"]
            if src not in texts:
                path = out / "chunks" / f"{src}.jsonl"
                lines = path.read_bytes().splitlines() if path.exists() else []
                texts[src] = {r["id"]: r["text"] for r in map(json.loads, lines)}
            # text is None when a newer edit already replaced the chunk; a later entry deletes it
            row = (entry["id"], src, texts[src].get(entry["id"]))
            db.execute("INSERT OR REPLACE INTO chunk VALUES (?, ?, ?)", row)
        last = entry["seq"]  # "error" entries name a file that kept its last good chunks
    db.execute("DELETE FROM seen")
    db.execute("INSERT INTO seen VALUES (?)", (last,))
    db.commit()
    return last


# --- end of README example -------------------------------------------------------------------


def test_the_example_keeps_a_table_equal_to_the_chunk_output(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    db = sqlite3.connect(":memory:")
    write(src / "fleet" / "batteries.md", page("Battery care", "Store packs at 60 percent."))
    write(src / "fleet" / "logs.md", page("Flight logs", "Export logs weekly."))
    reconcile(src, out)
    first = apply_feed(db, out)
    write(src / "fleet" / "batteries.md", page("Battery care", "Store packs at 40 percent."))
    (src / "fleet" / "logs.md").unlink()
    write(src / "roles.md", page("Pilot roles", "Each pilot holds one role per flight."))
    reconcile(src, out)
    assert apply_feed(db, out) > first
    rows = dict(db.execute("SELECT id, source FROM chunk").fetchall())
    assert rows == current_ids(out)  # the table holds exactly the current chunks
    texts = " ".join(t for (t,) in db.execute("SELECT text FROM chunk"))
    assert "40 percent" in texts and "60 percent" not in texts and "weekly" not in texts
    assert apply_feed(db, out) == apply_feed(db, out)  # idempotent when nothing is new
