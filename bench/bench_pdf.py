"""PDF adapter benchmark: raw text extraction vs our full build on the same PDFs, in one run.

Run by hand:  .venv/bin/python bench/bench_pdf.py [--repeat 5] [--prove] [--engine] [FOLDER]

Input: the shared PDFs (../shared/corpus/pdf, 8 files, 696 pages) unless a folder is given.
Rows, per file and in total (least CPU seconds of --repeat runs each; the measures take turns
within each repeat):

- raw dict: `pymupdf.open` + `page.get_text("dict", flags=...)` on every page, our flags (no
  image data): the floor the build is measured against; raw nogc: the same with the cyclic GC
  paused, as our parse runs (x nogc: the build against that stricter floor);
- raw dict+img: the same with pymupdf's default "dict" flags, which copy image bytes;
- parse: `parse_pdf` (tree only); build: parse + `segment.chunk` at max_tokens=512;
- tables: seconds inside table detection (rulings of every page, detectors on candidate pages),
  and its share of the build.

--prove runs `page.find_tables()` (default strategy) on EVERY page as the reference and shows that
each table it finds lies on a page our cheap filter marked as a candidate, and how many our own
detectors recover (same page, box overlap > 50%), with identical rows.
--engine also times the build with `table_engine="pymupdf"` (find_tables on candidate pages).
"""

from __future__ import annotations

import argparse
import re
import sys
import time
from collections.abc import Callable
from pathlib import Path
from statistics import median

import pymupdf

import segment
from segment.adapters.pdf import PdfTimings, parse_pdf, rulings, tables
from segment.adapters.pdf.extract import TEXT_FLAGS, page_lines
from segment.adapters.pdf.outline import norm
from segment.gcpause import paused_gc

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "pdf"
SETTINGS = segment.Settings(max_tokens=512)


def best(fn: Callable[[], object], repeat: int) -> float:
    """Least CPU time of `repeat` runs (process time: other work on the machine does not count,
    which matters on a shared 2-core box; wall and CPU agree on an idle one)."""
    times = []
    for _ in range(repeat):
        start = time.process_time()
        fn()
        times.append(time.process_time() - start)
    return min(times)


def raw_dict_paused(data: bytes) -> None:
    """The raw extraction with the cyclic GC paused, as our parse runs (segment.gcpause): the
    stricter floor, since a page's dict also keeps the collector busy."""
    with paused_gc():
        raw_dict(data, TEXT_FLAGS)


def raw_dict(data: bytes, flags: int) -> None:
    with pymupdf.open(stream=data, filetype="pdf") as doc:
        for page in doc:
            page.get_text("dict", flags=flags)


def build(data: bytes, name: str, engine: str = "own", timings: PdfTimings | None = None) -> int:
    doc = parse_pdf(data, name, table_engine=engine, timings=timings)
    return sum(1 for _ in segment.chunk(doc, SETTINGS))


def iou(a: tuple[float, ...], b: tuple[float, ...]) -> float:
    x0, y0, x1, y1 = max(a[0], b[0]), max(a[1], b[1]), min(a[2], b[2]), min(a[3], b[3])
    if x1 <= x0 or y1 <= y0:
        return 0.0
    inter = (x1 - x0) * (y1 - y0)
    return inter / ((a[2] - a[0]) * (a[3] - a[1]) + (b[2] - b[0]) * (b[3] - b[1]) - inter)


def prove(path: Path) -> tuple[int, int, int, int, int, int]:
    """(reference tables, on candidate pages, recovered by ours, reference rows, identical rows,
    our tables on pages where find_tables finds none)."""
    key = lambda cells: tuple(re.sub(r"[\W_]+", "", c or "").casefold() for c in cells)  # noqa: E731
    ref_n = on_cand = found = rows = same = extra = 0
    with pymupdf.open(path) as doc:
        for index, page in enumerate(doc):
            r = rulings.rulings(page)
            candidate = rulings.is_candidate(r)
            ours, _ = tables.find_page_tables(page, index + 1, page_lines(page, index + 1), "own", r)
            refs = page.find_tables().tables
            if not refs:
                extra += len(ours)
            for ref in refs:
                ref_n += 1
                on_cand += int(candidate)
                match = max(ours, key=lambda t: iou(t.bbox, tuple(ref.bbox)), default=None)
                if match is None or iou(match.bbox, tuple(ref.bbox)) <= 0.5:
                    continue
                found += 1
                mine = {key(c) for c in match.header + match.rows}
                for row in ref.extract():
                    if any(row):
                        rows += 1
                        same += key(row) in mine
    return ref_n, on_cand, found, rows, same, extra


def headings_score(doc: segment.Document, toc: list[list[object]]) -> tuple[int, int, int]:
    from difflib import SequenceMatcher

    found = [
        (s.heading.text, s.heading.span.pages[0]) for _, s in doc.walk() if s.heading and s.heading.span.pages
    ]
    used: set[int] = set()
    hits = 0
    for text, page in found:
        bestj = None
        for j, (_, title, tpage, *_) in enumerate(toc):
            if j not in used and abs(int(tpage) - page) <= 1:
                ratio = SequenceMatcher(None, norm(text), norm(str(title)), autojunk=False).ratio()
                if ratio >= 0.85 and (bestj is None or ratio > bestj[0]):
                    bestj = (ratio, j)
        if bestj:
            used.add(bestj[1])
            hits += 1
    return hits, len(found), len(toc)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("folder", nargs="?", type=Path, default=CORPUS)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--prove", action="store_true", help="find_tables on every page as the reference")
    ap.add_argument("--engine", action="store_true", help="also time table_engine='pymupdf'")
    args = ap.parse_args(argv)
    files = sorted(args.folder.rglob("*.pdf"))
    if not files:
        print(f"no PDFs under {args.folder}", file=sys.stderr)
        return 1
    default_flags = pymupdf.TEXTFLAGS_DICT
    head = (
        f"{'file':28} {'pages':>5} {'raw dict':>9} {'raw nogc':>9} {'dict+img':>9} {'parse':>8} {'build':>8} "
        f"{'x raw':>6} {'x nogc':>6} {'tables':>7} {'share':>6} {'cand':>5}"
    )
    if args.engine:
        head += f" {'build(ft)':>9} {'x raw':>6}"
    print(head)
    totals = {
        "pages": 0,
        "raw": 0.0,
        "nogc": 0.0,
        "img": 0.0,
        "parse": 0.0,
        "build": 0.0,
        "tables": 0.0,
        "cand": 0,
        "ft": 0.0,
        "extract": 0.0,
        "layout": 0.0,
    }
    fonts_scores = [0, 0, 0]
    # Per repeat, summed over files: each repeat's raw and build ran side by side, so their ratio
    # is the least disturbed by a machine that speeds up and slows down.
    paired = {"raw": [0.0] * args.repeat, "nogc": [0.0] * args.repeat, "build": [0.0] * args.repeat}
    for path in files:
        data = path.read_bytes()
        with pymupdf.open(stream=data, filetype="pdf") as doc:
            pages = doc.page_count
            toc = doc.get_toc()
        # The four measures take turns within each repeat, so a slow spell of a shared machine
        # hits them alike instead of one of them.
        raws, nogcs, imgs, parses = [], [], [], []
        runs: list[tuple[float, PdfTimings]] = []
        for _ in range(args.repeat):
            raws.append(best(lambda: raw_dict(data, TEXT_FLAGS), 1))
            nogcs.append(best(lambda: raw_dict_paused(data), 1))
            imgs.append(best(lambda: raw_dict(data, default_flags), 1))
            parses.append(best(lambda: parse_pdf(data, path.name), 1))
            timing = PdfTimings()
            start = time.process_time()
            build(data, path.name, "own", timing)
            runs.append((time.process_time() - start, timing))
        for k in range(args.repeat):
            paired["raw"][k] += raws[k]
            paired["nogc"][k] += nogcs[k]
            paired["build"][k] += runs[k][0]
        t_raw, t_nogc, t_img, t_parse = min(raws), min(nogcs), min(imgs), min(parses)
        t_build, timing = min(runs, key=lambda r: r[0])  # stage times of the fastest build
        row = (
            f"{path.name:28} {pages:5d} {t_raw:9.3f} {t_nogc:9.3f} {t_img:9.3f} {t_parse:8.3f} {t_build:8.3f} "
            f"{t_build / t_raw:6.2f} {t_build / t_nogc:6.2f} {timing.tables:7.3f} {timing.tables / t_build:6.1%} "
            f"{timing.table_pages:5d}"
        )
        totals["pages"] += pages
        totals["raw"] += t_raw
        totals["nogc"] += t_nogc
        totals["img"] += t_img
        totals["parse"] += t_parse
        totals["build"] += t_build
        totals["tables"] += timing.tables
        totals["extract"] += timing.extract
        totals["layout"] += timing.layout
        totals["cand"] += timing.table_pages
        if args.engine:
            t_ft = best(lambda: build(data, path.name, "pymupdf"), 1)
            totals["ft"] += t_ft
            row += f" {t_ft:9.3f} {t_ft / t_raw:6.2f}"
        print(row)
        if toc:
            doc_fonts = parse_pdf(data, path.name, use_outline=False)
            for i, v in enumerate(headings_score(doc_fonts, toc)):
                fonts_scores[i] += v
    t = totals
    row = (
        f"{'TOTAL':28} {t['pages']:5d} {t['raw']:9.3f} {t['nogc']:9.3f} {t['img']:9.3f} {t['parse']:8.3f} "
        f"{t['build']:8.3f} {t['build'] / t['raw']:6.2f} {t['build'] / t['nogc']:6.2f} {t['tables']:7.3f} "
        f"{t['tables'] / t['build']:6.1%} {t['cand']:5d}"
    )
    if args.engine:
        row += f" {t['ft']:9.3f} {t['ft'] / t['raw']:6.2f}"
    print(row)
    print(
        f"\npages/s: raw dict {t['pages'] / t['raw']:.0f}, dict with images {t['pages'] / t['img']:.0f}, "
        f"parse {t['pages'] / t['parse']:.0f}, build {t['pages'] / t['build']:.0f}"
    )
    by_raw = median(b / r for b, r in zip(paired["build"], paired["raw"]))
    by_nogc = median(b / r for b, r in zip(paired["build"], paired["nogc"]))
    print(
        f"build / raw dict, median of the {args.repeat} paired repeats: {by_raw:.2f} (GC paused: {by_nogc:.2f})"
    )
    seg = t["build"] - t["parse"]
    print(
        f"build stages (CPU s, fastest build of each file): text lines {t['extract']:.3f} "
        f"(raw dict alone {t['raw']:.3f}), tables {t['tables']:.3f}, layout+headings+tree {t['layout']:.3f}, "
        f"segmenter ~{seg:.3f}"
    )
    hits, found, expected = fonts_scores
    if found and expected:
        p, r = hits / found, hits / expected
        print(
            f"font headings vs outlines (use_outline=False): precision {p:.3f} recall {r:.3f} F1 {2 * p * r / (p + r):.3f}"
        )
    if args.prove:
        print(
            f"\n{'file':28} {'ref tables':>10} {'on cand.':>8} {'ours':>5} {'ref rows':>8} {'same':>5} {'ours, no ref':>12}"
        )
        sums = [0] * 6
        for path in files:
            res = prove(path)
            sums = [a + b for a, b in zip(sums, res)]
            print(f"{path.name:28} {res[0]:10d} {res[1]:8d} {res[2]:5d} {res[3]:8d} {res[4]:5d} {res[5]:12d}")
        print(f"{'TOTAL':28} {sums[0]:10d} {sums[1]:8d} {sums[2]:5d} {sums[3]:8d} {sums[4]:5d} {sums[5]:12d}")
        missed = sums[0] - sums[1]
        print(f"filter: {missed} of {sums[0]} find_tables() tables on pages the filter skipped")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
