"""Tables on the candidate pages that `rulings` picks (cheap, from vector drawings).

Two detectors of our own, each in its module: ruled grids (`table_grid`) and rule-bounded
tables (`table_rules`), both reading words placed from the text pass (`table_words`).
`page.find_tables()` is available as a reference engine (`engine="pymupdf"`, `table_pymupdf`).
"""

from __future__ import annotations

import pymupdf

from segment.adapters.pdf.extract import Box, Line
from segment.adapters.pdf.rulings import Rulings, body_band, is_candidate, rulings
from segment.adapters.pdf.table_grid import grid_lines, grid_tables, grids_of
from segment.adapters.pdf.table_pymupdf import pymupdf_tables
from segment.adapters.pdf.table_rules import rule_groups, rule_tables
from segment.adapters.pdf.table_words import FoundTable, Word, line_words

__all__ = ["FoundTable", "find_page_tables", "line_words"]


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
    bands = [(ys[0], ys[-1]) for ys in (grid_lines(r, hs, vs)[1] for hs, vs in grids)]
    bands += [(ys[0], ys[-1]) for ys, _, _ in groups]
    words = line_words(lines, bands)
    by_grid = grid_tables(page_no, r, grids, words, lines)
    if not groups:
        return by_grid, True
    rest = [w for w in words if not any(_inside(w, t.bbox) for t in by_grid)]
    return by_grid + rule_tables(page_no, groups, rest, lines), True


def _inside(w: Word, bbox: Box) -> bool:
    return bbox[0] - 1 <= w.cx <= bbox[2] + 1 and bbox[1] - 1 <= w.cy <= bbox[3] + 1
