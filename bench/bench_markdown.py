"""Markdown benchmark: markdown-it-py's parse alone vs our full build, same files, same run.

Run by hand:  .venv/bin/python bench/bench_markdown.py [--repeat 3] [--max-tokens 512] [--daemon]

Input: the shared Markdown corpus (../shared/corpus/markdown, 441 pages, 3.3 MB), read into
memory first so that disk reads are not timed. Single process throughout.

Rows:
- `markdown-it-py parse`: the baseline, `MarkdownIt.parse()` with the configuration our adapter
  uses (CommonMark preset, raw HTML on, tables and strikethrough, front matter plugin).
- `markdown-it-py parse, GC paused`: the same with the cyclic GC paused per page, as our parse
  and segmenter run (`segment.gcpause`): the stricter baseline.
- `segment parse -> tree`: our adapter alone (`segment.parse_bytes`).
- `segment parse + chunk`: parse, tree and segment, chunks made but not written.
- `segment build (library)`: parse, tree, segment, and write one JSON Lines file per page to a
  temp folder (what `segment build` does for each file, without the daemon's store).
- `segment build (daemon)`, with `--daemon`: `daemon.reconcile(..., jobs=1, full=True)` into a
  fresh output folder, the code behind the `segment build` command (its store, feed and worker
  process included, so it is not single-process: shown for reference).

Times are CPU seconds of this process (`time.process_time`), which other work on a shared
machine disturbs far less than the wall clock (the daemon row alone is wall-clock, since its
parsing happens in a worker process). Steps run round robin `--repeat` times and each figure is
the step's best run; MB/s counts the source bytes. Target (issue 2): the
library build at most 1.5x the parse alone.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

from markdown_it import MarkdownIt
from mdit_py_plugins.front_matter import front_matter_plugin

import segment
from segment.gcpause import paused_gc
from segment.settings import Settings

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "markdown"


def load(root: Path) -> list[tuple[str, bytes]]:
    files = sorted(p for p in root.rglob("*.md") if p.name not in ("SOURCE.md", "README.md"))
    return [(p.relative_to(root).as_posix(), p.read_bytes()) for p in files]


def raw_parser() -> MarkdownIt:
    md = MarkdownIt("commonmark", {"html": True, "maxNesting": 120})
    md.enable(["table", "strikethrough"])
    md.use(front_matter_plugin)
    return md


def run_parse_only(docs: list[tuple[str, bytes]]) -> None:
    md = raw_parser()
    for _name, data in docs:
        md.parse(data.decode("utf-8", errors="replace"))


def run_parse_only_paused(docs: list[tuple[str, bytes]]) -> None:
    """The baseline with the cyclic GC paused for each page, as our parse runs (segment.gcpause)."""
    md = raw_parser()
    for _name, data in docs:
        with paused_gc():
            md.parse(data.decode("utf-8", errors="replace"))


def run_tree(docs: list[tuple[str, bytes]]) -> None:
    for name, data in docs:
        segment.parse_bytes(data, name)


def run_segment(docs: list[tuple[str, bytes]], settings: Settings) -> None:
    for name, data in docs:
        for _c in segment.chunk(segment.parse_bytes(data, name), settings):
            pass


def run_build(docs: list[tuple[str, bytes]], settings: Settings, out: Path) -> None:
    made: set[Path] = set()
    for name, data in docs:
        text = "".join(c.to_json() + "\n" for c in segment.chunk(segment.parse_bytes(data, name), settings))
        dest = out / "chunks" / (name + ".jsonl")
        if dest.parent not in made:
            dest.parent.mkdir(parents=True, exist_ok=True)
            made.add(dest.parent)
        dest.write_text(text, encoding="utf-8")


def run_daemon(root: Path, settings: Settings, out: Path) -> None:
    from segment.daemon import reconcile

    reconcile(root, out, settings, jobs=1, full=True)


def timed(fn: Callable[[Path], None], clock: Callable[[], float]) -> float:
    """Time `fn(out)` with a fresh, empty output folder made and removed outside the timing."""
    out = Path(tempfile.mkdtemp(prefix="bench-md-"))
    try:
        started = clock()
        fn(out)
        return clock() - started
    finally:
        shutil.rmtree(out, ignore_errors=True)


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--corpus", type=Path, default=CORPUS)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--max-tokens", type=int, default=512)
    ap.add_argument("--daemon", action="store_true", help="also time daemon.reconcile (segment build)")
    args = ap.parse_args(argv)
    if not args.corpus.is_dir():
        print(f"corpus not found: {args.corpus}", file=sys.stderr)
        return 2
    docs = load(args.corpus)
    size_mb = sum(len(d) for _n, d in docs) / 1e6
    settings = Settings(max_tokens=args.max_tokens)

    # Warm up once: imports, the spaCy pipeline (loaded lazily on the first over-budget
    # paragraph), regex caches.
    from segment.sentences import split_sentences

    split_sentences("Warm up. Twice.", settings.language)
    timed(lambda out: run_build(docs[:20], settings, out), time.perf_counter)

    steps: list[tuple[str, Callable[[Path], None]]] = [
        ("markdown-it-py parse", lambda _out: run_parse_only(docs)),
        ("markdown-it-py parse, GC paused", lambda _out: run_parse_only_paused(docs)),
        ("segment parse -> tree", lambda _out: run_tree(docs)),
        (f"segment parse + chunk ({args.max_tokens} tokens)", lambda _out: run_segment(docs, settings)),
        (f"segment build (library, {args.max_tokens} tokens)", lambda out: run_build(docs, settings, out)),
    ]
    if args.daemon:
        # Wall clock: the daemon parses in a worker process, whose CPU time this one does not see.
        steps.append(
            ("segment build (daemon, jobs=1, wall)", lambda out: run_daemon(args.corpus, settings, out))
        )
    # Round robin, best of each: a busy machine slows every step alike instead of one.
    best: dict[str, float] = {}
    for _ in range(args.repeat):
        for name, fn in steps:
            try:
                seconds = timed(fn, time.perf_counter if "wall" in name else time.process_time)
            except Exception as exc:  # the daemon is another package: report, keep the table
                print(f"{name}: skipped: {type(exc).__name__}: {exc}", file=sys.stderr)
                continue
            best[name] = min(seconds, best.get(name, seconds))
    base = best["markdown-it-py parse"]
    rows = [(name, best[name]) for name, _fn in steps if name in best]

    print(f"{len(docs)} files, {size_mb:.2f} MB, best of {args.repeat}, Python {sys.version.split()[0]}")
    print(f"| {'step':<40} | {'seconds':>8} | {'MB/s':>6} | {'x parse':>7} |")
    print(f"|{'-' * 42}|{'-' * 10}:|{'-' * 7}:|{'-' * 8}:|")
    for name, seconds in rows:
        print(f"| {name:<40} | {seconds:8.2f} | {size_mb / seconds:6.2f} | {seconds / base:7.2f} |")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
