"""HTML tables -> `Table` nodes, by the HTML standard's table processing model.

"Forming a table" (HTML Living Standard, section 4.9.12.1): rows are read from `thead`, `tbody`
and bare `tr` children in order, `tfoot` groups last; `colspan` is 1..1000 (0 or junk means 1),
`rowspan` is 0..65534 where 0 grows the cell to the end of its row group. A cell that would
span past the last row of its group is clipped there, as browsers render it (the standard's model
lengthens the table with empty rows instead; clipping also bounds the grid by the rows the page
really has: a stray rowspan=65534 adds nothing). Every slot a cell covers gets the cell's
text, so each row carries all its cells. Header rows are the `thead` rows, else the leading
rows made only of `th` cells. Nested tables are flattened into their cell's text.

Layout tables: `role="presentation"`/`"none"` tables, tables with a heading in a cell and
single-cell tables (common practice of readers' heuristics; the HTML standard says tables must
not be used as layout aids, but old pages do): their cells are read as ordinary content.
Navigation tables (`navigation`: a label that says so, or a bar of moves between pages) are
dropped, and the walk counts each in the document's warnings.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from enum import StrEnum

from lxml import etree

from segment.adapters.html.element_text import collapse, flat_text, has_block, spaced_text
from segment.adapters.html.navigation import is_bar_of_moves, says_navigation
from segment.adapters.html.tags import BLOCK_TAGS, HEADING_TAGS, tag_of
from segment.tree import Row, Span, Table, merge_spans

MAX_COLSPAN = 1000
MAX_ROWSPAN = 65534
_DIGITS = re.compile(r"\s*(\d+)")


@dataclass(slots=True)
class _Cell:
    text: str
    header: bool


@dataclass(slots=True)
class _Grid:
    rows: list[list[_Cell | None]] = field(default_factory=list)
    row_spans: list[Span] = field(default_factory=list)
    head_rows: int = 0
    width: int = 0

    def ensure(self, y: int, x: int, span: Span) -> None:
        while len(self.rows) <= y:
            self.rows.append([])
            self.row_spans.append(span)
        row = self.rows[y]
        if len(row) <= x:
            row.extend([None] * (x + 1 - len(row)))
        self.width = max(self.width, x + 1)


class TableKind(StrEnum):
    """What a `table` element holds."""

    DATA = "data"
    """Rows of cells: a `Table` block."""
    LAYOUT = "layout"
    """A frame around content: its cells are read as ordinary blocks."""
    NAVIGATION = "navigation"
    """Moves between pages: dropped, and counted in the document's warnings."""


def table_kind(el: etree._Element) -> TableKind:
    """What the table holds."""
    role = (el.get("role") or "").lower()
    if role in ("presentation", "none"):
        return TableKind.LAYOUT
    if says_navigation(el):
        return TableKind.NAVIGATION
    if next(el.iter(*HEADING_TAGS), None) is not None:
        return TableKind.LAYOUT  # a heading inside a cell: the table lays out a page, it holds no data
    if is_bar_of_moves(el):
        return TableKind.NAVIGATION
    cells = el.iter("td", "th")
    first = next(cells, None)
    if first is not None and first.tag == "td" and next(cells, None) is None and el.find("caption") is None:
        return TableKind.LAYOUT  # a single data cell: a frame around content
    return TableKind.DATA


def fostered_text(table: etree._Element) -> str:
    """Text a browser moves out in front of the table ("foster parenting", HTML standard 13.2.6.1):
    text and elements that sit in the table, a row group or a row outside any cell."""
    parts: list[str] = [table.text or ""]
    for child in table:
        tag = tag_of(child)
        if tag in ("thead", "tbody", "tfoot"):
            parts.append(child.text or "")
            for tr in child:
                parts.extend(_row_stray(tr) if tag_of(tr) == "tr" else [_raw(tr)])
                parts.append(tr.tail or "")
        elif tag == "tr":
            parts.extend(_row_stray(child))
        elif tag not in ("caption", "colgroup", "col", ""):
            parts.append(_raw(child))
        parts.append(child.tail or "")
    return collapse("".join(parts))


def outside_caption(el: etree._Element, tag: str) -> tuple[etree._Element, str, etree._Element] | None:
    """A caption written outside its table: `figure > figcaption` around one table, or DocBook's
    `div.table > p.title`. Returns (table, caption text, caption element)."""
    if tag != "figure" and not (tag == "div" and "table" in (el.get("class") or "")):
        return None
    first = next((c for c in el if isinstance(c.tag, str)), None)
    if first is None:
        return None
    if tag == "figure":
        cap = next((c for c in el if tag_of(c) == "figcaption"), None)
        tables = [c for c in el if tag_of(c) == "table"]
        if cap is not None and len(tables) == 1:
            return tables[0], flat_text(cap), cap
        return None
    classes = set((el.get("class") or "").lower().split())
    first_classes = set((first.get("class") or "").lower().split())
    if classes & {"table", "informaltable"} and tag_of(first) == "p" and "title" in first_classes:
        table = next(el.iter("table"), None)
        if table is not None:
            return table, flat_text(first), first
    return None


def _row_stray(tr: etree._Element) -> list[str]:
    out = [tr.text or ""]
    for cell in tr:
        if tag_of(cell) not in ("td", "th", ""):
            out.append(_raw(cell))
        out.append(cell.tail or "")
    return out


def _raw(el: etree._Element) -> str:
    text = spaced_text(el) if has_block(el) else "".join(el.itertext())
    return f" {text} " if tag_of(el) in BLOCK_TAGS else text


def _span_number(value: str | None, default: int, low: int, high: int) -> int:
    if value is None:
        return default
    m = _DIGITS.match(value)
    if not m:
        return default
    n = int(m.group(1))
    if n < low:
        return default
    return min(n, high)


def build_table(el: etree._Element, caption: str | None = None) -> Table:
    """The expanded grid of a data table."""
    grid = _Grid()
    groups: list[tuple[str, list[etree._Element]]] = []
    pending_tfoot: list[list[etree._Element]] = []
    loose: list[etree._Element] = []
    for child in el:
        tag = tag_of(child)
        if tag == "tr":
            loose.append(child)
            continue
        if loose:
            groups.append(("tbody", loose))
            loose = []
        if tag == "caption":
            if caption is None:
                caption = flat_text(child) or None
        elif tag in ("thead", "tbody"):
            groups.append((tag, [tr for tr in child if tag_of(tr) == "tr"]))
        elif tag == "tfoot":
            pending_tfoot.append([tr for tr in child if tag_of(tr) == "tr"])
    if loose:
        groups.append(("tbody", loose))
    groups.extend(("tfoot", rows) for rows in pending_tfoot)
    y = 0
    for index, (kind, rows) in enumerate(groups):
        y = _process_group(grid, rows, y)
        if index == 0 and kind == "thead":
            grid.head_rows = y
    rows_out: list[Row] = []
    for cells, span in zip(grid.rows, grid.row_spans):
        rows_out.append(Row([c.text if c else "" for c in cells] + [""] * (grid.width - len(cells)), span))
    head = grid.head_rows
    if head == 0:
        for cells in grid.rows:
            if cells and all(c is not None and c.header for c in cells) and len(cells) == grid.width:
                head += 1
            else:
                break
        if head == len(grid.rows):  # a table of header cells only: keep them as rows
            head = 0
    span = merge_spans([r.span for r in rows_out])
    if el.sourceline is not None:
        span = span.merge(Span(lines=(el.sourceline, el.sourceline)))
    return Table(header=rows_out[:head], rows=rows_out[head:], caption=caption, span=span)


def _process_group(grid: _Grid, rows: list[etree._Element], y_start: int) -> int:
    """Place one row group's cells; return the first row index after the group."""
    y = y_start
    growing: list[tuple[int, int, int, _Cell]] = []  # (x, width, y_from, cell) for rowspan=0
    group_end = y_start
    for index, tr in enumerate(rows):
        start = tr.sourceline
        row_span = Span(lines=(start, start) if start is not None else None)
        grid.ensure(y, 0, row_span)
        for gx, gw, _, gcell in growing:
            for x in range(gx, gx + gw):
                grid.ensure(y, x, row_span)
                grid.rows[y][x] = gcell
        x = 0
        for td in tr:
            tag = tag_of(td)
            if tag not in ("td", "th"):
                continue
            row = grid.rows[y]
            while x < len(row) and row[x] is not None:
                x += 1
            colspan = _span_number(td.get("colspan"), 1, 1, MAX_COLSPAN)
            rowspan = _span_number(td.get("rowspan"), 1, 0, MAX_ROWSPAN)
            raw = spaced_text(td) if has_block(td) else "".join(td.itertext())
            cell = _Cell(collapse(raw, breaks=False), tag == "th")
            if start is not None and td.sourceline is not None:
                end = td.sourceline + raw.rstrip().count("\n")
                if row_span.lines is None or end > row_span.lines[1]:
                    row_span = Span(lines=(start, end))
            # Clipped at the group's last row, as browsers lay it out: the standard's model would
            # add empty rows instead, and a stray rowspan=65534 would make 65,534 of them.
            height = 1 if rowspan == 0 else min(rowspan, len(rows) - index)
            for dy in range(height):
                for dx in range(colspan):
                    grid.ensure(y + dy, x + dx, row_span)
                    if grid.rows[y + dy][x + dx] is None:
                        grid.rows[y + dy][x + dx] = cell
            if rowspan == 0:
                growing.append((x, colspan, y, cell))
            group_end = max(group_end, y + height)
            x += colspan
        grid.row_spans[y] = row_span
        y += 1
        group_end = max(group_end, y)
    return max(group_end, y)
