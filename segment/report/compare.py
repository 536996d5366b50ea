"""`segment report --compare`: our chunks beside fixed-size and sliding windows of the same files.

This is the one part of the report that reads the sources again: the baselines need each
document's text, so every file with chunks is parsed once more (with the build's settings).
"""

from __future__ import annotations

import logging
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from segment.api import parse
from segment.errors import SegmentError
from segment.report.baselines import FlatDocument, Window, flatten, windows
from segment.report.figures import TokenStats, continued_kind
from segment.report.output import Output
from segment.report.retrieval import (
    Passage,
    Question,
    RetrievalFigures,
    evaluate,
    passages_of_records,
    passages_of_windows,
)
from segment.report.textshape import ends_in_row_part, ends_mid_sentence
from segment.tokens import counter_for

log = logging.getLogger(__name__)


@dataclass(slots=True)
class ChunkingFigures:
    """The compared figures of one way of cutting the same files."""

    name: str
    chunks: int = 0
    mid_sentence: int = 0
    rows_split: int = 0
    """Table rows cut by a chunk boundary."""
    code_split: int = 0
    """Code blocks cut into more than one chunk."""
    heading_known: int = 0
    """Chunks whose heading path is known from the chunk itself."""
    tokens: TokenStats | None = None


@dataclass(slots=True)
class Comparison:
    """Figures side by side, and what the baselines were cut with."""

    budget: int
    overlap: int
    files: int
    unreadable: list[str]
    rows: list[ChunkingFigures]


def sliding_overlap(output: Output) -> int:
    """The overlap setting, or a quarter of the budget when none was set (common practice: 10-25%)."""
    return output.settings.overlap_tokens or output.budget // 4


def flat_documents(output: Output) -> Iterator[FlatDocument]:
    """The flat text of every source with chunks, parsed again from the source root."""
    if output.src is None or not output.src.is_dir():
        raise FileNotFoundError(f"{output.out}: the source root is not at hand (pass --src)")
    for chunks in output.sources:
        if not chunks.records:
            continue
        try:
            document = parse(Path(output.src) / chunks.source, output.settings, source=chunks.source)
        except SegmentError as exc:
            log.warning("%s: %s [%s]; left out of the comparison", exc.source, exc.reason, exc.status)
            continue
        yield flatten(document)


def _ours(output: Output, sources: set[str]) -> ChunkingFigures:
    figures = ChunkingFigures("ours")
    tokens: list[int] = []
    for chunks in output.sources:
        if chunks.source not in sources:
            continue
        records = chunks.records
        for record in records:
            figures.chunks += 1
            tokens.append(int(record["tokens"]))
            figures.mid_sentence += ends_mid_sentence(record["text"], list(record["blocks"]))
            figures.rows_split += ends_in_row_part(record["text"])
            figures.heading_known += bool(record["breadcrumb"])
        code_run = False
        for prev, nxt in zip(records, records[1:]):
            is_code = continued_kind(prev, nxt) == "code"
            figures.code_split += is_code and not code_run
            code_run = is_code
    figures.tokens = TokenStats.of(tokens, output.budget)
    return figures


def _cut_inside(ranges: list[tuple[int, int]], cuts: list[int]) -> int:
    """How many ranges hold at least one cut strictly inside them."""
    count, k = 0, 0
    cuts = sorted(cuts)
    for start, end in ranges:
        while k < len(cuts) and cuts[k] <= start:
            k += 1
        count += k < len(cuts) and cuts[k] < end
    return count


def window_figures(figures: ChunkingFigures, flat: FlatDocument, cut: list[Window]) -> None:
    """Add one document's windows to a baseline's figures."""
    figures.chunks += len(cut)
    ends = [w.end for w in cut[:-1]]
    starts = [w.start for w in cut[1:]]
    boundaries = ends + starts
    figures.rows_split += _cut_inside(flat.rows, boundaries)
    figures.code_split += _cut_inside(flat.codes, boundaries)
    for w in cut:
        # a row or code cut is counted above, not again as a sentence cut
        if not ends_in_row_part(w.text):
            figures.mid_sentence += ends_mid_sentence(w.text)
        figures.heading_known += w.start in flat.headings


def compare(output: Output, flats: Iterable[FlatDocument] | None = None) -> Comparison:
    """Cut every file with chunks by the two baselines and measure all three chunkings.

    `flats` are the documents already parsed again (`flat_documents`), to parse them only once.
    """
    counter = counter_for(output.settings.tokenizer, output.settings.budget_unit)
    overlap = sliding_overlap(output)
    fixed, sliding = ChunkingFigures("fixed windows"), ChunkingFigures(f"sliding windows (overlap {overlap})")
    fixed_tokens: list[int] = []
    sliding_tokens: list[int] = []
    sources: set[str] = set()
    with_chunks = [c.source for c in output.sources if c.records]
    for flat in flats if flats is not None else flat_documents(output):
        sources.add(flat.source)
        for figures, step_back, tokens in ((fixed, 0, fixed_tokens), (sliding, overlap, sliding_tokens)):
            cut = windows(flat, output.budget, step_back, counter)
            window_figures(figures, flat, cut)
            tokens.extend(w.tokens for w in cut)
    unreadable = sorted(set(with_chunks) - sources)
    fixed.tokens = TokenStats.of(fixed_tokens, output.budget)
    sliding.tokens = TokenStats.of(sliding_tokens, output.budget)
    return Comparison(
        output.budget, overlap, len(sources), unreadable, [_ours(output, sources), fixed, sliding]
    )


def comparison_text(comparison: Comparison) -> list[str]:
    """The comparison as a table for people."""
    out = [
        f"compared on {comparison.files} files at {comparison.budget} tokens"
        + (f" ({len(comparison.unreadable)} could not be parsed again)" if comparison.unreadable else ""),
        f"{'':<34}{'chunks':>8}{'mid-sentence':>14}{'rows split':>12}{'code split':>12}"
        f"{'heading known':>15}{'q1':>6}{'median':>8}{'q3':>6}{'max':>6}",
    ]
    for row in comparison.rows:
        t = row.tokens or TokenStats.of([], comparison.budget)
        known = 100 * row.heading_known / row.chunks if row.chunks else 0.0
        mid = 100 * row.mid_sentence / row.chunks if row.chunks else 0.0
        out.append(
            f"{row.name:<34}{row.chunks:>8}{row.mid_sentence:>7} {mid:>5.1f}%{row.rows_split:>12}"
            f"{row.code_split:>12}{known:>14.1f}%{t.q1:>6.0f}{t.median:>8.0f}{t.q3:>6.0f}{t.max:>6}"
        )
    return out


def comparison_dict(comparison: Comparison) -> dict[str, Any]:
    """The JSON form of a comparison."""
    from segment.report.figures import as_plain

    data: dict[str, Any] = as_plain(comparison)
    return data


def evaluate_queries(
    output: Output, questions: list[Question], flats: Iterable[FlatDocument] | None = None
) -> list[RetrievalFigures]:
    """Recall and MRR of ours, fixed windows and sliding windows on the user's questions."""
    counter = counter_for(output.settings.tokenizer, output.settings.budget_unit)
    overlap = sliding_overlap(output)
    fixed: list[Passage] = []
    sliding: list[Passage] = []
    sources: set[str] = set()
    for flat in flats if flats is not None else flat_documents(output):
        sources.add(flat.source)
        fixed += passages_of_windows(flat, windows(flat, output.budget, 0, counter))
        sliding += passages_of_windows(flat, windows(flat, output.budget, overlap, counter))
    ours = passages_of_records(r for c in output.sources if c.source in sources for r in c.records)
    return [
        evaluate("ours", ours, questions),
        evaluate("fixed windows", fixed, questions),
        evaluate(f"sliding windows (overlap {overlap})", sliding, questions),
    ]
