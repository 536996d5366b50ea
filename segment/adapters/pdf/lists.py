"""List items: a bullet or a number at the start of a line, the item's text hanging after it."""

from __future__ import annotations

import re

from segment.adapters.pdf.extract import Line
from segment.adapters.pdf.layout import TextBlock

_BULLET = re.compile(r"^\s*([•◦▪▫‣⁃∙●○■□►▸▹➢➤✓✔∗–—\-\*·])\s+(?=\S)")
_NUMBERED = re.compile(r"^\s*(\(?(\d{1,3}|[a-z]|[ivx]{1,5})[.)])\s+(?=\S)")
_ROMAN = {"i": 1, "v": 5, "x": 10}


def marker(text: str) -> tuple[str, bool, int] | None:
    """(marker, ordered, number) when the text starts a list item."""
    m = _BULLET.match(text)
    if m:
        return m.group(0), False, 1
    m = _NUMBERED.match(text)
    if m:
        token = m.group(2)
        if token.isdigit():
            return m.group(0), True, int(token)
        if len(token) == 1 and token not in "ivx":
            return m.group(0), True, ord(token) - ord("a") + 1
        return m.group(0), True, _roman(token)
    return None


def _roman(token: str) -> int:
    total = prev = 0
    for ch in reversed(token):
        value = _ROMAN[ch]
        total = total - value if value < prev else total + value
        prev = max(prev, value)
    return max(total, 1)


def marker_is_mono(line: Line) -> bool:
    for piece in line.pieces:
        if piece.text.strip():
            return piece.mono
    return False


def split_items(block: TextBlock) -> list[TextBlock]:
    """Cut a block before every line that starts a list item at the block's marker position."""
    parts: list[TextBlock] = []
    marker_x: float | None = None
    for line in block.lines:
        marked = marker(line.text) is not None
        if not parts:
            parts.append(TextBlock([line], block.column))
            marker_x = line.x0 if marked else None
        elif marked and marker_x is not None and abs(line.x0 - marker_x) <= 2.5:
            parts.append(TextBlock([line], block.column))
        elif marked and marker_x is None and _BULLET.match(line.text):
            parts.append(TextBlock([line], block.column))
            marker_x = line.x0
        else:
            parts[-1].lines.append(line)
    return parts
