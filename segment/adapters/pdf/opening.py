"""Opening a PDF: magic check, empty and broken files, passwords, page cap, MuPDF's warnings."""

from __future__ import annotations

import logging

import pymupdf

from segment.errors import ParseError, TooLarge

log = logging.getLogger("segment.adapters.pdf")

if hasattr(pymupdf, "no_recommend_layout"):
    pymupdf.no_recommend_layout()  # otherwise find_tables() prints an advert on stdout
pymupdf.TOOLS.mupdf_display_errors(False)  # MuPDF messages go to our log, not to stderr

MAGIC_WINDOW = 1024
"""The `%PDF-` header must start within this many bytes (readers allow leading junk)."""


def open_pdf(data: bytes, source: str, max_pages: int) -> tuple[pymupdf.Document, list[str]]:
    """Open bytes as a PDF or raise a ParseError that says why; returns warnings too."""
    if not data:
        raise ParseError(source, "file is empty (0 bytes)", status="empty")
    if b"%PDF-" not in data[:MAGIC_WINDOW]:
        raise ParseError(source, "not a PDF: no %PDF- header in the first 1024 bytes", status="corrupt")
    pymupdf.TOOLS.reset_mupdf_warnings()
    try:
        doc = pymupdf.open(stream=data, filetype="pdf")
    except Exception as exc:  # pymupdf raises FileDataError/RuntimeError subclasses
        flush_warnings(source)
        raise ParseError(source, f"cannot open PDF (damaged or truncated): {exc}", status="corrupt") from exc
    warnings: list[str] = []
    try:
        if doc.needs_pass and not doc.authenticate(""):
            raise ParseError(source, "PDF is encrypted with a user password", status="encrypted")
        count = doc.page_count
        if count == 0:
            raise ParseError(source, "PDF has no pages (damaged or truncated)", status="corrupt")
        if count > max_pages:
            raise TooLarge(source, f"PDF has {count} pages, over max_pages={max_pages}")
        if doc.is_repaired:
            warnings.append("repaired: text may be partial")
    except (RuntimeError, ValueError) as exc:
        doc.close()
        flush_warnings(source)
        raise ParseError(source, f"damaged or truncated PDF: {exc}", status="corrupt") from exc
    except BaseException:
        doc.close()
        flush_warnings(source)
        raise
    return doc, warnings


def flush_warnings(source: str) -> int:
    """Send MuPDF's collected warnings to our log; returns how many lines there were."""
    text = pymupdf.TOOLS.mupdf_warnings(reset=True)
    lines = [ln for ln in text.splitlines() if ln.strip()] if text else []
    for line in lines[:20]:
        log.debug("%s: mupdf: %s", source, line)
    if len(lines) > 20:
        log.debug("%s: mupdf: ... %d more warnings", source, len(lines) - 20)
    return len(lines)
