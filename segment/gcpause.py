"""Pause Python's cyclic garbage collector while a parser builds a large, acyclic tree.

A parse keeps tens of thousands of small objects alive (a PDF's lines and pieces, a page's tokens
and nodes) while temporary ones are created and dropped around them. Every few hundred
allocations the collector runs and rescans the survivors: on the shared PDFs that was about a
quarter of the build's CPU time, on the shared Markdown about a tenth (bench/bench_pdf.py,
bench/bench_markdown.py). `segment.parse_bytes`, `parse_pdf` and the segmenter run inside
`paused_gc()`. Reference counting still frees everything they drop; cycles, if any, are
collected once the collector is back on.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager


@contextmanager
def paused_gc() -> Iterator[None]:
    """Switch the cyclic collector off for the block; back on after it only if it was on before
    (so a host that runs with it off keeps it off, and nested pauses are harmless)."""
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()
