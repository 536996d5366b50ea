"""Tables on the candidate pages that `rulings` picks (cheap, from vector drawings).

Two detectors of our own:
- ruled grids: horizontal and vertical rulings joined into a grid; cells are the grid's boxes,
  with column spans where a vertical ruling stops;
- rule-bounded tables (booktabs style: horizontal rules only): the text between rules of the same
  width must fall into aligned columns, which rejects prose between rules (boxes, separators).
`page.find_tables()` is available as a reference engine (`engine="pymupdf"`); it costs tens of
milliseconds a page, so it is only run on candidate pages too.
"""

from __future__ import annotations

import re
from bisect import bisect_left, bisect_right
from collections.abc import Callable
from dataclasses import dataclass
from statistics import median

import pymupdf

from segment.adapters.pdf.extract import Line, Piece, normalise_text
from segment.adapters.pdf.rulings import (
    MIN_RULE_WIDTH,
    TOL,
    Rulings,
    body_band,
    cluster,
    components,
    is_candidate,
    rule_key,
    rulings,
)

_SPACE = re.compile(r"\s+")
_WORD = re.compile(r"\S+")


@dataclass(slots=True)
class FoundTable:
    """A table found on a page: header rows and body rows of cell texts."""

    page: int
    bbox: tuple[float, float, float, float]
    header: list[list[str]]
    rows: list[list[str]]
    row_boxes: list[tuple[float, float, float, float]]
    method: str


# ---------------------------------------------------------------- words and styles on a page


@dataclass(slots=True)
class Word:
    """A word with its box and centre; `key` orders words in reading order within a cell."""

    x0: float
    y0: float
    x1: float
    y1: float
    text: str
    key: tuple[int, int, int]
    cx: float
    cy: float


def line_words(lines: list[Line], bands: list[tuple[float, float]]) -> list[Word]:
    """Words of the lines whose centre lies in one of the (top, bottom) bands: the detectors look
    nowhere else. A word's box is placed inside its span by character count; the text pass gives
    span boxes, not character boxes.

    pymupdf's own word list (`get_text("words")`) costs about as much per page as the whole
    "dict" pass, since it boxes every character. When these words replaced it, the chunks of the
    shared PDFs and the fixtures stayed byte-identical: cells are separate spans, or split at
    spaces. Only body lines are read, so a running head never lands in a cell.
    """
    out: list[Word] = []
    for index, ln in enumerate(lines):
        cy = (ln.y0 + ln.y1) / 2
        for top, bottom in bands:
            if top <= cy <= bottom:
                break
        else:
            continue
        edges = _char_edges(ln.pieces)
        for n, m in enumerate(_WORD.finditer(ln.text)):
            x0 = edges(m.start(), False)
            x1 = edges(m.end() - 1, True)
            out.append(Word(x0, ln.y0, x1, ln.y1, m.group(), (ln.block, index, n), (x0 + x1) / 2, cy))
    return out


def _char_edges(pieces: list[Piece]) -> Callable[[int, bool], float]:
    """The left (or right) edge of the character at an offset in the line text, each piece's
    width spread evenly over its characters."""
    starts: list[int] = []
    steps: list[float] = []
    offset = 0
    for piece in pieces:
        starts.append(offset)
        steps.append((piece.x1 - piece.x0) / max(len(piece.text), 1))
        offset += len(piece.text)

    def edge(at: int, right: bool) -> float:
        k = bisect_right(starts, at) - 1
        return pieces[k].x0 + (at - starts[k] + right) * steps[k]

    return edge


def _cell_text(words: list[Word]) -> str:
    words = sorted(words, key=lambda w: w.key)
    return _SPACE.sub(" ", " ".join(w.text for w in words)).strip()


def _bold_share(lines: list[Line], box: tuple[float, float, float, float]) -> float:
    x0, y0, x1, y1 = box
    total = bold = 0
    for ln in lines:
        cy = (ln.y0 + ln.y1) / 2
        if not y0 <= cy <= y1:
            continue
        for p in ln.pieces:
            cx = (p.x0 + p.x1) / 2
            if x0 <= cx <= x1:
                n = len(p.text.strip())
                total += n
                bold += n if p.bold else 0
    return bold / total if total else 0.0


# ---------------------------------------------------------------- ruled grids


def grids_of(r: Rulings) -> list[tuple[list[int], list[int]]]:
    """The connected groups of rulings that hold both horizontal and vertical ones."""
    return [(hs, vs) for hs, vs in components(r) if hs and vs]


def _grid_lines(r: Rulings, hs: list[int], vs: list[int]) -> tuple[list[float], list[float]]:
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
        xs, ys = _grid_lines(r, hs, vs)
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
    boxes: list[tuple[float, float, float, float]] = []
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
            text = _cell_text([w for w in band if xs[start] <= w.cx <= xs[c]])
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
    if len(rows) == 1 and len({c for c in rows[0] if c}) >= 2 and _bold_share(lines, boxes[0]) >= 0.6:
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
    boxes: list[tuple[float, float, float, float]],
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
    head = _bold_share(lines, first)
    body = median(_bold_share(lines, b) for b in boxes[1:])
    return head >= 0.6 and body < 0.5


# ---------------------------------------------------------------- rule-bounded tables


def rule_groups(r: Rulings, free_h: list[int]) -> list[tuple[list[float], float, float]]:
    """Horizontal rules of equal extent that can bound a table: (their ys, x0, x1), two ys or more."""
    groups: dict[tuple[int, int], list[tuple[float, float, float]]] = {}
    for i in free_h:
        y, x0, x1 = r.h[i]
        if x1 - x0 >= MIN_RULE_WIDTH:
            groups.setdefault(rule_key(x0, x1), []).append((y, x0, x1))
    out = []
    for rules in groups.values():
        ys = cluster([y for y, _, _ in rules], tol=1.0)
        if len(ys) >= 2:
            out.append((ys, min(x for _, x, _ in rules), max(x for _, _, x in rules)))
    return out


def rule_tables(
    page_no: int, groups: list[tuple[list[float], float, float]], words: list[Word], lines: list[Line]
) -> list[FoundTable]:
    """Tables between horizontal rules of equal width whose text forms aligned columns."""
    found: list[FoundTable] = []
    for ys, x0, x1 in groups:
        bands: list[tuple[float, float, list[list[list[Word]]]]] = []
        for top, bottom in zip(ys, ys[1:]):
            band = [w for w in words if x0 - TOL <= w.cx <= x1 + TOL and top < w.cy < bottom]
            rows = _rows_of_cells(band)
            bands.append((top, bottom, rows))
        run: list[tuple[float, float, list[list[list[Word]]]]] = []
        for band_item in bands + [(0.0, 0.0, [])]:
            if band_item[2] and _tabular(band_item[2], x1 - x0):
                run.append(band_item)
                continue
            if run:
                table = _rule_table(page_no, run, x0, x1, lines)
                if table is not None:
                    found.append(table)
            run = []
    return found


def _rows_of_cells(words: list[Word]) -> list[list[list[Word]]]:
    """Words grouped into rows by their centre line, each row cut into cells at wide gaps."""
    rows: list[list[Word]] = []
    for w in sorted(words, key=lambda w: (w.cy, w.x0)):
        if rows and abs(rows[-1][0].cy - w.cy) <= 0.4 * (w.y1 - w.y0):
            rows[-1].append(w)
        else:
            rows.append([w])
    out: list[list[list[Word]]] = []
    for row in rows:
        row.sort(key=lambda w: w.x0)
        cells: list[list[Word]] = [[row[0]]]
        for prev, w in zip(row, row[1:]):
            height = max(w.y1 - w.y0, 1.0)
            if w.x0 - prev.x1 > 0.75 * height:
                cells.append([w])
            else:
                cells[-1].append(w)
        out.append(cells)
    return out


def _separators(rows: list[list[list[Word]]], x0: float, x1: float) -> list[tuple[float, float]]:
    """Vertical strips no multi-cell row's cell covers: the column boundaries."""
    spans = [(c[0].x0, c[-1].x1) for row in rows if len(row) >= 2 for c in row]
    if not spans:
        return []
    spans.sort()
    gaps: list[tuple[float, float]] = []
    reach = spans[0][1]
    for a, b in spans[1:]:
        if a - reach >= 4:
            gaps.append((reach, a))
        reach = max(reach, b)
    return gaps


def _tabular(rows: list[list[list[Word]]], width: float) -> bool:
    multi = sum(1 for row in rows if len(row) >= 2)
    if multi == 0 or multi < 0.6 * len(rows):
        return False
    # Prose rows fill the width in one cell; tables leave gaps common to all rows.
    return bool(_separators(rows, 0.0, width))


def _rule_table(
    page_no: int,
    run: list[tuple[float, float, list[list[list[Word]]]]],
    x0: float,
    x1: float,
    lines: list[Line],
) -> FoundTable | None:
    all_rows = [row for _, _, rows in run for row in rows]
    seps = _separators(all_rows, x0, x1)
    if not seps:
        return None
    bounds = [x0 - TOL] + [(a + b) / 2 for a, b in seps] + [x1 + TOL]
    parsed: list[tuple[list[str], tuple[float, float, float, float], int]] = []
    for band_no, (_, _, rows) in enumerate(run):
        for row in rows:
            words = [w for cell in row for w in cell]
            cells = [_cell_text([w for w in words if lo <= w.cx < hi]) for lo, hi in zip(bounds, bounds[1:])]
            box = (x0, min(w.y0 for w in words), x1, max(w.y1 for w in words))
            if parsed and not cells[0] and any(cells) and parsed[-1][2] == band_no:
                # A wrapped cell: its continuation line joins the row above.
                prev_cells, prev_box, _ = parsed[-1]
                merged = [f"{a} {b}".strip() for a, b in zip(prev_cells, cells)]
                parsed[-1] = (merged, (x0, prev_box[1], x1, box[3]), band_no)
                continue
            parsed.append((cells, box, band_no))
    if len(parsed) < 2:
        return None
    header_count = sum(1 for _, _, b in parsed if b == 0) if len(run) >= 2 else 0
    if header_count == 0 and _bold_share(lines, parsed[0][1]) >= 0.6:
        header_count = 1
    if header_count >= len(parsed):
        header_count = 0
    bbox = (x0, run[0][0], x1, run[-1][1])
    return FoundTable(
        page_no,
        bbox,
        [c for c, _, _ in parsed[:header_count]],
        [c for c, _, _ in parsed[header_count:]],
        [b for _, b, _ in parsed[header_count:]],
        "rules",
    )


# ---------------------------------------------------------------- pymupdf reference engine


def pymupdf_tables(page: pymupdf.Page, page_no: int) -> list[FoundTable]:
    """Tables from `page.find_tables()` (default strategy), spans expanded to the left."""
    out: list[FoundTable] = []
    for t in page.find_tables().tables:
        raw = t.extract()
        rows: list[list[str]] = []
        for raw_row in raw:
            cells: list[str] = []
            for cell in raw_row:
                text = _SPACE.sub(" ", normalise_text(cell)).strip() if cell is not None else None
                cells.append(text if text is not None else (cells[-1] if cells else ""))
            if any(cells):
                rows.append(cells)
        if not rows:
            continue
        boxes = [tuple(row.bbox) for row in t.rows][: len(rows)]
        header = [rows.pop(0)] if (len(rows) > 1 and not t.header.external and t.header.names) else []
        if header:
            boxes = boxes[1:]
        out.append(FoundTable(page_no, tuple(t.bbox), header, rows, boxes, "pymupdf"))  # type: ignore[arg-type]
    return out


def _within(r: Rulings, top: float, bottom: float) -> Rulings:
    """The rulings with the horizontal ones outside the body band (running head and foot rules)
    left out."""
    inner = [h for h in r.h if top <= h[0] <= bottom]
    if len(inner) == len(r.h):
        return r
    return Rulings(inner, r.v, r.fills, strokes=[h for h in r.strokes if top <= h[0] <= bottom])


def find_page_tables(
    page: pymupdf.Page | None,
    page_no: int,
    lines: list[Line],
    engine: str = "own",
    r: Rulings | None = None,
) -> tuple[list[FoundTable], bool]:
    """Tables on one page, and whether the page was a candidate at all. Our own engine reads
    only the lines and the rulings; the page is needed for `engine="pymupdf"`, or when `r` is
    not given (the rulings are then read from its drawings)."""
    if r is None:
        if page is None:
            raise ValueError("find_page_tables needs the page or its rulings")
        r = rulings(page)
    top, bottom = body_band(lines)
    if not is_candidate(_within(r, top, bottom)):
        return [], False
    if engine == "pymupdf":
        if page is None:
            raise ValueError('engine="pymupdf" needs the page')
        return pymupdf_tables(page, page_no), True
    grids = grids_of(r)
    in_grids = {i for hs, _ in grids for i in hs}
    groups = rule_groups(r, [i for i, h in enumerate(r.h) if i not in in_grids and top <= h[0] <= bottom])
    bands = [(ys[0], ys[-1]) for ys in (_grid_lines(r, hs, vs)[1] for hs, vs in grids)]
    bands += [(ys[0], ys[-1]) for ys, _, _ in groups]
    words = line_words(lines, bands)
    by_grid = grid_tables(page_no, r, grids, words, lines)
    if not groups:
        return by_grid, True
    rest = [w for w in words if not any(_inside(w, t.bbox) for t in by_grid)]
    return by_grid + rule_tables(page_no, groups, rest, lines), True


def _inside(w: Word, bbox: tuple[float, float, float, float]) -> bool:
    return bbox[0] - 1 <= w.cx <= bbox[2] + 1 and bbox[1] - 1 <= w.cy <= bbox[3] + 1
