"""Layout of OUT/chunks: one JSON Lines file per source, named after its relative path."""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

CHUNKS_DIR = "chunks"


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


NAME_MAX = 255


def chunk_name(name: str) -> str:
    """`<name>.jsonl`, or, when that is over the 255-byte name limit, a shortened name plus a
    hash of the full name (the records inside still carry the full source path)."""
    full = name + ".jsonl"
    if len(os.fsencode(full)) <= NAME_MAX:
        return full
    digest = hashlib.blake2b(os.fsencode(name), digest_size=8).hexdigest()
    head = os.fsencode(name)[:200].decode("utf-8", "ignore")
    return f"{head}~{digest}.jsonl"
