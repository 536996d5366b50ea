"""PDF adapter (pymupdf 1.x): text, reading order, running heads, headings, lists, code, tables.

`parse(data, source)` is the registry entry point; `parse_pdf` exposes the switches that tests and
the benchmark use (`use_outline=False` measures the font-based heading detector on its own).
pymupdf is not thread-safe: call this from one thread per process only.
"""

from __future__ import annotations

import time
from collections import Counter
from dataclasses import dataclass

import pymupdf

from segment.adapters.pdf import blocks as blk
from segment.adapters.pdf import extract, figures, headings, layout, lists, rulings, running, tables
from segment.adapters.pdf.build import build_tree
from segment.adapters.pdf.extract import Line, page_lines
from segment.adapters.pdf.opening import flush_warnings, log, open_pdf
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
    """Registry entry point: bytes of a PDF to the common tree (the page cap from `settings`)."""
    return parse_pdf(data, source, max_pages=(settings or Settings()).max_pages)


def parse_pdf(
    data: bytes,
    source: str,
    *,
    use_outline: bool = True,
    max_pages: int | None = None,
    table_engine: str = "own",
    timings: PdfTimings | None = None,
) -> Document:
    """Parse a PDF. `table_engine`: "own" (rulings + aligned text), "pymupdf" (find_tables), "none"."""
    if table_engine not in TABLE_ENGINES:
        raise ValueError(f"table_engine must be one of {TABLE_ENGINES}, got {table_engine!r}")
    limit = max_pages if max_pages is not None else Settings().max_pages
    start = time.process_time()
    doc, warnings = open_pdf(data, source, limit)
    try:
        with paused_gc():
            document = _parse_open(doc, source, warnings, use_outline, table_engine, timings)
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
) -> Document:
    t0 = time.process_time()
    pages: list[list[Line]] = []
    heights: list[float] = []
    no_text: list[int] = []
    page_rulings: list[rulings.Rulings] = []
    page_figures: list[list[figures.Box]] = []
    rule_time = 0.0
    for index in range(doc.page_count):
        vectors: list[dict[str, object]] | None = [] if table_engine != "none" else None
        try:
            page = doc[index]
            rect = page.rect
            width, height = rect.width, rect.height
            textpage = page.get_textpage(
                flags=extract.VECTOR_FLAGS if vectors is not None else extract.TEXT_FLAGS
            )
            lines = page_lines(page, index + 1, textpage, vectors)  # type: ignore[arg-type]
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
    table_pages = 0
    flows: list[blk.Item] = []
    for index, lines in enumerate(pages):
        body = [ln for ln in lines if "running" not in ln.flags]
        if page_rulings[index].frames or page_rulings[index].v:
            rulings.mark_framed(body, page_rulings[index])
        if table_engine != "none" and body:
            ts = time.process_time()
            page = doc[index] if table_engine == "pymupdf" else None  # only find_tables() reads it
            found, candidate = tables.find_page_tables(
                page, index + 1, body, table_engine, page_rulings[index]
            )
            table_pages += int(candidate)
            body = _place_tables(body, found)
            table_time += time.process_time() - ts
        body, labels = figures.take_labels(body, page_figures[index], index + 1)
        body = body + [_stand_in(f.page, f.bbox, f) for f in labels]
        for block in layout.order_page(body):
            for part in lists.split_items(block) if block.payload is None else [block]:
                flows.append(part)  # type: ignore[arg-type]
    t2 = time.process_time()

    all_lines = [ln for lines in pages for ln in lines if "running" not in ln.flags]
    vocab = blk.vocabulary(all_lines)
    items = [blk.classify(b, vocab) for b in flows]  # type: ignore[arg-type]
    items = blk.merge_split_tables(blk.merge_code(items))
    stats = headings.font_stats(items)
    headings.detect(items, stats)
    meta = doc.metadata or {}
    title_node = headings.title_item(items, meta.get("title"))
    # Like the Markdown adapter's first h1, the visible title names the document and stays a
    # heading; the metadata title is the fallback.
    title = title_node.text.strip() if title_node is not None else None
    title = title or (meta.get("title") or "").strip() or None
    toc = doc.get_toc(simple=True) if use_outline else []
    unmatched = 0
    if toc:
        outline = [(int(lvl), str(t), int(p)) for lvl, t, p, *_ in toc]
        items, unmatched = headings.apply_outline(items, outline, doc.page_count, stats.body_size)
    items = blk.merge_continuations(items, vocab)

    document = Document(source=source, format="pdf", title=title)
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


def _place_tables(lines: list[Line], found: list[tables.FoundTable]) -> list[Line]:
    """Drop lines inside tables and put one stand-in line per table in the page flow."""
    if not found:
        return lines
    kept: list[Line] = []
    for ln in lines:
        cx, cy = (ln.x0 + ln.x1) / 2, (ln.y0 + ln.y1) / 2
        if any(t.bbox[0] - 1 <= cx <= t.bbox[2] + 1 and t.bbox[1] - 1 <= cy <= t.bbox[3] + 1 for t in found):
            continue
        kept.append(ln)
    kept.extend(_stand_in(t.page, t.bbox, t) for t in found)
    return kept


def _stand_in(page: int, bbox: tuple[float, float, float, float], payload: object) -> Line:
    """A line that holds a table's or a figure's place in the reading order."""
    x0, y0, x1, y1 = bbox
    line = Line(page, x0, y0, x1, y1, [], -1000)
    line.flags.add("table")
    line.payload = payload
    return line
