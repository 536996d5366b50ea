"""MDX benchmark: markdown-it-py's parse of the MDX files alone vs our full build, same run.

Run by hand:  .venv/bin/python bench/bench_mdx.py [--repeat 3] [--rounds 40] [--max-tokens 512]

Input: the shared MDX corpus (../shared/corpus/mdx, 14 pages, 17 KB) and fixtures/mdx, read into
memory first. The set is small, so each step goes over it `--rounds` times. Single process.

Rows:
- `markdown-it-py parse`: the baseline, `MarkdownIt.parse()` of the MDX text as it is (CommonMark
  preset, raw HTML on, tables and strikethrough, front matter plugin: the Markdown benchmark's
  baseline configuration).
- `markdown-it-py parse, GC paused`: the same with the cyclic GC paused per page, as ours runs.
- `segment parse -> tree`: the MDX adapter (MDX layer removed, then the Markdown adapter with the
  documentation-site extensions).
- `segment build (library)`: parse, segment, and the JSON Lines text of every chunk (not written).

CPU seconds of this process (`time.process_time`), round robin, best of `--repeat`.
Target: the build at most 1.5x the parse alone.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from pathlib import Path

from markdown_it import MarkdownIt
from mdit_py_plugins.front_matter import front_matter_plugin

import segment
from segment.gcpause import paused_gc
from segment.settings import Settings

ROOT = Path(__file__).resolve().parents[1]
SOURCES = (ROOT.parent / "shared" / "corpus" / "mdx", ROOT / "fixtures" / "mdx")


def load() -> list[tuple[str, bytes]]:
    files = sorted(p for root in SOURCES if root.is_dir() for p in root.rglob("*.mdx"))
    return [(p.name, p.read_bytes()) for p in files]


def raw_parser() -> MarkdownIt:
    md = MarkdownIt("commonmark", {"html": True, "maxNesting": 120})
    md.enable(["table", "strikethrough"])
    md.use(front_matter_plugin)
    return md


def run_parse(docs: list[tuple[str, bytes]], rounds: int, pause: bool) -> None:
    md = raw_parser()
    for _ in range(rounds):
        for _name, data in docs:
            if pause:
                with paused_gc():
                    md.parse(data.decode("utf-8", errors="replace"))
            else:
                md.parse(data.decode("utf-8", errors="replace"))


def run_tree(docs: list[tuple[str, bytes]], rounds: int) -> None:
    for _ in range(rounds):
        for name, data in docs:
            segment.parse_bytes(data, name)


def run_build(docs: list[tuple[str, bytes]], rounds: int, settings: Settings) -> None:
    for _ in range(rounds):
        for name, data in docs:
            "".join(
                c.to_json() + "\n" for c in segment.chunk(segment.parse_bytes(data, name, settings), settings)
            )


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--rounds", type=int, default=40)
    ap.add_argument("--max-tokens", type=int, default=512)
    args = ap.parse_args(argv)
    docs = load()
    if not docs:
        print("no MDX files found", file=sys.stderr)
        return 2
    size_mb = sum(len(d) for _n, d in docs) * args.rounds / 1e6
    settings = Settings(max_tokens=args.max_tokens)
    from segment.sentences import split_sentences

    split_sentences("Warm up. Twice.", settings.language)
    run_build(docs, 1, settings)

    steps: list[tuple[str, Callable[[], None]]] = [
        ("markdown-it-py parse", lambda: run_parse(docs, args.rounds, False)),
        ("markdown-it-py parse, GC paused", lambda: run_parse(docs, args.rounds, True)),
        ("segment parse -> tree (mdx)", lambda: run_tree(docs, args.rounds)),
        (
            f"segment build (library, {args.max_tokens} tokens)",
            lambda: run_build(docs, args.rounds, settings),
        ),
    ]
    best: dict[str, float] = {}
    for _ in range(args.repeat):
        for name, fn in steps:
            started = time.process_time()
            fn()
            seconds = time.process_time() - started
            best[name] = min(seconds, best.get(name, seconds))
    base = best["markdown-it-py parse"]
    print(
        f"{len(docs)} files x {args.rounds} rounds, {size_mb:.2f} MB, best of {args.repeat}, "
        f"Python {sys.version.split()[0]}"
    )
    print(f"| {'step':<40} | {'seconds':>8} | {'MB/s':>6} | {'x parse':>7} |")
    print(f"|{'-' * 42}|{'-' * 10}:|{'-' * 7}:|{'-' * 8}:|")
    for name, _fn in steps:
        seconds = best[name]
        print(f"| {name:<40} | {seconds:8.2f} | {size_mb / seconds:6.2f} | {seconds / base:7.2f} |")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
