"""Write the report site: `index.html` (figures, plots, filterable file list) and `files/*.html`.

Every page is self-contained (inline CSS, SVG and JS) and opens from disk. Pages are streamed to
their files one source at a time, so a large corpus never builds one giant page in memory.
"""

from __future__ import annotations

import hashlib
import re
from collections import defaultdict
from pathlib import Path

from segment.report.figures import percentile
from segment.report.html.plots import overview_plots
from segment.report.html.style import CSS, OVERVIEW_JS
from segment.report.html.viewer import esc, write_file_page
from segment.report.output import Output
from segment.report.summary import Summary, format_of
from segment.report.text import summary_text

FILES_DIR = "files"


def page_name(source: str) -> str:
    """File name of a source's page: readable, safe on any file system, unique by a hash."""
    slug = re.sub(r"[^A-Za-z0-9._-]+", "_", source).strip("_")[-80:] or "file"
    digest = hashlib.blake2b(source.encode("utf-8", "surrogatepass"), digest_size=5).hexdigest()
    return f"{slug}-{digest}.html"


def write_site(
    output: Output, summary: Summary, site: Path, extra: list[tuple[str, list[str]]] | None = None
) -> Path:
    """Write the site into `site` and return the overview page's path.

    `extra` sections (title, text lines), such as the comparison, go on the overview.
    """
    pages = site / FILES_DIR
    pages.mkdir(parents=True, exist_ok=True)
    status = {row.source: row for row in output.files.values()}
    tokens_by_format: dict[str, list[int]] = defaultdict(list)
    rows: list[str] = []
    written: set[str] = set()
    for chunks in output.sources:
        source = chunks.source
        row = status.get(source)
        src_path = output.src / source if output.src is not None else None
        with open(pages / page_name(source), "w", encoding="utf-8") as fh:
            write_file_page(
                fh,
                source,
                chunks.records,
                budget=output.budget,
                budget_known=output.settings_exact,
                source_path=src_path,
                page_dir=pages,
                overview="../index.html",
                status=row.status if row else "ok",
                reason=(row.error or "") if row else "",
            )
        written.add(source)
        tokens = [int(r["tokens"]) for r in chunks.records]
        for r in chunks.records:
            tokens_by_format[str(r["format"])].append(int(r["tokens"]))
        rows.append(
            _file_row(
                summary, source, chunks.format or format_of(source), row.status if row else "ok", tokens
            )
        )
    for row in output.files.values():  # files with no chunk file: failed before any good build, or empty
        if row.source in written:
            continue
        with open(pages / page_name(row.source), "w", encoding="utf-8") as fh:
            src_path = output.src / row.source if output.src is not None else None
            write_file_page(
                fh,
                row.source,
                [],
                budget=output.budget,
                budget_known=output.settings_exact,
                source_path=src_path,
                page_dir=pages,
                overview="../index.html",
                status=row.status,
                reason=row.error or "",
            )
        rows.append(_file_row(summary, row.source, format_of(row.source), row.status, []))
    index = site / "index.html"
    plots = overview_plots(summary, tokens_by_format)
    with open(index, "w", encoding="utf-8") as fh:
        fh.write(_overview_head(summary))
        fh.write('<h2>Plots</h2><div class="plots">')
        for title, svg in plots.items():
            fh.write(f'<figure class="plot"><figcaption>{esc(title)}</figcaption>{svg}</figure>')
        fh.write("</div>")
        fh.write(
            f'<h2>Files</h2><div class="filters"><input type="search" id="q" placeholder="filter by path">'
            f'<label><input type="checkbox" id="only"> only files with problems</label>'
            f'<span><span id="shown">{len(rows)}</span> of {len(rows)} shown</span></div>'
            '<table id="files"><thead><tr><th>file</th><th>format</th><th>status</th><th class="n">chunks</th>'
            '<th class="n">median tokens</th><th class="n">max tokens</th><th class="n">problems</th>'
            "</tr></thead><tbody>\n"
        )
        fh.writelines(sorted(rows))
        fh.write("</tbody></table>")
        for title, section in extra or []:
            fh.write(f'<h2>{esc(title)}</h2><pre class="summary">{esc(chr(10).join(section))}</pre>')
        fh.write(f'<h2>Summary</h2><pre class="summary">{esc(chr(10).join(summary_text(summary)))}</pre>')
        fh.write(f"</main><script>{OVERVIEW_JS}</script></body></html>\n")
    return index


def _file_row(summary: Summary, source: str, fmt: str, status: str, tokens: list[int]) -> str:
    problems = summary.figures.per_file.get(source)
    count = problems.total if problems else (1 if status != "ok" else 0)
    cls = "file problem" if count else "file"
    median = f"{percentile(tokens, 50):.0f}" if tokens else "–"
    top = str(max(tokens)) if tokens else "–"
    href = f"{FILES_DIR}/{page_name(source)}"
    return (
        f'<tr class="{cls}" data-source="{esc(source)}" data-problems="{count}">'
        f'<td><a href="{esc(href)}">{esc(source)}</a></td><td>{esc(fmt)}</td><td>{esc(status)}</td>'
        f'<td class="n">{len(tokens)}</td><td class="n">{median}</td><td class="n">{top}</td>'
        f'<td class="n">{count}</td></tr>\n'
    )


def _overview_head(summary: Summary) -> str:
    f = summary.figures
    cards = [
        ("files", summary.files, False),
        ("chunks", f.chunks, False),
        ("budget (tokens)" if summary.budget_known else "budget (assumed)", summary.budget, False),
        ("median tokens", f"{f.tokens['all'].median:.0f}", False),
        ("oversize", len(f.oversize), bool(f.oversize)),
        ("over budget, unflagged", len(f.over_budget_unflagged), bool(f.over_budget_unflagged)),
        ("end mid-sentence", len(f.mid_sentence), bool(f.mid_sentence)),
        ("blocks cut into parts", len(f.split_blocks), False),
        ("repeated groups", len(f.duplicates), bool(f.duplicates)),
        ("no chunks", len(summary.no_chunks), bool(summary.no_chunks)),
        ("failed", len(summary.failed), bool(summary.failed)),
    ]
    card_html = "".join(
        f'<div class="card{" bad" if bad else ""}"><b>{esc(value)}</b>{esc(label)}</div>'
        for label, value, bad in cards
    )
    return (
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>docsegment report</title>'
        f'<meta name="viewport" content="width=device-width, initial-scale=1"><style>{CSS}</style></head><body>'
        f'<header><h1>docsegment report</h1><div class="sub">{esc(summary.out)} · source '
        f"{esc(summary.src or 'unknown')}</div></header><main>"
        f'<div class="cards">{card_html}</div>'
    )
