"""Ruled grids: horizontal and vertical rulings joined into a grid; cells are the grid's boxes,
with column spans where a vertical ruling stops."""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from statistics import median

from segment.adapters.pdf.extract import Box, Line
from segment.adapters.pdf.rulings import TOL, Rulings, cluster, components
from segment.adapters.pdf.table_words import FoundTable, Word, bold_share, cell_text


def grids_of(r: Rulings) -> list[tuple[list[int], list[int]]]:
    """The connected groups of rulings that hold both horizontal and vertical ones."""
    return [(hs, vs) for hs, vs in components(r) if hs and vs]


def grid_lines(r: Rulings, hs: list[int], vs: list[int]) -> tuple[list[float], list[float]]:
    """Column and row boundaries of a grid (xs, ys); open frames (no outer verticals or no
    outer rules) still bound the table."""
    ys = cluster([r.h[i][0] for i in hs] + [min(r.v[j][1] for j in vs), max(r.v[j][2] for j in vs)], 4.0)
    xs = cluster([r.v[j][0] for j in vs] + [min(r.h[i][1] for i in hs), max(r.h[i][2] for i in hs)], 4.0)
    return xs, ys


def grid_tables(
    page_no: int, r: Rulings, grids: list[tuple[list[int], list[int]]], words: list[Word], lines: list[Line]
) -> list[FoundTable]:
    """Tables framed by horizontal and vertical rulings."""
    found: list[FoundTable] = []
    for hs, vs in grids:
        xs, ys = grid_lines(r, hs, vs)
        if len(xs) < 3 or len(ys) < 2:
            continue
        table = _grid_table(page_no, r, [r.v[j] for j in vs], xs, ys, words, lines)
        if table is not None:
            found.append(table)
    return found


def _grid_table(
    page_no: int,
    r: Rulings,
    vsegs: list[tuple[float, float, float]],
    xs: list[float],
    ys: list[float],
    words: list[Word],
    lines: list[Line],
) -> FoundTable | None:
    bbox = (xs[0], ys[0], xs[-1], ys[-1])
    inside = [w for w in words if xs[0] <= w.cx <= xs[-1] and ys[0] <= w.cy <= ys[-1]]
    if not inside:
        return None
    by_lines = len(ys) == 2
    if by_lines:
        # Only an outer frame horizontally: rows follow the text lines.
        ys = [ys[0]] + _text_row_breaks(inside) + [ys[-1]]
    rows: list[list[str]] = []
    boxes: list[Box] = []
    ncols = len(xs) - 1
    boundaries = [[(y0, y1) for vx, y0, y1 in vsegs if abs(vx - x) <= TOL] for x in xs]
    inside.sort(key=lambda w: w.cy)  # rows are cut from it by bisection (cells sort by key)
    centres = [w.cy for w in inside]
    for top, bottom in zip(ys, ys[1:]):
        band = inside[bisect_left(centres, top) : bisect_right(centres, bottom)]
        if not band:
            continue
        cells: list[str] = []
        start = 0
        for c in range(1, ncols + 1):
            if c < ncols and not _has_vertical(boundaries[c], top, bottom):
                continue  # no ruling here: the cell spans into the next column
            text = cell_text([w for w in band if xs[start] <= w.cx <= xs[c]])
            cells.extend([text] * (c - start))
            start = c
        if by_lines and rows and not cells[0] and any(cells):
            # No ruling between rows and nothing in the first column: a wrapped cell goes on.
            rows[-1] = [f"{a} {b}".strip() for a, b in zip(rows[-1], cells)]
            boxes[-1] = (xs[0], boxes[-1][1], xs[-1], bottom)
        elif any(cells):
            rows.append(cells)
            boxes.append((xs[0], top, xs[-1], bottom))
    filled = sum(1 for row in rows for cell in row if cell)
    if len(rows) == 1 and len({c for c in rows[0] if c}) >= 2 and bold_share(lines, boxes[0]) >= 0.6:
        # A lone header row: the table goes on over the page break (joined in the flow later).
        return FoundTable(page_no, bbox, [rows[0]], [], [], "grid")
    if len(rows) < 2 or filled < 3:
        return None
    # A framed box (code listing, note) is not a table: real tables have rows of distinct cells
    # and more than one column that holds text.
    distinct = sum(1 for row in rows if len({c for c in row if c}) >= 2)
    used_cols = sum(1 for c in range(ncols) if any(row[c] for row in rows))
    if distinct < max(2, len(rows) // 3) or used_cols < 2:
        return None
    text = "".join(c for row in rows for c in row)
    if sum(map(str.isalnum, text)) < 0.3 * max(len(text), 1):
        return None  # labels of a vector figure (dash rules, arrows), not a table
    header: list[list[str]] = []
    if _header_first(rows, boxes, r, lines):
        header = [rows.pop(0)]
        boxes.pop(0)
    return FoundTable(page_no, bbox, header, rows, boxes, "grid")


def _text_row_breaks(words: list[Word]) -> list[float]:
    centres = cluster([w.cy for w in words], tol=3.0)
    return [(a + b) / 2 for a, b in zip(centres, centres[1:])]


def _has_vertical(segments: list[tuple[float, float]], top: float, bottom: float) -> bool:
    """Whether the vertical segments (y0, y1) on one column boundary rule most of a row."""
    covered = 0.0
    for y0, y1 in segments:
        if y1 > top and y0 < bottom:  # the others add nothing
            covered += (y1 if y1 < bottom else bottom) - (y0 if y0 > top else top)
    return covered >= 0.6 * (bottom - top)


def _header_first(
    rows: list[list[str]],
    boxes: list[Box],
    r: Rulings,
    lines: list[Line],
) -> bool:
    if len(rows) < 2:
        return False
    first = boxes[0]
    for fx0, fy0, fx1, fy1 in r.fills:
        # Shaded first row, body not shaded the same way.
        if fy0 <= first[1] + TOL and fy1 >= first[3] - TOL and fx1 - fx0 > 0.5 * (first[2] - first[0]):
            return True
    head = bold_share(lines, first)
    body = median(bold_share(lines, b) for b in boxes[1:])
    return head >= 0.6 and body < 0.5
