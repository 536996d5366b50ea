"""Read an output folder as the daemon wrote it: chunk files, the store, the settings it implies.

Nothing here writes: the store is opened read-only (as `segment status` does), chunk files are
read line by line, and a damaged line is counted, not fatal.
"""

from __future__ import annotations

import json
import os
import sqlite3
from collections.abc import Iterator
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from segment.daemon.chunkfiles import CHUNKS_DIR
from segment.daemon.store import STATE_NAME, StatusReport, read_status
from segment.errors import SettingsError
from segment.settings import Settings, load_settings


class NoOutput(Exception):
    """The folder holds no docsegment output (no chunks/ folder and no store)."""


@dataclass(slots=True)
class FileRow:
    """What the store knows of one source file."""

    source: str
    status: str
    """`ok` or the failure status of the last attempt."""
    error: str | None
    """Reason of the last failure, or a note (repaired PDF...) for an `ok` file."""
    ids: int
    """Chunk ids recorded for the file (its last good chunks)."""


@dataclass(slots=True)
class SourceChunks:
    """The records of one chunk file, in file order."""

    source: str
    path: Path
    records: list[dict[str, Any]] = field(default_factory=list)
    bad_lines: int = 0
    """Lines that are not a JSON object with the chunk fields (a hand edit, a torn copy)."""

    @property
    def format(self) -> str:
        """Format of the file's chunks ('' when it has none)."""
        return str(self.records[0].get("format", "")) if self.records else ""


@dataclass(slots=True)
class Output:
    """One output folder: chunk files, store rows, and the settings the chunks were built with."""

    out: Path
    sources: list[SourceChunks]
    files: dict[str, FileRow]
    """Store rows by source ({} when the store is missing)."""
    status: StatusReport | None
    src: Path | None
    """The source root the build recorded (None when unknown)."""
    settings: Settings
    settings_exact: bool
    """True when `settings` has the fingerprint the store recorded: the budget is the one used."""

    @property
    def budget(self) -> int:
        """Token budget of one chunk."""
        return self.settings.max_tokens

    def records(self) -> Iterator[dict[str, Any]]:
        """Every chunk record, source by source."""
        for source in self.sources:
            yield from source.records


REQUIRED = ("id", "source", "format", "seq", "breadcrumb", "text", "tokens", "blocks")


def _is_record(record: object) -> bool:
    """True for a JSON object with the chunk fields the report reads, of the right types."""
    if not isinstance(record, dict) or any(k not in record for k in REQUIRED):
        return False
    ints = all(isinstance(record[k], int) and not isinstance(record[k], bool) for k in ("seq", "tokens"))
    strings = all(isinstance(record[k], str) for k in ("id", "source", "format", "text"))
    lists = all(isinstance(record[k], list) for k in ("breadcrumb", "blocks"))
    return ints and strings and lists


def read_chunk_file(path: Path, source: str) -> SourceChunks:
    """The records of one chunk file; malformed lines are counted in `bad_lines`."""
    found = SourceChunks(source, path)
    with open(path, "rb") as fh:
        for line in fh:
            if not line.strip():
                continue
            try:
                record = json.loads(line)
            except ValueError:
                found.bad_lines += 1
                continue
            if not _is_record(record):
                found.bad_lines += 1
                continue
            found.records.append(record)
    if found.records:
        found.source = str(found.records[0]["source"])
    return found


def _chunk_files(chunks: Path) -> Iterator[tuple[str, Path]]:
    """(relative name without `.jsonl`, path) of every chunk file, in sorted order."""
    for folder, dirs, names in os.walk(chunks):
        dirs.sort()
        for name in sorted(names):
            if name.endswith(".jsonl"):
                path = Path(folder) / name
                rel = path.relative_to(chunks).as_posix()
                yield rel[: -len(".jsonl")], path


def _store_rows(out: Path) -> tuple[dict[str, FileRow], dict[str, str]]:
    """Per-file rows and the meta table of the store, read-only; empty when there is no store."""
    path = out / STATE_NAME
    if not path.is_file():
        return {}, {}
    conn = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=10.0)
    try:
        conn.execute("PRAGMA busy_timeout=10000")
        rows = conn.execute(
            "SELECT source, status, error, json_array_length(ids) FROM files ORDER BY path"
        ).fetchall()
        meta = dict(conn.execute("SELECT key, value FROM meta").fetchall())
    except sqlite3.DatabaseError:
        return {}, {}
    finally:
        conn.close()
    files = {str(s): FileRow(str(s), str(st), None if e is None else str(e), int(n)) for s, st, e, n in rows}
    return files, {str(k): str(v) for k, v in meta.items()}


def build_settings(
    src: Path | None, overrides: dict[str, Any], fingerprint: str, largest: int = 0
) -> tuple[Settings, bool]:
    """Settings of the build: flags, else the source root's segment.toml, else defaults.

    The second value says whether they match the fingerprint the store recorded (so the budget
    used by the report is the budget the chunks were cut to).
    """
    root = src if src is not None and src.is_dir() else None
    try:
        settings = load_settings(root, overrides)
    except SettingsError:
        settings = load_settings(None, overrides)
    if not fingerprint or settings.fingerprint() == fingerprint:
        return settings, bool(fingerprint)
    found = None if "max_tokens" in overrides else _search_budget(settings, fingerprint, largest)
    return (found, True) if found is not None else (settings, False)


BUDGET_SEARCH = range(16, 16385)
"""Budgets tried when the settings at hand do not give the build's fingerprint."""


def _search_budget(settings: Settings, fingerprint: str, largest: int = 0) -> Settings | None:
    """The settings with the budget and overlap that give `fingerprint`, or None.

    The store records a hash of the settings, not the settings: a build made with
    `--max-tokens 256` on the command line is found by trying each budget in turn with no
    overlap (or the given one), then every overlap for budgets from `largest` (the biggest chunk
    not flagged oversize: the budget is at least that) up to an eighth more (chunks fill their
    budget closely). Under a second or two at worst; skipped when a tokenizer file would be
    hashed at every try.
    """
    if settings.tokenizer:
        return None

    low = max(BUDGET_SEARCH.start, largest)

    def tries() -> Iterator[tuple[int, int]]:
        for overlap in dict.fromkeys((settings.overlap_tokens, 0)):
            yield from ((budget, overlap) for budget in range(low, BUDGET_SEARCH.stop))
        for budget in range(low, min(BUDGET_SEARCH.stop, low + low // 8 + 8)):
            yield from ((budget, overlap) for overlap in range(1, budget // 2))

    for budget, overlap in tries():
        if overlap >= budget // 2:
            continue
        candidate = replace(settings, max_tokens=budget, overlap_tokens=overlap)
        if candidate.fingerprint() == fingerprint:
            return candidate
    return None


def read_output(out: Path, overrides: dict[str, Any] | None = None, src: Path | None = None) -> Output:
    """Read OUT: every chunk file, the store's rows, and the settings the build used.

    `src` overrides the source root the build recorded (a moved checkout).
    """
    chunks = out / CHUNKS_DIR
    if not chunks.is_dir() and not (out / STATE_NAME).is_file():
        raise NoOutput(f"{out}: no docsegment output here (run `segment build SRC -o {out}`)")
    sources = [read_chunk_file(path, name) for name, path in _chunk_files(chunks)] if chunks.is_dir() else []
    files, meta = _store_rows(out)
    if src is None and meta.get("src"):
        src = Path(meta["src"])
    largest = max(
        (int(r["tokens"]) for c in sources for r in c.records if not r.get("oversize")),
        default=0,
    )
    settings, exact = build_settings(src, overrides or {}, meta.get("fingerprint", ""), largest)
    return Output(
        out=out,
        sources=sources,
        files=files,
        status=read_status(out),
        src=src,
        settings=settings,
        settings_exact=exact,
    )
