"""The figures of the summary, computed from chunk records and store rows only (no source read)."""

from __future__ import annotations

import hashlib
from collections import Counter, defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

from segment.chunk import normalise_text
from segment.report.textshape import (
    LIST_MARKER,
    ends_mid_sentence,
    first_line,
    is_fence,
    is_table_row,
    last_line,
)

SPLIT_KINDS = ("table", "list", "code")
TOP_FILES = 10
EXAMPLES = 20


def percentile(values: list[int], q: float) -> float:
    """The q-th percentile (0-100) by linear interpolation between closest ranks.

    The same rule as numpy's default and `statistics.quantiles(method="inclusive")`.
    """
    if not values:
        return 0.0
    ordered = sorted(values)
    pos = (len(ordered) - 1) * q / 100
    lo = int(pos)
    hi = min(lo + 1, len(ordered) - 1)
    return ordered[lo] + (ordered[hi] - ordered[lo]) * (pos - lo)


@dataclass(slots=True)
class TokenStats:
    """Token counts of one group of chunks against the budget."""

    chunks: int
    min: int
    q1: float
    median: float
    q3: float
    max: int
    mean: float
    budget_share: float
    """Mean tokens over the budget: how full the average chunk is (0-1, more when oversize)."""

    @classmethod
    def of(cls, tokens: list[int], budget: int) -> TokenStats:
        """Statistics of a list of token counts."""
        if not tokens:
            return cls(0, 0, 0.0, 0.0, 0.0, 0, 0.0, 0.0)
        mean = sum(tokens) / len(tokens)
        return cls(
            chunks=len(tokens),
            min=min(tokens),
            q1=percentile(tokens, 25),
            median=percentile(tokens, 50),
            q3=percentile(tokens, 75),
            max=max(tokens),
            mean=round(mean, 2),
            budget_share=round(mean / budget, 4),
        )


@dataclass(slots=True)
class ChunkRef:
    """One chunk named in a list of findings."""

    source: str
    seq: int
    tokens: int
    note: str = ""


@dataclass(slots=True)
class SplitBlock:
    """A table, list or code block cut into parts across consecutive chunks."""

    kind: str
    source: str
    first_seq: int
    parts: int


@dataclass(slots=True)
class DuplicateGroup:
    """Chunks with the same (whitespace-normalised) text in more than one source."""

    chunks: int
    sources: list[str]
    tokens: int
    preview: str


@dataclass(slots=True)
class FileProblems:
    """Problem counts of one source file."""

    source: str
    oversize: int = 0
    over_budget_unflagged: int = 0
    mid_sentence: int = 0
    heading_only: int = 0
    failed: int = 0
    no_chunks: int = 0

    @property
    def total(self) -> int:
        """All problems of the file."""
        return (
            self.oversize
            + self.over_budget_unflagged
            + self.mid_sentence
            + self.heading_only
            + self.failed
            + self.no_chunks
        )


@dataclass(slots=True)
class ChunkFigures:
    """Figures over the chunk records alone."""

    budget: int
    chunks: int = 0
    chunks_by_format: dict[str, int] = field(default_factory=dict)
    tokens: dict[str, TokenStats] = field(default_factory=dict)
    """Per format, plus `all`."""
    oversize: list[ChunkRef] = field(default_factory=list)
    over_budget_unflagged: list[ChunkRef] = field(default_factory=list)
    mid_sentence: list[ChunkRef] = field(default_factory=list)
    heading_only: list[ChunkRef] = field(default_factory=list)
    split_blocks: list[SplitBlock] = field(default_factory=list)
    breadcrumb_depth: dict[int, int] = field(default_factory=dict)
    duplicates: list[DuplicateGroup] = field(default_factory=list)
    per_file: dict[str, FileProblems] = field(default_factory=dict)
    chunks_per_file: dict[str, int] = field(default_factory=dict)


def _lines(record: dict[str, Any]) -> tuple[int, int] | None:
    span = record.get("lines") or record.get("pages")
    if isinstance(span, list) and len(span) == 2:
        return int(span[0]), int(span[1])
    return None


def _adjacent(prev: dict[str, Any], nxt: dict[str, Any]) -> bool:
    """True when `nxt` starts where `prev` ends (lines, else pages; unknown counts as adjacent)."""
    a, b = _lines(prev), _lines(nxt)
    if a is None or b is None:
        return True
    return b[0] <= a[1] + 1


def _last_table_header(text: str) -> str | None:
    """Header line of the table the text ends with, or None."""
    lines = [line for line in text.splitlines() if line.strip()]
    if not lines or not is_table_row(lines[-1]):
        return None
    i = len(lines) - 1
    while i > 0 and is_table_row(lines[i - 1]):
        i -= 1
    return lines[i].strip()


def _last_fence_opening(text: str) -> str | None:
    """The opening fence line of the code block the text ends with, or None."""
    lines = [line for line in text.splitlines() if line.strip()]
    if not lines or not is_fence(lines[-1]):
        return None
    fences = [line.strip() for line in lines if is_fence(line)]
    return fences[-2] if len(fences) >= 2 else None


def continued_kind(prev: dict[str, Any], nxt: dict[str, Any]) -> str | None:
    """`table`, `list` or `code` when `nxt` carries on a block that `prev` ends with.

    Read from the text as we render it: a table part repeats the header row; a code part
    reopens the same fence; a list part starts with an item marker right after a line that
    belongs to an item; and the source spans of the two chunks touch.
    """
    head = first_line(nxt["text"])
    if not head or not _adjacent(prev, nxt):
        return None
    if is_table_row(head):
        header = _last_table_header(prev["text"])
        return "table" if header is not None and header == head.strip() else None
    if is_fence(head):
        opening = _last_fence_opening(prev["text"])
        return "code" if opening is not None and opening == head.strip() else None
    if LIST_MARKER.match(head):
        tail = prev["text"].split("\n\n")[-1]
        return "list" if LIST_MARKER.match(first_line(tail)) else None
    return None


def _split_blocks(source: str, records: list[dict[str, Any]]) -> list[SplitBlock]:
    found: list[SplitBlock] = []
    runs: dict[str, SplitBlock] = {}
    for prev, nxt in zip(records, records[1:]):
        kind = continued_kind(prev, nxt)
        for other in [k for k in runs if k != kind]:
            found.append(runs.pop(other))
        if kind is None:
            continue
        if kind in runs:
            runs[kind].parts += 1
        else:
            runs[kind] = SplitBlock(kind, source, int(prev["seq"]), 2)
    found.extend(runs.values())
    return sorted(found, key=lambda b: b.first_seq)


def _ref(record: dict[str, Any], note: str = "") -> ChunkRef:
    return ChunkRef(str(record["source"]), int(record["seq"]), int(record["tokens"]), note)


def chunk_figures(groups: Iterable[tuple[str, list[dict[str, Any]]]], budget: int) -> ChunkFigures:
    """Figures over the records of each source (given in seq order)."""
    figures = ChunkFigures(budget=budget)
    tokens_by_format: dict[str, list[int]] = defaultdict(list)
    depth: Counter[int] = Counter()
    texts: dict[bytes, list[tuple[str, int, str]]] = defaultdict(list)
    for source, records in groups:
        problems = figures.per_file.setdefault(source, FileProblems(source))
        figures.chunks_per_file[source] = len(records)
        for record in records:
            fmt = str(record["format"])
            tokens = int(record["tokens"])
            tokens_by_format[fmt].append(tokens)
            depth[len(record["breadcrumb"])] += 1
            blocks = list(record["blocks"])
            if record.get("oversize"):
                figures.oversize.append(_ref(record))
                problems.oversize += 1
            elif tokens > budget:
                figures.over_budget_unflagged.append(_ref(record, f"{tokens} > {budget}, not flagged"))
                problems.over_budget_unflagged += 1
            if ends_mid_sentence(record["text"], blocks):
                figures.mid_sentence.append(_ref(record, last_line(record["text"])[-60:]))
                problems.mid_sentence += 1
            if blocks == ["heading"]:
                figures.heading_only.append(_ref(record))
                problems.heading_only += 1
            key = hashlib.blake2b(normalise_text(record["text"]).encode(), digest_size=16).digest()
            texts[key].append((source, tokens, record["text"]))
        figures.split_blocks.extend(_split_blocks(source, records))
    figures.chunks = sum(len(v) for v in tokens_by_format.values())
    figures.chunks_by_format = {fmt: len(v) for fmt, v in sorted(tokens_by_format.items())}
    figures.tokens = {fmt: TokenStats.of(v, budget) for fmt, v in sorted(tokens_by_format.items())}
    figures.tokens["all"] = TokenStats.of([t for v in tokens_by_format.values() for t in v], budget)
    figures.breadcrumb_depth = dict(sorted(depth.items()))
    for members in texts.values():
        sources = sorted({m[0] for m in members})
        if len(sources) > 1:
            preview = " ".join(members[0][2].split())[:120]
            figures.duplicates.append(DuplicateGroup(len(members), sources, members[0][1], preview))
    figures.duplicates.sort(key=lambda g: (-g.chunks, g.sources))
    return figures


def as_plain(value: Any) -> Any:
    """Dataclasses, dicts and lists as JSON-ready values (int keys become strings)."""
    if hasattr(value, "__dataclass_fields__"):
        return {name: as_plain(getattr(value, name)) for name in value.__dataclass_fields__}
    if isinstance(value, dict):
        return {str(k): as_plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [as_plain(v) for v in value]
    return value
