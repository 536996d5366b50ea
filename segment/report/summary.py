"""The summary of an output folder: files, chunks and problems, as a record and as text."""

from __future__ import annotations

import os
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from segment.adapters import ADAPTERS, lower_suffix
from segment.daemon.scope import Scope
from segment.report.figures import TOP_FILES, ChunkFigures, FileProblems, as_plain, chunk_figures
from segment.report.output import Output

SUMMARY_VERSION = 1
SKIPPED_EXAMPLES = 20


def format_of(source: str) -> str:
    """Format of a source file by its suffix ('other' when no adapter takes it)."""
    suffix = lower_suffix(source)
    return next((a.format for a in ADAPTERS if suffix in a.suffixes), "other")


@dataclass(slots=True)
class Skipped:
    """Files under the source root that the build did not take (listing only, nothing read)."""

    count: int = 0
    by_reason: dict[str, int] = field(default_factory=dict)
    examples: list[str] = field(default_factory=list)


@dataclass(slots=True)
class Summary:
    """Everything `segment report` prints."""

    version: int
    out: str
    src: str | None
    budget: int
    budget_known: bool
    """True when the budget is the one the store's settings fingerprint was built with."""
    files: int
    files_by_format: dict[str, dict[str, int]]
    """format -> status -> files."""
    skipped: Skipped | None
    """None when the source root is not at hand."""
    no_chunks: list[str]
    failed: list[dict[str, str]]
    notes: list[dict[str, str]]
    bad_lines: int
    """Chunk file lines that are not chunk records."""
    figures: ChunkFigures
    top_files: list[FileProblems]

    def to_dict(self) -> dict[str, Any]:
        """The JSON form (`segment report --json`), described by summary.schema.json."""
        data: dict[str, Any] = as_plain(self)
        data["top_files"] = [dict(as_plain(p), total=p.total) for p in self.top_files]
        return data


def list_skipped(src: Path, out: Path, output: Output) -> Skipped:
    """Files under SRC that the scope policy leaves out: unsupported types, excluded, litter."""
    scope = Scope(src, out, output.settings)
    skipped = Skipped()
    reasons: Counter[str] = Counter()
    stack = [""]
    while stack:
        folder = stack.pop()
        try:
            entries = sorted(os.scandir(scope.abs(folder)), key=lambda e: e.name)
        except OSError:
            continue
        for entry in entries:
            rel = f"{folder}/{entry.name}" if folder else entry.name
            try:
                is_dir = entry.is_dir(follow_symlinks=False)
            except OSError:
                continue
            if is_dir:
                if scope.dir_wanted(rel):
                    stack.append(rel)
                elif not scope.in_out(rel):
                    reasons["excluded folder"] += 1
                    _example(skipped, rel + "/")
                continue
            if scope.file_wanted(rel) or scope.in_out(rel):
                continue
            reasons["unsupported type" if format_of(rel) == "other" else "excluded"] += 1
            _example(skipped, rel)
    skipped.by_reason = dict(sorted(reasons.items()))
    skipped.count = sum(reasons.values())
    return skipped


def _example(skipped: Skipped, rel: str) -> None:
    if len(skipped.examples) < SKIPPED_EXAMPLES:
        skipped.examples.append(rel)


def summarise(output: Output, *, list_source: bool = True) -> Summary:
    """The summary of an output folder; `list_source` lists the source root for skipped files."""
    figures = chunk_figures(((s.source, s.records) for s in output.sources), output.budget)
    with_chunks = {s.source for s in output.sources if s.records}
    by_format: dict[str, Counter[str]] = {}
    for row in output.files.values():
        by_format.setdefault(format_of(row.source), Counter())[row.status] += 1
    for source in with_chunks - set(output.files):  # chunk files the store does not know
        by_format.setdefault(format_of(source), Counter())["unrecorded"] += 1
    no_chunks = sorted(
        r.source for r in output.files.values() if r.status == "ok" and r.source not in with_chunks
    )
    failed = [
        {"source": r.source, "status": r.status, "reason": r.error or ""}
        for r in output.files.values()
        if r.status != "ok"
    ]
    notes = [
        {"source": r.source, "note": r.error} for r in output.files.values() if r.status == "ok" and r.error
    ]
    for entry in failed:
        figures.per_file.setdefault(entry["source"], FileProblems(entry["source"])).failed += 1
    for source in no_chunks:
        figures.per_file.setdefault(source, FileProblems(source)).no_chunks += 1
    ranked = sorted((p for p in figures.per_file.values() if p.total), key=lambda p: (-p.total, p.source))
    skipped = None
    if list_source and output.src is not None and output.src.is_dir():
        skipped = list_skipped(output.src, output.out, output)
    return Summary(
        version=SUMMARY_VERSION,
        out=str(output.out),
        src=str(output.src) if output.src else None,
        budget=output.budget,
        budget_known=output.settings_exact,
        files=len(set(output.files) | with_chunks),
        files_by_format={fmt: dict(sorted(c.items())) for fmt, c in sorted(by_format.items())},
        skipped=skipped,
        no_chunks=no_chunks,
        failed=sorted(failed, key=lambda f: f["source"]),
        notes=[{"source": n["source"], "note": n["note"] or ""} for n in notes],
        bad_lines=sum(s.bad_lines for s in output.sources),
        figures=figures,
        top_files=ranked[:TOP_FILES],
    )
