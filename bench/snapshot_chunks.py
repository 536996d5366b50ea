"""Write every chunk of the shared corpus and the fixtures to one JSON Lines file, for diffing.

Run by hand before and after a change meant only to make things faster:

    .venv/bin/python bench/snapshot_chunks.py before.jsonl
    ... change ...
    .venv/bin/python bench/snapshot_chunks.py after.jsonl
    cmp before.jsonl after.jsonl     # a speed-only change leaves them byte-identical

Each document contributes its metadata line, then its chunks at max_tokens=512; PDFs are written
twice, with the outline and without it (the font heading detector). `--formats pdf` limits the
run to some formats.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import segment
from segment.adapters import FORMATS, adapter_for, is_supported
from segment.adapters.pdf import parse_pdf

ROOT = Path(__file__).resolve().parents[1]
SOURCES = (ROOT.parent / "shared" / "corpus", ROOT / "fixtures")
SETTINGS = segment.Settings(max_tokens=512)


def documents(formats: set[str]) -> list[Path]:
    """Supported files under the sources, in a stable order (a missing source is skipped)."""
    out: list[Path] = []
    for source in SOURCES:
        if source.is_dir():
            out += sorted(
                p
                for p in source.rglob("*")
                if p.is_file() and is_supported(p) and adapter_for(p).format in formats
            )
    return out


def snapshot(path: Path, out: object) -> None:
    data = path.read_bytes()
    # Named from the source folder down, so that two checkouts in folders of other names agree.
    root = next(r for r in SOURCES if path.is_relative_to(r))
    name = f"{root.name}/{path.relative_to(root).as_posix()}"
    variants = (
        [parse_pdf(data, name), parse_pdf(data, name, use_outline=False)]
        if adapter_for(path).format == "pdf"
        else [segment.parse_bytes(data, name, SETTINGS)]
    )
    for doc in variants:
        print(json.dumps(doc.metadata, sort_keys=True, default=str), file=out)  # type: ignore[call-overload]
        for chunk in segment.chunk(doc, SETTINGS):
            print(chunk.to_json(), file=out)  # type: ignore[call-overload]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("output", type=Path)
    ap.add_argument(
        "--formats",
        default="markdown,html,pdf,rst,notebook,mdx",
        help=f"comma-separated, of {','.join(FORMATS)} (text is left out by default: the fixtures' "
        "golden .tree.txt files would count as sources)",
    )
    args = ap.parse_args(argv)
    paths = documents(set(args.formats.split(",")))
    failed = 0
    with args.output.open("w", encoding="utf-8") as out:
        for path in paths:
            try:
                snapshot(path, out)
            except segment.SegmentError as exc:  # hostile fixtures: their refusal is the output
                failed += 1
                print(json.dumps({"error": str(exc)}), file=out)
    print(f"{len(paths)} files ({failed} refused) -> {args.output}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
