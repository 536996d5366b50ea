"""Convergence under churn: random edits while watching, then compare.

A driver performs a few hundred random operations on a temp tree (creates, in-place edits,
appends, editor-style atomic saves, vim-style saves, renames, folder moves in/out/within,
deletes, touches, same-size rewrites) while a Watcher follows. After `catch_up()`:
- OUT/chunks is byte-identical to a fresh full build of the final tree (0 lost, 0 stale, 0 phantom);
- replaying changes.jsonl from 0 gives exactly the current id set, and never upserts an id that
  is already present nor deletes one that is absent (0 duplicates);
- an indexer that applied the feed at each catch-up, reading records as it went, holds every
  current record exactly (locators that moved were announced by `relocate`).
"""

from __future__ import annotations

import json
import os
import random
import shutil
import time
from pathlib import Path

import pytest

from segment.daemon import Watcher, reconcile
from segment.settings import Settings
from tests.daemon_helpers import TOPICS, FeedIndexer, chunk_files, current_ids, current_records, page, write

OPS = 300


class Driver:
    def __init__(self, root: Path, parking: Path, rng: random.Random) -> None:
        self.root, self.parking, self.rng = root, parking, rng
        self.n = 0

    def files(self) -> list[Path]:
        return sorted(self.root.rglob("*.md"))

    def folders(self) -> list[Path]:
        return sorted(p for p in self.root.rglob("*") if p.is_dir())

    def text(self) -> str:
        self.n += 1
        topic = self.rng.choice(TOPICS)
        paras = [
            f"{topic} note {self.n}. Step {i} is checked by the crew." for i in range(self.rng.randint(1, 4))
        ]
        return page(f"{topic} {self.n}", *paras)

    def step(self) -> None:
        rng, files = self.rng, self.files()
        op = rng.choice(
            [
                "create",
                "create",
                "edit",
                "append",
                "atomic",
                "vim",
                "rename",
                "delete",
                "touch",
                "same_size",
                "shift",
                "mkdir_move",
                "move_out",
                "move_in",
                "rmtree",
            ]
        )
        if not files or op == "create":
            folder = rng.choice([self.root, *self.folders()])
            write(folder / f"n{self.n}.md", self.text())
            return
        target = rng.choice(files)
        if op == "edit":
            write(target, self.text())
        elif op == "append":
            with open(target, "a", encoding="utf-8") as fh:
                fh.write(f"\nAppended line {self.n} about spare parts.\n")
            self.n += 1
        elif op == "atomic":
            tmp = target.with_name(f".{target.name}.tmp{self.n}")
            write(tmp, self.text())
            os.replace(tmp, target)
        elif op == "vim":
            write(target.parent / "4913", "")
            (target.parent / "4913").unlink()
            backup = target.with_name(target.name + "~")
            os.rename(target, backup)
            write(target, self.text())
            backup.unlink()
        elif op == "rename":
            os.rename(target, target.with_name(f"r{self.n}.md"))
            self.n += 1
        elif op == "delete":
            target.unlink()
        elif op == "touch":
            os.utime(target)
        elif op == "same_size":
            data = bytearray(target.read_bytes())
            i = data.rfind(b".")
            if i > 0:
                data[i] = ord("!")
            st = target.stat()
            target.write_bytes(bytes(data))
            os.utime(target, ns=(st.st_atime_ns, st.st_mtime_ns))
        elif op == "shift":  # blank lines after the title: same text and ids, other line ranges
            text = target.read_text(encoding="utf-8")
            title, _, rest = text.partition("\n")
            write(target, f"{title}\n\n\n{rest}")
        elif op == "mkdir_move":
            dest = self.root / f"d{self.n}"
            self.n += 1
            dest.mkdir()
            os.rename(target, dest / target.name)
            if rng.random() < 0.5:  # and move the whole folder somewhere else in the tree
                others = [f for f in self.folders() if not f.is_relative_to(dest)]
                os.rename(dest, rng.choice([self.root, *others]) / f"moved{self.n}")
        elif op == "move_out" and self.folders():
            folder = rng.choice(self.folders())
            self.parking.mkdir(exist_ok=True)
            os.rename(folder, self.parking / f"p{self.n}")
            self.n += 1
        elif op == "move_in" and self.parking.exists() and list(self.parking.iterdir()):
            os.rename(rng.choice(sorted(self.parking.iterdir())), self.root / f"back{self.n}")
            self.n += 1
        elif op == "rmtree" and len(self.folders()) > 2:
            shutil.rmtree(rng.choice(self.folders()))


def strict_replay(out: Path) -> dict[str, str]:
    ids: dict[str, str] = {}
    for line in (out / "changes.jsonl").read_text(encoding="utf-8").splitlines():
        e = json.loads(line)
        if e["op"] == "upsert":
            assert e["id"] not in ids, f"duplicate upsert {e}"
            ids[e["id"]] = e["source"]
        elif e["op"] == "delete":
            assert ids.pop(e["id"], None) is not None, f"delete of an unknown id {e}"
        elif e["op"] == "relocate":
            assert e["id"] in ids, f"relocate of an unknown id {e}"
    return ids


@pytest.mark.parametrize("seed", [1, 2])
def test_watched_output_converges_to_a_fresh_build_after_random_churn(seed: int, tmp_path: Path) -> None:
    rng = random.Random(seed)
    root, out = tmp_path / "docs", tmp_path / "out"
    for i in range(30):
        write(root / f"dir{i % 5}" / f"start{i}.md", page(f"{TOPICS[i % len(TOPICS)]} start {i}"))
    driver = Driver(root, tmp_path / "parking", rng)
    indexer = FeedIndexer(out)  # reads each record when it applies its entry, as a user's would
    with Watcher(root, out, Settings(), jobs=2, quiet_ms=30) as watcher:
        for i in range(OPS):
            driver.step()
            if rng.random() < 0.1:
                time.sleep(rng.choice([0.005, 0.03, 0.08]))  # let some batches run mid-churn
            if i % (OPS // 4) == OPS // 4 - 1:
                watcher.catch_up(60)
                indexer.apply()
        watcher.catch_up(60)
        indexer.apply()
        for target in driver.files()[::2]:  # and move the locators of half the files at once
            text = target.read_text(encoding="utf-8")
            title, _, rest = text.partition("\n")
            write(target, f"{title}\n\n\n{rest}")
        watcher.catch_up(60)
        indexer.apply()
        assert watcher.report.failed == []
    assert indexer.records == current_records(out)  # every field, not only the id set
    fresh = tmp_path / "fresh"
    reconcile(root, fresh, full=True)
    assert chunk_files(out) == chunk_files(fresh)
    assert strict_replay(out) == current_ids(out)
