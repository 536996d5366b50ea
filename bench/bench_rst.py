"""reStructuredText benchmark: docutils' `publish_doctree` alone vs our full build, same files,
same run.

Run by hand:  .venv/bin/python bench/bench_rst.py [--repeat 3] [--max-tokens 512]

Input: the shared reStructuredText corpus (../shared/corpus/rst, docutils' own documentation),
read into memory first so that disk reads are not timed. Single process throughout.

Rows:
- `docutils publish_doctree`: the baseline, `docutils.core.publish_doctree()` with the quiet
  settings our adapter also uses (no config files, no messages printed, no file insertion or raw
  input, no Pygments highlighting), each call building its settings as docutils does.
- `docutils publish_doctree, GC paused`: the same with the cyclic GC paused per page, as our
  parse and segmenter run (`segment.gcpause`): the stricter baseline.
- `docutils publish_doctree, settings once`: the stricter baseline still, settings built once
  and copied per page (as our adapter does; building docutils' option parser per call is part
  of the plain baseline's cost).
- `segment parse -> tree`: our adapter alone (`segment.parse_bytes`).
- `segment parse + chunk`: parse, tree and segment, chunks made but not written.
- `segment build (library)`: parse, tree, segment, and one JSON Lines file per page written to a
  temp folder.

Times are CPU seconds of this process (`time.process_time`); steps run round robin `--repeat`
times and each figure is the step's best run. Target: the library build at most 1.5x the
`publish_doctree` baseline.
"""

from __future__ import annotations

import argparse
import copy
import shutil
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import docutils.core

import segment
from segment.adapters.rst.publish import CONTAINED
from segment.gcpause import paused_gc
from segment.settings import Settings

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "rst"
QUIET = {**CONTAINED, "report_level": 5}
"""The adapter's contained settings, with no messages at all: docutils' own run at its quietest."""


def load(root: Path) -> list[tuple[str, bytes]]:
    return [(p.relative_to(root).as_posix(), p.read_bytes()) for p in sorted(root.rglob("*.rst"))]


def run_raw(docs: list[tuple[str, bytes]]) -> None:
    for name, data in docs:
        docutils.core.publish_doctree(
            data.decode("utf-8", "replace"), source_path=name, settings_overrides=QUIET
        )


def run_raw_paused(docs: list[tuple[str, bytes]]) -> None:
    for name, data in docs:
        with paused_gc():
            docutils.core.publish_doctree(
                data.decode("utf-8", "replace"), source_path=name, settings_overrides=QUIET
            )


def run_raw_settings_once(docs: list[tuple[str, bytes]]) -> None:
    from docutils import frontend
    from docutils.parsers.rst import Parser
    from docutils.readers.standalone import Reader

    base = frontend.get_default_settings(Parser, Reader)
    for key, value in QUIET.items():
        setattr(base, key, value)
    for name, data in docs:
        with paused_gc():
            docutils.core.publish_doctree(
                data.decode("utf-8", "replace"), source_path=name, settings=copy.copy(base)
            )


def run_parse(docs: list[tuple[str, bytes]]) -> None:
    for name, data in docs:
        segment.parse_bytes(data, name)


def make_chunk(settings: Settings) -> Callable[[list[tuple[str, bytes]]], None]:
    def run(docs: list[tuple[str, bytes]]) -> None:
        for name, data in docs:
            list(segment.chunk(segment.parse_bytes(data, name, settings), settings))

    return run


def make_build(settings: Settings, out: Path) -> Callable[[list[tuple[str, bytes]]], None]:
    def run(docs: list[tuple[str, bytes]]) -> None:
        for n, (name, data) in enumerate(docs):
            chunks = segment.chunk(segment.parse_bytes(data, name, settings), settings)
            (out / f"{n}.jsonl").write_text("".join(c.to_json() + "\n" for c in chunks), encoding="utf-8")

    return run


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--max-tokens", type=int, default=512)
    args = ap.parse_args(argv)
    if not CORPUS.is_dir():
        print(f"corpus not found: {CORPUS}", file=sys.stderr)
        return 1
    docs = load(CORPUS)
    size = sum(len(d) for _n, d in docs)
    settings = Settings(max_tokens=args.max_tokens)
    out = Path(tempfile.mkdtemp(prefix="bench-rst-"))
    steps: list[tuple[str, Callable[[list[tuple[str, bytes]]], None]]] = [
        ("docutils publish_doctree", run_raw),
        ("docutils publish_doctree, GC paused", run_raw_paused),
        ("docutils publish_doctree, settings once", run_raw_settings_once),
        ("segment parse -> tree", run_parse),
        ("segment parse + chunk", make_chunk(settings)),
        ("segment build (library)", make_build(settings, out)),
    ]
    best = {name: float("inf") for name, _ in steps}
    try:
        run_parse(docs[:3])  # imports and caches warmed outside the timings
        for _ in range(args.repeat):
            for name, fn in steps:
                start = time.process_time()
                fn(docs)
                best[name] = min(best[name], time.process_time() - start)
    finally:
        shutil.rmtree(out, ignore_errors=True)
    base = best["docutils publish_doctree"]
    print(f"{len(docs)} files, {size / 1e6:.2f} MB, max_tokens={args.max_tokens}, best of {args.repeat}")
    print(f"| {'step':<40} | {'CPU s':>7} | {'MB/s':>6} | {'x raw':>6} |")
    print(f"|{'-' * 42}|{'-' * 9}|{'-' * 8}|{'-' * 8}|")
    for name, _ in steps:
        t = best[name]
        print(f"| {name:<40} | {t:7.2f} | {size / 1e6 / t:6.2f} | {t / base:6.2f} |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
