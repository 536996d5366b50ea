"""The newer formats under `segment watch`: reStructuredText, notebooks, MDX and plain text.

A watched tree gets one file of each created, edited and removed; the chunk files appear, change
and go, and the feed, replayed from its start or followed as an indexer would, gives the records
in OUT/chunks. Include patterns filter the new suffixes as they do the old ones, and an
extension-less file is read only when a pattern names it. Every wait is a `catch_up()` barrier.
"""

from __future__ import annotations

import json
from pathlib import Path

from segment.daemon import Watcher, reconcile
from segment.settings import Settings
from tests import hostile
from tests.daemon_helpers import (
    FeedIndexer,
    assert_feed_matches,
    chunk_files,
    current_records,
    feed,
    tree_of,
    write,
)

QUIET_MS = 50


def rst_page(word: str) -> str:
    return f"Charging\n========\n\nPacks are charged in the {word} room.\n\nStorage\n-------\n\nKeep them cool.\n"


def notebook_page(word: str) -> str:
    cells = [
        hostile.markdown_cell(1, f"# Telemetry\n\nThe {word} log is read every morning."),
        hostile.code_cell(2, f"log = read('{word}')"),
    ]
    return hostile.notebook(cells).decode()


def mdx_page(word: str) -> str:
    return (
        "import Tabs from '@theme/Tabs';\n\n# Setup\n\n"
        f'<Tabs>\n<TabItem label="Linux">\n\nInstall the {word} relay.\n\n</TabItem>\n</Tabs>\n'
    )


def text_page(word: str) -> str:
    return f"Night notes\n===========\n\nThe {word} crew signs the sheet.\n"


PAGES = {
    "guide/charging.rst": ("rst", rst_page),
    "guide/telemetry.ipynb": ("notebook", notebook_page),
    "guide/setup.mdx": ("mdx", mdx_page),
    "guide/notes.txt": ("text", text_page),
}


def records_of(out: Path, source: str) -> list[dict[str, object]]:
    data = chunk_files(out).get(f"{source}.jsonl", b"")
    return [json.loads(line) for line in data.splitlines()]


def text_of(out: Path, source: str) -> str:
    return "\n".join(str(r["text"]) for r in records_of(out, source))


def test_each_new_format_created_edited_and_removed_is_followed_by_the_output_and_the_feed(
    tmp_path: Path,
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(3, src)
    indexer = FeedIndexer(out)
    with Watcher(src, out, Settings(), quiet_ms=QUIET_MS) as w:
        for source, (_, make) in PAGES.items():
            write(src / source, make("amber"))
        write(src / "guide" / "NOTES", text_page("unnamed"))  # extension-less: read only when named
        write(src / "guide" / "notes.rtf", text_page("unknown suffix"))
        w.catch_up(60)
        for source, (fmt, _) in PAGES.items():
            records = records_of(out, source)
            assert records, f"{source}: no chunks"
            assert {r["format"] for r in records} == {fmt}
            assert "amber" in text_of(out, source)
        assert "guide/NOTES.jsonl" not in chunk_files(out)
        assert "guide/notes.rtf.jsonl" not in chunk_files(out)
        assert not w.report.failed
        assert_feed_matches(out)
        indexer.apply()
        assert indexer.records == current_records(out)

        before = chunk_files(out)
        for source, (_, make) in PAGES.items():
            write(src / source, make("violet"))
        w.catch_up(60)
        after = chunk_files(out)
        for source in PAGES:
            assert after[f"{source}.jsonl"] != before[f"{source}.jsonl"], source
            text = text_of(out, source)
            assert "violet" in text and "amber" not in text, source
        assert_feed_matches(out)
        indexer.apply()
        assert indexer.records == current_records(out)
        # The watched output equals a fresh build of the same tree.
        fresh = tmp_path / "fresh"
        reconcile(src, fresh, full=True)
        assert chunk_files(out) == chunk_files(fresh)

        for source in PAGES:
            (src / source).unlink()
        w.catch_up(60)
        remaining = chunk_files(out)
        assert not [name for name in remaining if name.startswith("guide/")]
        deleted = {e["source"] for e in feed(out) if e["op"] == "delete"}
        assert set(PAGES) <= deleted
        assert_feed_matches(out)
        indexer.apply()
        assert indexer.records == current_records(out)
        assert len(remaining) == 3  # the Markdown pages of the tree are untouched


def test_include_patterns_filter_the_new_suffixes_and_name_extensionless_files(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    src.mkdir()
    settings = Settings(include=("*.rst", "*.ipynb", "NOTES"))
    with Watcher(src, out, settings, quiet_ms=QUIET_MS) as w:
        for source, (_, make) in PAGES.items():
            write(src / source, make("amber"))
        write(src / "guide" / "NOTES", text_page("named"))
        w.catch_up(60)
        assert sorted(chunk_files(out)) == [
            "guide/NOTES.jsonl",
            "guide/charging.rst.jsonl",
            "guide/telemetry.ipynb.jsonl",
        ]
        assert "named crew" in text_of(out, "guide/NOTES")
        assert {r["format"] for r in records_of(out, "guide/NOTES")} == {"text"}
        assert_feed_matches(out)
