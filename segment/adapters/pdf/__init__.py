"""PDF adapter (pymupdf 1.x): text, reading order, running heads, headings, lists, code, tables.

`parse(data, source)` is the registry entry point; `parse_pdf` exposes the switches that tests and
the benchmark use (`use_outline=False` measures the font-based heading detector on its own).
pymupdf is not thread-safe: call this from one thread per process only.
"""

from __future__ import annotations

import time
from collections import Counter
from dataclasses import dataclass
from typing import Any

import pymupdf

from segment.adapters.pdf import blocks as blk
from segment.adapters.pdf import (
    contents,
    extract,
    figures,
    glyphs,
    hanging,
    headings,
    layout,
    lists,
    outline,
    rulings,
    running,
    tables,
)
from segment.adapters.pdf.build import build_tree
from segment.adapters.pdf.extract import Line, LineFlag, page_lines
from segment.adapters.pdf.opening import flush_warnings, log, open_pdf
from segment.adapters.pdf.properties import document_properties
from segment.errors import ParseError
from segment.gcpause import paused_gc
from segment.settings import Settings
from segment.tree import Document

__all__ = ["PdfTimings", "parse", "parse_pdf"]

TABLE_ENGINES = ("own", "pymupdf", "none")


@dataclass(slots=True)
class PdfTimings:
    """CPU seconds spent per stage of one parse (filled when passed to `parse_pdf`)."""

    extract: float = 0.0
    tables: float = 0.0
    layout: float = 0.0
    total: float = 0.0
    table_pages: int = 0


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Registry entry point: bytes of a PDF to the common tree (the page cap and whether to keep
    contents and index pages from `settings`)."""
    settings = settings or Settings()
    return parse_pdf(data, source, max_pages=settings.max_pages, keep_contents=settings.pdf_keep_contents)


def parse_pdf(
    data: bytes,
    source: str,
    *,
    use_outline: bool = True,
    max_pages: int | None = None,
    table_engine: str = "own",
    timings: PdfTimings | None = None,
    keep_contents: bool = False,
) -> Document:
    """Parse a PDF. `table_engine`: "own" (rulings + aligned text), "pymupdf" (find_tables), "none".
    Contents and index pages are left out (and counted in the warnings) unless `keep_contents`."""
    if table_engine not in TABLE_ENGINES:
        raise ValueError(f"table_engine must be one of {TABLE_ENGINES}, got {table_engine!r}")
    limit = max_pages if max_pages is not None else Settings().max_pages
    start = time.process_time()
    doc, warnings = open_pdf(data, source, limit)
    try:
        with paused_gc():
            document = _parse_open(doc, source, warnings, use_outline, table_engine, timings, keep_contents)
    except ParseError:
        raise
    except (RuntimeError, ValueError) as exc:
        raise ParseError(source, f"cannot read PDF content: {exc}", status="corrupt") from exc
    except (MemoryError, RecursionError):
        raise  # the caller reports these as resource limits
    except Exception as exc:  # a layout our heuristics did not foresee: say so, no traceback
        log.debug("%s: unexpected error in the PDF adapter", source, exc_info=True)
        raise ParseError(
            source, f"PDF adapter failed on this file ({type(exc).__name__}: {exc})", status="error"
        ) from exc
    finally:
        doc.close()
        count = flush_warnings(source)
        if count:
            log.info("%s: %d MuPDF warnings (debug log has them)", source, count)
    if timings is not None:
        timings.total = time.process_time() - start
    return document


def _parse_open(
    doc: pymupdf.Document,
    source: str,
    warnings: list[str],
    use_outline: bool,
    table_engine: str,
    timings: PdfTimings | None,
    keep_contents: bool,
) -> Document:
    t0 = time.process_time()
    pages: list[list[Line]] = []
    heights: list[float] = []
    no_text: list[int] = []
    page_rulings: list[rulings.Rulings] = []
    page_figures: list[list[extract.Box]] = []
    rule_time = 0.0
    for index in range(doc.page_count):
        vectors: list[dict[str, Any]] | None = [] if table_engine != "none" else None
        try:
            page = doc[index]
            rect = page.rect
            width, height = rect.width, rect.height
            textpage = page.get_textpage(
                flags=extract.VECTOR_FLAGS if vectors is not None else extract.TEXT_FLAGS
            )
            lines = page_lines(page, index + 1, textpage, vectors)
        except (RuntimeError, ValueError, MemoryError, pymupdf.mupdf.FzErrorBase) as exc:
            # A damaged page (missing from the page tree, broken content stream): say so, go on.
            warnings.append(f"page {index + 1}: cannot read page ({exc})")
            heights.append(792.0)
            page_rulings.append(rulings.Rulings())
            page_figures.append([])
            no_text.append(index + 1)
            pages.append([])
            continue
        heights.append(height)
        ts = time.process_time()
        r = rulings.rulings_from_vectors(vectors or [], width, height)
        page_rulings.append(r)
        page_figures.append(figures.figure_boxes(vectors or [], width * height))
        rule_time += time.process_time() - ts
        if not lines:
            no_text.append(index + 1)
            if page.get_images(full=False):
                warnings.append(f"page {index + 1}: no text layer (OCR not performed)")
        pages.append(lines)
    if len(no_text) == doc.page_count:
        if doc.is_repaired:
            raise ParseError(
                source, "damaged or truncated PDF: no readable text after repair", status="corrupt"
            )
        raise ParseError(source, "no text layer on any page (OCR not performed)", status="no_text")
    t1 = time.process_time()

    ts = time.process_time()
    grids = [rulings.grid_boxes(r) for r in page_rulings]
    table_time = time.process_time() - ts + rule_time
    removed = running.find_running(pages, heights, grids)
    left_out = contents.mark_contents(pages) if not keep_contents else None
    skipped = LineFlag.RUNNING | LineFlag.CONTENTS if left_out is not None else LineFlag.RUNNING
    table_pages = 0
    flows: list[layout.TextBlock] = []
    for index, lines in enumerate(pages):
        body = [ln for ln in lines if not ln.flags & skipped]
        if page_rulings[index].frames or page_rulings[index].v:
            rulings.mark_framed(body, page_rulings[index])
        if table_engine != "none" and body:
            ts = time.process_time()
            engine_page = doc[index] if table_engine == "pymupdf" else None  # only find_tables() reads it
            found, candidate = tables.find_page_tables(
                engine_page, index + 1, body, table_engine, page_rulings[index]
            )
            table_pages += int(candidate)
            body = _place_tables(body, found, warnings)
            table_time += time.process_time() - ts
        body, labels = figures.take_labels(body, page_figures[index], index + 1)
        body = body + [_stand_in(f.page, f.bbox, f) for f in labels]
        body, hanging_lists = hanging.take_hanging(body, index + 1)
        body += [_stand_in(h.page, h.bbox, h) for h in hanging_lists]
        for block in layout.order_page(body):
            for part in lists.split_items(block) if block.payload is None else [block]:
                flows.append(part)
    t2 = time.process_time()

    all_lines = [ln for lines in pages for ln in lines if LineFlag.RUNNING not in ln.flags]
    vocab = blk.vocabulary(all_lines)
    items = [blk.classify(b, vocab) for b in flows]
    items = blk.merge_split_tables(blk.merge_code(items))
    stats = headings.font_stats(items)
    headings.detect(items, stats)
    meta = doc.metadata or {}
    title_node = outline.title_item(items, meta.get("title"))
    # Like the Markdown adapter's first h1, the visible title names the document and stays a
    # heading; the metadata title is the fallback.
    title = title_node.text.strip() if title_node is not None else None
    title = title or (meta.get("title") or "").strip() or None
    toc = doc.get_toc(simple=True) if use_outline else []
    unmatched = 0
    if toc:
        entries = [(int(lvl), str(t), int(p)) for lvl, t, p, *_ in toc]
        items, unmatched = outline.apply_outline(
            items,
            entries,
            doc.page_count,
            stats.body_size,
            frozenset(left_out.pages) if left_out is not None else frozenset(),
        )
    items = blk.merge_continuations(items, vocab)

    document = Document(source=source, format="pdf", title=title)
    document.properties.update(document_properties(meta))
    document.warnings.extend(warnings)
    document.repaired = bool(doc.is_repaired)
    document.metadata.update(
        {
            "pages": doc.page_count,
            "removed_running_lines": len(removed),
            "running_line_samples": _samples(removed),
            "body_font_size": stats.body_size,
            "headings_from": "outline" if toc else "fonts",
            "outline_entries": len(toc),
            "outline_unmatched": unmatched,
            "table_candidate_pages": table_pages,
        }
    )
    if left_out is not None and left_out.pages:
        document.metadata["contents_pages"] = {str(p): str(k) for p, k in sorted(left_out.pages.items())}
        document.warnings.append(left_out.warning())
    if unmatched:
        document.warnings.append(
            f"{unmatched} outline entries not found on their pages (inserted at page top)"
        )
    build_tree(document, items)
    t3 = time.process_time()
    if timings is not None:
        timings.extract = t1 - t0 - rule_time
        timings.tables = table_time
        timings.layout = (t2 - t1 - (table_time - rule_time)) + (t3 - t2)
        timings.table_pages = table_pages
    return document


def _samples(removed: list[Line], limit: int = 12) -> list[str]:
    """The most repeated running lines, as "text (xN)", for the debug view."""
    counts = Counter(" ".join(ln.text.split()) for ln in removed)
    return [f"{text} (x{n})" for text, n in counts.most_common(limit)]


def _place_tables(lines: list[Line], found: list[tables.FoundTable], warnings: list[str]) -> list[Line]:
    """Drop lines inside tables and put one stand-in line per table in the page flow. A "table"
    of scattered glyphs is a drawing: its lines stand in as a figure's text, or are dropped with a
    warning when they hold no words."""
    if not found:
        return lines
    inside: dict[int, list[Line]] = {id(t): [] for t in found}
    kept: list[Line] = []
    for ln in lines:
        cx, cy = (ln.x0 + ln.x1) / 2, (ln.y0 + ln.y1) / 2
        table = next(
            (
                t
                for t in found
                if t.bbox[0] - 1 <= cx <= t.bbox[2] + 1 and t.bbox[1] - 1 <= cy <= t.bbox[3] + 1
            ),
            None,
        )
        if table is None:
            kept.append(ln)
        else:
            inside[id(table)].append(ln)
    for t in found:
        if not glyphs.is_drawing(t):
            kept.append(_stand_in(t.page, t.bbox, t))
            continue
        drawing = figures.FigureText(t.page, t.bbox, inside[id(t)])
        text = drawing.text
        if glyphs.is_glyph_noise(text):
            warnings.append(
                f"page {t.page}: dropped the scattered glyphs of a drawing ({len(text.split())} marks), not a table"
            )
        else:
            kept.append(_stand_in(t.page, t.bbox, drawing))
    return kept


def _stand_in(page: int, bbox: tuple[float, float, float, float], payload: object) -> Line:
    """A line that holds a table's or a figure's place in the reading order."""
    x0, y0, x1, y1 = bbox
    line = Line(page, x0, y0, x1, y1, [], -1000)
    line.flags |= LineFlag.TABLE
    line.payload = payload
    return line
