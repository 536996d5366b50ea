"""The reference table engine: pymupdf's own `page.find_tables()`. It costs tens of milliseconds
a page, so it only runs on the candidate pages that the rulings pick."""

from __future__ import annotations

import pymupdf

from segment.adapters.pdf.extract import Box, normalise_text
from segment.adapters.pdf.table_words import SPACE, FoundTable


def pymupdf_tables(page: pymupdf.Page, page_no: int) -> list[FoundTable]:
    """Tables from `page.find_tables()` (default strategy), spans expanded to the left."""
    out: list[FoundTable] = []
    for t in page.find_tables().tables:
        raw = t.extract()
        rows: list[list[str]] = []
        for raw_row in raw:
            cells: list[str] = []
            for cell in raw_row:
                text = SPACE.sub(" ", normalise_text(cell)).strip() if cell is not None else None
                cells.append(text if text is not None else (cells[-1] if cells else ""))
            if any(cells):
                rows.append(cells)
        if not rows:
            continue
        boxes: list[Box] = [tuple(row.bbox) for row in t.rows][: len(rows)]
        header = [rows.pop(0)] if (len(rows) > 1 and not t.header.external and t.header.names) else []
        if header:
            boxes = boxes[1:]
        bbox: Box = tuple(t.bbox)
        out.append(FoundTable(page_no, bbox, header, rows, boxes, "pymupdf"))
    return out
