"""Hanging definition lists: a term set in the margin and its text beside it, the text's further
lines indented to the text (option lists of manual pages, glossaries, parameter lists).

MuPDF gives the term and the first line of its text as two lines on one baseline; read in plain
order, a term that wraps ("--fleet" / "NAME") lands after the text beside it and the entries
interleave. A run of such rows (two pieces on a baseline, the text always starting at the same x)
with their continuation lines is taken out of the page flow and becomes one definitions block.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from segment.adapters.pdf.extract import Box, Line
from segment.adapters.pdf.layout import PAIR_GAP

MAX_TERM_WIDTH = 130.0
"""Points: a term is short (an option, a parameter name)."""
MAX_INDENT = 160.0
"""Points from the term's left edge to its text's: further apart, they are two columns of text."""
ALIGN = 2.0
"""Points within which terms (and texts) share their left edge."""
_NUMBER = re.compile(r"^\s*(\d+|[A-Z])(\.\d+)*\.?\s*$")

_COMMENTS = ("#", "//", "\\", "%", ";", "/*")
"""How comments beside code start (common practice in programming languages)."""

MIN_ENTRIES = 2
"""Fewest terms with their text beside them that make a list."""


@dataclass(slots=True)
class HangingList:
    """One hanging definition list: per entry, the lines of its term and of its text."""

    page: int
    bbox: Box
    entries: list[tuple[list[Line], list[Line]]] = field(default_factory=list)


def _rows(lines: list[Line]) -> list[list[Line]]:
    rows: list[list[Line]] = []
    for ln in sorted(lines, key=lambda ln: (ln.y0, ln.x0)):
        if rows:
            last = rows[-1][0]
            if min(last.y1, ln.y1) - max(last.y0, ln.y0) >= 0.5 * min(last.height, ln.height):
                rows[-1].append(ln)
                continue
        rows.append([ln])
    for row in rows:
        row.sort(key=lambda ln: ln.x0)
    return rows


def _pair(row: list[Line]) -> tuple[float, float] | None:
    """(term x, text x) when the row is a short term with its text beside it."""
    if len(row) != 2:
        return None
    term, text = row
    size = max(term.size, 1.0)
    width = term.x1 - term.x0
    if width > MAX_TERM_WIDTH or text.x0 - term.x0 > MAX_INDENT or text.x0 - term.x1 < 0.8 * size:
        return None
    if abs(term.size - text.size) > 1.0:
        return None  # a heading in the margin, not a term
    if text.mono >= 0.5 or _NUMBER.match(term.text) or text.text.lstrip().startswith(_COMMENTS):
        return None  # a code listing's columns or comments, or a numbered contents entry
    return term.x0, text.x0


def _needs_help(entries: list[tuple[list[Line], list[Line]]]) -> bool:
    """Whether the baseline merge would miss this list: it pairs a key and its text only across a
    wide gap, and a wrapped term never. Lists it reads well are left to it."""
    for term, text in entries:
        if len(term) > 1 or text[0].x0 - term[0].x1 < PAIR_GAP * max(term[0].size, 1.0):
            return True
    return False


def take_hanging(lines: list[Line], page: int) -> tuple[list[Line], list[HangingList]]:
    """Split a page's lines into the rest and its hanging definition lists."""
    if len(lines) < 2 * MIN_ENTRIES:
        return lines, []
    rows = _rows(lines)
    found: list[HangingList] = []
    n = 0
    while n < len(rows):
        start = _pair(rows[n])
        if start is None:
            n += 1
            continue
        term_x, text_x = start
        entries: list[tuple[list[Line], list[Line]]] = []
        m = n
        last_y = rows[n][0].y0
        while m < len(rows):
            row = rows[m]
            size = max(row[0].size, 1.0)
            if row[0].y0 - last_y > 3.0 * size:
                break  # a gap: the list has ended
            pair = _pair(row)
            if pair is not None and abs(pair[0] - term_x) <= ALIGN and abs(pair[1] - text_x) <= ALIGN:
                entries.append(([row[0]], [row[1]]))
            elif len(row) == 1 and entries and abs(row[0].x0 - text_x) <= ALIGN and row[0].mono < 0.5:
                entries[-1][1].append(row[0])  # the text goes on
            elif len(row) == 1 and entries and abs(row[0].x0 - term_x) <= ALIGN and row[0].x1 < text_x:
                entries[-1][0].append(row[0])  # the term wraps
            else:
                break
            last_y = row[0].y0
            m += 1
        if len(entries) >= MIN_ENTRIES and _needs_help(entries):
            members = [ln for term, text in entries for ln in term + text]
            box = (
                min(ln.x0 for ln in members),
                min(ln.y0 for ln in members),
                max(ln.x1 for ln in members),
                max(ln.y1 for ln in members),
            )
            found.append(HangingList(page, box, entries))
            n = m
        else:
            n += 1
    if not found:
        return lines, []
    taken = {id(ln) for hl in found for term, text in hl.entries for ln in term + text}
    return [ln for ln in lines if id(ln) not in taken], found
