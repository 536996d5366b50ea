"""Report benchmark: `segment report` on the whole shared corpus against the build that made it.

Run by hand:  .venv/bin/python bench/bench_report.py [--copies 1] [--repeat 3] [--jobs 1] [--no-compare]

Input: every supported file of ../shared/corpus (Markdown, HTML, PDF), copied N times into a
temp folder. Each step runs as the user runs it, a `segment` process (start-up and imports
included), wall-clock seconds; the report steps are the best of --repeat runs. Target: the
summary at most a quarter of the build's time.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT.parent / "shared" / "corpus"


def segment(*args: str) -> float:
    """Seconds one `segment` command takes (its output discarded)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    started = time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "segment", *args],
        check=False,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    return time.perf_counter() - started


def size_mb(folder: Path) -> float:
    suffixes = {".md", ".markdown", ".html", ".htm", ".xhtml", ".pdf"}
    return sum(p.stat().st_size for p in folder.rglob("*") if p.suffix.lower() in suffixes) / 1e6


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--copies", type=int, default=1)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--jobs", type=int, default=1)
    parser.add_argument(
        "--no-compare", action="store_true", help="Skip --compare (it parses every file again)."
    )
    args = parser.parse_args()
    if not CORPUS.is_dir():
        raise SystemExit(f"shared corpus not found at {CORPUS}")
    with tempfile.TemporaryDirectory(prefix="bench-report-") as tmp:
        work = Path(tmp)
        src = work / "src"
        for i in range(args.copies):
            shutil.copytree(CORPUS, src / f"copy{i}")
        out, site = work / "out", work / "site"
        megabytes = size_mb(src)
        build = segment("build", str(src), "-o", str(out), "--jobs", str(args.jobs))
        rows = [(f"build (first, --jobs {args.jobs})", build)]
        steps = {
            "report (summary, text)": ("report", str(out)),
            "report --json": ("report", str(out), "--json"),
            "report --html": ("report", str(out), "--html", str(site)),
            "check": ("check", str(out)),
        }
        if not args.no_compare:
            steps["report --compare (parses again)"] = ("report", str(out), "--compare")
        for name, command in steps.items():
            rows.append((name, min(segment(*command) for _ in range(args.repeat))))
        pages = list((site / "files").glob("*.html"))
        largest = max((p.stat().st_size for p in pages), default=0)
        print(
            f"corpus: {megabytes:.1f} MB of supported files ({args.copies} copies), {len(pages)} file pages"
        )
        print(
            f"largest file page: {largest / 1e6:.2f} MB; overview: {(site / 'index.html').stat().st_size / 1e6:.2f} MB"
        )
        print()
        print("| step | seconds | x build |")
        print("|---|---:|---:|")
        for name, seconds in rows:
            print(f"| {name} | {seconds:.2f} | {seconds / build:.3f} |")


if __name__ == "__main__":
    main()
