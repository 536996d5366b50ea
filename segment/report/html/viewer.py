"""One page per source file: the source's lines with each chunk's extent marked, and the chunks.

Markdown and HTML sources are shown as their own lines (the chunks' `lines` point into them);
PDF sources have pages, not lines, so their pane lists the pages and the chunks on each.
"""

from __future__ import annotations

import html
import os
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TextIO

from segment.report.figures import continued_kind
from segment.report.html.style import CSS, VIEWER_JS
from segment.report.textshape import ends_mid_sentence

MAX_SOURCE_BYTES = 4 * 1024 * 1024
"""Longer sources show their first 4 MiB: the page stays quick to open."""
COLOURS = 4
MIN_OVERLAP_CHARS = 12


def esc(text: object) -> str:
    """Text escaped for HTML element content and attribute values."""
    return html.escape(str(text), quote=True)


def text_overlap(prev: str, nxt: str) -> int:
    """Characters at the start of `nxt` that repeat the end of `prev` (0 when under 12)."""
    probe = nxt[:MIN_OVERLAP_CHARS]
    if len(probe) < MIN_OVERLAP_CHARS:
        return 0
    start = prev.find(probe)
    best = 0
    while start != -1:
        tail = prev[start:]
        if nxt.startswith(tail):
            best = max(best, len(tail))
        start = prev.find(probe, start + 1)
    return best


@dataclass(slots=True)
class ChunkView:
    """What the viewer shows beside one chunk's text."""

    record: dict[str, Any]
    colour: int
    flags: list[tuple[str, str]]
    """(css class, label) pairs."""
    overlap_chars: int
    span: tuple[int, int] | None


def chunk_views(records: list[dict[str, Any]], budget: int) -> list[ChunkView]:
    """Flags, overlap and colour of each chunk of one file, in order."""
    views: list[ChunkView] = []
    prev: dict[str, Any] | None = None
    for i, record in enumerate(records):
        flags: list[tuple[str, str]] = []
        tokens = int(record["tokens"])
        if record.get("oversize"):
            flags.append(("flag", "oversize"))
        elif tokens > budget:
            flags.append(("flag", "over budget, not flagged"))
        if ends_mid_sentence(record["text"], list(record["blocks"])):
            flags.append(("flag", "ends mid-sentence"))
        if record["blocks"] == ["heading"]:
            flags.append(("flag", "heading only"))
        overlap = 0
        if prev is not None:
            kind = continued_kind(prev, record)
            if kind:
                flags.append(("flag info", f"{kind} continued from #{prev['seq']}"))
            overlap = text_overlap(prev["text"], record["text"])
            if overlap:
                flags.append(("flag overlap", f"overlap: {overlap} characters of #{prev['seq']}"))
        lines = record.get("lines")
        span = (int(lines[0]), int(lines[1])) if lines else None
        views.append(ChunkView(record, i % COLOURS, flags, overlap, span))
        prev = record
    return views


def _source_lines(path: Path | None) -> tuple[list[str], bool]:
    """The source's lines (decoded leniently) and whether they were cut at MAX_SOURCE_BYTES."""
    if path is None:
        return [], False
    try:
        with open(path, "rb") as fh:
            data = fh.read(MAX_SOURCE_BYTES + 1)
    except OSError:
        return [], False
    cut = len(data) > MAX_SOURCE_BYTES
    return data[:MAX_SOURCE_BYTES].decode("utf-8", "replace").splitlines(), cut


def _line_owners(views: list[ChunkView], count: int) -> list[list[int]]:
    owners: list[list[int]] = [[] for _ in range(count + 1)]
    for i, view in enumerate(views):
        if view.span is None:
            continue
        lo, hi = view.span
        for n in range(max(1, lo), min(hi, count) + 1):
            owners[n].append(i)
    return owners


def _source_pane(views: list[ChunkView], lines: list[str], cut: bool) -> Iterator[str]:
    owners = _line_owners(views, len(lines))
    yield '<div class="source">'
    for n, line in enumerate(lines, start=1):
        mine = owners[n]
        if len(mine) > 1:
            cls = "ln both"
            title = f' title="chunks {", ".join("#" + str(views[i].record["seq"]) for i in mine)} overlap"'
        elif mine:
            cls = f"ln k{views[mine[0]].colour}"
            title = f' title="chunk #{views[mine[0]].record["seq"]}"'
        else:
            cls, title = "ln", ""
        yield f'<div class="{cls}" id="L{n}"{title}><span class="no">{n}</span>{esc(line)}</div>\n'
    if cut:
        yield f'<div class="ln"><span class="no">…</span>(source cut at {MAX_SOURCE_BYTES} bytes)</div>'
    yield "</div>"


def _pages_pane(views: list[ChunkView]) -> Iterator[str]:
    pages: dict[int, list[ChunkView]] = {}
    for view in views:
        span = view.record.get("pages") or [0, 0]
        for page in range(int(span[0]), int(span[1]) + 1):
            pages.setdefault(page, []).append(view)
    yield '<div class="source">'
    for page, on_page in sorted(pages.items()):
        marks = "<br>".join(
            f'<a href="#c{v.record["seq"]}">#{v.record["seq"]}</a> '
            f"{esc((v.record['breadcrumb'] or ['(no heading)'])[-1])}"
            for v in on_page
        )
        label = f"p. {page}" if page else "no page"
        yield (
            f'<div class="ln k{on_page[0].colour}" id="P{page}"><span class="no">{label}</span>'
            f"<span>{marks}</span></div>\n"
        )
    yield "</div>"


def _card(view: ChunkView, budget: int) -> str:
    r = view.record
    tokens = int(r["tokens"])
    fill = min(100.0, 100 * tokens / budget)
    over = " over" if tokens > budget else ""
    flagged = " flagged" if any(cls == "flag" for cls, _ in view.flags) else ""
    lo, hi = view.span or (0, 0)
    flags = " ".join(f'<span class="{cls}">{esc(label)}</span>' for cls, label in view.flags)
    where = []
    if r.get("lines"):
        where.append(f'lines <a href="#L{lo}">{lo}–{hi}</a>')
    if r.get("pages"):
        p = r["pages"]
        where.append(f'pages <a href="#P{p[0]}">{p[0]}–{p[1]}</a>')
    if r.get("cells"):
        where.append(f"cells {r['cells'][0]}–{r['cells'][1]}")
    if r.get("anchor"):
        where.append(f"anchor #{esc(r['anchor'])}")
    if r.get("url"):
        where.append(f'<a href="{esc(r["url"])}">{esc(r["url"])}</a>')
    text = esc(r["text"])
    if view.overlap_chars:
        head = esc(r["text"][: view.overlap_chars])
        text = f"<mark>{head}</mark>{esc(r['text'][view.overlap_chars :])}"
    crumb = " › ".join(esc(b) for b in r["breadcrumb"]) or "(no heading)"
    return (
        f'<article class="chunk k{view.colour}{flagged}" id="c{r["seq"]}" data-seq="{r["seq"]}"'
        f' data-from="{lo}" data-to="{hi}">'
        f"<h3><span>#{r['seq']}</span><span>{tokens} tokens</span>{flags}</h3>"
        f'<div class="bar{over}"><span style="width:{fill:.1f}%"></span></div>'
        f'<div class="crumb">{crumb}</div>'
        f'<div class="meta">id {esc(r["id"])} · {esc(", ".join(r["blocks"]))} · {" · ".join(where)}</div>'
        f"<pre>{text}</pre></article>\n"
    )


def write_file_page(
    fh: TextIO,
    source: str,
    records: list[dict[str, Any]],
    *,
    budget: int,
    budget_known: bool = True,
    source_path: Path | None,
    page_dir: Path,
    overview: str,
    status: str = "ok",
    reason: str = "",
) -> None:
    """Stream one file's page to `fh`: header, source pane, chunk cards."""
    views = chunk_views(records, budget)
    fmt = records[0]["format"] if records else ""
    is_pages = fmt == "pdf" or (records and not records[0].get("lines"))
    link = ""
    if source_path is not None and source_path.exists():
        href = os.path.relpath(source_path, page_dir).replace(os.sep, "/")
        link = f' · <a href="{esc(href)}">open the source file</a>'
    fh.write(
        f'<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>{esc(source)} · chunks</title>'
        f'<meta name="viewport" content="width=device-width, initial-scale=1"><style>{CSS}</style></head><body>'
        f'<header><h1>{esc(source)}</h1><div class="sub"><a href="{esc(overview)}">← overview</a> · '
        f"{esc(fmt or 'no chunks')} · {len(records)} chunks · budget {budget} tokens"
        f"{'' if budget_known else ' (assumed)'}{link}</div></header>"
        '<main class="viewer">'
    )
    if status != "ok":
        fh.write(f'<p class="flag">failed: {esc(status)}: {esc(reason)} (last good chunks shown)</p>')
    fh.write('<div class="pane" id="source-pane">')
    if is_pages:
        fh.writelines(_pages_pane(views))
    else:
        lines, cut = _source_lines(source_path)
        if lines:
            fh.writelines(_source_pane(views, lines, cut))
        else:
            fh.write('<p class="meta">The source file is not at hand: only the chunks are shown.</p>')
    fh.write('</div><div class="pane chunks" id="chunk-pane">')
    for view in views:
        fh.write(_card(view, budget))
    if not views:
        fh.write('<p class="meta">This file gave no chunks.</p>')
    fh.write(f"</div></main><script>{VIEWER_JS}</script></body></html>\n")
