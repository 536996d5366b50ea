"""Notebook benchmark: nbformat.read + markdown-it-py on the Markdown cells vs our full build,
same files, same run.

Run by hand:  .venv/bin/python bench/bench_notebook.py [--repeat 5] [--max-tokens 512]

Input: the shared notebook corpus (../shared/corpus/ipynb), read into memory first so that disk
reads are not timed; `--copies N` repeats the corpus N times for steadier figures. Single process.

Rows:
- `nbformat.read + markdown-it`: the baseline: `nbformat.reads(text, as_version=4)` (which parses
  the JSON and runs nbformat's validator), then `MarkdownIt.parse()` on every Markdown cell with
  the configuration our Markdown adapter uses.
- `segment parse -> tree`: our adapter alone (`segment.parse_bytes`).
- `segment parse + chunk`: parse, tree and segment, chunks made but not written.
- `segment build (library)`: parse, tree, segment, and one JSON Lines file per notebook written to
  a temp folder (what `segment build` does for each file, without the daemon's store).

Times are CPU seconds of this process (`time.process_time`); steps run round robin `--repeat`
times and each figure is the step's best run. Target: the library build at most 1.5x the
baseline.
"""

from __future__ import annotations

import argparse
import logging
import shutil
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import nbformat
from markdown_it import MarkdownIt
from mdit_py_plugins.front_matter import front_matter_plugin

import segment
from segment.adapters.markdown import MAX_NESTING
from segment.adapters.notebook import cell_text
from segment.settings import Settings

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "ipynb"


def load(root: Path, copies: int) -> list[tuple[str, bytes]]:
    files = sorted(root.rglob("*.ipynb"))
    docs = [(p.relative_to(root).as_posix(), p.read_bytes()) for p in files]
    return [(f"{k}/{name}", data) for k in range(copies) for name, data in docs]


def raw_parser() -> MarkdownIt:
    md = MarkdownIt("commonmark", {"maxNesting": MAX_NESTING, "html": True})
    md.enable(["table", "strikethrough"])
    md.use(front_matter_plugin)
    return md


def run_raw(docs: list[tuple[str, bytes]], _out: Path) -> None:
    md = raw_parser()
    for _name, data in docs:
        nb = nbformat.reads(data.decode("utf-8"), as_version=4)
        for cell in nb.cells:
            if cell.cell_type == "markdown":
                md.parse(cell_text(cell.source))


def run_tree(docs: list[tuple[str, bytes]], _out: Path) -> None:
    for name, data in docs:
        segment.parse_bytes(data, name)


def run_segment(docs: list[tuple[str, bytes]], settings: Settings) -> None:
    for name, data in docs:
        for _c in segment.chunk(segment.parse_bytes(data, name, settings), settings):
            pass


def run_build(docs: list[tuple[str, bytes]], settings: Settings, out: Path) -> None:
    made: set[Path] = set()
    for name, data in docs:
        doc = segment.parse_bytes(data, name, settings)
        text = "".join(c.to_json() + "\n" for c in segment.chunk(doc, settings))
        dest = out / "chunks" / (name + ".jsonl")
        if dest.parent not in made:
            dest.parent.mkdir(parents=True, exist_ok=True)
            made.add(dest.parent)
        dest.write_text(text, encoding="utf-8")


def timed(fn: Callable[[Path], None]) -> float:
    out = Path(tempfile.mkdtemp(prefix="bench-nb-"))
    try:
        started = time.process_time()
        fn(out)
        return time.process_time() - started
    finally:
        shutil.rmtree(out, ignore_errors=True)


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--corpus", type=Path, default=CORPUS)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--copies", type=int, default=3)
    ap.add_argument("--max-tokens", type=int, default=512)
    args = ap.parse_args(argv)
    if not args.corpus.is_dir():
        print(f"no corpus at {args.corpus}", file=sys.stderr)
        return 2
    logging.getLogger("traitlets").setLevel(logging.CRITICAL)
    docs = load(args.corpus, args.copies)
    size = sum(len(d) for _, d in docs)
    settings = Settings(max_tokens=args.max_tokens)
    steps: dict[str, Callable[[Path], None]] = {
        "nbformat.read + markdown-it": lambda out: run_raw(docs, out),
        "segment parse -> tree": lambda out: run_tree(docs, out),
        "segment parse + chunk": lambda out: run_segment(docs, settings),
        "segment build (library)": lambda out: run_build(docs, settings, out),
    }
    best = {name: float("inf") for name in steps}
    for fn in steps.values():  # warm-up, untimed: imports, spaCy, caches
        timed(fn)
    for _ in range(args.repeat):
        for name, fn in steps.items():
            best[name] = min(best[name], timed(fn))
    base = best["nbformat.read + markdown-it"]
    print(f"{len(docs)} notebooks, {size / 1e6:.1f} MB, best of {args.repeat} (CPU seconds)")
    print(f"| {'step':<30} | {'s':>7} | {'MB/s':>6} | {'x baseline':>10} |")
    print(f"|{'-' * 32}|{'-' * 9}|{'-' * 8}|{'-' * 12}|")
    for name, seconds in best.items():
        print(f"| {name:<30} | {seconds:7.3f} | {size / 1e6 / seconds:6.2f} | {seconds / base:9.2f}x |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
