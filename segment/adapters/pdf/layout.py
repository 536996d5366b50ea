"""Reading order: columns found from empty vertical strips, lines merged per baseline, blocks.

A gutter is a vertical strip that no ordinary line crosses (only page-wide lines such as a title
or a full-width figure caption may), with enough text on both sides and lines on each side that
fill their column. Lines that cross a gutter split the page into bands; inside a band, each column
is read top to bottom before the next.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from itertools import accumulate
from statistics import median

from segment.adapters.pdf.extract import Line, LineFlag, Piece

MIN_GUTTER = 6.0
"""Narrowest empty strip (points) taken as a gutter between columns."""
_EMPTY_RUN = re.compile(rb"\x01+")

WIDE_SHARE = 0.55
"""A line wider than this share of the text width may cross a gutter (titles, floats)."""


@dataclass(slots=True)
class TextBlock:
    """Consecutive lines of one column that belong together (a paragraph-sized unit)."""

    lines: list[Line]
    column: int = 0
    payload: object | None = None
    """A non-text item placed in the reading order (a table), else None."""
    notes: set[str] = field(default_factory=set)

    @property
    def page(self) -> int:
        """1-based page."""
        return self.lines[0].page

    @property
    def x0(self) -> float:
        """Left edge."""
        return min(ln.x0 for ln in self.lines)

    @property
    def y0(self) -> float:
        """Top edge."""
        return self.lines[0].y0

    @property
    def y1(self) -> float:
        """Bottom edge."""
        return max(ln.y1 for ln in self.lines)

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        """(x0, y0, x1, y1) of all lines."""
        lines = self.lines
        x0, y0, x1, y1 = lines[0].x0, lines[0].y0, lines[0].x1, lines[0].y1
        for ln in lines[1:]:
            x0 = ln.x0 if ln.x0 < x0 else x0
            y0 = ln.y0 if ln.y0 < y0 else y0
            x1 = ln.x1 if ln.x1 > x1 else x1
            y1 = ln.y1 if ln.y1 > y1 else y1
        return (x0, y0, x1, y1)

    @property
    def text(self) -> str:
        """Lines joined by single spaces (no hyphen repair; for matching and tests)."""
        return " ".join(ln.text.strip() for ln in self.lines).strip()


def find_gutters(lines: list[Line]) -> list[tuple[float, float]]:
    """Empty vertical strips between text columns, left to right."""
    body = [ln for ln in lines if LineFlag.TABLE not in ln.flags]
    if len(body) < 8:
        return []
    x_min = min(ln.x0 for ln in body)
    x_max = max(ln.x1 for ln in body)
    width = x_max - x_min
    if not 150 <= width <= 20_000:
        return []  # too narrow for columns, or coordinates from a damaged page
    wide = sum(1 for ln in body if ln.x1 - ln.x0 > WIDE_SHARE * width)
    slack = wide + max(2, int(0.03 * len(body)))
    n = int(width) + 2
    diff = [0] * (n + 1)
    for ln in body:
        diff[max(0, int(ln.x0 - x_min))] += 1
        diff[min(n, int(ln.x1 - x_min) + 1)] -= 1
    # Points covered by at most `slack` lines, as a byte string; gutters are its runs of 1s that
    # start after the left edge and end before the right one.
    empty = bytes([cover <= slack for cover in accumulate(diff[:n])])
    gutters: list[tuple[float, float]] = []
    for run in _EMPTY_RUN.finditer(empty):
        start, end = run.span()
        if start > 0 and end < n and end - start >= MIN_GUTTER:
            gutters.append((x_min + start, x_min + end - 1))
    kept: list[tuple[float, float]] = []
    for i, g in enumerate(gutters):
        lo = gutters[i - 1][1] if i > 0 else x_min - 1
        hi = gutters[i + 1][0] if i + 1 < len(gutters) else x_max + 1
        if _is_column_split(body, g, lo, hi, width):
            kept.append(g)
    return kept


def _is_column_split(
    lines: list[Line], gutter: tuple[float, float], lo: float, hi: float, width: float
) -> bool:
    """Check a gutter against the columns on either side of it (bounded by lo and hi)."""
    g0, g1 = gutter
    left = [ln for ln in lines if ln.x1 <= g0 + 1 and ln.x0 >= lo - 1]
    right = [ln for ln in lines if ln.x0 >= g1 - 1 and ln.x1 <= hi + 1]
    need = max(3, 0.1 * len(lines))
    if len(left) < need or len(right) < need:
        return False
    if min(g0 - min(ln.x0 for ln in left), max(ln.x1 for ln in right) - g1) < 0.15 * width:
        return False
    span = max(g0 - min(ln.x0 for ln in left), 1.0)
    fill = median((ln.x1 - ln.x0) / span for ln in left)
    if fill >= 0.45:
        return True
    # Short lines on the left: a key/description layout when nearly every left line has a
    # partner on the same baseline to its right; separate columns otherwise.
    paired = 0
    for ln in left:
        mid = (ln.y0 + ln.y1) / 2
        if any(r.y0 <= mid <= r.y1 and r.x0 - ln.x1 < 0.3 * width for r in right):
            paired += 1
    return paired < 0.7 * len(left)


def _column_of(line: Line, gutters: list[tuple[float, float]]) -> int:
    """Column index, or -1 when the line crosses a gutter."""
    col = 0
    for g0, g1 in gutters:
        if line.x0 < g0 - 1 and line.x1 > g1 + 1:
            return -1
        if line.x0 >= g1 - 1 or (line.x0 + line.x1) / 2 > g1:
            col += 1
    return col


def merge_baselines(lines: list[Line]) -> list[Line]:
    """Join lines that share a baseline (split runs, bullets set apart, key/value pairs)."""
    out: list[Line] = []
    alias: dict[int, int] = {}
    for line in sorted(lines, key=lambda ln: (ln.y0, ln.x0)):
        if line.block in alias:
            line.block = alias[line.block]
        if out and LineFlag.TABLE not in line.flags and LineFlag.TABLE not in out[-1].flags:
            prev = out[-1]
            overlap = min(prev.y1, line.y1) - max(prev.y0, line.y0)
            gap = line.x0 - prev.x1
            size = max(prev.size, line.size, 1.0)
            near = gap <= 1.5 * size or line.block == prev.block
            if overlap >= 0.5 * min(prev.height, line.height) and gap >= -1 and near:
                if line.block != prev.block and gap <= 1.5 * size:
                    # A sentence that MuPDF cut into two blocks mid-line goes on below in the
                    # second block: its later lines belong with the first.
                    alias[line.block] = prev.block
                out[-1] = _join(prev, line)
                continue
        out.append(line)
    return out


PAIR_GAP = 2.5
"""A gap of this many font sizes between two runs on one baseline separates a key from its
description (reference cards, option lists)."""


def _join(a: Line, b: Line) -> Line:
    pieces = list(a.pieces)
    gap = b.x0 - a.x1
    split = len(pieces) + 1 if gap >= PAIR_GAP * max(a.size, b.size, 1.0) and a.split < 0 else a.split
    if gap > 0.15 * max(a.size, 1.0) and not a.text.endswith(" ") and not b.text.startswith(" "):
        pieces.append(Piece(" ", a.x1, b.x0, a.size, False, False, False, False))
    pieces.extend(b.pieces)
    line = Line(a.page, a.x0, min(a.y0, b.y0), b.x1, max(a.y1, b.y1), pieces, a.block)
    line.flags = a.flags | b.flags
    line.split = split if split < len(pieces) else -1
    line.finish()
    return line


def order_page(lines: list[Line]) -> list[TextBlock]:
    """The page's lines as blocks in reading order (columns, then top to bottom)."""
    if not lines:
        return []
    gutters = find_gutters(lines)
    ordered = sorted(lines, key=lambda ln: (ln.y0, ln.x0))
    blocks: list[TextBlock] = []
    band: list[Line] = []

    def flush() -> None:
        if not band:
            return
        for col in range(len(gutters) + 1):
            members = [ln for ln in band if _column_of(ln, gutters) == col]
            blocks.extend(_group(merge_baselines(members), col))
        band.clear()

    spanning: list[Line] = []
    for line in ordered:
        if gutters and _column_of(line, gutters) == -1:
            flush()
            spanning.append(line)
            continue
        if spanning:
            blocks.extend(_group(merge_baselines(spanning), -1))
            spanning = []
        band.append(line)
    flush()
    if spanning:
        blocks.extend(_group(merge_baselines(spanning), -1))
    return blocks


def _group(lines: list[Line], column: int) -> list[TextBlock]:
    """Cut a column's lines into blocks at block changes, wide gaps and style changes."""
    out: list[TextBlock] = []
    for line in lines:
        if LineFlag.TABLE in line.flags:
            out.append(TextBlock([line], column, payload=line.payload))
            continue
        if out and out[-1].payload is None and LineFlag.TABLE not in out[-1].lines[-1].flags:
            prev = out[-1].lines[-1]
            if not _breaks(prev, line):
                out[-1].lines.append(line)
                continue
        out.append(TextBlock([line], column))
    return out


_SECTION_NUMBER = re.compile(r"^\s*(\d{1,3}(\.\d{1,3})*|[A-Z](\.\d{1,3})+|[A-Z])\.?\s+\S")


def _breaks(prev: Line, line: Line) -> bool:
    if line.block != prev.block:
        return True
    size = min(prev.size, line.size) or 1.0
    if line.y0 - prev.y1 > 0.7 * size:
        return True
    if prev.bold > 0.9 and line.bold > 0.9 and abs(prev.size - line.size) <= 0.6:
        # A heading set on two lines goes on (even through a code-font word), unless the new
        # line starts a numbered heading of its own ("A Research Methods" / "A.1 Part One").
        return bool(_SECTION_NUMBER.match(line.text))
    if (prev.mono >= 0.8) != (line.mono >= 0.8):
        # Code set apart from prose (indented or spaced); an inline code run that happens to
        # fill a wrapped line of a paragraph stays in the paragraph, whatever its type size.
        return abs(line.x0 - prev.x0) > 3 or line.y0 - prev.y1 > 0.5 * size
    if abs(prev.prose_size - line.prose_size) > 0.6:
        return True  # compared on the prose: a line full of smaller inline code is no break
    return bool(abs(prev.bold - line.bold) > 0.6 and (prev.bold > 0.9 or line.bold > 0.9))
