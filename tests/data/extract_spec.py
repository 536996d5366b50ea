"""Turn a CommonMark-style spec text into a JSON list of its examples (run by hand).

The spec format: an example is fenced by a line of 32 backticks followed by ` example`
(GFM adds the extension name, e.g. ` example table`), the Markdown comes first, a line holding
a single `.` separates it from the expected HTML, and `→` stands for a tab.

    python tests/data/extract_spec.py SPEC.txt OUT.json [--first-number N]
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

FENCE = "`" * 32


def extract(text: str, first_number: int = 1) -> list[dict[str, object]]:
    """Examples in document order, each with number, section, markdown, html and start line."""
    examples: list[dict[str, object]] = []
    section = ""
    state = "text"  # text -> markdown -> html -> text
    md: list[str] = []
    html: list[str] = []
    start = 0
    for lineno, line in enumerate(text.split("\n"), start=1):
        if state == "text":
            if line.startswith(FENCE + " example"):
                state, md, html, start = "markdown", [], [], lineno
            elif line.startswith("#"):
                section = line.lstrip("#").strip()
        elif state == "markdown":
            if line == ".":
                state = "html"
            else:
                md.append(line)
        elif state == "html":
            if line.startswith(FENCE):
                examples.append(
                    {
                        "example": first_number + len(examples),
                        "section": section,
                        "markdown": "".join(x + "\n" for x in md).replace("→", "\t"),
                        "html": "".join(x + "\n" for x in html).replace("→", "\t"),
                        "start_line": start,
                    }
                )
                state = "text"
            else:
                html.append(line)
    return examples


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("spec", type=Path)
    ap.add_argument("out", type=Path)
    ap.add_argument("--first-number", type=int, default=1)
    args = ap.parse_args()
    examples = extract(args.spec.read_text(encoding="utf-8"), args.first_number)
    args.out.write_text(json.dumps(examples, ensure_ascii=False, indent=1) + "\n", encoding="utf-8")
    print(f"{len(examples)} examples -> {args.out}")


if __name__ == "__main__":
    main()
