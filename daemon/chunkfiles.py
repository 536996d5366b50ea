"""Layout of OUT/chunks: one JSON Lines file per source, named after its relative path.

Everything that maps a source path to its chunk file, or reads a chunk file back, lives here.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Iterator
from pathlib import Path

from segment.daemon.durable import walk_files

CHUNKS_DIR = "chunks"
NAME_MAX = 255


class ChunkLayout:
    """Where the chunk file of each source lives under OUT/chunks."""

    def __init__(self, out: Path) -> None:
        self.root = out / CHUNKS_DIR

    def path_of(self, rel: str) -> Path:
        """OUT/chunks/<relpath>.jsonl (see `chunk_name` for names too long for that)."""
        folder, _, name = rel.rpartition("/")
        return self.root / folder / chunk_name(name) if folder else self.root / chunk_name(name)

    def files(self) -> Iterator[Path]:
        """Every chunk file on disk."""
        for entry in walk_files(self.root):
            if entry.name.endswith(".jsonl"):
                yield Path(entry.path)

    def ids_of(self, rel: str) -> list[str]:
        """Chunk ids in the chunk file of a source ([] when it has none)."""
        return read_ids(self.path_of(rel))[0]


def read_ids(path: Path) -> tuple[list[str], str]:
    """Chunk ids in a chunk file, and the source its records name ("" when unreadable)."""
    ids: list[str] = []
    source = ""
    try:
        with open(path, "rb") as fh:
            for line in fh:
                if line.strip():
                    record = json.loads(line)
                    ids.append(record["id"])
                    source = source or record["source"]
    except (OSError, ValueError, KeyError, TypeError):
        pass
    return ids, source


def read_records(path: Path) -> dict[str, dict[str, object]]:
    """Every record of a chunk file by id ({} when it is missing or unreadable)."""
    records: dict[str, dict[str, object]] = {}
    try:
        with open(path, "rb") as fh:
            for line in fh:
                if line.strip():
                    record = json.loads(line)
                    records[str(record["id"])] = record
    except (OSError, ValueError, KeyError, TypeError):
        pass
    return records


def chunk_name(name: str) -> str:
    """`<name>.jsonl`, or, when that is over the 255-byte name limit, a shortened name plus a
    hash of the full name (the records inside still carry the full source path)."""
    full = name + ".jsonl"
    if len(os.fsencode(full)) <= NAME_MAX:
        return full
    digest = hashlib.blake2b(os.fsencode(name), digest_size=8).hexdigest()
    head = os.fsencode(name)[:200].decode("utf-8", "ignore")
    return f"{head}~{digest}.jsonl"
