"""Running heads, running feet and page numbers: found by repetition across pages, then removed.

A line is a candidate when it is among the first or last few lines of its page and lies in the
top or bottom band. Its key is its text with digits (and lone roman numerals) blanked, so "Page 3"
and "Page 4" share a key, and odd/even pages with different heads are each counted on their own
text. A key seen on enough pages, or a bare page-number form, marks the line as running.
"""

from __future__ import annotations

import re
from collections import defaultdict

from segment.adapters.pdf.extract import Box, Line, LineFlag

BAND = 0.12
"""Share of the page height at the top and at the bottom where running lines may sit."""
EDGE_LINES = 3
"""How many lines from the top or bottom of a page are considered."""

_DIGITS = re.compile(r"\d+")
_ROMAN = re.compile(r"\b[ivxlcdm]+\b")
_SPACE = re.compile(r"\s+")
_PAGE_NUMBER = re.compile(
    r"^[\s\-–—|·.]*(page|p\.|seite)?\s*(#|[ivxlcdm]+)(\s*(/|of|von)\s*#)?[\s\-–—|·.]*$", re.I
)


def running_key(text: str) -> str:
    """Text with page-number-like parts blanked, case and spacing folded."""
    key = _SPACE.sub(" ", text.strip().lower())
    key = _DIGITS.sub("#", key)
    return _ROMAN.sub("#", key) if len(key) <= 12 else key


def is_page_number(text: str) -> bool:
    """True for "7", "- 7 -", "Page 7 of 90", "vii" (not for a dot-leader contents line)."""
    return ". ." not in text and bool(_PAGE_NUMBER.match(running_key(text)))


def find_running(
    pages: list[list[Line]], heights: list[float], grids: list[list[Box]] | None = None
) -> list[Line]:
    """Mark running lines on every page (`LineFlag.RUNNING`) and return them in page order.

    Lines inside a ruled grid (`grids`, per page) are table cells, such as a header row repeated
    at the top of each page of a long table: never running lines.
    """
    n_pages = len(pages)
    threshold = 2 if n_pages <= 4 else 3
    candidates: list[tuple[str, str, Line, bool]] = []
    for index, (lines, height) in enumerate(zip(pages, heights)):
        boxes = grids[index] if grids else []
        if boxes:
            lines = [ln for ln in lines if not any(_inside(ln, b) for b in boxes)]
        if not lines:
            continue
        ordered = sorted(lines, key=lambda ln: (ln.y0, ln.x0))
        top_y, bottom_y = ordered[0].y0, max(ln.y1 for ln in ordered)
        tops = [ln for ln in ordered[:EDGE_LINES] if ln.y1 <= height * BAND + 1]
        bottoms = [ln for ln in ordered[-EDGE_LINES:] if ln.y0 >= height * (1 - BAND) - 1]
        for line in tops:
            candidates.append(("top", running_key(line.text), line, line.y0 - top_y < 3))
        for line in bottoms:
            candidates.append(("bottom", running_key(line.text), line, bottom_y - line.y1 < 3))
    pages_by_key: dict[tuple[str, str], set[int]] = defaultdict(set)
    for zone, key, line, _ in candidates:
        pages_by_key[(zone, key)].add(line.page)
    removed: list[Line] = []
    for zone, key, line, outermost in candidates:
        if LineFlag.RUNNING in line.flags:
            continue
        seen = len(pages_by_key[(zone, key)])
        if seen >= threshold or (n_pages > 1 and outermost and is_page_number(line.text)):
            line.flags |= LineFlag.RUNNING
            removed.append(line)
    # Running heads that change with each section (odd pages often carry the section title) sit
    # in the same slot as the confirmed ones: same band, same height on the page, same size.
    slots: dict[tuple[str, int, float], int] = defaultdict(int)
    for zone, _, line, _ in candidates:
        if LineFlag.RUNNING in line.flags:
            slots[(zone, round(line.y0), round(line.size))] += 1
    established = {k for k, n in slots.items() if n >= max(3, 0.2 * n_pages)}
    for zone, _, line, _ in candidates:
        if LineFlag.RUNNING in line.flags:
            continue
        y = round(line.y0)
        if any((zone, y + d, round(line.size)) in established for d in (-1, 0, 1)):
            line.flags |= LineFlag.RUNNING
            removed.append(line)
    removed.sort(key=lambda ln: (ln.page, ln.y0))
    return removed


def _inside(line: Line, box: Box) -> bool:
    cx, cy = (line.x0 + line.x1) / 2, (line.y0 + line.y1) / 2
    return box[0] - 1 <= cx <= box[2] + 1 and box[1] - 1 <= cy <= box[3] + 1
