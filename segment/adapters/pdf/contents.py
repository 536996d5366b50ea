"""Tables of contents and back-of-book indexes: recognised page by page and left out of the body.

Their lines repeat the headings and key words of the whole document with page numbers (". . . 17",
"battery, 4, 12"), so as chunks they match every query and answer none. A page is a contents page
when most of its rows (lines on one baseline of one column) are entries: text that ends in a page
number after dot leaders, or a page number set flush right with a gap before it. It is an index
page when most rows are short alphabetical entries that end in a list of page numbers. Rows, not
MuPDF's lines, are read, because a leader run or a right-aligned number often comes as a line of
its own.
"""

from __future__ import annotations

import enum
import re
from dataclasses import dataclass

from segment.adapters.pdf.extract import Line, LineFlag
from segment.adapters.pdf.layout import find_gutters

MIN_ROWS = 5
"""Fewer rows than this on a page are never taken for a contents or index page."""
ENTRY_SHARE = 0.6
"""Share of a page's rows that must be entries."""
RIGHT_SLACK = 3.0
"""Points within which right-aligned page numbers share their right edge."""
INDEX_MAX_WORDS = 8
"""Index entries are short: their median row holds at most this many words."""
ALPHABETICAL_SHARE = 0.75
"""Share of consecutive index entries whose first letters do not go backwards."""

PREFILTER_SHARE = 0.25
"""Lines that end in a digit or a roman numeral's letter, at least this share of a page's lines
(a contents entry's number is often a line of its own, so rows share more)."""
_NUMBER_ENDS = frozenset("0123456789ivxlc")

_LEADERS = re.compile(r"(?:\.\s?){3,}\s*[\divxlc]{1,6}$|…\s*\d{1,4}$")
_ENDS_NUMBER = re.compile(r"(?:\d{1,4}|[ivxlc]{1,6})$")
_PAGE_LIST = re.compile(
    r"[^\W\d_].*?,\s*\d{1,4}(?:\s*[-–]\s*\d{1,4})?(?:,\s*\d{1,4}(?:\s*[-–]\s*\d{1,4})?)*,?$"
)


class PageKind(enum.StrEnum):
    """What a left-out page holds."""

    CONTENTS = "contents"
    """A table of contents (or a list of tables or figures): entries with page numbers."""
    INDEX = "index"
    """A back-of-book index: alphabetical entries with lists of page numbers."""


@dataclass(slots=True)
class LeftOut:
    """Contents and index pages found in a document, and what they held."""

    pages: dict[int, PageKind]
    lines: int = 0
    words: int = 0

    def warning(self) -> str:
        """One line for the document's warnings."""
        kinds = sorted({str(kind) for kind in self.pages.values()})
        return (
            f"left out {len(self.pages)} {' and '.join(kinds)} pages (pages {_ranges(sorted(self.pages))};"
            f" {self.lines} lines, {self.words} words); the pdf_keep_contents setting keeps them"
        )


def _rows(lines: list[Line], by_column: bool) -> list[list[Line]]:
    """Lines grouped by baseline (within each column when `by_column`), top to bottom, left to
    right in a row. Contents pages are read across the page: the gap between a section number and
    its title can look like a gutter."""
    gutters = find_gutters(lines) if by_column else []
    placed = sorted(
        ((sum(1 for _, g1 in gutters if ln.x0 >= g1 - 1), ln.y0, ln.x0, n, ln) for n, ln in enumerate(lines)),
    )
    rows: list[list[Line]] = []
    last_column = -1
    for column, _, _, _, ln in placed:
        if rows and column == last_column:
            last = rows[-1][-1]
            if min(last.y1, ln.y1) - max(last.y0, ln.y0) >= 0.5 * min(last.height, ln.height):
                rows[-1].append(ln)
                continue
        rows.append([ln])
        last_column = column
    for row in rows:
        row.sort(key=lambda ln: ln.x0)
    return rows


def _row_text(row: list[Line]) -> str:
    return " ".join(" ".join(ln.text.split()) for ln in row)


def page_kind(lines: list[Line], min_rows: int = MIN_ROWS) -> PageKind | None:
    """Whether a page's body lines make a contents page, an index page, or neither. `min_rows`
    is lowered for the page after a contents page (the last few entries of a long contents)."""
    if len(lines) < min_rows:
        return None
    # Most pages stop here: entries end in a page number, so at least min_rows lines must.
    ending = sum(1 for ln in lines if ln.text.rstrip()[-1:] in _NUMBER_ENDS)
    if ending < min_rows or ending < PREFILTER_SHARE * len(lines):
        return None
    need = max(min_rows, PREFILTER_SHARE * len(lines))
    if _count_marked(lines) >= need:
        kind = _contents_kind(lines, min_rows)
        if kind is not None:
            return kind
    if sum(1 for ln in lines if "," in ln.text and ln.text.rstrip()[-1:].isdigit()) < need:
        return None  # too few page lists for an index
    return _index_kind(lines, min_rows)


def _count_marked(lines: list[Line]) -> int:
    """Lines with dot leaders, or that hold a lone page number: a contents page has many."""
    count = 0
    for ln in lines:
        text = ln.text.strip()
        if (
            ". ." in text
            or "..." in text
            or "…" in text
            or (" " not in text and _ENDS_NUMBER.fullmatch(text))
        ):
            count += 1
    return count


def _contents_kind(lines: list[Line], min_rows: int) -> PageKind | None:
    """Contents when most rows end in a page number after leaders, or set flush right apart."""
    rows = _rows(lines, by_column=False)
    texts = [_row_text(row) for row in rows]
    right = max(ln.x1 for ln in lines)
    entries: list[str] = []
    for row, text in zip(rows, texts):
        if not _ENDS_NUMBER.search(text):
            continue
        last = row[-1]
        flush = abs(last.x1 - right) <= RIGHT_SLACK
        apart = len(row) >= 2 and last.x0 - row[-2].x1 >= max(last.size, 1.0) and len(last.text.split()) == 1
        if _LEADERS.search(text) or (flush and apart):
            entries.append(text)
    if len(entries) < min_rows or len(entries) < ENTRY_SHARE * len(rows):
        return None
    # An index set with leaders (common in Texinfo manuals): unnumbered entries in alphabetical order.
    names = [_LEADERS.sub("", text).strip() for text in entries]
    return PageKind.INDEX if _alphabetical(names) else PageKind.CONTENTS


def _alphabetical(entries: list[str]) -> bool:
    """Entries that start with letters, in alphabetical order (a few exceptions allowed)."""
    firsts = [text[0].casefold() for text in entries if text[:1].isalpha()]
    if len(firsts) < 0.5 * len(entries) or len(firsts) < 2:
        return False
    ordered = sum(1 for a, b in zip(firsts, firsts[1:]) if a <= b)
    return ordered >= ALPHABETICAL_SHARE * (len(firsts) - 1)


def _index_kind(lines: list[Line], min_rows: int) -> PageKind | None:
    """Index when most rows are short entries in alphabetical order that end in page lists."""
    rows = _rows(lines, by_column=True)
    texts = [_row_text(row) for row in rows]
    entries = [text for text in texts if _PAGE_LIST.match(text)]
    if len(entries) < min_rows or len(entries) < ENTRY_SHARE * len(rows):
        return None
    words = sorted(len(text.split()) for text in entries)
    if words[len(words) // 2] > INDEX_MAX_WORDS:
        return None  # long entries ending in numbers: references, tables, not an index
    return PageKind.INDEX if _alphabetical(entries) else None


def mark_contents(pages: list[list[Line]]) -> LeftOut:
    """Flag every body line of contents and index pages (`LineFlag.CONTENTS`); running lines are
    already flagged and are not counted."""
    found = LeftOut({})
    after = False
    for lines in pages:
        body = [ln for ln in lines if LineFlag.RUNNING not in ln.flags]
        kind = page_kind(body, 2 if after else MIN_ROWS)
        after = kind is not None
        if kind is None:
            continue
        found.pages[body[0].page] = kind
        for ln in body:
            ln.flags |= LineFlag.CONTENTS
            found.lines += 1
            found.words += len(ln.text.split())
    return found


def _ranges(pages: list[int]) -> str:
    """ "3-5, 9" from [3, 4, 5, 9]."""
    out: list[str] = []
    start = prev = pages[0]
    for page in pages[1:] + [-1]:
        if page == prev + 1:
            prev = page
            continue
        out.append(f"{start}-{prev}" if prev > start else str(start))
        start = prev = page
    return ", ".join(out)
