"""Compare two snapshots (bench/snapshot_chunks.py) record by record, ignoring chosen keys.

For a change that adds record fields on purpose: every record must be identical to the old one
once the new keys are taken out, with the old keys in the old order.

    .venv/bin/python bench/snapshot_diff.py before.jsonl after.jsonl --ignore cells,url,properties
"""

from __future__ import annotations

import argparse
import json
import sys
from collections import Counter
from pathlib import Path


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("before", type=Path)
    ap.add_argument("after", type=Path)
    ap.add_argument("--ignore", default="cells,url,properties", help="comma-separated keys added on purpose")
    args = ap.parse_args(argv)
    ignored = tuple(k for k in args.ignore.split(",") if k)
    before = args.before.read_text(encoding="utf-8").splitlines()
    after = args.after.read_text(encoding="utf-8").splitlines()
    if len(before) != len(after):
        print(f"line counts differ: {len(before)} vs {len(after)}")
        return 1
    differing: list[int] = []
    added: Counter[str] = Counter()
    values: dict[str, Counter[str]] = {k: Counter() for k in ignored}
    for number, (old_line, new_line) in enumerate(zip(before, after), start=1):
        old, new = json.loads(old_line), json.loads(new_line)
        if isinstance(old, dict) and isinstance(new, dict):
            for key in ignored:
                if key in new and key not in old:
                    added[key] += 1
                    values[key][json.dumps(new[key], sort_keys=True)[:40]] += 1
            new = {k: v for k, v in new.items() if k not in ignored or k in old}
            if list(old) != list(new):
                differing.append(number)
                continue
        if old != new:
            differing.append(number)
    print(f"{len(before)} lines; {len(differing)} differ once {', '.join(ignored)} are left out")
    for key in ignored:
        common = ", ".join(f"{v} x{n}" for v, n in values[key].most_common(3))
        print(f"  {key}: added to {added[key]} records ({common})")
    if differing:
        print(f"  first differing lines: {differing[:10]}")
    return 1 if differing else 0


if __name__ == "__main__":
    sys.exit(main())
