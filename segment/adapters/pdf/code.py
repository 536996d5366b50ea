"""Code: lines set in a monospaced font keep their line breaks; indentation comes back from the
x offsets (one space per character width) plus any spaces the PDF kept as characters."""

from __future__ import annotations

from statistics import median

from segment.adapters.pdf.extract import Line


def code_lines(lines: list[Line]) -> list[str]:
    """Code text with indentation rebuilt from x offsets (one space per character width)."""
    widths = [
        (p.x1 - p.x0) / len(p.text)
        for ln in lines[:40]  # a sample is enough for the character width
        for p in ln.pieces
        if p.mono and len(p.text) >= 2 and p.x1 > p.x0
    ]
    char_w = median(widths) if widths else 5.0
    left = min(ln.x0 for ln in lines)
    out: list[str] = []
    for ln in lines:
        indent = round((ln.x0 - left) / char_w) if char_w > 0 else 0
        text = ln.text.rstrip()
        lead = len(text) - len(text.lstrip())  # spaces the PDF kept as characters
        out.append(" " * max(0, min(indent + lead, 80)) + text.lstrip())
    return out
