"""The README's indexer example, run as a test: keep a SQLite table in sync with the feed."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

from segment.daemon import reconcile
from segment.settings import Settings
from tests.daemon_helpers import current_ids, current_records, page, sections_page, write


# --- README example (keep <= 30 lines) -------------------------------------------------------
def apply_feed(db: sqlite3.Connection, out: Path) -> int:
    """Apply feed entries newer than the last seq seen to a `chunk` table; return that seq."""
    db.execute("CREATE TABLE IF NOT EXISTS chunk (id TEXT PRIMARY KEY, source TEXT, record TEXT)")
    db.execute("CREATE TABLE IF NOT EXISTS seen (seq INTEGER)")
    last = db.execute("SELECT coalesce(max(seq), 0) FROM seen").fetchone()[0]
    records: dict[str, dict[str, str]] = {}  # source -> {id: record line}, read from OUT/chunks
    for line in (out / "changes.jsonl").read_bytes().splitlines(keepends=True):
        entry = json.loads(line) if line.endswith(b"\n") else None  # skip a half-written line
        if entry is None or entry["seq"] <= last:
            continue
        if entry["op"] == "delete":
            db.execute("DELETE FROM chunk WHERE id = ?", (entry["id"],))
        elif entry["op"] in ("upsert", "relocate"):  # relocate: same text, new lines/seq/pages
            src = entry["source"]
            if src not in records:
                path = out / "chunks" / f"{src}.jsonl"
                lines = path.read_text("utf-8").splitlines() if path.exists() else []
                records[src] = {json.loads(r)["id"]: r for r in lines}
            # None when a newer edit already replaced the chunk; a later entry deletes it
            row = (entry["id"], src, records[src].get(entry["id"]))
            db.execute("INSERT OR REPLACE INTO chunk VALUES (?, ?, ?)", row)  # embed on upsert only
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
    texts = " ".join(json.loads(r)["text"] for (r,) in db.execute("SELECT record FROM chunk"))
    assert "40 percent" in texts and "60 percent" not in texts and "weekly" not in texts
    assert apply_feed(db, out) == apply_feed(db, out)  # idempotent when nothing is new


def test_locators_that_move_reach_the_table(tmp_path: Path) -> None:
    # A paragraph added at the top keeps the ids of the chunks below (their text is the same)
    # but moves their lines and seq: the table must hold the records as they are now.
    src, out = tmp_path / "docs", tmp_path / "out"
    db = sqlite3.connect(":memory:")
    settings = Settings(max_tokens=64, min_tokens=0)
    write(src / "handbook.md", sections_page(6))
    reconcile(src, out, settings)
    apply_feed(db, out)
    text = (src / "handbook.md").read_text(encoding="utf-8")
    write(
        src / "handbook.md", text.replace("# Fleet handbook\n", "# Fleet handbook\n\nRead this first.\n", 1)
    )
    reconcile(src, out, settings)
    apply_feed(db, out)
    table = {i: json.loads(r) for i, r in db.execute("SELECT id, record FROM chunk")}
    assert table == current_records(out)
