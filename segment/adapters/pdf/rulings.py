"""Rulings: the horizontal and vertical strokes of a page, and whether they can frame a table.

They come from the vector blocks MuPDF collects in the same pass as the text
(`TEXT_COLLECT_VECTORS`), or from `page.get_cdrawings()` (the benchmark's reference). A page is a
table candidate when a vertical ruling divides a horizontal one, or when two rules share a width.
Connected rulings form grids; lone stroked rectangles are frames (boxed notes and listings).
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from dataclasses import dataclass, field
from typing import Any

import pymupdf

from segment.adapters.pdf.extract import Line, LineFlag

TOL = 2.0
"""Points within which rulings are taken to touch."""
MAX_SEGMENTS = 3000
"""Pages with more rulings than this are vector figures, not tables: skipped."""

MIN_RULE_WIDTH = 40.0
"""Shorter horizontal rules (underlines, dashes) never bound a rule-bounded table."""

MAX_FRAMES = 500
"""At most this many frames per page are checked (a form or calendar grid has thousands)."""


@dataclass(slots=True)
class Rulings:
    """Horizontal (y, x0, x1) and vertical (x, y0, y1) ruling segments and filled boxes."""

    h: list[tuple[float, float, float]] = field(default_factory=list)
    v: list[tuple[float, float, float]] = field(default_factory=list)
    fills: list[tuple[float, float, float, float]] = field(default_factory=list)
    frames: list[tuple[float, float, float, float]] = field(default_factory=list)
    """Stroked rectangles (boxed notes, listings, one-cell tables)."""
    strokes: list[tuple[float, float, float]] = field(default_factory=list)
    """The horizontal rulings drawn as lines or thin bars, not as a rectangle's edges: only these
    can bound a rule-bounded table (a rectangle's edges always join its own sides in a grid)."""
    groups: list[tuple[list[int], list[int]]] | None = None
    """Connected components, computed once (see `_components`)."""


def rulings(page: pymupdf.Page) -> Rulings:
    """Line segments and thin rectangles among the page's vector drawings."""
    out = Rulings()
    width, height = page.rect.width, page.rect.height
    for path in page.get_cdrawings():
        stroked = "s" in (path.get("type") or "")
        fill = path.get("fill")
        white = fill is not None and all(c > 0.97 for c in fill)
        for item in path.get("items", ()):
            kind = item[0]
            if kind == "l":
                (xa, ya), (xb, yb) = item[1], item[2]
                _add_segment(out, xa, ya, xb, yb)
            elif kind == "re":
                x0, y0, x1, y1 = item[1]
                x0, x1 = min(x0, x1), max(x0, x1)
                y0, y1 = min(y0, y1), max(y0, y1)
                w, h = x1 - x0, y1 - y0
                if w > width * 0.98 and h > height * 0.98:
                    continue  # page background
                if h <= 2.5 and w > 4:
                    out.h.append(((y0 + y1) / 2, x0, x1))
                    out.strokes.append(out.h[-1])
                elif w <= 2.5 and h > 4:
                    out.v.append(((x0 + x1) / 2, y0, y1))
                elif stroked or (fill is not None and not white):
                    out.h += [(y0, x0, x1), (y1, x0, x1)]
                    out.v += [(x0, y0, y1), (x1, y0, y1)]
                    if stroked:
                        out.frames.append((x0, y0, x1, y1))
                    if fill is not None and not white:
                        out.fills.append((x0, y0, x1, y1))
    return out


def rulings_from_vectors(vectors: list[dict[str, Any]], width: float, height: float) -> Rulings:
    """Rulings from the vector blocks MuPDF collects with the text (`TEXT_COLLECT_VECTORS`): one
    pass over the page instead of a second one for `get_cdrawings()`. Only straight pieces and
    rectangles count (`isrect`); curves never rule a table."""
    out = Rulings()
    for vec in vectors:
        if not vec.get("isrect"):
            continue
        x0, y0, x1, y1 = vec["bbox"]
        w, h = x1 - x0, y1 - y0
        if w > width * 0.98 and h > height * 0.98:
            continue  # page background
        stroked = bool(vec.get("stroked"))
        color = vec.get("color", 0)
        white = not stroked and color == 0xFFFFFF
        if h <= 2.5 and w > 4:
            out.h.append(((y0 + y1) / 2, x0, x1))
            out.strokes.append(out.h[-1])
        elif w <= 2.5 and h > 4:
            out.v.append(((x0 + x1) / 2, y0, y1))
        elif w > 4 and h > 4 and not white:
            out.h += [(y0, x0, x1), (y1, x0, x1)]
            out.v += [(x0, y0, y1), (x1, y0, y1)]
            if stroked:
                out.frames.append((x0, y0, x1, y1))
            else:
                out.fills.append((x0, y0, x1, y1))
    return out


def _add_segment(out: Rulings, xa: float, ya: float, xb: float, yb: float) -> None:
    if abs(ya - yb) <= 1.0 and abs(xa - xb) > 4:
        out.h.append(((ya + yb) / 2, min(xa, xb), max(xa, xb)))
        out.strokes.append(out.h[-1])
    elif abs(xa - xb) <= 1.0 and abs(ya - yb) > 4:
        out.v.append(((xa + xb) / 2, min(ya, yb), max(ya, yb)))


def is_candidate(r: Rulings) -> bool:
    """True when the page's rulings could frame a table: a vertical ruling that divides a
    horizontal one (a column boundary, not just the side of a box), or two stroked rules of equal
    width. The two edges of a lone rectangle (a shaded listing, a boxed note) do not count: the
    detectors take them as a one-column grid, never as a table."""
    if len(r.h) < 2 or len(r.h) + len(r.v) > MAX_SEGMENTS:
        return False
    if r.v and _inner_vertical(r):
        return True
    extents: dict[tuple[int, int], int] = {}
    for _, x0, x1 in r.strokes:
        if x1 - x0 < MIN_RULE_WIDTH:
            continue
        key = rule_key(x0, x1)
        extents[key] = extents.get(key, 0) + 1
        if extents[key] >= 2:
            return True
    return False


def rule_key(x0: float, x1: float) -> tuple[int, int]:
    """Horizontal rules with the same key have the same extent (within about 4 points): the
    rules of one rule-bounded table."""
    return (round(x0 / 4), round(x1 / 4))


def _inner_vertical(r: Rulings) -> bool:
    if len(r.h) * len(r.v) > 200_000:
        return True  # too many to check cheaply: let the detectors decide
    for x, vy0, vy1 in r.v:
        left = right = False
        for y, hx0, hx1 in r.h:
            if not vy0 - TOL <= y <= vy1 + TOL:
                continue
            if hx0 + 4 < x < hx1 - 4:
                return True  # a rule crosses it
            left = left or (abs(hx1 - x) <= TOL and hx0 < x - 4)
            right = right or (abs(hx0 - x) <= TOL and hx1 > x + 4)
            if left and right:
                return True  # cell borders drawn piece by piece meet on it
    return False


def mark_framed(lines: list[Line], r: Rulings) -> None:
    """Flag lines inside a stroked rectangle (`LineFlag.BOXED`): boxed notes, listings and one-column
    tables are never headings."""
    frames = list(r.frames)
    if r.v and len(r.h) + len(r.v) <= 80:
        # Frames drawn as four separate lines: small components with two xs and two ys.
        for hs, vs in components(r):
            if hs and vs:
                xs = cluster([r.v[j][0] for j in vs], 4.0)
                ys = cluster([r.h[i][0] for i in hs], 4.0)
                if len(xs) == 2 and len(ys) == 2:
                    frames.append((xs[0], ys[0], xs[1], ys[1]))
    for x0, y0, x1, y1 in frames[:MAX_FRAMES]:
        if x1 - x0 < 20 or y1 - y0 < 8:
            continue
        for ln in lines:
            if x0 - 1 <= ln.x0 and ln.x1 <= x1 + 1 and y0 - 1 <= ln.y0 and ln.y1 <= y1 + 1:
                ln.flags |= LineFlag.BOXED


def cluster(values: list[float], tol: float = 1.5) -> list[float]:
    """Sorted values with near-duplicates (within `tol`) dropped."""
    out: list[float] = []
    for v in sorted(values):
        if out and v - out[-1] <= tol:
            continue
        out.append(v)
    return out


def components(r: Rulings) -> list[tuple[list[int], list[int]]]:
    """Connected groups of rulings: (indices into h, indices into v)."""
    if r.groups is None:
        r.groups = _connect(r)
    return r.groups


def _connect(r: Rulings) -> list[tuple[list[int], list[int]]]:
    nh = len(r.h)
    parent = list(range(nh + len(r.v)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    def union(a: int, b: int) -> None:
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[ra] = rb

    v_order = sorted(range(len(r.v)), key=lambda j: r.v[j][0])
    v_xs = [r.v[j][0] for j in v_order]
    for i, (y, hx0, hx1) in enumerate(r.h):
        lo = bisect_left(v_xs, hx0 - TOL)
        hi = bisect_right(v_xs, hx1 + TOL)
        for j in v_order[lo:hi]:
            _, vy0, vy1 = r.v[j]
            if vy0 - TOL <= y <= vy1 + TOL:
                union(i, nh + j)
    by_y = sorted(range(nh), key=lambda i: (round(r.h[i][0]), r.h[i][1]))
    for a, b in zip(by_y, by_y[1:]):
        ya, _, ax1 = r.h[a]
        yb, bx0, _ = r.h[b]
        if abs(ya - yb) <= TOL and bx0 <= ax1 + TOL:
            union(a, b)
    by_x = sorted(range(len(r.v)), key=lambda j: (round(r.v[j][0]), r.v[j][1]))
    for a, b in zip(by_x, by_x[1:]):
        xa, _, ay1 = r.v[a]
        xb, by0, _ = r.v[b]
        if abs(xa - xb) <= TOL and by0 <= ay1 + TOL:
            union(nh + a, nh + b)
    groups: dict[int, tuple[list[int], list[int]]] = {}
    for i in range(nh):
        groups.setdefault(find(i), ([], []))[0].append(i)
    for j in range(len(r.v)):
        groups.setdefault(find(nh + j), ([], []))[1].append(j)
    return list(groups.values())


def grid_boxes(r: Rulings) -> list[tuple[float, float, float, float]]:
    """Boxes of ruled grids (connected horizontal and vertical rulings) on a page."""
    if not r.v or not is_candidate(r):
        return []
    boxes = []
    for hs, vs in components(r):
        if hs and vs:
            boxes.append(
                (
                    min(r.h[i][1] for i in hs),
                    min(r.v[j][1] for j in vs),
                    max(r.h[i][2] for i in hs),
                    max(r.v[j][2] for j in vs),
                )
            )
    return boxes


def body_band(lines: list[Line]) -> tuple[float, float]:
    """Top and bottom of the body text: rules outside it decorate the page (running head and
    foot rules, page frames) and never bound a table."""
    if not lines:
        return (float("-inf"), float("inf"))
    return (min(ln.y0 for ln in lines) - 6, max(ln.y1 for ln in lines) + 6)
